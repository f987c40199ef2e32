// File: tests/monitor/risk_adjusted_cusum_test.cc
//
// The chart's weights and steps worked by hand. Run lengths are tested in
// cusum_run_length_test.cc and against NumPy in alarm_reference_test.cc.
#include "monitor/risk_adjusted_cusum.h"

#include <cmath>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::monitor {
namespace {

using ::testing::HasSubstr;

// log(0.2 / 0.8): the log-odds of p = 0.2.
const double kLogOddsOfPoint2 = std::log(0.25);

TEST(RiskAdjustedCusumTest, OddsRatioWeightsByHand) {
  // Steiner et al. (2000) with R_0 = 1, R_A = 2 and p = 0.2, by hand:
  // 1 - p + R_A p = 0.8 + 0.4 = 1.2;
  //   y = 1: W = ln(2 / 1.2) = ln(5/3) = 1.6094379124341003
  //   - 1.0986122886681098
  //          = 0.5108256237659905
  //   y = 0: W = ln(1 / 1.2) = -0.1823215567939546
  const LogOddsChange r2 = LogOddsChange::OddsRatio(2.0);
  EXPECT_NEAR(CusumWeight(r2, kLogOddsOfPoint2, 1), 0.5108256237659905, 1e-15);
  EXPECT_NEAR(CusumWeight(r2, kLogOddsOfPoint2, 0), -0.1823215567939546, 1e-15);
  // A lower chart, R_A = 2/3 and p = 0.7, by hand:
  // 1 - p + R_A p = 0.3 + 0.7 * 2/3 = 0.7666...;
  //   y = 1: W = ln((2/3) / 0.76667) = ln(20/23) = -0.13976194237515874
  //   y = 0: W = ln(1 / 0.76667) = ln(30/23) = 0.2657031657330057
  const LogOddsChange lower = LogOddsChange::OddsRatio(1 / 1.5);
  const double z = std::log(0.7 / 0.3);
  EXPECT_NEAR(CusumWeight(lower, z, 1), std::log(20.0 / 23.0), 1e-15);
  EXPECT_NEAR(CusumWeight(lower, z, 0), std::log(30.0 / 23.0), 1e-15);
}

TEST(RiskAdjustedCusumTest, SlopeWeightsByHand) {
  // Alternative slope 0.5 at z = 1 (p = 0.7310585786300049, p_A =
  // logistic(0.5) = 0.6224593312018546, values of scipy.special.expit):
  //   y = 1: W = ln(p_A / p) = -0.16081529666188382
  //   y = 0: W = ln((1 - p_A) / (1 - p)) = ln(0.3775406687981454 /
  //          0.2689414213699951) = 0.3391847033381161
  const LogOddsChange slope{.shift = 0, .slope = 0.5};
  EXPECT_NEAR(CusumWeight(slope, 1.0, 1), -0.16081529666188382, 1e-15);
  EXPECT_NEAR(CusumWeight(slope, 1.0, 0), 0.3391847033381161, 1e-15);
}

TEST(RiskAdjustedCusumTest, AccumulatesAlarmsAndResets) {
  // R_A = 2, h = 1, every record p = 0.2 (W = +0.51083 for y = 1,
  // -0.18232 for y = 0). By hand:
  //   y 1: S = 0.51083
  //   y 1: S = 1.02165 >= 1: alarm 1, restart at 0
  //   y 0: S = max(0, -0.18232) = 0
  //   y 1: S = 0.51083
  //   y 0: S = 0.32850
  //   y 1: S = 0.83933
  //   y 1: S = 1.35015 >= 1: alarm 2
  absl::StatusOr<RiskAdjustedCusum> chart =
      RiskAdjustedCusum::Create(LogOddsChange::OddsRatio(2.0), 1.0);
  ASSERT_TRUE(chart.ok()) << chart.status();
  const double up = 0.5108256237659905, down = -0.1823215567939546;
  const std::vector<int> labels = {1, 1, 0, 1, 0, 1, 1};
  const std::vector<double> values = {
      up, 2 * up, 0.0, up, up + down, 2 * up + down, 3 * up + down};
  const std::vector<bool> alarms = {false, true,  false, false,
                                    false, false, true};
  for (size_t i = 0; i < labels.size(); ++i) {
    absl::StatusOr<CusumStep> step = chart->Add(kLogOddsOfPoint2, labels[i]);
    ASSERT_TRUE(step.ok()) << step.status();
    EXPECT_NEAR(step->value, values[i], 1e-14) << "record " << i;
    EXPECT_EQ(step->alarm, alarms[i]) << "record " << i;
  }
  EXPECT_EQ(chart->alarms(), 2);
  EXPECT_EQ(chart->records(), 7);
  EXPECT_EQ(chart->records_since_alarm(), 0);
  EXPECT_EQ(chart->value(), 0.0);
  EXPECT_EQ(chart->limit(), 1.0);
}

TEST(RiskAdjustedCusumTest, RefusesBadInput) {
  EXPECT_THAT(
      RiskAdjustedCusum::Create(LogOddsChange{}, 4.0).status().message(),
      HasSubstr("is the model itself"));
  EXPECT_THAT(RiskAdjustedCusum::Create({.shift = 0, .slope = -1}, 4.0)
                  .status()
                  .message(),
              HasSubstr("slope is -1"));
  EXPECT_THAT(RiskAdjustedCusum::Create(LogOddsChange::OddsRatio(2), 0)
                  .status()
                  .message(),
              HasSubstr("limit is 0"));
  absl::StatusOr<RiskAdjustedCusum> chart =
      RiskAdjustedCusum::Create(LogOddsChange::OddsRatio(2), 3);
  ASSERT_TRUE(chart.ok());
  EXPECT_THAT(chart->Add(0.0, 2).status().message(), HasSubstr("label is 2"));
  EXPECT_THAT(chart->Add(NAN, 1).status().message(), HasSubstr("log-odds"));
  EXPECT_EQ(chart->records(), 0);
}

}  // namespace
}  // namespace plumbline::monitor
