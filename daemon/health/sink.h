// File: daemon/health/sink.h
//
// What the request path tells the model-health monitor: every record scored
// (for the stability windows: score and feature distributions) and every
// score that an outcome has labelled (for the outcome windows: log-loss,
// calibration, AUC ...). The scoring and outcomes services call it after the
// ledger has accepted the rows; the daemon's HealthMonitor implements it.
//
// Implementations must be thread-safe and cheap: they run on gRPC handler
// threads, on the request path.
#ifndef PLUMBLINE_DAEMON_HEALTH_SINK_H_
#define PLUMBLINE_DAEMON_HEALTH_SINK_H_

#include "absl/time/time.h"
#include "absl/types/span.h"
#include "daemon/ledger/ledger.h"
#include "scorer/scoring_plan.h"

namespace plumbline::daemon {

class HealthSink {
 public:
  virtual ~HealthSink() = default;

  // One scored record: `values` in `plan`'s feature order, as encoded.
  virtual void OnScored(const scorer::ScoringPlan& plan,
                        absl::Span<const scorer::RawValue> values,
                        double log_odds, absl::Time scored_at) = 0;

  // One score that a newly reported outcome labels.
  virtual void OnLabelled(const LabelledScore& labelled) = 0;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_HEALTH_SINK_H_
