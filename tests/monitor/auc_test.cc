#include "monitor/auc.h"

#include <cmath>
#include <cstdint>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::monitor {
namespace {

using ::testing::HasSubstr;

// Agreement with sklearn.metrics.roc_auc_score, ties included, is checked in
// reference_test.cc; these cases follow from the Mann–Whitney definition.
TEST(AucTest, PerfectAndReversedOrdering) {
  EXPECT_EQ(*Auc(std::vector<double>{1, 2, 3, 4}, std::vector<int>{0, 0, 1, 1}),
            1.0);
  EXPECT_EQ(*Auc(std::vector<double>{1, 2, 3, 4}, std::vector<int>{1, 1, 0, 0}),
            0.0);
}

TEST(AucTest, TiesCountOneHalf) {
  // Positives {0.8, 0.5}, negatives {0.5, 0.2}: pairs score 1, 1, 1/2, 1.
  auto auc = Auc(std::vector<double>{0.8, 0.5, 0.5, 0.2},
                 std::vector<int>{1, 1, 0, 0});
  ASSERT_TRUE(auc.ok());
  EXPECT_EQ(*auc, 3.5 / 4);
  // Every score tied: 1/2.
  EXPECT_EQ(*Auc(std::vector<double>{3, 3, 3}, std::vector<int>{1, 0, 0}), 0.5);
}

TEST(AucTest, OneClassIsUndefined) {
  auto auc = Auc(std::vector<double>{0.1, 0.7}, std::vector<int>{1, 1});
  EXPECT_EQ(auc.status().code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_THAT(
      auc.status().message(),
      HasSubstr("AUC is undefined: all 2 labelled records are positives"));
}

TEST(AucTest, RefusesNaNScores) {
  auto auc =
      Auc(std::vector<double>{0.1, std::nan("")}, std::vector<int>{1, 0});
  EXPECT_EQ(auc.status().code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(auc.status().message(), HasSubstr("scores[1] is NaN"));
}

TEST(AucFromGroupsTest, LargeCountsStayExact) {
  // 3e9 positives above 3e9 negatives, plus a tied group: the pair counts
  // exceed 2^64, which the 128-bit sums hold.
  const std::vector<int64_t> pos = {0, 1000, 3000000000};
  const std::vector<int64_t> neg = {3000000000, 1000, 0};
  auto auc = AucFromGroups(pos, neg);
  ASSERT_TRUE(auc.ok());
  // U = 1000 * (3e9 + 500) + 3e9 * 3000001000 over P N = 3000001000^2.
  const double p = 3000001000.0;
  EXPECT_NEAR(*auc, (1000 * (3e9 + 500) + 3e9 * p) / (p * p), 1e-15);
}

}  // namespace
}  // namespace plumbline::monitor
