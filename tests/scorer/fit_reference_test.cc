// The fitter against statsmodels and scikit-learn, whose fits
// tests/scorer/fit_reference.py writes in the same ctest run (path in
// PLUMBLINE_FIT_REF).
#include <cmath>
#include <limits>
#include <string>
#include <vector>

#include "gtest/gtest.h"
#include "scorer/fit.h"
#include "tests/scorer/fit_test_data.h"
#include "tests/testing/json_file.h"

namespace plumbline::scorer {
namespace {

using testing::MaxRelativeDifference;
using testing::Number;
using testing::Section;
using testing::Vector;
using testing::WithIntercept;

// The agreement the tests require; the observed agreement is printed and
// is several orders of magnitude tighter.
constexpr double kRelative = 1e-6;

class FitReferenceTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const std::string path = testing::ReferencePathFromEnv("PLUMBLINE_FIT_REF");
    auto ref = testing::ReadJsonFile(path);
    ASSERT_TRUE(ref.ok()) << ref.status();
    ref_ = *std::move(ref);
  }
  google::protobuf::Struct ref_;
};

TEST_F(FitReferenceTest, SpectorMatchesStatsmodelsLogit) {
  // reference: statsmodels Logit on statsmodels.datasets.spector (Spector &
  // Mazzeo 1980; tabulated in Greene, Econometric Analysis), fitted with
  // method="newton", tol=1e-12.
  const auto& s = Section(ref_, "spector");
  const RowMatrix x = testing::Matrix(s, "x");
  const Eigen::VectorXd y = Vector(s, "y");
  const std::vector<std::string> names = {"GPA", "TUCE", "PSI"};
  absl::StatusOr<FitResult> fit =
      FitLogistic(x, y, Eigen::VectorXd(), names, FitOptions{});
  ASSERT_TRUE(fit.ok()) << fit.status();
  EXPECT_TRUE(fit->converged);
  EXPECT_FALSE(fit->penalized);

  const double params = MaxRelativeDifference(
      WithIntercept(fit->intercept, fit->coefficients), Vector(s, "params"));
  const double bse = MaxRelativeDifference(
      WithIntercept(fit->intercept_standard_error, fit->standard_errors),
      Vector(s, "bse"));
  const double z = MaxRelativeDifference(
      WithIntercept(fit->intercept_z, fit->z), Vector(s, "z"));
  const double p = MaxRelativeDifference(
      WithIntercept(fit->intercept_p_value, fit->p_values), Vector(s, "p"));
  const double llf = std::abs(fit->log_likelihood / Number(s, "llf") - 1);
  // statsmodels finds llnull by fitting the intercept-only model
  // iteratively; ours is the closed form, so this agrees to its tolerance.
  const double llnull =
      std::abs(fit->null_log_likelihood / Number(s, "llnull") - 1);
  const double r2 = std::abs(fit->pseudo_r2 / Number(s, "prsquared") - 1);
  const double aic = std::abs(fit->aic / Number(s, "aic") - 1);
  EXPECT_LT(params, kRelative);  // statsmodels Logit.params
  EXPECT_LT(bse, kRelative);     // statsmodels Logit.bse
  EXPECT_LT(z, kRelative);       // statsmodels Logit.tvalues
  EXPECT_LT(p, kRelative);       // statsmodels Logit.pvalues
  EXPECT_LT(llf, kRelative);     // statsmodels Logit.llf
  EXPECT_LT(llnull, kRelative);  // statsmodels Logit.llnull
  EXPECT_LT(r2, kRelative);      // statsmodels Logit.prsquared
  EXPECT_LT(aic, kRelative);     // statsmodels Logit.aic
  EXPECT_NEAR(fit->deviance, -2 * Number(s, "llf"), 1e-9);
  std::printf(
      "spector vs statsmodels, max relative difference: params %.2e, bse "
      "%.2e, z %.2e, p %.2e, llf %.2e, llnull %.2e, prsquared %.2e, aic "
      "%.2e (iterations: ours %d, statsmodels %g)\n",
      params, bse, z, p, llf, llnull, r2, aic, fit->iterations,
      Number(s, "iterations"));
}

