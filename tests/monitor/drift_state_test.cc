// File: tests/monitor/drift_state_test.cc
//
// The drift state machine: entry, escalation, release after the dwell, and
// figures hovering at a threshold that must not make the state flap. The
// sequences and expected transitions are worked by hand from the rules in
// monitor/drift_state.h.
#include "monitor/drift_state.h"

#include <cmath>
#include <optional>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::monitor {
namespace {

using ::testing::HasSubstr;

const HysteresisBand kWatchBand{.enter = 0.10, .release = 0.08};
const HysteresisBand kDriftBand{.enter = 0.25, .release = 0.20};

DriftConditions Psi(double value) {
  return {.watch = FigureCondition("psi", value, kWatchBand),
          .drifting = FigureCondition("psi", value, kDriftBand)};
}

// Runs the values through a fresh machine and returns its transitions.
std::vector<DriftTransition> Transitions(const std::vector<double>& values,
                                         int release_evaluations = 3) {
  absl::StatusOr<DriftStateMachine> m =
      DriftStateMachine::Create({.release_evaluations = release_evaluations});
  EXPECT_TRUE(m.ok()) << m.status();
  std::vector<DriftTransition> out;
  for (double v : values) {
    if (std::optional<DriftTransition> t = m->Evaluate(Psi(v))) {
      out.push_back(*t);
    }
  }
  return out;
}

TEST(DriftStateTest, EntersEscalatesAndReleasesWithReasons) {
  // By hand, dwell 3 (run = consecutive released evaluations):
  //   1 0.05 steady
  //   2 0.12 -> watch (>= 0.10)
  //   3 0.30 -> drifting (>= 0.25)
  //   4 0.21 drifting, not < 0.20: run 0
  //   5 0.15 run 1, 6 0.19 run 2, 7 0.18 run 3 -> watch (0.18 is not
  //     < 0.08, so not straight to steady)
  //   8 0.12 watch, run 0; 9 0.07 run 1; 10 0.05 run 2; 11 0.06 run 3
  //     -> steady at 11
  const std::vector<DriftTransition> t = Transitions(
      {0.05, 0.12, 0.30, 0.21, 0.15, 0.19, 0.18, 0.12, 0.07, 0.05, 0.06});
  ASSERT_EQ(t.size(), 4u);
  EXPECT_EQ(t[0].to, DriftState::kWatch);
  EXPECT_EQ(t[0].evaluation, 2);
  EXPECT_EQ(t[0].reason, "entered watch: psi 0.12 >= 0.1");
  EXPECT_EQ(t[1].from, DriftState::kWatch);
  EXPECT_EQ(t[1].to, DriftState::kDrifting);
  EXPECT_EQ(t[1].kind, TransitionKind::kEntered);
  EXPECT_EQ(t[1].evaluation, 3);
  EXPECT_EQ(t[1].reason, "entered drifting: psi 0.3 >= 0.25");
  EXPECT_EQ(t[2].to, DriftState::kWatch);
  EXPECT_EQ(t[2].kind, TransitionKind::kReleased);
  EXPECT_EQ(t[2].evaluation, 7);
  EXPECT_THAT(t[2].reason, HasSubstr("released drifting for 3 evaluations"));
  EXPECT_EQ(t[3].to, DriftState::kSteady);
  EXPECT_EQ(t[3].evaluation, 11);
  EXPECT_EQ(t[3].reason, "released watch for 3 evaluations: psi 0.06 < 0.08");
}

TEST(DriftStateTest, FigureHoveringAtTheEntryThresholdDoesNotFlap) {
  // A calibration figure hovering at 0.10 +- 0.002 for 200 evaluations:
  // without hysteresis it would cross the threshold 199 times. Here it
  // enters watch once and never leaves (0.098 is not below 0.08).
  std::vector<double> values;
  for (int i = 0; i < 200; ++i) values.push_back(i % 2 == 0 ? 0.098 : 0.102);
  const std::vector<DriftTransition> t = Transitions(values);
  ASSERT_EQ(t.size(), 1u);
  EXPECT_EQ(t[0].to, DriftState::kWatch);
}

TEST(DriftStateTest, FigureHoveringAtTheReleaseThresholdNeedsTheDwell) {
  // In watch, a figure alternating 0.079 / 0.081 never holds its release
  // for 3 evaluations in a row, so the state stays watch; two runs of 2
  // released evaluations do not add up. Then three in a row release it.
  std::vector<double> values = {0.12};  // enter watch
  for (int i = 0; i < 100; ++i) values.push_back(i % 2 == 0 ? 0.079 : 0.081);
  values.insert(values.end(), {0.07, 0.07, 0.085, 0.07, 0.07, 0.07});
  const std::vector<DriftTransition> t = Transitions(values);
  ASSERT_EQ(t.size(), 2u);
  EXPECT_EQ(t[1].to, DriftState::kSteady);
  EXPECT_EQ(t[1].evaluation, static_cast<int64_t>(values.size()));
}

TEST(DriftStateTest, DriftingGoesStraightToSteadyWhenBothRelease) {
  // 0.30 enters drifting; then 0.01 three times releases drifting (< 0.20)
  // and watch (< 0.08) over the same run: straight to steady.
  const std::vector<DriftTransition> t =
      Transitions({0.30, 0.01, 0.01, 0.01}, 3);
  ASSERT_EQ(t.size(), 2u);
  EXPECT_EQ(t[0].from, DriftState::kSteady);
  EXPECT_EQ(t[0].to, DriftState::kDrifting);
  EXPECT_EQ(t[1].to, DriftState::kSteady);
  EXPECT_EQ(t[1].evaluation, 4);
}

TEST(DriftStateTest, AnyOfCombinesFigures) {
  const LevelCondition a = FigureCondition("psi", 0.3, kDriftBand);
  const LevelCondition b = FigureCondition("cusum", 1.0, {5.0, 4.0});
  const LevelCondition any = AnyOf({a, b});
  EXPECT_TRUE(any.entered);
  EXPECT_FALSE(any.released);
  EXPECT_EQ(any.reason, "psi 0.3 >= 0.25");
  const LevelCondition quiet =
      AnyOf({FigureCondition("psi", 0.01, kDriftBand), b});
  EXPECT_FALSE(quiet.entered);
  EXPECT_TRUE(quiet.released);
  EXPECT_EQ(quiet.reason, "psi 0.01 < 0.2; cusum 1 < 4");
  const LevelCondition missing = FigureCondition("auc", NAN, kDriftBand);
  EXPECT_FALSE(missing.entered);
  EXPECT_FALSE(missing.released);
  EXPECT_EQ(missing.reason, "auc not available");
}

TEST(DriftStateTest, RefusesZeroDwell) {
  EXPECT_THAT(
      DriftStateMachine::Create({.release_evaluations = 0}).status().message(),
      HasSubstr("release_evaluations is 0"));
  EXPECT_EQ(DriftStateName(DriftState::kDrifting), "drifting");
}

}  // namespace
}  // namespace plumbline::monitor
