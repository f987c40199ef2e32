// File: daemon/services/registry.cc
#include "daemon/services/registry.h"

#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "daemon/access/access_control.h"
#include "daemon/scoring/core.h"
#include "daemon/util/caller_text.h"
#include "daemon/util/grpc_status.h"
#include "daemon/util/time.h"
#include "scorer/coefficient_set.h"

namespace plumbline::daemon {
namespace {

std::string Actor(const std::string& actor) {
  return actor.empty() ? "unnamed caller" : actor;
}

v1::VersionState ToWire(VersionState state) {
  switch (state) {
    case VersionState::kActive:
      return v1::ACTIVE;
    case VersionState::kCandidate:
      return v1::CANDIDATE;
    case VersionState::kShadow:
      return v1::SHADOW;
    case VersionState::kRetired:
      return v1::RETIRED;
  }
  return v1::STATE_UNSPECIFIED;
}

// INVALID_ARGUMENT unless `set` is a valid name and `version` (when
// `need_version`) is non-empty, printable and no longer than a set file
// allows (scorer::ValidateCoefficientSet): no such version can exist, and
// the lifecycle's messages would repeat it.
absl::Status CheckTarget(const std::string& set, const std::string& version,
                         bool need_version) {
  if (absl::Status s = CheckSetName(set); !s.ok()) return s;
  if (!need_version) return absl::OkStatus();
  if (version.empty()) {
    return absl::InvalidArgumentError(
        "version: empty; name the version (plumbctl versions --set NAME "
        "lists them)");
  }
  if (const std::optional<size_t> at = FirstUnprintable(version)) {
    return absl::InvalidArgumentError(
        absl::StrCat("version: '", CallerText(version),
                     "' holds a control character or "
                     "a byte that is not UTF-8 at byte ",
                     *at, "; versions are printable"));
  }
  if (version.size() > scorer::kMaxVersionBytes) {
    return absl::InvalidArgumentError(
        absl::StrCat("version: '", CallerText(version), "' is longer than ",
                     scorer::kMaxVersionBytes, " bytes; no version is"));
  }
  return absl::OkStatus();
}

grpc::Status Reply(const absl::StatusOr<VersionRecord>& record,
                   v1::VersionInfo* reply) {
  if (!record.ok()) return ToGrpcStatus(record.status());
  *reply = ToVersionInfo(*record);
  return grpc::Status::OK;
}

}  // namespace

v1::VersionInfo ToVersionInfo(const VersionRecord& r) {
  v1::VersionInfo info;
  info.set_set(r.set);
  info.set_version(r.version);
  info.set_state(ToWire(r.state));
  *info.mutable_created_at() = ToTimestamp(r.created_at);
  info.set_created_by(r.created_by);
  info.set_reason(r.reason);
  info.set_comparison(r.comparison);
  return info;
}

RegistryService::RegistryService(Lifecycle* lifecycle, RefitWorker* refits)
    : lifecycle_(lifecycle), refits_(refits) {}

grpc::Status RegistryService::ListVersions(
    grpc::ServerContext* context, const v1::ListVersionsRequest* request,
    v1::ListVersionsReply* reply) {
  if (grpc::Status s = Admit(context, Role::kAdmin); !s.ok()) return s;
  if (!request->set().empty()) {
    if (absl::Status s = CheckSetName(request->set()); !s.ok()) {
      return ToGrpcStatus(s);
    }
  }
  absl::StatusOr<std::vector<VersionRecord>> list =
      lifecycle_->List(request->set());
  if (!list.ok()) return ToGrpcStatus(list.status());
  if (list->empty() && !request->set().empty()) {
    return ToGrpcStatus(absl::NotFoundError(
        absl::StrCat("no version of a set named '", CallerText(request->set()),
                     "' is known")));
  }
  for (const VersionRecord& r : *list)
    *reply->add_versions() = ToVersionInfo(r);
  return grpc::Status::OK;
}

grpc::Status RegistryService::LoadCandidate(
    grpc::ServerContext* context, const v1::LoadCandidateRequest* request,
    v1::VersionInfo* reply) {
  if (grpc::Status s = Admit(context, Role::kAdmin); !s.ok()) return s;
  if (!request->has_set()) {
    return ToGrpcStatus(absl::InvalidArgumentError(
        "set: missing; send the coefficient set to load"));
  }
  // Validated here too, before the lifecycle names the version in its
  // messages: a version with control characters never gets that far.
  if (absl::Status s = scorer::ValidateCoefficientSet(request->set(), "set");
      !s.ok()) {
    return ToGrpcStatus(s);
  }
  NewVersion version;
  version.set = request->set();
  version.created_by = Actor(request->actor());
  version.reason =
      request->reason().empty() ? "loaded by hand" : request->reason();
  return Reply(lifecycle_->AddCandidate(std::move(version)), reply);
}

grpc::Status RegistryService::ChangeVersion(
    grpc::ServerContext* context, const v1::VersionRequest& request,
    absl::StatusOr<VersionRecord> (Lifecycle::*change)(const StateChange&),
    v1::VersionInfo* reply) {
  if (grpc::Status s = Admit(context, Role::kAdmin); !s.ok()) return s;
  if (absl::Status s = CheckTarget(request.set(), request.version(), true);
      !s.ok()) {
    return ToGrpcStatus(s);
  }
  return Reply(
      (lifecycle_->*change)({request.set(), request.version(),
                             Actor(request.actor()), request.reason()}),
      reply);
}

grpc::Status RegistryService::Activate(grpc::ServerContext* context,
                                       const v1::VersionRequest* request,
                                       v1::VersionInfo* reply) {
  return ChangeVersion(context, *request, &Lifecycle::Activate, reply);
}

grpc::Status RegistryService::Approve(grpc::ServerContext* context,
                                      const v1::VersionRequest* request,
                                      v1::VersionInfo* reply) {
  return ChangeVersion(context, *request, &Lifecycle::Approve, reply);
}

grpc::Status RegistryService::Shadow(grpc::ServerContext* context,
                                     const v1::VersionRequest* request,
                                     v1::VersionInfo* reply) {
  return ChangeVersion(context, *request, &Lifecycle::Shadow, reply);
}

grpc::Status RegistryService::Rollback(grpc::ServerContext* context,
                                       const v1::RollbackRequest* request,
                                       v1::VersionInfo* reply) {
  if (grpc::Status s = Admit(context, Role::kAdmin); !s.ok()) return s;
  if (absl::Status s = CheckTarget(request->set(), "", false); !s.ok()) {
    return ToGrpcStatus(s);
  }
  return Reply(
      lifecycle_->Rollback(
          {request->set(), "", Actor(request->actor()), request->reason()}),
      reply);
}

grpc::Status RegistryService::Refit(grpc::ServerContext* context,
                                    const v1::RefitRequest* request,
                                    v1::RefitReply* reply) {
  if (grpc::Status s = Admit(context, Role::kAdmin); !s.ok()) return s;
  if (absl::Status s = CheckTarget(request->set(), "", false); !s.ok()) {
    return ToGrpcStatus(s);
  }
  // A set with no version has nothing to refit: refused before a job is
  // queued (the worker would only fail it later).
  absl::StatusOr<std::vector<VersionRecord>> versions =
      lifecycle_->List(request->set());
  if (!versions.ok()) return ToGrpcStatus(versions.status());
  if (versions->empty()) {
    return ToGrpcStatus(absl::NotFoundError(
        absl::StrCat("no version of a set named '", CallerText(request->set()),
                     "' is known; no refit was queued")));
  }
  RefitOutcome outcome = refits_->RunNow(
      {request->set(), RefitTriggerKind::kManual, Actor(request->actor()),
       request->reason().empty() ? "plumbctl refit" : request->reason()});
  reply->set_candidate_created(outcome.candidate.has_value());
  if (outcome.candidate.has_value()) {
    *reply->mutable_candidate() = ToVersionInfo(*outcome.candidate);
  }
  reply->set_promoted(outcome.result == RefitOutcome::Result::kPromoted);
  reply->set_summary(outcome.summary);
  return grpc::Status::OK;
}

grpc::Status RegistryService::Audit(grpc::ServerContext* context,
                                    const v1::AuditRequest* request,
                                    v1::AuditReply* reply) {
  if (grpc::Status s = Admit(context, Role::kAdmin); !s.ok()) return s;
  if (absl::Status s = CheckTarget(request->set(), "", false); !s.ok()) {
    return ToGrpcStatus(s);
  }
  absl::StatusOr<std::vector<AuditRecord>> entries =
      lifecycle_->Audit(request->set());
  if (!entries.ok()) return ToGrpcStatus(entries.status());
  if (entries->empty()) {
    return ToGrpcStatus(
        absl::NotFoundError(absl::StrCat("no audit history for a set named '",
                                         CallerText(request->set()), "'")));
  }
  for (const AuditRecord& e : *entries) {
    v1::AuditEntry* out = reply->add_entries();
    *out->mutable_at() = ToTimestamp(e.at);
    out->set_set(e.set);
    out->set_version(e.version);
    out->set_action(e.action);
    out->set_actor(e.actor);
    out->set_detail(e.detail);
  }
  return grpc::Status::OK;
}

}  // namespace plumbline::daemon
