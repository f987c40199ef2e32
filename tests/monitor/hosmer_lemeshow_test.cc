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
