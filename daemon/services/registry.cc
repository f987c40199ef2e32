// File: daemon/services/registry.cc
#include "daemon/services/registry.h"

#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "daemon/access/access_control.h"
#include "daemon/review/dossier_data.h"
#include "daemon/review/dossier_html.h"
#include "daemon/scoring/core.h"
#include "daemon/scoring/packed_row.h"
#include "daemon/util/caller_text.h"
#include "daemon/util/event_log.h"
#include "daemon/util/grpc_status.h"
#include "daemon/util/time.h"
#include "google/protobuf/util/json_util.h"
#include "scorer/coefficient_set.h"

namespace plumbline::daemon {
namespace {

std::string Actor(const std::string& actor) {
  return actor.empty() ? "unnamed caller" : actor;
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

// The opening of every admin call about one set: the caller holds the
// admin role and `set` is a valid name.
grpc::Status AdmitForSet(grpc::ServerContext* context, const std::string& set) {
  if (grpc::Status s = Admit(context, Role::kAdmin); !s.ok()) return s;
  return ToGrpcStatus(CheckTarget(set, "", false));
}

grpc::Status Reply(const absl::StatusOr<VersionRecord>& record,
                   v1::VersionInfo* reply) {
  if (!record.ok()) return ToGrpcStatus(record.status());
  *reply = ToVersionInfo(*record);
  return grpc::Status::OK;
}

}  // namespace

RegistryService::RegistryService(Lifecycle* lifecycle, RefitWorker* refits,
                                 const ShadowTracker* shadows,
                                 const DossierStore* dossiers,
                                 const DriftPolicy* policy, Ledger* ledger)
    : lifecycle_(lifecycle),
      refits_(refits),
      shadows_(shadows),
      dossiers_(dossiers),
      policy_(policy),
      ledger_(ledger) {}

void RegistryService::AddShadowReport(v1::VersionInfo& info) const {
  if (shadows_ == nullptr) return;
  const ShadowStats s = shadows_->Of(SetVersion{info.set(), info.version()});
  if (s.scored_calls == 0 && s.failures.empty()) return;
  v1::ShadowReport* r = info.mutable_shadow();
  r->set_scored_calls(s.scored_calls);
  for (const auto& [reason, n] : s.failures)
    (*r->mutable_failures())[reason] = n;
  r->set_consecutive_failures(s.consecutive_failures);
  r->set_last_error(s.last_error);
  r->set_stopped(s.stopped);
}

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
  for (const VersionRecord& r : *list) {
    v1::VersionInfo* info = reply->add_versions();
    *info = ToVersionInfo(r);
    AddShadowReport(*info);
  }
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
  version.allow_schema_change = request->allow_schema_change();
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
  absl::StatusOr<VersionRecord> changed = (lifecycle_->*change)(
      {request.set(), request.version(), Actor(request.actor()),
       request.reason(), request.allow_schema_change()});
  if (changed.ok()) RefreshDossierOf(request.set(), request.version());
  return Reply(changed, reply);
}

void RegistryService::RefreshDossierOf(const std::string& set,
                                       const std::string& version) {
  if (dossiers_ == nullptr || policy_ == nullptr) return;
  absl::StatusOr<std::vector<int64_t>> jobs = dossiers_->Jobs(set);
  if (!jobs.ok()) return;
  // The newest jobs first; a candidate comes from one of the last few.
  int looked = 0;
  for (auto it = jobs->rbegin(); it != jobs->rend() && looked < 20;
       ++it, ++looked) {
    absl::StatusOr<v1::Dossier> d = dossiers_->Read(set, *it);
    if (!d.ok() || d->candidate_version() != version) continue;
    absl::StatusOr<std::vector<AuditRecord>> audit = lifecycle_->Audit(set);
    if (!audit.ok()) return;
    RefreshTrail(*audit, absl::Now(), &*d);
    if (absl::Status s =
            dossiers_->WriteHtml(set, *it, RenderDossier(*d, *policy_));
        !s.ok()) {
      LogEvent(
          LogLevel::kWarning, "refit_dossier_failed",
          {{"set", set}, {"job", absl::StrCat(*it)}, {"error", s.message()}});
    }
    return;
  }
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
  if (grpc::Status s = AdmitForSet(context, request->set()); !s.ok()) {
    return s;
  }
  return Reply(
      lifecycle_->Rollback(
          {request->set(), "", Actor(request->actor()), request->reason()}),
      reply);
}

grpc::Status RegistryService::Refit(grpc::ServerContext* context,
                                    const v1::RefitRequest* request,
                                    v1::RefitReply* reply) {
  if (grpc::Status s = AdmitForSet(context, request->set()); !s.ok()) {
    return s;
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
  if (refit_gate_) {
    if (absl::Status gate = refit_gate_(); !gate.ok()) {
      return ToGrpcStatus(gate);
    }
  }
  RefitOutcome outcome = refits_->RunNow(
      {request->set(), RefitTriggerKind::kManual, Actor(request->actor()),
       request->reason().empty() ? "plumbctl refit" : request->reason(),
       std::nullopt});
  reply->set_candidate_created(outcome.candidate.has_value());
  if (outcome.candidate.has_value()) {
    *reply->mutable_candidate() = ToVersionInfo(*outcome.candidate);
  }
  reply->set_promoted(outcome.result == RefitOutcome::Result::kPromoted);
  reply->set_summary(outcome.summary);
  reply->set_dossier_path(outcome.dossier_path);
  reply->set_job(outcome.job);
  if (outcome.ladder) *reply->mutable_ladder() = *outcome.ladder;
  return grpc::Status::OK;
}

grpc::Status RegistryService::Audit(grpc::ServerContext* context,
                                    const v1::AuditRequest* request,
                                    v1::AuditReply* reply) {
  if (grpc::Status s = AdmitForSet(context, request->set()); !s.ok()) {
    return s;
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
    *reply->add_entries() = ToAuditEntry(e);
  }
  return grpc::Status::OK;
}

grpc::Status RegistryService::ShowVersion(grpc::ServerContext* context,
                                          const v1::ShowVersionRequest* request,
                                          v1::VersionDetail* reply) {
  if (grpc::Status s = AdmitForSet(context, request->set()); !s.ok()) {
    return s;
  }
  absl::StatusOr<std::vector<VersionRecord>> versions =
      lifecycle_->List(request->set());
  if (!versions.ok()) return ToGrpcStatus(versions.status());
  for (const VersionRecord& v : *versions) {
    if (request->version().empty() ? v.state == VersionState::kActive
                                   : v.version == request->version()) {
      absl::StatusOr<v1::VersionDetail> detail = DescribeVersion(v);
      if (!detail.ok()) return ToGrpcStatus(detail.status());
      *reply = *std::move(detail);
      return grpc::Status::OK;
    }
  }
  return ToGrpcStatus(absl::NotFoundError(
      request->version().empty()
          ? absl::StrCat("set '", request->set(), "' has no active version")
          : absl::StrCat("set '", request->set(), "' has no version '",
                         request->version(), "'")));
}

grpc::Status RegistryService::DiffVersions(
    grpc::ServerContext* context, const v1::DiffVersionsRequest* request,
    v1::VersionDiff* reply) {
  if (grpc::Status s = AdmitForSet(context, request->set()); !s.ok()) {
    return s;
  }
  absl::StatusOr<std::vector<VersionRecord>> versions =
      lifecycle_->List(request->set());
  if (!versions.ok()) return ToGrpcStatus(versions.status());
  auto pair = DiffPair(*versions, request->set(), request->from_version(),
                       request->to_version());
  if (!pair.ok()) return ToGrpcStatus(pair.status());
  absl::StatusOr<v1::VersionDiff> diff =
      daemon::DiffVersions(pair->first, pair->second);
  if (!diff.ok()) return ToGrpcStatus(diff.status());
  *reply = *std::move(diff);
  return grpc::Status::OK;
}

grpc::Status RegistryService::GetDossier(grpc::ServerContext* context,
                                         const v1::GetDossierRequest* request,
                                         v1::DossierReply* reply) {
  if (grpc::Status s = AdmitForSet(context, request->set()); !s.ok()) {
    return s;
  }
  if (request->job() < 0) {
    return ToGrpcStatus(
        absl::InvalidArgumentError(absl::StrCat("job: ", request->job(),
                                                " is negative; 0 asks for the "
                                                "set's latest job")));
  }
  if (dossiers_ == nullptr || policy_ == nullptr) {
    return ToGrpcStatus(
        absl::NotFoundError("this plumbd keeps no refit dossiers"));
  }
  int64_t job = request->job();
  if (job == 0) {
    absl::StatusOr<std::vector<int64_t>> jobs = dossiers_->Jobs(request->set());
    if (!jobs.ok()) return ToGrpcStatus(jobs.status());
    if (jobs->empty()) {
      return ToGrpcStatus(absl::NotFoundError(
          absl::StrCat("no refit dossier of set '", request->set(), "' in ",
                       dossiers_->root())));
    }
    job = jobs->back();
  }
  absl::StatusOr<v1::Dossier> dossier = dossiers_->Read(request->set(), job);
  if (!dossier.ok()) return ToGrpcStatus(dossier.status());
  if (absl::StatusOr<std::vector<AuditRecord>> audit =
          lifecycle_->Audit(request->set());
      audit.ok()) {
    RefreshTrail(*audit, absl::Now(), &*dossier);
  }
  std::string html = RenderDossier(*dossier, *policy_);
  // The file follows: a validator who opens it sees the trail as it is now.
  if (absl::Status s = dossiers_->WriteHtml(request->set(), job, html);
      !s.ok()) {
    return ToGrpcStatus(s);
  }
  reply->set_set(request->set());
  reply->set_job(job);
  reply->set_path(dossiers_->HtmlPath(request->set(), job));
  reply->set_html(std::move(html));
  *reply->mutable_dossier() = *std::move(dossier);
  return grpc::Status::OK;
}

grpc::Status RegistryService::GetRecord(grpc::ServerContext* context,
                                        const v1::GetRecordRequest* request,
                                        v1::RecordDetail* reply) {
  if (grpc::Status s = AdmitForSet(context, request->set()); !s.ok()) {
    return s;
  }
  if (request->record_id().empty()) {
    return ToGrpcStatus(absl::InvalidArgumentError("record_id is empty"));
  }
  if (ledger_ == nullptr) {
    return ToGrpcStatus(
        absl::UnimplementedError("this server keeps no ledger to look in"));
  }
  absl::StatusOr<StoredRecord> record =
      ledger_->FindRecord(request->set(), request->record_id());
  if (!record.ok()) return ToGrpcStatus(record.status());
  reply->set_set(request->set());
  reply->set_record_id(request->record_id());
  for (const ScoreEntry& e : record->scores) {
    v1::StoredScore* score = reply->add_scores();
    score->set_version(e.set_version);
    score->set_role(std::string(ScoreRoleName(e.role)));
    *score->mutable_scored_at() = ToTimestamp(e.scored_at);
    score->set_log_odds(e.log_odds);
    score->set_probability(e.probability);
    // The stored row by name (packed rows through the layout stored with
    // their version), then protobuf's own JSON parser into the Struct.
    absl::StatusOr<std::string> json =
        StoredFeaturesJson(e.layout.get(), e.features);
    if (!json.ok() || !google::protobuf::util::JsonStringToMessage(
                           *json, score->mutable_features())
                           .ok()) {
      return ToGrpcStatus(absl::DataLossError(absl::StrCat(
          "the stored features of record '", CallerText(request->record_id()),
          "' (version ", e.set_version, ") do not read back: ",
          json.ok() ? "not a JSON object" : json.status().message())));
    }
  }
  if (record->has_outcome) {
    reply->set_label(record->label);
    *reply->mutable_observed_at() = ToTimestamp(record->observed_at);
    *reply->mutable_reported_at() = ToTimestamp(record->reported_at);
  }
  return grpc::Status::OK;
}

}  // namespace plumbline::daemon
