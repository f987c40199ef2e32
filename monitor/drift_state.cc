#include "monitor/drift_state.h"

#include <cmath>
#include <utility>
#include <vector>

#include "absl/status/status.h"
#include "absl/strings/str_format.h"
#include "absl/strings/str_join.h"

namespace plumbline::monitor {

absl::string_view DriftStateName(DriftState state) {
  switch (state) {
    case DriftState::kSteady:
      return "steady";
    case DriftState::kWatch:
      return "watch";
    case DriftState::kDrifting:
      return "drifting";
  }
  return "unknown";
}

LevelCondition FigureCondition(absl::string_view figure, double value,
                               const HysteresisBand& band) {
  LevelCondition c;
  if (std::isnan(value)) {
    c.reason = absl::StrFormat("%s not available", figure);
    return c;
  }
  c.entered = value >= band.enter;
  c.released = value < band.release;
  if (c.entered) {
    c.reason = absl::StrFormat("%s %.4g >= %.4g", figure, value, band.enter);
  } else if (c.released) {
    c.reason = absl::StrFormat("%s %.4g < %.4g", figure, value, band.release);
  } else {
    c.reason = absl::StrFormat("%s %.4g in [%.4g, %.4g)", figure, value,
                               band.release, band.enter);
  }
  return c;
}

LevelCondition AnyOf(absl::Span<const LevelCondition> conditions) {
  LevelCondition out;
  out.released = true;
  std::vector<std::string> entered, holding;
  for (const LevelCondition& c : conditions) {
    if (c.entered) entered.push_back(c.reason);
    if (!c.released) holding.push_back(c.reason);
    out.entered = out.entered || c.entered;
    out.released = out.released && c.released;
  }
  if (out.entered) {
    out.reason = absl::StrJoin(entered, "; ");
  } else if (out.released) {
    std::vector<std::string> all;
    for (const LevelCondition& c : conditions) all.push_back(c.reason);
    out.reason = absl::StrJoin(all, "; ");
  } else {
    out.reason = absl::StrJoin(holding, "; ");
  }
  return out;
}

absl::StatusOr<DriftStateMachine> DriftStateMachine::Create(
    const DriftStateOptions& options) {
  if (options.release_evaluations < 1) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "drift state: release_evaluations is %d; it must be at least 1",
        options.release_evaluations));
  }
  return DriftStateMachine(options);
}

int DriftStateMachine::release_run() const {
  switch (state_) {
    case DriftState::kSteady:
      return 0;
    case DriftState::kWatch:
      return watch_release_run_;
    case DriftState::kDrifting:
      return drifting_release_run_;
  }
  return 0;
}

DriftTransition DriftStateMachine::Move(DriftState to, TransitionKind kind,
                                        std::string reason) {
  DriftTransition t{state_, to, kind, std::move(reason), evaluations_};
  state_ = to;
  ++transitions_;
  watch_release_run_ = 0;
  drifting_release_run_ = 0;
  return t;
}

std::optional<DriftTransition> DriftStateMachine::Evaluate(
    const DriftConditions& conditions) {
  ++evaluations_;
  watch_release_run_ = conditions.watch.released ? watch_release_run_ + 1 : 0;
  drifting_release_run_ =
      conditions.drifting.released ? drifting_release_run_ + 1 : 0;
  const int needed = options_.release_evaluations;

  if (conditions.drifting.entered && state_ != DriftState::kDrifting) {
    return Move(DriftState::kDrifting, TransitionKind::kEntered,
                "entered drifting: " + conditions.drifting.reason);
  }
  switch (state_) {
    case DriftState::kSteady:
      if (conditions.watch.entered) {
        return Move(DriftState::kWatch, TransitionKind::kEntered,
                    "entered watch: " + conditions.watch.reason);
      }
      return std::nullopt;
    case DriftState::kWatch:
      if (watch_release_run_ >= needed) {
        return Move(DriftState::kSteady, TransitionKind::kReleased,
                    absl::StrFormat("released watch for %d evaluations: %s",
                                    needed, conditions.watch.reason));
      }
      return std::nullopt;
    case DriftState::kDrifting:
      if (drifting_release_run_ >= needed) {
        const bool to_steady =
            watch_release_run_ >= needed && !conditions.watch.entered;
        return Move(
            to_steady ? DriftState::kSteady : DriftState::kWatch,
            TransitionKind::kReleased,
            absl::StrFormat("released drifting for %d evaluations: %s", needed,
                            to_steady ? conditions.watch.reason
                                      : conditions.drifting.reason));
      }
      return std::nullopt;
  }
  return std::nullopt;
}

}  // namespace plumbline::monitor
