// File: daemon/policy/drift_policy.h
//
// The drift policy: thresholds that turn a set's window figures into one of
// the states steady / watch / drifting, with the list of figures that
// crossed a threshold (the reasons) and notes on what could not be judged.
// HealthMonitor applies it to every set on each tick.
//
//   absl::StatusOr<DriftPolicy> policy = DriftPolicy::FromConfig(config);
//   policy->Judge(plan.set().provenance(), &health);  // fills state, reasons
//
// A threshold judges a figure of a window only when
//  - the figure is defined (an undefined figure is never a reason),
//  - the window holds at least min_labelled labelled records (outcome
//    figures) or min_scored scored records (stability figures),
//  - for a threshold relative to training, the set records the training
//    figure (provenance.training_log_loss > 0).
// Crossing: ABOVE value > threshold, BELOW value < threshold, DISTANCE
// |value - target| > threshold. The state is the worst level crossed.
//
// Default thresholds (used when the config lists none), see
// DefaultThresholds(): score_psi and feature_psi watch 0.10 / drifting 0.25;
// log_loss 1.10x / 1.25x the training log-loss; expected_calibration_error
// 0.05 / 0.10; calibration_in_the_large distance from 0 of 0.05 / 0.10.
//
// Thread-safe: immutable after construction.
#ifndef PLUMBLINE_DAEMON_POLICY_DRIFT_POLICY_H_
#define PLUMBLINE_DAEMON_POLICY_DRIFT_POLICY_H_

#include <cstdint>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/time/time.h"
#include "plumbline/v1/coefficient_set.pb.h"
#include "plumbline/v1/config.pb.h"
#include "plumbline/v1/monitor.pb.h"

namespace plumbline::daemon {

struct DriftThreshold {
  // A metric of health_figures.h (kWindowFigures or kFeatureFigures).
  std::string metric;
  double watch = 0;
  double drifting = 0;
  enum class Direction { kAbove, kBelow, kDistance };
  Direction direction = Direction::kAbove;
  // DISTANCE only: the figure's ideal value.
  double target = 0;
  // watch and drifting are multiples of the set's training figure
  // (log_loss only: provenance.training_log_loss).
  bool relative_to_training = false;
};

class DriftPolicy {
 public:
  // The defaults: DefaultThresholds(), min_labelled and min_scored 500,
  // tick 15 s.
  DriftPolicy();

  // The policy of a config file's drift_policy (zeros and an empty
  // threshold list mean the defaults). INVALID_ARGUMENT naming the field
  // (drift_policy.thresholds[2].metric ...) for an unknown or repeated
  // metric, thresholds in the wrong order for their direction, a negative
  // DISTANCE threshold or relative_to_training on a metric other than
  // log_loss.
  static absl::StatusOr<DriftPolicy> FromConfig(const v1::DriftPolicy& config);

  static std::vector<DriftThreshold> DefaultThresholds();

  // Sets health->state, reasons and notes from health->windows. The
  // training figures come from `provenance`.
  void Judge(const v1::Provenance& provenance, v1::SetHealth* health) const;

  const std::vector<DriftThreshold>& thresholds() const { return thresholds_; }
  int64_t min_labelled() const { return min_labelled_; }
  int64_t min_scored() const { return min_scored_; }
  absl::Duration tick() const { return tick_; }

 private:
  std::vector<DriftThreshold> thresholds_;
  int64_t min_labelled_ = 500;
  int64_t min_scored_ = 500;
  absl::Duration tick_ = absl::Seconds(15);
};

// "steady", "watch" or "drifting".
std::string DriftStateName(v1::DriftState state);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_POLICY_DRIFT_POLICY_H_
