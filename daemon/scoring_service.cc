// File: daemon/scoring_service.cc
#include "daemon/scoring_service.h"

#include <utility>

#include "daemon/grpc_status.h"

namespace plumbline::daemon {

ScoringService::ScoringService(const SetRegistry* registry,
                               ScoringLimits limits)
    : registry_(registry), limits_(limits) {}

absl::StatusOr<PlanPtr> ScoringService::Lookup(const std::string& set) const {
  if (absl::Status s = CheckSetName(set); !s.ok()) return s;
  PlanPtr plan = registry_->Find(set);
  if (plan == nullptr) return SetNotFound(set, registry_->Names());
  return plan;
}

grpc::Status ScoringService::Score(grpc::ServerContext* /*context*/,
                                   const v1::ScoreRequest* request,
                                   v1::ScoreReply* reply) {
  absl::StatusOr<PlanPtr> plan = Lookup(request->set());
  if (!plan.ok()) return ToGrpcStatus(plan.status());
  absl::StatusOr<v1::ScoreReply> result =
      ScoreWithPlan(**plan, *request, limits_);
  if (!result.ok()) return ToGrpcStatus(result.status());
  *reply = *std::move(result);
  return grpc::Status::OK;
}

grpc::Status ScoringService::ScoreBatch(grpc::ServerContext* /*context*/,
                                        const v1::ScoreBatchRequest* request,
                                        v1::ScoreBatchReply* reply) {
  absl::StatusOr<PlanPtr> plan = Lookup(request->set());
  if (!plan.ok()) return ToGrpcStatus(plan.status());
  absl::StatusOr<v1::ScoreBatchReply> result =
      ScoreBatchWithPlan(**plan, *request, limits_);
  if (!result.ok()) return ToGrpcStatus(result.status());
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
