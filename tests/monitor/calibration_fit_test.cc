#include "monitor/calibration_fit.h"

#include <cmath>
#include <limits>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "scorer/logistic.h"

namespace plumbline::monitor {
namespace {

using ::testing::HasSubstr;

// Agreement with statsmodels' Logit is checked in reference_test.cc.

TEST(CalibrationFitTest, InterceptWithOffsetByHand) {
  // Slope fixed at 1 and every log-odds equal to c: the fit solves
  // logistic(a + c) = observed rate, so a = logit(rate) - c. By hand, with
  // 3 of 4 positive: rate 3/4, logit = log 3; information n p (1 - p) =
  // 4 * 3/16 = 3/4, standard error sqrt(4/3).
  for (double c : {0.0, -1.25, 2.0}) {
    const std::vector<double> z(4, c);
    const std::vector<int> y = {1, 0, 1, 1};
    absl::StatusOr<CalibrationInterceptFit> fit = CalibrationIntercept(z, y);
    ASSERT_TRUE(fit.ok()) << fit.status();
    EXPECT_NEAR(fit->intercept, std::log(3.0) - c, 1e-13) << c;
    EXPECT_NEAR(fit->standard_error, std::sqrt(4.0 / 3), 1e-12) << c;
  }
  EXPECT_THAT(CalibrationIntercept(std::vector<double>{0.1, 0.2},
                                   std::vector<int>{1, 1})
                  .status()
                  .message(),
              HasSubstr("all 2 labelled records have label 1"));
}

TEST(CalibrationFitTest, TwoLevelsAreFittedExactly) {
  // With two distinct log-odds the model is saturated: the fit reproduces
  // each level's observed rate. At 0: 3 of 4 positive, so intercept =
  // logit(3/4) = log 3; at 1: 1 of 4, so intercept + slope = -log 3.
  const std::vector<double> z = {0, 0, 0, 0, 1, 1, 1, 1};
  const std::vector<int> y = {1, 1, 1, 0, 1, 0, 0, 0};
  absl::StatusOr<CalibrationFit> fit = CalibrationInterceptSlope(z, y);
  ASSERT_TRUE(fit.ok()) << fit.status();
  EXPECT_NEAR(fit->intercept, std::log(3.0), 1e-13);
  EXPECT_NEAR(fit->slope, -2 * std::log(3.0), 1e-13);
  // Fisher information per level is n p (1 - p) = 4 * 3/16 = 3/4, so
  // Var(intercept) = 1 / (3/4) and Var(slope) = 2 / (3/4).
  EXPECT_NEAR(fit->intercept_standard_error, std::sqrt(4.0 / 3), 1e-12);
  EXPECT_NEAR(fit->slope_standard_error, std::sqrt(8.0 / 3), 1e-12);
}

TEST(CalibrationFitTest, GroupsAndRecordsGiveTheSameFit) {
  const std::vector<LogOddsGroup> groups = {
      {-1.0, 2, 7}, {0.5, 4, 4}, {2.0, 6, 1}};
  std::vector<double> z;
  std::vector<int> y;
  for (const LogOddsGroup& g : groups) {
    for (int i = 0; i < g.positives; ++i)
      z.push_back(g.log_odds), y.push_back(1);
    for (int i = 0; i < g.negatives; ++i)
      z.push_back(g.log_odds), y.push_back(0);
  }
  absl::StatusOr<CalibrationFit> a = FitCalibrationGroups(groups);
  absl::StatusOr<CalibrationFit> b = CalibrationInterceptSlope(z, y);
  ASSERT_TRUE(a.ok() && b.ok());
  EXPECT_EQ(a->intercept, b->intercept);
  EXPECT_EQ(a->slope, b->slope);
}

TEST(CalibrationFitTest, UndefinedFitsAreFailedPreconditions) {
  auto one_class = CalibrationInterceptSlope(std::vector<double>{0.1, 0.5},
                                             std::vector<int>{0, 0});
  EXPECT_EQ(one_class.status().code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_THAT(one_class.status().message(),
              HasSubstr("all 2 labelled records have label 0"));

  auto flat = CalibrationInterceptSlope(std::vector<double>{0.3, 0.3},
                                        std::vector<int>{0, 1});
  EXPECT_EQ(flat.status().code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_THAT(flat.status().message(),
              HasSubstr("all 2 records have log-odds 0.3"));

  // Outcomes separated by the log-odds: the slope runs off to infinity.
  auto separated = CalibrationInterceptSlope(std::vector<double>{-2, -1, 1, 2},
                                             std::vector<int>{0, 0, 1, 1});
  EXPECT_EQ(separated.status().code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_THAT(separated.status().message(), HasSubstr("did not converge"));
}

TEST(CalibrationFitTest, RefusesNonFiniteLogOdds) {
  auto fit = CalibrationInterceptSlope(
      std::vector<double>{0.1, std::numeric_limits<double>::infinity()},
      std::vector<int>{0, 1});
  EXPECT_EQ(fit.status().code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(fit.status().message(), HasSubstr("log_odds[1] is inf"));
}

}  // namespace
}  // namespace plumbline::monitor
