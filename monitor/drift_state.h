// File: monitor/drift_state.h
//
// The drift state of a set version (steady, watch, drifting) with
// hysteresis and dwell, so that a figure hovering at a threshold does not
// flip the state back and forth. The drift policy evaluates its figures on
// every tick, turns them into conditions (FigureCondition / AnyOf) and calls
// DriftStateMachine::Evaluate once per tick; a returned transition carries
// its reason for the event log and the transition counter.
//
// Rules, per evaluation:
//  - A state is entered as soon as its entry condition holds: drifting from
//    steady or watch, watch from steady. (Escalation is immediate.)
//  - A state is left only when its release condition has held for
//    `release_evaluations` consecutive evaluations (counted from the
//    evaluation after the state was entered). Drifting then goes down to
//    watch, or straight to steady when watch's release condition held over
//    the same run; watch goes to steady.
//  - Otherwise the state stays. Entry takes precedence over release.
// With a figure, the release threshold sits below the entry threshold
// (e.g. enter watch at PSI >= 0.10, release below 0.08), so noise around
// either threshold cannot make the state flap.
//
//   absl::StatusOr<DriftStateMachine> m = DriftStateMachine::Create({});
//   DriftConditions c{
//       .watch = FigureCondition("psi(score)", psi, {.enter = 0.1, .release =
//       0.08}), .drifting = FigureCondition("psi(score)", psi, {.enter = 0.25,
//       .release = 0.2})};
//   if (std::optional<DriftTransition> t = m->Evaluate(c)) Log(t->reason);
//
// Not thread-safe; a value type (the daemon keeps one per set version under
// its lock). The helper functions are pure.
#ifndef PLUMBLINE_MONITOR_DRIFT_STATE_H_
#define PLUMBLINE_MONITOR_DRIFT_STATE_H_

#include <cstdint>
#include <optional>
#include <string>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/types/span.h"

namespace plumbline::monitor {

enum class DriftState {
  kSteady,    // no condition holds
  kWatch,     // an early-warning condition held; nothing is started
  kDrifting,  // a drift condition held; the policy may start a refit
};

// "steady", "watch", "drifting".
absl::string_view DriftStateName(DriftState state);

// One state's conditions at one evaluation.
struct LevelCondition {
  bool entered = false;   // the entry condition holds now
  bool released = false;  // the (lower) release condition holds now
  // What holds, in words and numbers: "psi(score) 0.31 >= 0.25".
  std::string reason;
};

struct DriftConditions {
  LevelCondition watch;
  LevelCondition drifting;
};

// Entry and release thresholds of one figure: entered when value >= enter,
// released when value < release. REQUIRES: release <= enter.
struct HysteresisBand {
  double enter = 0;
  double release = 0;
};

// The condition of one figure against its band; a NaN value (figure not
// available) neither enters nor releases.
LevelCondition FigureCondition(absl::string_view figure, double value,
                               const HysteresisBand& band);

// Entered if any condition is entered; released if every condition is
// released (all of an empty list). The reason lists the conditions that
// decide it, joined by "; ".
LevelCondition AnyOf(absl::Span<const LevelCondition> conditions);

enum class TransitionKind {
  kEntered,   // the target's entry condition held
  kReleased,  // the source's release condition held long enough
};

struct DriftTransition {
  DriftState from = DriftState::kSteady;
  DriftState to = DriftState::kSteady;
  TransitionKind kind = TransitionKind::kEntered;
  std::string reason;      // e.g. "entered drifting: cusum(upper) 5.2 >= 4.9"
  int64_t evaluation = 0;  // 1-based number of the evaluation
};

struct DriftStateOptions {
  // Consecutive evaluations a release condition must hold to leave a state.
  int release_evaluations = 3;
};

class DriftStateMachine {
 public:
  // INVALID_ARGUMENT unless release_evaluations >= 1. Starts steady.
  static absl::StatusOr<DriftStateMachine> Create(
      const DriftStateOptions& options);

  // One evaluation: the new state's transition, or nullopt if it stays.
  std::optional<DriftTransition> Evaluate(const DriftConditions& conditions);

  DriftState state() const { return state_; }
  int64_t evaluations() const { return evaluations_; }
  int64_t transitions() const { return transitions_; }
  // Consecutive evaluations the current state's release condition has held.
  int release_run() const;

 private:
  explicit DriftStateMachine(const DriftStateOptions& options)
      : options_(options) {}
  DriftTransition Move(DriftState to, TransitionKind kind, std::string reason);

  DriftStateOptions options_;
  DriftState state_ = DriftState::kSteady;
  int64_t evaluations_ = 0;
  int64_t transitions_ = 0;
  int watch_release_run_ = 0;
  int drifting_release_run_ = 0;
};

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_DRIFT_STATE_H_
