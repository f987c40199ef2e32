// File: daemon/scoring_service.h
//
// The gRPC service plumbline.v1.Scoring (synchronous API). Each call takes a
// snapshot of its set from the registry, answers through scoring_core.h and
// maps the absl::Status to a grpc::Status. Created and registered by
// DaemonServer.
//
// Thread-safe: gRPC calls the handlers from many threads; the service keeps no
// mutable state of its own.
#ifndef PLUMBLINE_DAEMON_SCORING_SERVICE_H_
#define PLUMBLINE_DAEMON_SCORING_SERVICE_H_

#include "daemon/scoring_core.h"
#include "daemon/set_registry.h"
#include "plumbline/v1/scoring.grpc.pb.h"

namespace plumbline::daemon {

class ScoringService final : public v1::Scoring::Service {
 public:
  // `registry` must outlive the service.
  ScoringService(const SetRegistry* registry, ScoringLimits limits);

  grpc::Status Score(grpc::ServerContext* context,
                     const v1::ScoreRequest* request,
                     v1::ScoreReply* reply) override;
  grpc::Status ScoreBatch(grpc::ServerContext* context,
                          const v1::ScoreBatchRequest* request,
                          v1::ScoreBatchReply* reply) override;
  grpc::Status ListSets(grpc::ServerContext* context,
                        const v1::ListSetsRequest* request,
                        v1::ListSetsReply* reply) override;

 private:
  // The loaded version of `set`, or INVALID_ARGUMENT / NOT_FOUND.
  absl::StatusOr<PlanPtr> Lookup(const std::string& set) const;

  // Constant after construction.
  const SetRegistry* const registry_;
  const ScoringLimits limits_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SCORING_SERVICE_H_
