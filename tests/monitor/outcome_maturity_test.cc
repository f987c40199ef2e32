// File: tests/monitor/outcome_maturity_test.cc
//
// Maturity cut-off and outcome coverage by age, counted by hand.
#include "monitor/outcome_maturity.h"

#include <cmath>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::monitor {
namespace {

using ::testing::HasSubstr;

const absl::Time kNow = absl::FromUnixSeconds(1'700'000'000);

TEST(OutcomeMaturityTest, MatureAtTheHorizonExactly) {
  const absl::Duration horizon = absl::Hours(24 * 30);
  EXPECT_TRUE(IsMature(kNow - horizon, kNow, horizon));
  EXPECT_FALSE(IsMature(kNow - horizon + absl::Seconds(1), kNow, horizon));
  EXPECT_EQ(MaturityCutoff(kNow, horizon), kNow - horizon);
}

TEST(OutcomeMaturityTest, CoverageByAgeByHand) {
  // Horizon 7 days; buckets [0, 1d), [1d, 7d), [7d, 30d), [30d, inf).
  // Records (age, outcome?) and their bucket, by hand:
  //   2h n, 20h y          -> [0, 1d):    2 scored, 1 outcome, 0.5
  //   1d y (edge), 3d n    -> [1d, 7d):   2 scored, 1 outcome, 0.5
  //   7d y, 10d y, 29d n   -> [7d, 30d):  3 scored, 2 outcomes, 2/3, mature
  //   (none)               -> [30d, inf): 0 scored, NaN, mature
  //   scored 1h after now (skew) counts as age 0: first bucket, 3 scored.
  const absl::Duration day = absl::Hours(24);
  const std::vector<ScoredRecord> records = {{kNow - absl::Hours(2), false},
                                             {kNow - absl::Hours(20), true},
                                             {kNow - day, true},
                                             {kNow - 3 * day, false},
                                             {kNow - 7 * day, true},
                                             {kNow - 10 * day, true},
                                             {kNow - 29 * day, false},
                                             {kNow + absl::Hours(1), false}};
  absl::StatusOr<std::vector<AgeCoverage>> c =
      OutcomeCoverageByAge(records, kNow, {day, 7 * day, 30 * day}, 7 * day);
  ASSERT_TRUE(c.ok()) << c.status();
  ASSERT_EQ(c->size(), 4u);
  EXPECT_EQ((*c)[0].scored, 3);
  EXPECT_EQ((*c)[0].with_outcome, 1);
  EXPECT_DOUBLE_EQ((*c)[0].coverage, 1.0 / 3);
  EXPECT_FALSE((*c)[0].mature);
  EXPECT_EQ((*c)[1].scored, 2);
  EXPECT_DOUBLE_EQ((*c)[1].coverage, 0.5);
  EXPECT_FALSE((*c)[1].mature);
  EXPECT_EQ((*c)[2].scored, 3);
  EXPECT_EQ((*c)[2].with_outcome, 2);
  EXPECT_DOUBLE_EQ((*c)[2].coverage, 2.0 / 3);
  EXPECT_TRUE((*c)[2].mature);
  EXPECT_EQ((*c)[3].scored, 0);
  EXPECT_TRUE(std::isnan((*c)[3].coverage));
  EXPECT_TRUE((*c)[3].mature);
  EXPECT_EQ((*c)[3].max_age, absl::InfiniteDuration());
}

TEST(OutcomeMaturityTest, RefusesBadEdgesAndTimes) {
  const std::vector<ScoredRecord> none;
  EXPECT_THAT(OutcomeCoverageByAge(none, kNow, {absl::Hours(2), absl::Hours(1)},
                                   absl::Hours(1))
                  .status()
                  .message(),
              HasSubstr("age_edges[1] is 1h"));
  EXPECT_THAT(
      OutcomeCoverageByAge(none, kNow, {}, -absl::Hours(1)).status().message(),
      HasSubstr("horizon is -1h"));
  const std::vector<ScoredRecord> bad = {{absl::InfinitePast(), true}};
  EXPECT_THAT(
      OutcomeCoverageByAge(bad, kNow, {}, absl::Hours(1)).status().message(),
      HasSubstr("records[0].scored_at is infinite"));
}

}  // namespace
}  // namespace plumbline::monitor
