// File: tests/daemon/scoring/shadow_tracker_test.cc
//
// ShadowTracker: failures by reason, the run of consecutive failures, and
// one stop at the limit.
#include "daemon/scoring/shadow_tracker.h"

#include "gtest/gtest.h"

namespace plumbline::daemon {
namespace {

const SetVersion kShadow{"courier", "c1"};

TEST(ShadowTrackerTest, StopsOnceAfterTheLimitOfFailuresInARow) {
  ShadowTracker tracker(3);
  const absl::Status bad = absl::InvalidArgumentError("feature 'x': unknown");
  EXPECT_EQ(tracker.Record(kShadow, bad), ShadowTracker::kKeep);
  EXPECT_EQ(tracker.Record(kShadow, bad), ShadowTracker::kKeep);
  // A success resets the run.
  EXPECT_EQ(tracker.Record(kShadow, absl::OkStatus()), ShadowTracker::kKeep);
  EXPECT_EQ(tracker.Record(kShadow, bad), ShadowTracker::kKeep);
  EXPECT_EQ(tracker.Record(kShadow, bad), ShadowTracker::kKeep);
  EXPECT_FALSE(tracker.Stopped(kShadow));
  EXPECT_EQ(tracker.Record(kShadow, bad), ShadowTracker::kStop);
  EXPECT_TRUE(tracker.Stopped(kShadow));
  EXPECT_EQ(tracker.Record(kShadow, bad), ShadowTracker::kKeep)
      << "the stop is reported once";
  const ShadowStats s = tracker.Of(kShadow);
  EXPECT_EQ(s.scored_calls, 1);
  EXPECT_EQ(s.failures.at("invalid_argument"), 6);
  EXPECT_EQ(s.consecutive_failures, 4);
  EXPECT_EQ(s.last_error, "feature 'x': unknown");
  EXPECT_TRUE(s.stopped);
}

TEST(ShadowTrackerTest, ALimitOfZeroNeverStops) {
  ShadowTracker tracker(0);
  for (int i = 0; i < 1000; ++i) {
    EXPECT_EQ(tracker.Record(kShadow, absl::InternalError("x")),
              ShadowTracker::kKeep);
  }
  EXPECT_FALSE(tracker.Stopped(kShadow));
  EXPECT_EQ(tracker.Snapshot().size(), 1u);
}

}  // namespace
}  // namespace plumbline::daemon
