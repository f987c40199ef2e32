// File: daemon/health/sink.h
//
// What the model-health monitor is told of the ledger's new rows: every
// record scored (for the stability windows: score and feature
// distributions) and every score that an outcome has labelled (for the
// outcome windows: log-loss, calibration, AUC ...). CommittedFeed
// (daemon/health/committed_feed.h) calls it for the rows of each ledger
// commit, in commit order, on the ledger's writer thread; the daemon's
// HealthMonitor implements it.
//
// Implementations must be thread-safe and cheap: they run on the ledger's
// writer thread, on every commit.
#ifndef PLUMBLINE_DAEMON_HEALTH_SINK_H_
#define PLUMBLINE_DAEMON_HEALTH_SINK_H_

#include <string>

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

  // One scored record of a version that has no loaded plan.
  virtual void OnUnknownVersion(const std::string& set,
                                const std::string& version) = 0;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_HEALTH_SINK_H_
