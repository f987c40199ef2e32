#include "monitor/metrics.h"

#include <cmath>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::monitor {
namespace {

using ::testing::HasSubstr;

// Agreement with scikit-learn's log_loss and brier_score_loss is checked in
// reference_test.cc (and on real data in tests/reference); these cases
// follow from the definitions.
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
  EXPECT_THAT(
      LogLoss(std::vector<double>{0.1}, std::vector<int>{2}).status().message(),
      HasSubstr("labels[0] is 2"));
  EXPECT_THAT(LogLoss(std::vector<double>{0.1, 0.2}, std::vector<int>{1})
                  .status()
                  .message(),
              HasSubstr("2 scores but 1 labels"));
  EXPECT_EQ(LogLoss({}, {}).status().code(),
            absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(
      LogLoss(std::vector<double>{0.1, std::nan("")}, std::vector<int>{1, 0})
          .status()
          .message(),
      HasSubstr("log_odds[1] is NaN"));
}

TEST(BrierScoreTest, Definition) {
  // ((0.9 - 1)^2 + (0.2 - 0)^2 + (0.5 - 1)^2) / 3 = (0.01 + 0.04 + 0.25) / 3.
  auto bs =
      BrierScore(std::vector<double>{0.9, 0.2, 0.5}, std::vector<int>{1, 0, 1});
  ASSERT_TRUE(bs.ok());
  EXPECT_NEAR(*bs, 0.1, 1e-16);
}

TEST(BrierScoreTest, RefusesProbabilitiesOutsideTheUnitInterval) {
  auto bs = BrierScore(std::vector<double>{0.5, 1.5}, std::vector<int>{1, 0});
  EXPECT_EQ(bs.status().code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(bs.status().message(),
              HasSubstr("Brier score: probabilities[1] is 1.5"));
  EXPECT_THAT(BrierScore(std::vector<double>{std::nan("")}, std::vector<int>{1})
                  .status()
                  .message(),
              HasSubstr("probabilities[0] is nan"));
  EXPECT_THAT(BrierScore({}, {}).status().message(),
              HasSubstr("no labelled records"));
}

TEST(CalibrationInTheLargeTest, MeanPredictedMinusObservedRate) {
  // Mean predicted 0.5, observed rate 1/4: over-predicting by 0.25.
  auto citl = CalibrationInTheLarge(std::vector<double>{0.2, 0.4, 0.6, 0.8},
                                    std::vector<int>{0, 0, 1, 0});
  ASSERT_TRUE(citl.ok());
  EXPECT_NEAR(*citl, 0.25, 1e-16);
  EXPECT_THAT(
      CalibrationInTheLarge(std::vector<double>{0.2}, std::vector<int>{-1})
          .status()
          .message(),
      HasSubstr("labels[0] is -1"));
}

}  // namespace
}  // namespace plumbline::monitor
