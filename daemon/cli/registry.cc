// File: daemon/cli/registry.cc
#include "daemon/cli/registry.h"

#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cstdlib>
#include <memory>
#include <vector>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "absl/time/time.h"
#include "daemon/cli/client.h"
#include "daemon/cli/output.h"
#include "daemon/util/text_table.h"
#include "google/protobuf/util/time_util.h"
#include "plumbline/v1/registry.grpc.pb.h"
#include "scorer/coefficient_set.h"

namespace plumbline::daemon {
namespace {

// The updating ladder of a refit job: one row per rung (its fit on the
// training part and its likelihood-ratio test against the active version),
// the closed test's steps and the rung chosen.
void PrintLadder(const v1::RefitLadder& ladder, std::ostream& out) {
  out << "updating ladder on " << ladder.training_records()
      << " training records (closed testing, alpha "
      << FormatNumber(ladder.alpha()) << ")\n";
  std::vector<std::vector<std::string>> rows = {
      {"rung", "update", "log-likelihood", "df", "LR vs active", "p-value",
       "note"},
      {"0", "the active version", FormatNumber(ladder.active_log_likelihood()),
       "0", "", "", ""}};
  for (const v1::RefitLadder::Rung& r : ladder.rungs()) {
    if (!r.fitted()) {
      rows.push_back({absl::StrCat(r.rung()), r.name(), "not fitted", "", "",
                      "", r.note()});
      continue;
    }
    rows.push_back({absl::StrCat(r.rung()), r.name(),
                    FormatNumber(r.log_likelihood()), FormatNumber(r.df()),
                    FormatNumber(r.lr_statistic()), FormatNumber(r.p_value()),
                    r.note()});
  }
  out << FormatTable(rows, "  ");
  std::vector<std::vector<std::string>> steps = {
      {"closed test", "LR", "df", "p-value", "at alpha"}};
  for (const v1::RefitLadder::Step& s : ladder.steps()) {
    steps.push_back(
        {absl::StrCat("rung ", s.rung(), " vs ",
                      s.against() == 0 ? std::string("active")
                                       : absl::StrCat("rung ", s.against())),
         FormatNumber(s.lr_statistic()), FormatNumber(s.df()),
         FormatNumber(s.p_value()),
         s.significant() ? "significant" : "not significant"});
  }
  out << FormatTable(steps, "  ");
  out << "chose rung " << ladder.chosen() << ": " << ladder.reason() << "\n";
  if (!ladder.window().empty()) out << "data: " << ladder.window() << "\n";
}

using google::protobuf::util::TimeUtil;

// A refit reads the ledger and fits before it answers.
constexpr absl::Duration kRefitTimeout = absl::Minutes(10);

std::string StateName(v1::VersionState state) {
  switch (state) {
    case v1::ACTIVE:
      return "active";
    case v1::CANDIDATE:
      return "candidate";
    case v1::SHADOW:
      return "shadow";
    case v1::RETIRED:
      return "retired";
    default:
      return "unknown";
  }
}

std::string Time(const google::protobuf::Timestamp& t) {
  return absl::FormatTime(
      "%Y-%m-%dT%H:%M:%SZ",
      absl::FromUnixMicros(TimeUtil::TimestampToMicroseconds(t)),
      absl::UTCTimeZone());
}

absl::Status Need(const std::string& value, absl::string_view flag,
                  absl::string_view command) {
  if (!value.empty()) return absl::OkStatus();
  return absl::InvalidArgumentError(absl::StrCat(command, " needs --", flag));
}

void PrintVersion(const v1::VersionInfo& v, absl::string_view what,
                  std::ostream& out) {
  out << what << ": set " << v.set() << " version " << v.version() << " is now "
      << StateName(v.state()) << "\n";
  if (!v.comparison().empty()) out << "  holdout: " << v.comparison() << "\n";
}

class Call {
 public:
  Call(const ClientOptions& client, absl::Duration timeout)
      : addr_(client.addr) {
    context_.set_deadline(
        std::chrono::system_clock::now() +
        std::chrono::milliseconds(absl::ToInt64Milliseconds(timeout)));
  }
  grpc::ClientContext* context() { return &context_; }
  absl::Status Done(const grpc::Status& status) const {
    return FromPlumbdStatus(status, addr_);
  }

