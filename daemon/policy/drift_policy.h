// File: daemon/policy/drift_policy.h
//
// The drift policy: thresholds and tests that turn a set version's figures
// into one of the states steady / watch / drifting, with the list of
// figures that crossed a threshold (the reasons) and notes on what could
// not be judged. HealthMonitor keeps a DriftTracker per version and applies
// the policy to it on each tick.
//
//   absl::StatusOr<DriftPolicy> policy = DriftPolicy::FromConfig(config);
//   absl::StatusOr<DriftTracker> tracker = DriftTracker::Create(*policy);
//   std::optional<PolicyTransition> t = tracker->Evaluate(
//       *policy, plan.set().provenance(), &health);  // state, reasons
//   if (t) LogAndCount(t->from, t->to, t->trigger, t->reason);
//
// Conditions, per evaluation (Judge):
//  - A PSI threshold (score_psi, feature_psi) enters a level only when the
//    PSI is above the level's threshold (the effect size) AND its
//    significance test (WindowHealth.score_psi_test, FeatureHealth.psi_test:
//    Yurdakul & Naranjo 2020) gives a p-value below the test's level
//    (drift_policy.alpha shared out by Bonferroni over the version's tests).
//    A baseline without a recorded count has no test; its PSI then judges on
//    the effect size alone, as before the test existed, with a note.
//  - A CUSUM chart (SetHealth.cusum) that alarmed since the last evaluation
//    enters drifting; reason: the chart, its value at the alarm and its
//    limit.
//  - Any other threshold compares its figure with the threshold.
// State (DriftTracker, monitor/drift_state.h): a level is entered as soon as
// one of its conditions holds; it is left only once every condition of it
// has been released for release_evaluations evaluations in a row. A figure
// is released when it is back on the good side of its release threshold
// (watch_release / drifting_release; default release_ratio x the entry
// threshold), a PSI also when its test is no longer significant, a chart
// when it did not alarm since the last evaluation. So a figure hovering at
// a threshold cannot make the state flap. Judge alone gives the level of
// one evaluation without memory (tests, plumbctl's checks).
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
// DefaultThresholds(): score_psi and feature_psi watch 0.10 / drifting 0.25
// (with the test at alpha 0.01). Other figures (log_loss relative to
// training, expected_calibration_error, ...) judge only when the config
// lists them: a fixed threshold on them has no stated false-alarm rate.
//
// Thread-safe: DriftPolicy is immutable after construction; a DriftTracker
// is a value type, not thread-safe (HealthMonitor guards it).
#ifndef PLUMBLINE_DAEMON_POLICY_DRIFT_POLICY_H_
#define PLUMBLINE_DAEMON_POLICY_DRIFT_POLICY_H_

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "absl/container/flat_hash_map.h"
#include "absl/status/statusor.h"
#include "absl/time/time.h"
#include "monitor/drift_state.h"
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
  // Release thresholds, on the same scale as watch and drifting.
  double watch_release = 0;
  double drifting_release = 0;
};

// What one evaluation's figures say, before the state machine.
struct PolicyConditions {
  monitor::DriftConditions conditions;
  // The metric of the first (most severe) entered condition of each level
  // ("score_psi", "cusum_upper", ...); empty when none entered.
  std::string watch_trigger;
  std::string drifting_trigger;
};

// A change of state, for the event log and the transition counter.
struct PolicyTransition {
  v1::DriftState from = v1::STEADY;
  v1::DriftState to = v1::STEADY;
  // The metric that entered the state, or "released".
  std::string trigger;
  std::string reason;  // words, with the p-value or chart value
};

class DriftPolicy {
 public:
  // The defaults: DefaultThresholds(), min_labelled and min_scored 500,
  // tick 15 s, alpha 0.01, release_evaluations 3, release_ratio 0.8.
  DriftPolicy();

  // The policy of a config file's drift_policy (zeros and an empty
  // threshold list mean the defaults). INVALID_ARGUMENT naming the field
  // (drift_policy.thresholds[2].metric ...) for an unknown or repeated
  // metric (calibration_in_the_large: renamed), thresholds or release
  // thresholds in the wrong order for their direction, a negative DISTANCE
  // threshold, relative_to_training on a metric other than log_loss, alpha
  // outside (0, 1) or release_ratio outside (0, 1].
  static absl::StatusOr<DriftPolicy> FromConfig(const v1::DriftPolicy& config);

  static std::vector<DriftThreshold> DefaultThresholds();

  // The conditions of one evaluation. Sets health->reasons and notes, and
  // health->state to the worst level entered now (no memory). A chart
  // alarmed since the last evaluation when its alarms exceed
  // alarms_seen[chart] (0 when absent or alarms_seen is null).
  PolicyConditions Judge(const v1::Provenance& provenance,
                         v1::SetHealth* health,
                         const absl::flat_hash_map<std::string, int64_t>*
                             alarms_seen = nullptr) const;

  const std::vector<DriftThreshold>& thresholds() const { return thresholds_; }
  int64_t min_labelled() const { return min_labelled_; }
  int64_t min_scored() const { return min_scored_; }
  absl::Duration tick() const { return tick_; }
  double alpha() const { return alpha_; }
  int release_evaluations() const { return release_evaluations_; }
  double release_ratio() const { return release_ratio_; }

 private:
  std::vector<DriftThreshold> thresholds_;
  int64_t min_labelled_ = 500;
  int64_t min_scored_ = 500;
  absl::Duration tick_ = absl::Seconds(15);
  double alpha_ = 0.01;
  int release_evaluations_ = 3;
  double release_ratio_ = 0.8;
};

// The drift state of one set version across evaluations: hysteresis and
// dwell (monitor::DriftStateMachine) and the chart alarms already seen.
class DriftTracker {
 public:
  static absl::StatusOr<DriftTracker> Create(const DriftPolicy& policy);

  // Judges `health` and moves the state: sets health->state (the
  // tracker's state), reasons, notes, release_run, release_evaluations and
  // last_transition. Returns the transition, if any.
  std::optional<PolicyTransition> Evaluate(const DriftPolicy& policy,
                                           const v1::Provenance& provenance,
                                           v1::SetHealth* health);

  v1::DriftState state() const;

 private:
  explicit DriftTracker(monitor::DriftStateMachine machine)
      : machine_(std::move(machine)) {}

  monitor::DriftStateMachine machine_;
  absl::flat_hash_map<std::string, int64_t> alarms_seen_;
  std::optional<v1::DriftTransition> last_;
};

// "steady", "watch" or "drifting".
std::string DriftStateName(v1::DriftState state);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_POLICY_DRIFT_POLICY_H_
