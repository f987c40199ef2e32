#include "monitor/reliability.h"

#include <cmath>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::monitor {
namespace {

using ::testing::HasSubstr;

// Agreement with sklearn.calibration.calibration_curve and numpy.percentile
// is checked in reference_test.cc; these cases pin the conventions.

TEST(ReliabilityTest, EqualWidthBinsAreClosedOnTheRight) {
  // Edges 0, 0.5, 1: bin 0 = [0, 0.5], bin 1 = (0.5, 1].
  const std::vector<double> p = {0.0, 0.5, 0.5000001, 1.0};
  const std::vector<int> y = {0, 1, 0, 1};
  absl::StatusOr<ReliabilityTable> t = EqualWidthReliability(p, y, 2);
  ASSERT_TRUE(t.ok());
  ASSERT_EQ(t->bins.size(), 2u);
  EXPECT_EQ(t->bins[0].count, 2);
  EXPECT_EQ(t->bins[1].count, 2);
  EXPECT_EQ(t->bins[0].lower, 0.0);
  EXPECT_EQ(t->bins[0].upper, 0.5);
  EXPECT_DOUBLE_EQ(t->bins[0].mean_predicted, 0.25);
  EXPECT_DOUBLE_EQ(t->bins[0].observed_rate, 0.5);
}

TEST(ReliabilityTest, EqualWidthShortcutAgreesWithTheSearch) {
  for (int bins : {1, 2, 3, 7, 10, 13, 100}) {
    const std::vector<double> edges = EqualWidthEdges(bins);
    std::vector<double> probes = edges;  // every edge exactly, and around it
    for (double e : edges) {
      probes.push_back(std::nextafter(e, 0.0));
      probes.push_back(std::nextafter(e, 1.0));
    }
    for (int i = 0; i <= 1000; ++i) probes.push_back(i / 1000.0);
    for (double p : probes) {
      EXPECT_EQ(EqualWidthBinOf(edges, p), ReliabilityBinOf(edges, p))
          << "bins " << bins << ", p " << p;
    }
  }
}

TEST(ReliabilityTest, ExpectedCalibrationErrorByHand) {
  // Bin [0, 0.5]: p {0.2, 0.4}, 0 of 2 positive: |0 - 0.3| = 0.3, weight 1/2.
  // Bin (0.5, 1]: p {0.6, 0.8}, 2 of 2 positive: |1 - 0.7| = 0.3, weight 1/2.
  absl::StatusOr<ReliabilityTable> t = EqualWidthReliability(
      std::vector<double>{0.2, 0.4, 0.6, 0.8}, std::vector<int>{0, 0, 1, 1}, 2);
  ASSERT_TRUE(t.ok());
  EXPECT_NEAR(ExpectedCalibrationError(*t), 0.3, 1e-16);
}

TEST(ReliabilityTest, EmptyBinsReportNaNMeans) {
  absl::StatusOr<ReliabilityTable> t = EqualWidthReliability(
      std::vector<double>{0.05, 0.07}, std::vector<int>{0, 1}, 10);
  ASSERT_TRUE(t.ok());
  EXPECT_EQ(t->bins[3].count, 0);
  EXPECT_TRUE(std::isnan(t->bins[3].mean_predicted));
  EXPECT_TRUE(std::isnan(t->bins[3].observed_rate));
}

TEST(ReliabilityTest, EqualCountBinsKeepTiesTogether) {
  // Six records at 0.3 and two at 0.9: quartile edges 0.3, 0.3, 0.3, 0.45,
  // 0.9, so all 0.3s land in bin 0 and bins 1 and 2 stay empty.
  const std::vector<double> p = {0.3, 0.3, 0.3, 0.3, 0.3, 0.3, 0.9, 0.9};
  const std::vector<int> y = {0, 0, 1, 0, 0, 1, 1, 1};
  absl::StatusOr<ReliabilityTable> t = EqualCountReliability(p, y, 4);
  ASSERT_TRUE(t.ok());
  EXPECT_EQ(t->bins[0].count, 6);
  EXPECT_EQ(t->bins[1].count, 0);
  EXPECT_EQ(t->bins[2].count, 0);
  EXPECT_EQ(t->bins[3].count, 2);
  EXPECT_NEAR(t->bins[2].upper, 0.45, 1e-15);
}

TEST(ReliabilityTest, RefusesBadInput) {
  EXPECT_THAT(
      EqualWidthReliability(std::vector<double>{0.5}, std::vector<int>{1}, 0)
          .status()
          .message(),
      HasSubstr("bins is 0"));
  EXPECT_THAT(
      EqualCountReliability(std::vector<double>{-0.1}, std::vector<int>{1})
          .status()
          .message(),
      HasSubstr("probabilities[0] is -0.1"));
}

}  // namespace
}  // namespace plumbline::monitor