 private:
  std::string addr_;
  grpc::ClientContext context_;
};

}  // namespace

std::string DefaultActor() {
  const char* user = std::getenv("USER");
  char host[256] = {0};
  if (gethostname(host, sizeof(host) - 1) != 0) host[0] = '\0';
  return absl::StrCat(user != nullptr && *user != '\0' ? user : "unknown", "@",
                      host[0] != '\0' ? host : "localhost");
}

absl::Status CheckRegistryFlags(const RegistryCommand& command) {
  const std::string& name = command.name;
  if (name == "versions") return absl::OkStatus();
  if (name == "load") return Need(command.set_file, "set_file", name);
  if (absl::Status s = Need(command.set, "set", name); !s.ok()) return s;
  if (name == "audit" || name == "refit" || name == "rollback") {
    return absl::OkStatus();
  }
  // activate, approve, shadow: one version of one set.
  return Need(command.version, "version", name);
}

absl::Status RunRegistryCommand(const ClientOptions& client,
                                const RegistryCommand& command,
                                std::ostream& out) {
  std::unique_ptr<v1::Registry::Stub> stub =
      v1::Registry::NewStub(NewPlumbdChannel(client.addr));
  if (absl::Status s = CheckRegistryFlags(command); !s.ok()) return s;
  const std::string& name = command.name;
  const std::string actor =
      command.actor.empty() ? DefaultActor() : command.actor;

  if (name == "versions") {
    Call call(client, client.timeout);
    v1::ListVersionsRequest request;
    request.set_set(command.set);
    v1::ListVersionsReply reply;
    if (absl::Status s =
            call.Done(stub->ListVersions(call.context(), request, &reply));
        !s.ok()) {
      return s;
    }
    return PrintReply(
        reply, command.format,
        [&] {
          std::vector<std::vector<std::string>> rows = {
              {"set", "version", "state", "created", "created by", "reason"}};
          for (const v1::VersionInfo& v : reply.versions()) {
            rows.push_back({v.set(), v.version(), StateName(v.state()),
                            Time(v.created_at()), v.created_by(), v.reason()});
          }
          return FormatTable(rows);
        },
        out);
  }
  if (name == "audit") {
    Call call(client, client.timeout);
    v1::AuditRequest request;
    request.set_set(command.set);
    v1::AuditReply reply;
    if (absl::Status s =
            call.Done(stub->Audit(call.context(), request, &reply));
        !s.ok()) {
      return s;
    }
    return PrintReply(
        reply, command.format,
        [&] {
          std::vector<std::vector<std::string>> rows = {
              {"time", "version", "action", "actor", "detail"}};
          for (const v1::AuditEntry& e : reply.entries()) {
            rows.push_back(
                {Time(e.at()), e.version(), e.action(), e.actor(), e.detail()});
          }
          return FormatTable(rows);
        },
        out);
  }
  if (name == "refit") {
    Call call(client, std::max(client.timeout, kRefitTimeout));
    v1::RefitRequest request;
    request.set_set(command.set);
    request.set_actor(actor);
    request.set_reason(command.reason);
    v1::RefitReply reply;
    if (absl::Status s =
            call.Done(stub->Refit(call.context(), request, &reply));
        !s.ok()) {
      return s;
    }
    if (reply.promoted()) {
      PrintVersion(reply.candidate(), "refit promoted", out);
    } else if (reply.candidate_created()) {
      PrintVersion(reply.candidate(), "refit proposed", out);
    } else {
      out << "refit: no candidate\n";
    }
    out << "  " << reply.summary() << "\n";
    if (reply.has_ladder()) PrintLadder(reply.ladder(), out);
    return absl::OkStatus();
  }
  if (name == "load") {
    absl::StatusOr<v1::CoefficientSet> set =
        scorer::ReadCoefficientSetFile(command.set_file);
    if (!set.ok()) return set.status();
    Call call(client, client.timeout);
    v1::LoadCandidateRequest request;
    *request.mutable_set() = *std::move(set);
    request.set_actor(actor);
    request.set_reason(command.reason.empty()
                           ? absl::StrCat("plumbctl load ", command.set_file)
                           : command.reason);
    request.set_allow_schema_change(command.allow_schema_change);
    v1::VersionInfo reply;
    if (absl::Status s =
            call.Done(stub->LoadCandidate(call.context(), request, &reply));
        !s.ok()) {
      return s;
    }
    PrintVersion(reply, "loaded", out);
    return absl::OkStatus();
  }
  if (name == "rollback") {
    Call call(client, client.timeout);
    v1::RollbackRequest request;
    request.set_set(command.set);
    request.set_actor(actor);
    request.set_reason(command.reason);
    v1::VersionInfo reply;
    if (absl::Status s =
            call.Done(stub->Rollback(call.context(), request, &reply));
        !s.ok()) {
      return s;
    }
    PrintVersion(reply, "rolled back", out);
    return absl::OkStatus();
  }
  // activate, approve, shadow: one version of one set.
  Call call(client, client.timeout);
  v1::VersionRequest request;
  request.set_set(command.set);
  request.set_version(command.version);
  request.set_actor(actor);
  request.set_reason(command.reason);
  request.set_allow_schema_change(command.allow_schema_change);
  v1::VersionInfo reply;
  grpc::Status status;
  if (name == "activate") {
    status = stub->Activate(call.context(), request, &reply);
  } else if (name == "approve") {
    status = stub->Approve(call.context(), request, &reply);
  } else if (name == "shadow") {
    status = stub->Shadow(call.context(), request, &reply);
  } else {
    return absl::InvalidArgumentError(
        absl::StrCat("unknown registry command '", name, "'"));
  }
  if (absl::Status s = call.Done(status); !s.ok()) return s;
  PrintVersion(reply, name == "approve" ? "approved" : name, out);
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
