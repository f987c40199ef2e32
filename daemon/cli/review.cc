// File: daemon/cli/review.cc
#include "daemon/cli/review.h"

#include <chrono>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/time/time.h"
#include "daemon/cli/client.h"
#include "daemon/cli/output.h"
#include "daemon/util/files.h"
#include "daemon/util/text_table.h"
#include "google/protobuf/util/json_util.h"
#include "plumbline/v1/registry.grpc.pb.h"

namespace plumbline::daemon {
namespace {

std::string G(double v) { return absl::StrFormat("%.6g", v); }

template <typename Opt>
std::string Maybe(bool has, Opt v) {
  return has ? G(v) : "-";
}

// The same JSON as every read command's --format json (output.h).
absl::Status PrintJson(const google::protobuf::Message& m, std::ostream& out) {
  absl::StatusOr<std::string> json = MessageJson(m);
  if (!json.ok()) return json.status();
  out << *json;
  return absl::OkStatus();
}

// "2026-12-03T08:30:00.123456Z": the ledger's microseconds.
std::string StampText(const google::protobuf::Timestamp& t) {
  return absl::FormatTime(
      "%Y-%m-%dT%H:%M:%E6SZ",
      absl::FromUnixSeconds(t.seconds()) + absl::Nanoseconds(t.nanos()),
      absl::UTCTimeZone());
}

void SetDeadline(grpc::ClientContext* context, absl::Duration timeout) {
  context->set_deadline(
      std::chrono::system_clock::now() +
      std::chrono::milliseconds(absl::ToInt64Milliseconds(timeout)));
}

void PrintFit(const v1::FitSummary& f, std::ostream& out) {
  out << "method          " << f.method() << "\n"
      << "created by      " << f.created_by() << "\n"
      << "training data   " << f.training_data() << "\n"
      << "training rows   " << f.training_rows() << "\n"
      << "training log-loss  " << G(f.training_log_loss()) << "\n";
  if (f.log_likelihood() != 0) {
    out << "log-likelihood  " << G(f.log_likelihood()) << "\n";
  }
  if (f.has_null_log_likelihood()) {
    out << "null log-likelihood  " << G(f.null_log_likelihood()) << "\n";
  }
  if (f.has_aic()) out << "AIC             " << G(f.aic()) << "\n";
  if (f.has_pseudo_r2()) out << "McFadden R2     " << G(f.pseudo_r2()) << "\n";
}

}  // namespace

bool IsReviewCommand(const std::string& name) {
  return name == "show" || name == "diff" || name == "dossier" ||
         name == "record";
}

absl::Status CheckReviewFlags(const ReviewCommand& c) {
  if (c.set.empty()) {
    return absl::InvalidArgumentError(absl::StrCat(c.name, " needs --set"));
  }
  if (c.name == "dossier" && c.out.empty() && !c.json) {
    return absl::InvalidArgumentError("dossier needs --out FILE");
  }
  if (c.name == "record" && c.record_id.empty()) {
    return absl::InvalidArgumentError("record needs --record_id");
  }
  if (c.job < 0) {
    return absl::InvalidArgumentError("--job must be 0 (latest) or more");
  }
  return absl::OkStatus();
}

void PrintVersionDetail(const v1::VersionDetail& d, std::ostream& out) {
  out << "set " << d.info().set() << " version " << d.info().version() << "\n";
  if (!d.description().empty()) out << d.description() << "\n";
  out << "\nfeatures\n";
  std::vector<std::vector<std::string>> rows = {
      {"feature", "transform", "detail", "missing"}};
  for (const v1::FeatureTransform& f : d.features()) {
    rows.push_back({f.name(), f.transform(), f.detail(), f.missing_rule()});
  }
  out << FormatTable(rows, "  ");
  out << "\ncoefficients\n";
  rows = {{"coefficient", "estimate", "std. error", "per unit", ""}};
  for (const v1::CoefficientLine& l : d.coefficients()) {
    rows.push_back({l.label(), G(l.estimate()),
                    Maybe(l.has_standard_error(), l.standard_error()),
                    Maybe(l.has_per_unit(), l.per_unit()),
                    l.reference() ? "reference" : ""});
  }
  out << FormatTable(rows, "  ") << "\nprovenance\n";
  PrintFit(d.fit(), out);
}

void PrintVersionDiff(const v1::VersionDiff& d, std::ostream& out) {
  out << "set " << d.to().set() << ": " << d.from().version() << " -> "
      << d.to().version() << "\n\ncoefficients\n";
  std::vector<std::vector<std::string>> rows = {{"coefficient", "from", "s.e.",
                                                 "to", "s.e.", "change",
                                                 "change/s.e.", "status"}};
  for (const v1::CoefficientChange& c : d.coefficients()) {
    rows.push_back({c.label(), Maybe(c.has_from_estimate(), c.from_estimate()),
                    Maybe(c.has_from_standard_error(), c.from_standard_error()),
                    Maybe(c.has_to_estimate(), c.to_estimate()),
                    Maybe(c.has_to_standard_error(), c.to_standard_error()),
                    Maybe(c.has_change(), c.change()),
                    Maybe(c.has_change_in_standard_errors(),
                          c.change_in_standard_errors()),
                    c.status()});
  }
  out << FormatTable(rows, "  ") << "\nfeatures\n";
  for (const v1::FeatureChange& f : d.features()) {
    out << "  " << f.feature() << ": " << f.status();
    for (const std::string& c : f.changes()) out << "; " << c;
    if (f.has_baseline_psi()) out << "; baseline PSI " << G(f.baseline_psi());
    out << "\n";
  }
  out << "\nscore baseline PSI "
      << (d.has_score_baseline_psi() ? G(d.score_baseline_psi())
                                     : "- (different bins)")
      << "\n";
  if (!d.comparison().empty()) out << "holdout: " << d.comparison() << "\n";
}

void PrintRecordDetail(const v1::RecordDetail& r, std::ostream& out) {
  out << "record " << r.record_id() << " of set " << r.set() << "\n";
  std::vector<std::vector<std::string>> rows = {
      {"version", "role", "scored at", "log-odds", "probability", "features"}};
  for (const v1::StoredScore& s : r.scores()) {
    std::string features;
    google::protobuf::util::JsonPrintOptions compact;
    if (!google::protobuf::util::MessageToJsonString(s.features(), &features,
                                                     compact)
             .ok()) {
      features = "?";
    }
    rows.push_back({s.version(), s.role(), StampText(s.scored_at()),
                    G(s.log_odds()), G(s.probability()), features});
  }
  out << FormatTable(rows, "  ");
  if (r.has_label()) {
    out << "outcome " << r.label() << ", observed "
        << StampText(r.observed_at()) << ", reported "
        << StampText(r.reported_at()) << "\n";
  } else {
    out << "no outcome reported\n";
  }
}

absl::Status RunReviewCommand(const ClientOptions& client,
                              const ReviewCommand& c, std::ostream& out) {
  if (absl::Status s = CheckReviewFlags(c); !s.ok()) return s;
  auto stub = v1::Registry::NewStub(NewPlumbdChannel(client.addr));
  grpc::ClientContext context;
  SetDeadline(&context, client.timeout);
  if (c.name == "show") {
    v1::ShowVersionRequest request;
    request.set_set(c.set);
    request.set_version(c.version);
    v1::VersionDetail reply;
    if (absl::Status s = FromPlumbdStatus(
            stub->ShowVersion(&context, request, &reply), client.addr);
        !s.ok()) {
      return s;
    }
    if (c.json) return PrintJson(reply, out);
    PrintVersionDetail(reply, out);
    return absl::OkStatus();
  }
  if (c.name == "diff") {
    v1::DiffVersionsRequest request;
    request.set_set(c.set);
    request.set_from_version(c.from);
    request.set_to_version(c.to);
    v1::VersionDiff reply;
    if (absl::Status s = FromPlumbdStatus(
            stub->DiffVersions(&context, request, &reply), client.addr);
        !s.ok()) {
      return s;
    }
    if (c.json) return PrintJson(reply, out);
    PrintVersionDiff(reply, out);
    return absl::OkStatus();
  }
  if (c.name == "record") {
    v1::GetRecordRequest request;
    request.set_set(c.set);
    request.set_record_id(c.record_id);
    v1::RecordDetail reply;
    if (absl::Status s = FromPlumbdStatus(
            stub->GetRecord(&context, request, &reply), client.addr);
        !s.ok()) {
      return s;
    }
    if (c.json) return PrintJson(reply, out);
    PrintRecordDetail(reply, out);
    return absl::OkStatus();
  }
  v1::GetDossierRequest request;
  request.set_set(c.set);
  request.set_job(c.job);
  v1::DossierReply reply;
  if (absl::Status s = FromPlumbdStatus(
          stub->GetDossier(&context, request, &reply), client.addr);
      !s.ok()) {
    return s;
  }
  if (!c.out.empty()) {
    if (absl::Status s = WriteFileAtomically(c.out, reply.html()); !s.ok()) {
      return s;
    }
  }
  if (c.json) return PrintJson(reply.dossier(), out);
  out << "wrote " << c.out << ": dossier of set " << reply.set() << " job "
      << reply.job() << " (" << reply.dossier().result()
      << "); plumbd keeps it at " << reply.path() << "\n";
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
