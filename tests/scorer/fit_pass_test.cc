#include "scorer/fit_pass.h"

#include <cmath>

#include "gtest/gtest.h"
#include "scorer/logistic.h"
#include "tests/scorer/fit_test_data.h"

namespace plumbline::scorer::fit_internal {
namespace {

TEST(FitPassTest, StatsByHand) {
  // Column 0: 1, 2, 3, 6 with weights 1, 1, 2, 0 -> weighted mean
  // (1 + 2 + 6) / 4 = 2.25, variance (1.5625 + 0.0625 + 2 * 0.5625) / 4 =
  // 0.6875; the weight-0 row does not count. Column 1 is 5 wherever the
  // weight is positive: constant.
  RowMatrix x(4, 2);
  x << 1, 5, 2, 5, 3, 5, 6, 9;
  Eigen::VectorXd y(4), w(4);
  y << 0, 1, 1, 0;
  w << 1, 1, 2, 0;
  FitData data(x, y, w, 3, 1e-10);
  const ColumnStats& s = data.ComputeStats();
  EXPECT_DOUBLE_EQ(s.weight_sum, 4);
  EXPECT_DOUBLE_EQ(s.positive_weight, 3);
  EXPECT_NEAR(s.mean[0], 2.25, 1e-15);
  EXPECT_NEAR(s.inv_scale[0], 1 / std::sqrt(0.6875), 1e-14);
  EXPECT_FALSE(s.constant[0]);
  EXPECT_TRUE(s.constant[1]);
}

TEST(FitPassTest, EvaluateMatchesTheFormulas) {
  // log-likelihood sum_i w_i l_i, gradient Z'(w (y - p)) and information
  // Z'WZ with W = diag(w p (1 - p)), written out row by row on the
  // standardised design Z = [1, (x - mean) * inv_scale].
  const testing::SyntheticData d = testing::MakeSyntheticData(37, 3, 41);
  Eigen::VectorXd w(37);
  for (int i = 0; i < 37; ++i) w[i] = 0.5 + (i % 4);
  FitData data(d.x, d.y, w, 8, 1e-10);
  const ColumnStats& s = data.ComputeStats();
  Eigen::VectorXd theta(4);
  theta << -0.3, 0.8, -1.1, 0.4;
  Evaluation e;
  data.Evaluate(theta, e);

  double ll = 0;
  Eigen::VectorXd grad = Eigen::VectorXd::Zero(4);
  Eigen::MatrixXd info = Eigen::MatrixXd::Zero(4, 4);
  for (int i = 0; i < 37; ++i) {
    Eigen::VectorXd z(4);
    z[0] = 1;
    for (int j = 0; j < 3; ++j)
      z[j + 1] = (d.x(i, j) - s.mean[j]) * s.inv_scale[j];
    const double p = 1 / (1 + std::exp(-z.dot(theta)));
    ll += w[i] * (d.y[i] == 1 ? std::log(p) : std::log(1 - p));
    grad += w[i] * (d.y[i] - p) * z;
    info += w[i] * p * (1 - p) * z * z.transpose();
  }
  EXPECT_NEAR(e.log_likelihood, ll, 1e-12);
  EXPECT_LT((e.gradient - grad).cwiseAbs().maxCoeff(), 1e-12);
  const Eigen::MatrixXd lower = e.information.triangularView<Eigen::Lower>();
  const Eigen::MatrixXd expected = info.triangularView<Eigen::Lower>();
  EXPECT_LT((lower - expected).cwiseAbs().maxCoeff(), 1e-12);
  EXPECT_NEAR(data.LogLikelihood(theta), ll, 1e-12);
  EXPECT_EQ(e.perfect_rows, 0);
}

TEST(FitPassTest, MarginsAreCosinesOfSignedRows) {
  // Rows (1, z) with z = (x - 0) * 1 after standardising x = -1, 1 (mean 0,
  // sd 1): z = -1 (label 0) and 1 (label 1). Along v = (0, 1) both signed
  // rows (-1)(1, -1) = (-1, 1) and (1, 1) make cosines 1/sqrt(2) with v.
  RowMatrix x(2, 1);
  x << -1, 1;
  Eigen::VectorXd y(2);
  y << 0, 1;
  FitData data(x, y, Eigen::VectorXd(), 256, 1e-10);
  data.ComputeStats();
  Eigen::VectorXd v(2);
  v << 0, 1;
  const DirectionMargins m = data.Margins(v, 1e-6);
  EXPECT_NEAR(m.min, 1 / std::sqrt(2.0), 1e-15);
  EXPECT_NEAR(m.max, 1 / std::sqrt(2.0), 1e-15);
  EXPECT_EQ(m.rows, 2);
  EXPECT_EQ(m.strictly_positive, 2);
  // Along the intercept the label-0 row opposes: cosines -1/sqrt(2) and
  // 1/sqrt(2).
  v << 1, 0;
  const DirectionMargins n = data.Margins(v, 1e-6);
  EXPECT_NEAR(n.min, -1 / std::sqrt(2.0), 1e-15);
  EXPECT_EQ(n.strictly_positive, 1);
}

TEST(FitPassTest, OriginalScaleUsesTheScoringArithmetic) {
  const testing::SyntheticData d = testing::MakeSyntheticData(50, 2, 43);
  FitData data(d.x, d.y, Eigen::VectorXd(), 16, 1e-10);
  data.ComputeStats();
  Eigen::VectorXd beta(2);
  beta << 0.02, -0.3;
  Eigen::VectorXd p;
  const double ll = data.OriginalScaleLogLikelihood(0.7, beta, &p);
  double expected = 0;
  for (int i = 0; i < 50; ++i) {
    const double eta = d.x.row(i).dot(beta) + 0.7;
    EXPECT_EQ(p[i], Logistic(eta));  // same operations as ScoreDense
    expected += d.y[i] == 1 ? LogLogistic(eta) : LogLogistic(-eta);
  }
  EXPECT_NEAR(ll, expected, 1e-12);
}

}  // namespace
}  // namespace plumbline::scorer::fit_internal
