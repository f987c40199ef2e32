// File: daemon/services/outcomes.cc
#include "daemon/services/outcomes.h"

#include <cstdint>
#include <string>
#include <utility>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/str_cat.h"
#include "absl/time/time.h"
#include "daemon/access/access_control.h"
#include "daemon/util/caller_text.h"
#include "daemon/util/event_log.h"
#include "daemon/util/grpc_status.h"
#include "daemon/util/time.h"

namespace plumbline::daemon {
namespace {

absl::Status LedgerRefused(const absl::Status& status) {
  if (status.code() != absl::StatusCode::kResourceExhausted) {
    LogEvent(LogLevel::kError, "ledger_write_failed",
             {{"what", "outcomes"}, {"error", status.message()}});
  }
  return status;
}

}  // namespace

absl::StatusOr<OutcomeEntry> CheckOutcome(const v1::Outcome& outcome,
                                          absl::string_view path) {
  if (outcome.record_id().empty()) {
    return absl::InvalidArgumentError(absl::StrCat(
        path, ".record_id: empty; give the id the record was scored under"));
  }
  if (outcome.label() != 0 && outcome.label() != 1) {
    return absl::InvalidArgumentError(
        absl::StrCat(path, ".label: record '", CallerText(outcome.record_id()),
                     "': must be 0 or 1, got ", outcome.label()));
  }
  OutcomeEntry entry;
  entry.record_id = outcome.record_id();
  entry.label = outcome.label();
  if (outcome.has_observed_at()) {
    absl::StatusOr<absl::Time> at =
        FromTimestamp(outcome.observed_at(),
                      absl::StrCat(path, ".observed_at: record '",
                                   CallerText(outcome.record_id()), "'"));
    if (!at.ok()) return at.status();
    entry.observed_at = *at;
  }
  return entry;
}

OutcomesService::OutcomesService(Ledger* ledger, uint32_t max_batch_records)
    : ledger_(ledger), max_batch_records_(max_batch_records) {}

grpc::Status OutcomesService::ReportOutcome(
    grpc::ServerContext* context, const v1::ReportOutcomeRequest* request,
    v1::ReportOutcomeReply* reply) {
  if (grpc::Status s = Admit(context, Role::kScore); !s.ok()) return s;
  absl::StatusOr<OutcomeEntry> entry =
      CheckOutcome(request->outcome(), "outcome");
  if (!entry.ok()) return ToGrpcStatus(entry.status());
  std::vector<OutcomeEntry> entries;
  entries.push_back(*std::move(entry));
  absl::StatusOr<std::vector<OutcomeResult>> results =
      ledger_->ReportOutcomes(std::move(entries));
  if (!results.ok()) return ToGrpcStatus(LedgerRefused(results.status()));
  const OutcomeResult& result = results->front();
  if (!result.status.ok()) return ToGrpcStatus(result.status);
  v1::OutcomeResult* out = reply->mutable_result();
  out->set_record_id(request->outcome().record_id());
  out->set_repeat(result.repeat);
  return grpc::Status::OK;
}

grpc::Status OutcomesService::ReportOutcomes(
    grpc::ServerContext* context, const v1::ReportOutcomesRequest* request,
    v1::ReportOutcomesReply* reply) {
  if (grpc::Status s = Admit(context, Role::kScore); !s.ok()) return s;
  const int count = request->outcomes_size();
  if (count == 0) {
    return ToGrpcStatus(
        absl::InvalidArgumentError("empty batch: outcomes holds no outcome"));
  }
  if (static_cast<uint32_t>(count) > max_batch_records_) {
    return ToGrpcStatus(absl::InvalidArgumentError(
        absl::StrCat("batch has ", count, " outcomes, over the limit of ",
                     max_batch_records_, " (max_batch_records); split it")));
  }
  // Checked outcomes go to the ledger in one write; `sent[i]` is the
  // request index of the ledger's i-th outcome.
  std::vector<OutcomeEntry> entries;
  std::vector<int> sent;
  entries.reserve(static_cast<size_t>(count));
  sent.reserve(static_cast<size_t>(count));
  reply->mutable_results()->Reserve(count);
  for (int i = 0; i < count; ++i) {
    const v1::Outcome& outcome = request->outcomes(i);
    v1::OutcomeResult* result = reply->add_results();
    result->set_record_id(outcome.record_id());
    absl::StatusOr<OutcomeEntry> entry =
        CheckOutcome(outcome, absl::StrCat("outcomes[", i, "]"));
    if (!entry.ok()) {
      result->set_code(static_cast<int32_t>(entry.status().code()));
      result->set_message(std::string(entry.status().message()));
      continue;
    }
    entries.push_back(*std::move(entry));
    sent.push_back(i);
  }
  if (!entries.empty()) {
    absl::StatusOr<std::vector<OutcomeResult>> results =
        ledger_->ReportOutcomes(std::move(entries));
    if (!results.ok()) {
      reply->Clear();
      return ToGrpcStatus(LedgerRefused(results.status()));
    }
    for (size_t k = 0; k < sent.size(); ++k) {
      const OutcomeResult& r = (*results)[k];
      v1::OutcomeResult* result = reply->mutable_results(sent[k]);
      result->set_code(static_cast<int32_t>(r.status.code()));
      result->set_message(std::string(r.status.message()));
      result->set_repeat(r.repeat);
    }
  }
  int accepted = 0;
  for (const v1::OutcomeResult& result : reply->results()) {
    if (result.code() == 0) ++accepted;
  }
  reply->set_accepted(accepted);
  reply->set_refused(count - accepted);
  return grpc::Status::OK;
}

}  // namespace plumbline::daemon
