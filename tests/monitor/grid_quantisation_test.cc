// File: tests/monitor/grid_quantisation_test.cc
//
// How far the score grid's figures (monitor/score_grid.h) fall from the same
// figures on unquantised log-odds. The grid versions equal the pure
// functions on quantised log-odds (accumulators_test.cc); here the
// difference quantisation makes is measured and bounded, on a million
// seeded records and on scikit-learn's breast-cancer data scored by a fitted
// LogisticRegression (from tests/monitor/monitor_reference.py).
//
// Measured with the default grid (4096 cells over [-20, 20)), as printed by
// the tests below (monitor/score_grid.h quotes these):
//   1e6 seeded records    |dAUC| 7.6e-7 (guaranteed bound 6.3e-4),
//                         |d intercept| 5.3e-6, |d slope| 3.0e-6 (both under
//                         0.01 standard error), HL statistic 4e-4 relative
//   breast cancer, 285    |dAUC| 2.6e-5 (= its bound: one cell holds both
//                         classes), |d intercept| 1.8e-3, |d slope| 3.7e-4
//                         (0.005 and 0.001 standard errors), HL 1.5e-5
//                         relative
// Asserted: the AUC bound (a theorem), and the calibration differences
// under 2% of the fit's standard errors: quantisation never moves the
// estimates by a statistically visible amount.
#include <cmath>
#include <cstddef>
#include <iostream>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "google/protobuf/struct.pb.h"
#include "gtest/gtest.h"
#include "monitor/auc.h"
#include "monitor/calibration_fit.h"
#include "monitor/hosmer_lemeshow.h"
#include "monitor/score_grid.h"
#include "tests/monitor/test_streams.h"
#include "tests/testing/json_file.h"

namespace plumbline::monitor {
namespace {

struct Differences {
  double auc = 0, auc_bound = 0, intercept = 0, slope = 0, hl_statistic = 0,
         hl_p_value = 0;
  double intercept_se = 0, slope_se = 0;  // of the unquantised fit
};

Differences Measure(absl::Span<const double> z, absl::Span<const int> y,
                    const std::string& what) {
  ScoreGridAccumulator acc;
  for (size_t i = 0; i < z.size(); ++i) EXPECT_TRUE(acc.Add(z[i], y[i]).ok());
  absl::StatusOr<AucEstimate> grid_auc = acc.Auc();
  absl::StatusOr<double> auc = Auc(z, y);
  absl::StatusOr<CalibrationFit> grid_fit = acc.Calibration();
  absl::StatusOr<CalibrationFit> fit = CalibrationInterceptSlope(z, y);
  absl::StatusOr<HosmerLemeshowResult> grid_hl = acc.HosmerLemeshow();
  absl::StatusOr<HosmerLemeshowResult> hl =
      HosmerLemeshow(testing::Probabilities(z), y);
  EXPECT_TRUE(grid_auc.ok() && auc.ok() && grid_fit.ok() && fit.ok() &&
              grid_hl.ok() && hl.ok());
  Differences d;
  d.auc = std::abs(grid_auc->auc - *auc);
  d.auc_bound = grid_auc->quantisation_bound;
  d.intercept = std::abs(grid_fit->intercept - fit->intercept);
  d.slope = std::abs(grid_fit->slope - fit->slope);
  d.intercept_se = fit->intercept_standard_error;
  d.slope_se = fit->slope_standard_error;
  d.hl_statistic = std::abs(grid_hl->statistic - hl->statistic);
  d.hl_p_value = std::abs(grid_hl->p_value - hl->p_value);
  std::cout << what << ": |dAUC| " << d.auc << " (bound " << d.auc_bound
            << "), |d intercept| " << d.intercept << " (se " << d.intercept_se
            << "), |d slope| " << d.slope << " (se " << d.slope_se << ")"
            << ", HL " << hl->statistic << " vs grid " << grid_hl->statistic
            << ", p " << hl->p_value << " vs grid " << grid_hl->p_value << "\n";
  return d;
}

TEST(GridQuantisationTest, MillionRecords) {
  const testing::Stream s = testing::MakeStream(1000000, 99);
  const Differences d = Measure(s.log_odds, s.labels, "1e6 records");
  EXPECT_LE(d.auc, d.auc_bound);  // guaranteed (see score_grid.h)
  EXPECT_LT(d.auc_bound, 1e-3);
  EXPECT_LT(d.slope, 0.02 * d.slope_se);
  EXPECT_LT(d.intercept, 0.02 * d.intercept_se);
}

TEST(GridQuantisationTest, BreastCancerScores) {
  absl::StatusOr<google::protobuf::Struct> json =
      plumbline::testing::ReadJsonFile(
          plumbline::testing::ReferencePathFromEnv("PLUMBLINE_MONITOR_REF"));
  ASSERT_TRUE(json.ok()) << json.status();
  const auto& c =
      json->fields().at("labelled").list_value().values(0).struct_value();
  ASSERT_EQ(c.fields().at("name").string_value(), "breast_cancer");
  absl::StatusOr<std::vector<double>> z =
      plumbline::testing::NumberList(c, "log_odds");
  absl::StatusOr<std::vector<double>> labels =
      plumbline::testing::NumberList(c, "labels");
  ASSERT_TRUE(z.ok() && labels.ok());
  std::vector<int> y(labels->begin(), labels->end());
  // reference data: scikit-learn 1.2 LogisticRegression.decision_function on
  // load_breast_cancer (half held out)
  const Differences d = Measure(*z, y, "breast cancer (285 records)");
  EXPECT_LE(d.auc, d.auc_bound);
  EXPECT_LT(d.slope, 0.02 * d.slope_se);
  EXPECT_LT(d.intercept, 0.02 * d.intercept_se);
}

}  // namespace
}  // namespace plumbline::monitor