TEST_F(FitReferenceTest, WeightsMatchStatsmodelsFrequencyWeights) {
  // reference: statsmodels GLM(Binomial(), freq_weights=w) on the spector
  // data with w_i = 1 + (i mod 3), IRLS to tol 1e-14.
  const auto& s = Section(ref_, "spector");
  const auto& w = Section(ref_, "weighted");
  const RowMatrix x = testing::Matrix(s, "x");
  const Eigen::VectorXd y = Vector(s, "y");
  const Eigen::VectorXd weights = Vector(w, "w");
  absl::StatusOr<FitResult> fit = FitLogistic(x, y, weights, {}, FitOptions{});
  ASSERT_TRUE(fit.ok()) << fit.status();
  const double params = MaxRelativeDifference(
      WithIntercept(fit->intercept, fit->coefficients), Vector(w, "params"));
  const double bse = MaxRelativeDifference(
      WithIntercept(fit->intercept_standard_error, fit->standard_errors),
      Vector(w, "bse"));
  const double llf = std::abs(fit->log_likelihood / Number(w, "llf") - 1);
  EXPECT_LT(params, kRelative);  // statsmodels GLM.params
  EXPECT_LT(bse, kRelative);     // statsmodels GLM.bse
  EXPECT_LT(llf, kRelative);     // statsmodels GLM.llf
  std::printf(
      "frequency weights vs statsmodels GLM, max relative difference: "
      "params %.2e, bse %.2e, llf %.2e\n",
      params, bse, llf);
}

TEST_F(FitReferenceTest, StepHalvingReachesTheStatsmodelsOptimum) {
  // reference: statsmodels Logit (Newton, tol 1e-12) on the small invented
  // data set "overshoot" of fit_reference.py, where a full Newton step of
  // this fitter lowers the log-likelihood once.
  const auto& s = Section(ref_, "overshoot");
  int halvings = 0;
  double previous = -std::numeric_limits<double>::infinity();
  bool rising = true;
  FitOptions options;
  options.progress = [&](const FitProgress& p) {
    halvings += p.step_halvings;
    rising = rising && p.log_likelihood > previous;
    previous = p.log_likelihood;
  };
  absl::StatusOr<FitResult> fit =
      FitLogistic(testing::Matrix(s, "x"), Vector(s, "y"), options);
  ASSERT_TRUE(fit.ok()) << fit.status();
  EXPECT_TRUE(fit->converged);
  EXPECT_GE(halvings, 1);
  EXPECT_TRUE(rising);  // every accepted step raised the log-likelihood
  const double params = MaxRelativeDifference(
      WithIntercept(fit->intercept, fit->coefficients), Vector(s, "params"));
  const double bse = MaxRelativeDifference(
      WithIntercept(fit->intercept_standard_error, fit->standard_errors),
      Vector(s, "bse"));
  EXPECT_LT(params, kRelative);  // statsmodels Logit.params
  EXPECT_LT(bse, kRelative);     // statsmodels Logit.bse
  // statsmodels Logit.llf
  EXPECT_NEAR(fit->log_likelihood, Number(s, "llf"), 1e-10);
  std::printf(
      "overshoot data vs statsmodels, max relative difference: params "
      "%.2e, bse %.2e (%d halvings, %d iterations)\n",
      params, bse, halvings, fit->iterations);
}

TEST_F(FitReferenceTest, L2MatchesScikitLearnWithLambdaOneOverC) {
  // reference: scikit-learn 1.2 LogisticRegression(penalty="l2", C=c,
  // solver="newton-cholesky", tol=1e-12) on the standardised breast-cancer
  // data; sklearn's C corresponds to l2_lambda = 1 / C (see scorer/fit.h).
  const auto& b = Section(ref_, "breast_cancer");
  const RowMatrix x = testing::Matrix(b, "x");
  const Eigen::VectorXd y = Vector(b, "y");
  auto it = b.fields().find("fits");
  ASSERT_NE(it, b.fields().end());
  ASSERT_GE(it->second.list_value().values_size(), 4);
  for (const auto& entry : it->second.list_value().values()) {
    const auto& ref = entry.struct_value();
    const double c = Number(ref, "C");
    FitOptions options;
    options.l2_lambda = 1.0 / c;
    absl::StatusOr<FitResult> fit = FitLogistic(x, y, options);
    ASSERT_TRUE(fit.ok()) << "C = " << c << ": " << fit.status();
    EXPECT_TRUE(fit->converged) << "C = " << c;
    EXPECT_TRUE(fit->penalized);
    EXPECT_EQ(fit->p_values.size(), 0);  // no p-values for penalised fits
    EXPECT_TRUE(std::isnan(fit->intercept_p_value));
    const double coef =
        MaxRelativeDifference(fit->coefficients, Vector(ref, "coef"));
    const double intercept =
        std::abs(fit->intercept / Number(ref, "intercept") - 1);
    EXPECT_LT(coef, kRelative) << "C = " << c;       // sklearn coef_
    EXPECT_LT(intercept, kRelative) << "C = " << c;  // sklearn intercept_
    std::printf(
        "breast cancer, C = %g (lambda = %g) vs scikit-learn newton-cholesky: "
        "max relative difference coef %.2e, intercept %.2e (iterations: ours "
        "%d, sklearn %g)\n",
        c, 1.0 / c, coef, intercept, fit->iterations, Number(ref, "n_iter"));
  }
}

}  // namespace
}  // namespace plumbline::scorer
