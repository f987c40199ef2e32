// File: tests/monitor/ladder_reference_test.cc
//
// The updating ladder's numerics (monitor/updating_ladder.h) against
// statsmodels 0.13 and SciPy 1.10 (Debian packages): rungs 1 and 2 against
// statsmodels' GLM with an offset and Logit, rung 3 against
// scipy.optimize.minimize (trust-exact) on the same penalised likelihood,
// its cross-validated penalty against the same folds refitted in SciPy, the
// likelihood-ratio p-values against scipy.stats.chi2.sf.
// tests/monitor/ladder_reference.py writes the data and the references in
// the same ctest run (fixture ladder_reference, PLUMBLINE_LADDER_REF). Its
// own executable for its own reference file (see DEVELOPERS.md on
// fit_reference_test); the tests keep the `monitor.` prefix. Tolerances are
// stated beside each check.
#include <cmath>
#include <cstdlib>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "google/protobuf/struct.pb.h"
#include "gtest/gtest.h"
#include "monitor/incomplete_gamma.h"
#include "monitor/updating_ladder.h"
#include "tests/testing/json_file.h"

namespace plumbline::monitor {
namespace {

using google::protobuf::Struct;
using google::protobuf::Value;

const Struct& Reference() {
  static const Struct* const kRef = [] {
    const char* path = std::getenv("PLUMBLINE_LADDER_REF");
    auto* s = new Struct();
    if (path == nullptr) return s;
    absl::StatusOr<Struct> read = testing::ReadJsonFile(path);
    if (read.ok()) *s = *read;
    return s;
  }();
  return *kRef;
}

double Number(const Struct& s, const std::string& key) {
  auto it = s.fields().find(key);
  EXPECT_TRUE(it != s.fields().end()) << key;
  return it == s.fields().end() ? 0 : it->second.number_value();
}
std::vector<double> Numbers(const Struct& s, const std::string& key) {
  absl::StatusOr<std::vector<double>> v = testing::NumberList(s, key);
  EXPECT_TRUE(v.ok()) << v.status();
  return v.ok() ? *v : std::vector<double>();
}

struct Case {
  std::string name;
  LadderMatrix x;
  std::vector<int> y;
  std::vector<double> z;
  Eigen::VectorXd prior;
  double prior_intercept = 0;
  Struct ref;
};

std::vector<Case> Cases() {
  std::vector<Case> out;
  auto it = Reference().fields().find("cases");
  if (it == Reference().fields().end()) {
    ADD_FAILURE() << "PLUMBLINE_LADDER_REF is not set or has no cases "
                     "(run through ctest)";
    return out;
  }
  for (const Value& v : it->second.list_value().values()) {
    Case c;
    c.ref = v.struct_value();
    c.name = c.ref.fields().at("name").string_value();
    const int rows = static_cast<int>(Number(c.ref, "rows"));
    const int cols = static_cast<int>(Number(c.ref, "cols"));
    const std::vector<double> x = Numbers(c.ref, "x");
    c.x = Eigen::Map<const LadderMatrix>(x.data(), rows, cols);
    for (double l : Numbers(c.ref, "labels"))
      c.y.push_back(static_cast<int>(l));
    c.z = Numbers(c.ref, "log_odds");
    const std::vector<double> prior = Numbers(c.ref, "prior");
    c.prior = Eigen::Map<const Eigen::VectorXd>(prior.data(), cols);
    c.prior_intercept = Number(c.ref, "prior_intercept");
    out.push_back(std::move(c));
  }
  return out;
}

// Relative closeness for log-likelihoods of about -1000.
void ExpectRelNear(double got, double want, double rel,
                   const std::string& what) {
  EXPECT_NEAR(got, want, rel * std::max(1.0, std::abs(want))) << what;
}

TEST(LadderReferenceTest, RungsOneAndTwoMatchStatsmodels) {
  for (const Case& c : Cases()) {
    SCOPED_TRACE(c.name);
    absl::StatusOr<double> ll0 = LogisticLogLikelihood(c.z, c.y);
    ASSERT_TRUE(ll0.ok()) << ll0.status();
    // scipy.special.log_expit summed in NumPy; 1e-12 relative.
    ExpectRelNear(*ll0, Number(c.ref, "active_ll"), 1e-12, "active ll");
    // statsmodels GLM(Binomial, offset = z), tol 1e-14: intercept to 1e-8,
    // llf to 1e-10 relative.
    absl::StatusOr<RecalibrationFit> r1 = FitInterceptRecalibration(c.z, c.y);
    ASSERT_TRUE(r1.ok()) << r1.status();
    EXPECT_NEAR(r1->intercept, Number(c.ref, "rung1_intercept"), 1e-8);
    EXPECT_EQ(r1->slope, 1.0);
    ExpectRelNear(r1->log_likelihood, Number(c.ref, "rung1_ll"), 1e-10,
                  "rung 1 ll");
    // statsmodels Logit on [1, z]: same tolerances.
    absl::StatusOr<RecalibrationFit> r2 = FitLogisticRecalibration(c.z, c.y);
    ASSERT_TRUE(r2.ok()) << r2.status();
    EXPECT_NEAR(r2->intercept, Number(c.ref, "rung2_intercept"), 1e-8);
    EXPECT_NEAR(r2->slope, Number(c.ref, "rung2_slope"), 1e-8);
    ExpectRelNear(r2->log_likelihood, Number(c.ref, "rung2_ll"), 1e-10,
                  "rung 2 ll");
  }
}

TEST(LadderReferenceTest, RungThreeMatchesScipyMinimize) {
  for (const Case& c : Cases()) {
    SCOPED_TRACE(c.name);
    absl::StatusOr<RidgeTowardPrior> r3 = FitRidgeTowardPrior(
        c.x, c.y, c.prior_intercept, c.prior, Number(c.ref, "rung3_lambda"));
    ASSERT_TRUE(r3.ok()) << r3.status();
    // scipy.optimize.minimize trust-exact, gtol 1e-12: both at the optimum
    // of a strictly concave objective; coefficients to 1e-8.
    EXPECT_NEAR(r3->intercept, Number(c.ref, "rung3_intercept"), 1e-8);
    const std::vector<double> want = Numbers(c.ref, "rung3_coefficients");
    ASSERT_EQ(r3->coefficients.size(), static_cast<Eigen::Index>(want.size()));
    for (size_t j = 0; j < want.size(); ++j) {
      EXPECT_NEAR(r3->coefficients[static_cast<Eigen::Index>(j)], want[j], 1e-8)
          << j;
    }
    ExpectRelNear(r3->log_likelihood, Number(c.ref, "rung3_ll"), 1e-10,
                  "rung 3 ll");
  }
}

TEST(LadderReferenceTest, CrossValidatedPenaltyMatchesScipyFolds) {
  for (const Case& c : Cases()) {
    SCOPED_TRACE(c.name);
    absl::StatusOr<PenaltyChoice> choice =
        ChooseRidgePenalty(c.x, c.y, c.prior_intercept, c.prior, 5);
    ASSERT_TRUE(choice.ok()) << choice.status();
    const std::vector<double> grid = Numbers(c.ref, "cv_grid");
    const std::vector<double> cv = Numbers(c.ref, "cv_ll");
    ASSERT_EQ(choice->grid.size(), grid.size());
    for (size_t k = 0; k < grid.size(); ++k) {
      // Grid n * 10^(k/2) as numpy computes it: 1e-12 relative.
      EXPECT_NEAR(choice->grid[k], grid[k], 1e-12 * grid[k]);
      // Held-out ll summed over 5 folds, each fit to its optimum by a
      // different optimiser (observed 4e-10 relative): 1e-8 relative.
      ExpectRelNear(choice->cv_log_likelihood[k], cv[k], 1e-8, "cv ll");
    }
    EXPECT_EQ(choice->lambda, Number(c.ref, "cv_lambda"));
  }
}

TEST(LadderReferenceTest, LikelihoodRatiosMatchScipyChi2) {
  for (const Case& c : Cases()) {
    SCOPED_TRACE(c.name);
    const double ll0 = Number(c.ref, "active_ll");
    const std::vector<double> lls = {
        Number(c.ref, "rung1_ll"), Number(c.ref, "rung2_ll"),
        Number(c.ref, "rung3_ll"), Number(c.ref, "rung4_ll")};
    const std::vector<double> df = Numbers(c.ref, "lr_df");
    const std::vector<double> stat = Numbers(c.ref, "lr_statistic");
    const std::vector<double> p = Numbers(c.ref, "lr_p");
    for (size_t k = 0; k < 4; ++k) {
      absl::StatusOr<LikelihoodRatioTest> t =
          LikelihoodRatio(lls[k], ll0, df[k]);
      ASSERT_TRUE(t.ok()) << t.status();
      EXPECT_NEAR(t->statistic, stat[k], 1e-9 * std::max(1.0, stat[k]));
      // scipy.stats.chi2.sf: 1e-10 relative, or 1e-300 absolute for the
      // p-values that underflow.
      EXPECT_NEAR(t->p_value, p[k], std::max(1e-10 * p[k], 1e-300)) << k;
    }
  }
  const Struct& grid = Reference().fields().at("chi2").struct_value();
  const std::vector<double> x = Numbers(grid, "x");
  const std::vector<double> df = Numbers(grid, "df");
  const std::vector<double> sf = Numbers(grid, "sf");
  for (size_t i = 0; i < x.size(); ++i) {
    absl::StatusOr<LikelihoodRatioTest> t =
        LikelihoodRatio(x[i] / 2, 0, df[i]);  // statistic 2 (x/2 - 0) = x
    ASSERT_TRUE(t.ok()) << t.status();
    // scipy.stats.chi2.sf(x, df): 1e-10 relative.
    EXPECT_NEAR(t->p_value, sf[i], 1e-10 * sf[i] + 1e-300)
        << "x " << x[i] << " df " << df[i];
  }
}

}  // namespace
}  // namespace plumbline::monitor
