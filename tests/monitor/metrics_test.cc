#include "monitor/metrics.h"

#include <cmath>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::monitor {
namespace {

using ::testing::HasSubstr;

// Agreement with scikit-learn's log_loss is checked on real data in
// tests/reference; these cases follow from the definition.
TEST(LogLossTest, CoinFlipIsLogTwo) {
  // -log(1/2) for every record: the definition of log-loss at p = 1/2.
  auto ll = LogLoss(std::vector<double>{0, 0, 0}, std::vector<int>{1, 0, 1});
  ASSERT_TRUE(ll.ok());
  EXPECT_NEAR(*ll, std::log(2.0), 1e-16);
}

TEST(LogLossTest, ConfidentMistakeStaysFinite) {
  // Log-odds 1000 for an event that did not happen: the loss is
  // log(1 + e^1000) = 1000 + log1p(e^-1000), i.e. 1000 in double. A loss
  // computed from the rounded probability 1 would be infinite.
  auto ll = LogLoss(std::vector<double>{1000}, std::vector<int>{0});
  ASSERT_TRUE(ll.ok());
  EXPECT_EQ(*ll, 1000.0);
}

TEST(LogLossTest, RefusesBadInput) {
  EXPECT_THAT(LogLoss(std::vector<double>{0.1}, std::vector<int>{2}).status().message(),
              HasSubstr("labels[0] is 2"));
  EXPECT_THAT(LogLoss(std::vector<double>{0.1, 0.2}, std::vector<int>{1}).status().message(),
              HasSubstr("2 scores but 1 labels"));
  EXPECT_EQ(LogLoss({}, {}).status().code(), absl::StatusCode::kInvalidArgument);
}

}  // namespace
}  // namespace plumbline::monitor
