#include "scorer/fit.h"

#include <cmath>
#include <cstdio>
#include <ostream>
#include <string>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "scorer/logistic.h"
#include "tests/scorer/fit_test_data.h"

namespace plumbline::scorer {
namespace {

using ::testing::HasSubstr;
using testing::MakeSyntheticData;
using testing::MaxRelativeDifference;
using testing::WithIntercept;

// The slow, obvious reference fit: Newton's method written out with the
// textbook formulas (gradient X'(w(y - p)) - lambda beta, information
// X'WX + lambda I with the intercept unpenalised), loops instead of Eigen
// kernels, no standardisation, no blocks, no step halving, and the linear
// systems solved by Gauss–Jordan elimination with partial pivoting.
struct SlowFit {
  std::vector<double> theta;       // intercept first
  std::vector<double> std_errors;  // sqrt(diag(information^-1))
  double log_likelihood = 0;
};

// Inverts `a` (k x k, row-major) by Gauss–Jordan elimination.
std::vector<double> SlowInverse(std::vector<double> a, int k) {
  std::vector<double> inv(static_cast<size_t>(k * k), 0.0);
  for (int i = 0; i < k; ++i) inv[static_cast<size_t>(i * k + i)] = 1;
  for (int col = 0; col < k; ++col) {
    int pivot = col;
    for (int r = col + 1; r < k; ++r) {
      if (std::abs(a[r * k + col]) > std::abs(a[pivot * k + col])) pivot = r;
    }
    for (int c = 0; c < k; ++c) {
      std::swap(a[col * k + c], a[pivot * k + c]);
      std::swap(inv[col * k + c], inv[pivot * k + c]);
    }
    const double diag = a[col * k + col];
    for (int c = 0; c < k; ++c) {
      a[col * k + c] /= diag;
      inv[col * k + c] /= diag;
    }
    for (int r = 0; r < k; ++r) {
      if (r == col) continue;
      const double f = a[r * k + col];
      for (int c = 0; c < k; ++c) {
        a[r * k + c] -= f * a[col * k + c];
        inv[r * k + c] -= f * inv[col * k + c];
      }
    }
  }
  return inv;
}

SlowFit SlowNewtonFit(const RowMatrix& x, const Eigen::VectorXd& y,
                      const Eigen::VectorXd& w, double lambda) {
  const int n = static_cast<int>(x.rows()), k = static_cast<int>(x.cols()) + 1;
  auto feature = [&](int i, int j) { return j == 0 ? 1.0 : x(i, j - 1); };
  SlowFit fit;
  fit.theta.assign(static_cast<size_t>(k), 0.0);
  std::vector<double> info;
  for (int iteration = 0; iteration < 100; ++iteration) {
    std::vector<double> grad(static_cast<size_t>(k), 0.0);
    info.assign(static_cast<size_t>(k * k), 0.0);
    for (int i = 0; i < n; ++i) {
      double eta = 0;
      for (int j = 0; j < k; ++j) eta += fit.theta[j] * feature(i, j);
      const double p = 1 / (1 + std::exp(-eta));
      for (int j = 0; j < k; ++j) {
        grad[j] += w[i] * (y[i] - p) * feature(i, j);
        for (int l = 0; l < k; ++l) {
          info[j * k + l] += w[i] * p * (1 - p) * feature(i, j) * feature(i, l);
        }
      }
    }
    for (int j = 1; j < k; ++j) {
      grad[j] -= lambda * fit.theta[j];
      info[j * k + j] += lambda;
    }
    const std::vector<double> inv = SlowInverse(info, k);
    double largest_step = 0;
    for (int j = 0; j < k; ++j) {
      double step = 0;
      for (int l = 0; l < k; ++l) step += inv[j * k + l] * grad[l];
      fit.theta[j] += step;
      largest_step = std::max(largest_step, std::abs(step));
    }
    if (largest_step < 1e-14) break;
  }
  const std::vector<double> inv = SlowInverse(info, k);
  for (int j = 0; j < k; ++j)
    fit.std_errors.push_back(std::sqrt(inv[j * k + j]));
  for (int i = 0; i < n; ++i) {
    double eta = 0;
    for (int j = 0; j < k; ++j) eta += fit.theta[j] * feature(i, j);
    const double p = 1 / (1 + std::exp(-eta));
    fit.log_likelihood += w[i] * (y[i] == 1 ? std::log(p) : std::log(1 - p));
  }
  return fit;
}

Eigen::VectorXd ToVector(const std::vector<double>& v) {
  return Eigen::Map<const Eigen::VectorXd>(v.data(),
                                           static_cast<Eigen::Index>(v.size()));
}

// The slow fit's data: columns on modest scales so that its unstandardised
// Newton iteration is well conditioned.
struct SlowCase {
  double lambda;
  bool weighted;
};

void PrintTo(const SlowCase& c, std::ostream* os) {
  *os << "lambda " << c.lambda
      << (c.weighted ? ", weighted" : ", unit weights");
}

class AgreesWithSlowReference : public ::testing::TestWithParam<SlowCase> {};

TEST_P(AgreesWithSlowReference, CoefficientsErrorsAndLikelihood) {
  const auto [lambda, weighted] = GetParam();
  const testing::SyntheticData data = MakeSyntheticData(300, 4, 17);
  Eigen::VectorXd w = Eigen::VectorXd::Ones(300);
  if (weighted) {
    for (int i = 0; i < 300; ++i) w[i] = 0.25 + (i % 5) * 0.5;
  }
  FitOptions options;
  options.l2_lambda = lambda;
  absl::StatusOr<FitResult> fit = FitLogistic(
      data.x, data.y, weighted ? w : Eigen::VectorXd(), {}, options);
  ASSERT_TRUE(fit.ok()) << fit.status();
  ASSERT_TRUE(fit->converged);
  const SlowFit slow = SlowNewtonFit(data.x, data.y, w, lambda);
  // Reference: the slow fit above, same data, same run.
  const double coef = MaxRelativeDifference(
      WithIntercept(fit->intercept, fit->coefficients), ToVector(slow.theta));
  const double se = MaxRelativeDifference(
      WithIntercept(fit->intercept_standard_error, fit->standard_errors),
      ToVector(slow.std_errors));
  EXPECT_LT(coef, 1e-9);
  EXPECT_LT(se, 1e-9);
  std::printf(
      "slow reference, lambda %g: max relative difference coef %.2e, "
      "se %.2e\n",
      lambda, coef, se);
  EXPECT_NEAR(fit->log_likelihood, slow.log_likelihood,
              1e-12 * std::abs(slow.log_likelihood));
  EXPECT_EQ(fit->penalized, lambda > 0);
}

INSTANTIATE_TEST_SUITE_P(
    Cases, AgreesWithSlowReference,
    ::testing::Values(SlowCase{0.0, false}, SlowCase{0.0, true},
                      SlowCase{2.5, false}, SlowCase{40.0, true}),
    [](const ::testing::TestParamInfo<SlowCase>& info) {
      return std::string(info.param.weighted ? "Weighted" : "Unit") + "Lambda" +
             std::to_string(static_cast<int>(info.param.lambda * 10));
    });

TEST(FitTest, IntegerWeightsEqualDuplicatedRows) {
  // Identity: a row of weight k contributes exactly what k copies of it do
  // to the log-likelihood, the gradient and the information. Weight 0 rows
  // drop out.
  const testing::SyntheticData data = MakeSyntheticData(200, 3, 5);
  Eigen::VectorXd w(200);
  std::vector<Eigen::Index> copies;
  for (Eigen::Index i = 0; i < 200; ++i) {
    w[i] = static_cast<double>(i % 4);
    for (int c = 0; c < i % 4; ++c) copies.push_back(i);
  }
  RowMatrix x_dup(static_cast<Eigen::Index>(copies.size()), 3);
  Eigen::VectorXd y_dup(x_dup.rows());
  for (Eigen::Index r = 0; r < x_dup.rows(); ++r) {
    x_dup.row(r) = data.x.row(copies[static_cast<size_t>(r)]);
    y_dup[r] = data.y[copies[static_cast<size_t>(r)]];
  }
  absl::StatusOr<FitResult> weighted = FitLogistic(data.x, data.y, w, {}, {});
  absl::StatusOr<FitResult> duplicated = FitLogistic(x_dup, y_dup);
  ASSERT_TRUE(weighted.ok()) << weighted.status();
  ASSERT_TRUE(duplicated.ok()) << duplicated.status();
  EXPECT_LT(MaxRelativeDifference(
                WithIntercept(weighted->intercept, weighted->coefficients),
                WithIntercept(duplicated->intercept, duplicated->coefficients)),
            1e-12);
  EXPECT_LT(
      MaxRelativeDifference(WithIntercept(weighted->intercept_standard_error,
                                          weighted->standard_errors),
                            WithIntercept(duplicated->intercept_standard_error,
                                          duplicated->standard_errors)),
      1e-12);
  EXPECT_NEAR(weighted->log_likelihood, duplicated->log_likelihood, 1e-10);
  EXPECT_NEAR(weighted->null_log_likelihood, duplicated->null_log_likelihood,
              1e-10);
  EXPECT_NEAR(weighted->aic, duplicated->aic, 1e-9);
  EXPECT_EQ(weighted->weight_sum, static_cast<double>(x_dup.rows()));
  EXPECT_EQ(weighted->rows, 200);
}

TEST(FitTest, InterceptOnlyIsTheLogitOfTheMean) {
  // With no columns the estimate is logit(mean y) = log(k / (n - k)) and the
  // log-likelihood is the null log-likelihood: k log(k/n) + (n-k) log(1-k/n).
  RowMatrix x(10, 0);
  Eigen::VectorXd y(10);
  y << 1, 0, 0, 1, 0, 0, 0, 1, 0, 0;  // k = 3 of n = 10
  absl::StatusOr<FitResult> fit = FitLogistic(x, y);
  ASSERT_TRUE(fit.ok()) << fit.status();
  EXPECT_NEAR(fit->intercept, std::log(3.0 / 7.0), 1e-15);
  const double ll0 = 3 * std::log(0.3) + 7 * std::log(0.7);
  EXPECT_NEAR(fit->null_log_likelihood, ll0, 1e-14);
  EXPECT_NEAR(fit->log_likelihood, ll0, 1e-14);
  EXPECT_NEAR(fit->pseudo_r2, 0, 1e-15);
  // Standard error of a logit of a proportion: 1 / sqrt(n p (1 - p)).
  EXPECT_NEAR(fit->intercept_standard_error, 1 / std::sqrt(10 * 0.3 * 0.7),
              1e-14);
}

TEST(FitTest, ResultDoesNotDependOnColumnUnitsOrBlocks) {
  // Identity: rescaling a column by a and shifting it by c divides its
  // coefficient by a and moves the intercept by -c * beta / a; the fit sees
  // the same standardised problem. Block size only reorders sums.
  const testing::SyntheticData data = MakeSyntheticData(500, 3, 23);
  RowMatrix moved = data.x;
  moved.col(1) = moved.col(1) * 1000.0 + Eigen::VectorXd::Constant(500, 7.0);
  absl::StatusOr<FitResult> base = FitLogistic(data.x, data.y);
  absl::StatusOr<FitResult> scaled = FitLogistic(moved, data.y);
  ASSERT_TRUE(base.ok() && scaled.ok());
  EXPECT_NEAR(scaled->coefficients[1] * 1000.0, base->coefficients[1],
              1e-10 * std::abs(base->coefficients[1]));
  EXPECT_NEAR(scaled->log_likelihood, base->log_likelihood, 1e-10);
  for (int block : {1, 7, 100000}) {
    FitOptions options;
    options.block_rows = block;
    absl::StatusOr<FitResult> other = FitLogistic(data.x, data.y, options);
    ASSERT_TRUE(other.ok());
    EXPECT_LT(MaxRelativeDifference(other->coefficients, base->coefficients),
              1e-12)
        << "block_rows " << block;
  }
}

TEST(FitTest, FittedProbabilitiesComeFromTheReportedCoefficients) {
  const testing::SyntheticData data = MakeSyntheticData(100, 2, 3);
  absl::StatusOr<FitResult> fit = FitLogistic(data.x, data.y);
  ASSERT_TRUE(fit.ok());
  ASSERT_EQ(fit->fitted_probabilities.size(), 100);
  double ll = 0;
  for (int i = 0; i < 100; ++i) {
    const double eta = fit->intercept + data.x.row(i).dot(fit->coefficients);
    EXPECT_NEAR(fit->fitted_probabilities[i], Logistic(eta), 1e-15);
    ll += data.y[i] == 1 ? LogLogistic(eta) : LogLogistic(-eta);
  }
  EXPECT_NEAR(fit->log_likelihood, ll, 1e-12);
  EXPECT_NEAR(fit->deviance, -2 * ll, 1e-11);
  EXPECT_NEAR(fit->aic, -2 * ll + 2 * 3, 1e-11);  // 3 parameters
  EXPECT_NEAR(fit->pseudo_r2, 1 - ll / fit->null_log_likelihood, 1e-14);
}

TEST(FitTest, ProgressReportsEachIteration) {
  const testing::SyntheticData data = MakeSyntheticData(400, 3, 11);
  std::vector<FitProgress> seen;
  FitOptions options;
  options.progress = [&](const FitProgress& p) { seen.push_back(p); };
  absl::StatusOr<FitResult> fit = FitLogistic(data.x, data.y, options);
  ASSERT_TRUE(fit.ok());
  ASSERT_EQ(static_cast<int>(seen.size()), fit->iterations);
  for (size_t i = 0; i < seen.size(); ++i) {
    EXPECT_EQ(seen[i].iteration, static_cast<int>(i) + 1);
    if (i > 0) EXPECT_GE(seen[i].log_likelihood, seen[i - 1].log_likelihood);
  }
  EXPECT_NEAR(seen.back().log_likelihood, fit->log_likelihood, 1e-9);
  EXPECT_LE(fit->max_abs_gradient, options.tol_grad);
}

TEST(FitTest, StopsUnconvergedWithAReason) {
  const testing::SyntheticData data = MakeSyntheticData(400, 3, 11);
  FitOptions options;
  options.max_iterations = 1;
  absl::StatusOr<FitResult> fit = FitLogistic(data.x, data.y, options);
  ASSERT_TRUE(fit.ok()) << fit.status();
  EXPECT_FALSE(fit->converged);
  EXPECT_EQ(fit->iterations, 1);
  EXPECT_THAT(fit->stop_reason, HasSubstr("no convergence after 1 iterations"));
}

TEST(FitTest, RefusesMalformedInput) {
  const testing::SyntheticData data = MakeSyntheticData(20, 2, 1);
  const std::vector<std::string> names = {"distance_km", "weight_kg"};
  auto error = [&](const RowMatrix& x, const Eigen::VectorXd& y,
                   const Eigen::VectorXd& w, const FitOptions& o) {
    absl::StatusOr<FitResult> r = FitLogistic(x, y, w, names, o);
    EXPECT_FALSE(r.ok());
    EXPECT_EQ(r.status().code(), absl::StatusCode::kInvalidArgument);
    return std::string(r.status().message());
  };
  RowMatrix bad_x = data.x;
  bad_x(4, 1) = std::nan("");
  EXPECT_THAT(error(bad_x, data.y, {}, {}),
              HasSubstr("x[4, 'weight_kg'] = nan"));
  Eigen::VectorXd bad_y = data.y;
  bad_y[3] = 0.5;
  EXPECT_THAT(error(data.x, bad_y, {}, {}), HasSubstr("y[3] = 0.5"));
  Eigen::VectorXd w = Eigen::VectorXd::Ones(20);
  w[7] = -1;
  EXPECT_THAT(error(data.x, data.y, w, {}), HasSubstr("weights[7] = -1"));
  EXPECT_THAT(error(data.x, data.y, Eigen::VectorXd::Ones(3), {}),
              HasSubstr("3 weights"));
  EXPECT_THAT(error(data.x, data.y.head(5), {}, {}), HasSubstr("5 labels"));
  FitOptions negative;
  negative.l2_lambda = -1;
  EXPECT_THAT(error(data.x, data.y, {}, negative), HasSubstr("l2_lambda"));
}

}  // namespace
}  // namespace plumbline::scorer
