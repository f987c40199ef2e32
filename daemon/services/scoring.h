// File: daemon/services/scoring.h
//
// The gRPC service plumbline.v1.Scoring (synchronous API). Each call takes a
// snapshot of its set from the registry and answers through scoring_core.h;
// before it replies, every scored record goes to the ledger (one ScoreEntry
// per record, features packed in the set's order); the model-health monitor
// hears of them from the ledger's commit (daemon/health/committed_feed.h),
// not from here. A call whose rows the ledger refuses (queue full, failed
// commit) fails with the ledger's status and returns no score. A record
// without an id gets one here ("<set>-<unix micros>-<n>"), returned in
// Scored.record_id. Created and registered by DaemonServer.
//
// Shadow versions of the set (daemon/lifecycle.h) score the same request
// after the active version; their scores go to the ledger under the same
// record ids with role "shadow", in the same transaction, and are never
// returned. A shadow that cannot score the request
// (e.g. it needs a feature the caller did not send) never fails the call:
// the first failure per version is logged and its rows are left out.
//
// Thread-safe: gRPC calls the handlers from many threads; the service keeps no
// mutable state of its own besides an atomic id counter and the set of
// shadow versions whose failure was logged.
#ifndef PLUMBLINE_DAEMON_SERVICES_SCORING_H_
#define PLUMBLINE_DAEMON_SERVICES_SCORING_H_

#include <functional>
#include <string>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/container/flat_hash_map.h"
#include "absl/container/flat_hash_set.h"
#include "absl/synchronization/mutex.h"
#include "absl/types/span.h"
#include "daemon/ledger/ledger.h"
#include "daemon/scoring/core.h"
#include "daemon/scoring/set_registry.h"
#include "daemon/scoring/shadow_tracker.h"
#include "daemon/util/record_ids.h"
#include "daemon/util/set_version.h"
#include "plumbline/v1/scoring.grpc.pb.h"

namespace plumbline::daemon {

// How the service keeps account of its shadows (both may be empty).
struct ShadowOptions {
  // Counts each shadow's failures and says when to stop one; must outlive
  // the service.
  ShadowTracker* tracker = nullptr;
  // Retires a stopped shadow (plumbd: the lifecycle, audited with `why`).
  std::function<void(const SetVersion& shadow, const std::string& why)> stop;
};

// ScoreBatch is served "streamed unary": gRPC hands the handler the raw call
// and the request is parsed into a protobuf Arena (one per call, its first
// block reused by the handler thread), not onto the heap. A batch of 1,000
// records is thousands of small messages, strings and arrays; parsed on the
// heap and held while the ledger commits, they cost more than scoring and
// storing them (malloc, free and malloc_consolidate were over half of the
// daemon's CPU under load).
class ScoringService final
    : public v1::Scoring::WithStreamedUnaryMethod_ScoreBatch<
          v1::Scoring::Service> {
 public:
  // `registry` and `ledger` must outlive the service.
  ScoringService(const SetRegistry* registry, ScoringLimits limits,
                 Ledger* ledger, ShadowOptions shadows = {});

  grpc::Status Score(grpc::ServerContext* context,
                     const v1::ScoreRequest* request,
                     v1::ScoreReply* reply) override;
  // The whole call as gRPC serves it: parses the request into an arena,
  // answers through ScoreBatch below, writes the reply.
  grpc::Status StreamedScoreBatch(
      grpc::ServerContext* context,
      grpc::ServerUnaryStreamer<v1::ScoreBatchRequest, v1::ScoreBatchReply>*
          streamer) override;
  // A parsed request's answer (also what tests call directly).
  grpc::Status ScoreBatch(grpc::ServerContext* context,
                          const v1::ScoreBatchRequest* request,
                          v1::ScoreBatchReply* reply) override;
  grpc::Status ListSets(grpc::ServerContext* context,
                        const v1::ListSetsRequest* request,
                        v1::ListSetsReply* reply) override;

 private:
  // The loaded version of `set`, or INVALID_ARGUMENT / NOT_FOUND.
  absl::StatusOr<ServingSet> Lookup(const std::string& set) const;

  // One shadow version's scores of a call's records.
  struct ShadowRun {
    PlanPtr plan;
    RecordInputs inputs;
    std::vector<double> log_odds;
    std::vector<double> probability;
  };

  // Runs `score(plan, &inputs)` (the call's own scoring function) for each
  // of `shadows` and collects the runs that scored every record.
  template <typename Reply, typename ScoreFn>
  std::vector<ShadowRun> ScoreShadows(std::vector<PlanPtr> shadows,
                                      ScoreFn score);

  // Gives records without an id one, appends every record (and every shadow
  // score) to the ledger.
  // `scores[i]` belongs to inputs' record i.
  absl::Status Record(const scorer::ScoringPlan& plan,
                      const RecordInputs& inputs,
                      absl::Span<v1::Scored* const> scores,
                      const std::vector<ShadowRun>& shadows);

  // The row layout of `plan`'s version (packed_row.h LayoutOf), made once
  // per version: versions are immutable.
  std::shared_ptr<const v1::RowLayout> Layout(const scorer::ScoringPlan& plan);

  void LogShadowFailure(const scorer::ScoringPlan& plan,
                        const absl::Status& status);
  // Logs that `key` reached the tracker's limit and calls shadows_.stop.
  void StopShadow(const SetVersion& key, const absl::Status& last);

  // Constant after construction.
  const SetRegistry* const registry_;
  const ScoringLimits limits_;
  Ledger* const ledger_;
  const ShadowOptions shadows_;

  RecordIdGenerator record_ids_;

  absl::Mutex layouts_mu_;
  absl::flat_hash_map<SetVersion, std::shared_ptr<const v1::RowLayout>> layouts_
      ABSL_GUARDED_BY(layouts_mu_);

  absl::Mutex shadow_mu_;
  // "set\nversion" of shadows whose failure was logged.
  absl::flat_hash_set<SetVersion> shadow_failures_logged_
      ABSL_GUARDED_BY(shadow_mu_);
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SERVICES_SCORING_H_
