#include "monitor/hosmer_lemeshow.h"

#include <cmath>
#include <limits>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "monitor/reliability.h"

namespace plumbline::monitor {
namespace {

using ::testing::HasSubstr;

// Agreement with a numpy computation and scipy.stats.chi2.sf is checked in
// reference_test.cc; this case is worked by hand.
TEST(HosmerLemeshowTest, ThreeGroupsByHand) {
  // Three groups of two records; per group E = sum p, O = positives:
  //   p {0.1, 0.1}, y {0, 1}: E 0.2, O 1, var 0.2 * 0.9 = 0.18, term 0.64/0.18
  //   p {0.5, 0.5}, y {1, 0}: E 1.0, O 1, term 0
  //   p {0.8, 0.8}, y {1, 1}: E 1.6, O 2, var 1.6 * 0.2 = 0.32, term 0.16/0.32
  const std::vector<double> p = {0.1, 0.1, 0.5, 0.5, 0.8, 0.8};
  const std::vector<int> y = {0, 1, 1, 0, 1, 1};
  absl::StatusOr<HosmerLemeshowResult> hl = HosmerLemeshow(p, y, 3);
  ASSERT_TRUE(hl.ok()) << hl.status();
  EXPECT_EQ(hl->groups, 3);
  EXPECT_EQ(hl->degrees_of_freedom, 1);
  const double statistic = 0.64 / 0.18 + 0.5;
  EXPECT_NEAR(hl->statistic, statistic, 1e-14);
  // Chi-square with 1 degree of freedom: P(X > x) = erfc(sqrt(x / 2)).
  EXPECT_NEAR(hl->p_value, std::erfc(std::sqrt(statistic / 2)), 1e-15);
}

TEST(HosmerLemeshowTest, DecilesOfRiskKeepTiesTogetherByHand) {
  // Ten records in g = 3 groups: cuts at ranks floor(10/3) = 3 and
  // floor(20/3) = 6, so ranks [0, 3), [3, 6), [6, 10) before ties. Sorted:
  //   rank 0 1   2 3 4   5 6 7   8   9
  //   p   .1 .1 .2 .2 .2 .5 .5 .5 .8  .9
  // The run of 0.2 starts at rank 2 (group 0) and stays there; the run of
  // 0.5 starts at rank 5 (group 1) and stays there. By hand:
  //   group 0: p {.1,.1,.2,.2,.2}, y {0,1,0,0,1}: n 5, O 2, E 0.8,
  //            var 0.8 (1 - 0.8/5) = 0.672, term 1.44 / 0.672 = 15/7
  //   group 1: p {.5,.5,.5}, y {1,1,0}: O 2, E 1.5, var 0.75, term 1/3
  //   group 2: p {.8,.9}, y {1,0}: O 1, E 1.7, var 1.7 (1 - 0.85) = 0.255,
  //            term 0.49 / 0.255 = 98/51
  // Records given out of order to exercise the sort.
  const std::vector<double> p = {0.5, 0.1, 0.9, 0.2, 0.5,
                                 0.2, 0.8, 0.1, 0.2, 0.5};
  const std::vector<int> y = {1, 0, 0, 0, 1, 0, 1, 1, 1, 0};
  absl::StatusOr<HosmerLemeshowResult> hl =
      HosmerLemeshowDecilesOfRisk(p, y, 3);
  ASSERT_TRUE(hl.ok()) << hl.status();
  EXPECT_EQ(hl->groups, 3);
  EXPECT_EQ(hl->degrees_of_freedom, 1);
  const double statistic = 15.0 / 7 + 1.0 / 3 + 98.0 / 51;
  EXPECT_NEAR(hl->statistic, statistic, 1e-13);
  EXPECT_NEAR(hl->p_value, std::erfc(std::sqrt(statistic / 2)), 1e-15);
}

TEST(HosmerLemeshowTest, DecilesOfRiskNeedThreeGroups) {
  // Two distinct probabilities: every tie run fills one group.
  const std::vector<double> p = {0.2, 0.2, 0.2, 0.7, 0.7, 0.7};
  const std::vector<int> y = {0, 1, 0, 1, 1, 0};
  EXPECT_THAT(HosmerLemeshowDecilesOfRisk(p, y).status().message(),
              HasSubstr("fill 2"));
  EXPECT_EQ(HosmerLemeshowDecilesOfRisk(p, y, 2).status().code(),
            absl::StatusCode::kInvalidArgument);
}

TEST(HosmerLemeshowTest, TooFewGroups) {
  EXPECT_THAT(
      HosmerLemeshow(std::vector<double>{0.1, 0.2}, std::vector<int>{0, 1}, 2)
          .status()
          .message(),
      HasSubstr("groups is 2; it must be at least 3"));
  // Two distinct probabilities fill only two groups.
  auto hl = HosmerLemeshow(std::vector<double>{0.2, 0.2, 0.7, 0.7},
                           std::vector<int>{0, 1, 1, 1});
  EXPECT_EQ(hl.status().code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_THAT(hl.status().message(), HasSubstr("fill 2"));
}

TEST(HosmerLemeshowTest, CertainPredictionProvedWrongIsInfinite) {
  // A group of probability exactly 0 holding a positive.
  const std::vector<double> p = {0.0, 0.0, 0.4, 0.6, 0.9};
  const std::vector<int> y = {0, 1, 0, 1, 1};
  absl::StatusOr<ReliabilityTable> table = EqualWidthReliability(p, y, 5);
  ASSERT_TRUE(table.ok());
  absl::StatusOr<HosmerLemeshowResult> hl = HosmerLemeshowFromTable(*table);
  ASSERT_TRUE(hl.ok());
  EXPECT_EQ(hl->statistic, std::numeric_limits<double>::infinity());
  EXPECT_EQ(hl->p_value, 0);
}

}  // namespace
}  // namespace plumbline::monitor
