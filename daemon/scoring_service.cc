// File: daemon/scoring_service.cc
#include "daemon/scoring_service.h"

#include <utility>
#include <vector>

#include "absl/time/clock.h"
#include "daemon/event_log.h"
#include "daemon/grpc_status.h"

namespace plumbline::daemon {

ScoringService::ScoringService(const SetRegistry* registry,
                               ScoringLimits limits, Ledger* ledger,
                               HealthSink* health_sink)
    : registry_(registry),
      limits_(limits),
      ledger_(ledger),
      health_sink_(health_sink) {}

absl::StatusOr<PlanPtr> ScoringService::Lookup(const std::string& set) const {
  if (absl::Status s = CheckSetName(set); !s.ok()) return s;
  PlanPtr plan = registry_->Find(set);
  if (plan == nullptr) return SetNotFound(set, registry_->Names());
  return plan;
}

absl::Status ScoringService::Record(const scorer::ScoringPlan& plan,
                                    const RecordInputs& inputs,
                                    absl::Span<v1::Scored* const> scores) {
  const absl::Time now = absl::Now();
  std::vector<ScoreEntry> entries(scores.size());
  for (size_t i = 0; i < scores.size(); ++i) {
    v1::Scored& scored = *scores[i];
    if (scored.record_id().empty()) {
      scored.set_record_id(record_ids_.Next(plan.name(), now));
    }
    ScoreEntry& entry = entries[i];
    entry.record_id = scored.record_id();
    entry.set_name = plan.name();
    entry.set_version = plan.version();
    entry.scored_at = now;
    entry.log_odds = scored.log_odds();
    entry.probability = scored.probability();
    const int record = static_cast<int>(i);
    entry.features_json =
        FeaturesJson(plan, inputs.Values(record), inputs.Sent(record));
  }
  if (absl::Status s = ledger_->AppendScores(std::move(entries)); !s.ok()) {
    // A full queue is the caller's to retry and would flood the log; any
    // other refusal is a ledger problem the operator must see.
    if (s.code() != absl::StatusCode::kResourceExhausted) {
      LogEvent(LogLevel::kError, "ledger_write_failed",
               {{"set", plan.name()}, {"error", s.message()}});
    }
    return s;
  }
  if (health_sink_ != nullptr) {
    for (size_t i = 0; i < scores.size(); ++i) {
      health_sink_->OnScored(plan, inputs.Values(static_cast<int>(i)),
                             scores[i]->log_odds(), now);
    }
  }
  return absl::OkStatus();
}

grpc::Status ScoringService::Score(grpc::ServerContext* /*context*/,
                                   const v1::ScoreRequest* request,
                                   v1::ScoreReply* reply) {
  absl::StatusOr<PlanPtr> plan = Lookup(request->set());
  if (!plan.ok()) return ToGrpcStatus(plan.status());
  RecordInputs inputs;
  absl::StatusOr<v1::ScoreReply> result =
      ScoreWithPlan(**plan, *request, limits_, &inputs);
  if (!result.ok()) return ToGrpcStatus(result.status());
  v1::Scored* const scored[] = {result->mutable_score()};
  if (absl::Status s = Record(**plan, inputs, scored); !s.ok()) {
    return ToGrpcStatus(s);
  }
  *reply = *std::move(result);
  return grpc::Status::OK;
}

grpc::Status ScoringService::ScoreBatch(grpc::ServerContext* /*context*/,
                                        const v1::ScoreBatchRequest* request,
                                        v1::ScoreBatchReply* reply) {
  absl::StatusOr<PlanPtr> plan = Lookup(request->set());
  if (!plan.ok()) return ToGrpcStatus(plan.status());
  RecordInputs inputs;
  absl::StatusOr<v1::ScoreBatchReply> result =
      ScoreBatchWithPlan(**plan, *request, limits_, &inputs);
  if (!result.ok()) return ToGrpcStatus(result.status());
  std::vector<v1::Scored*> scored(result->mutable_scores()->pointer_begin(),
                                  result->mutable_scores()->pointer_end());
  if (absl::Status s = Record(**plan, inputs, scored); !s.ok()) {
    return ToGrpcStatus(s);
  }
  *reply = *std::move(result);
  return grpc::Status::OK;
}

grpc::Status ScoringService::ListSets(grpc::ServerContext* /*context*/,
                                      const v1::ListSetsRequest* /*request*/,
                                      v1::ListSetsReply* reply) {
  for (const PlanPtr& plan : registry_->All()) {
    *reply->add_sets() = SummarizeSet(*plan);
  }
  return grpc::Status::OK;
}

}  // namespace plumbline::daemon
