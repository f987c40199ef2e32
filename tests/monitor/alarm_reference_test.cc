// File: tests/monitor/alarm_reference_test.cc
//
// The monitor's alarm statistics and exact figures against SciPy 1.10,
// scikit-learn 1.2, statsmodels 0.13 and NumPy simulations (Debian
// packages). tests/monitor/alarm_reference.py writes the data and the
// reference values as JSON in the same ctest run (fixture alarm_reference)
// and passes the path in PLUMBLINE_ALARM_REF. Its own executable because
// gtest_discover_tests gives one suite one environment variable and one
// fixture (see DEVELOPERS.md on fit_reference_test); the tests keep the
// `monitor.` prefix. Tolerances are stated beside each check.
#include <cmath>
#include <cstdint>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "google/protobuf/struct.pb.h"
#include "gtest/gtest.h"
#include "monitor/cusum_run_length.h"
#include "monitor/labelled_record_store.h"
#include "monitor/risk_adjusted_cusum.h"
#include "monitor/stability.h"
#include "monitor/stability_significance.h"
#include "monitor/window.h"
#include "tests/testing/json_file.h"

namespace plumbline::monitor {
namespace {

using google::protobuf::Struct;
using google::protobuf::Value;

const Value& Field(const Struct& s, const std::string& key) {
  static const Value* const kNull = new Value();
  auto it = s.fields().find(key);
  if (it == s.fields().end()) {
    ADD_FAILURE() << "reference JSON has no \"" << key << "\"";
    return *kNull;
  }
  return it->second;
}
const Struct& Object(const Struct& s, const std::string& key) {
  return Field(s, key).struct_value();
}
double Number(const Struct& s, const std::string& key) {
  return Field(s, key).number_value();
}
std::vector<double> Numbers(const Struct& s, const std::string& key) {
  absl::StatusOr<std::vector<double>> v = testing::NumberList(s, key);
  EXPECT_TRUE(v.ok()) << v.status();
  return v.ok() ? *v : std::vector<double>();
}
std::vector<Struct> Cases(const Struct& s, const std::string& key) {
  std::vector<Struct> out;
  for (const Value& v : Field(s, key).list_value().values()) {
    out.push_back(v.struct_value());
  }
  EXPECT_FALSE(out.empty()) << key;
  return out;
}

// |actual - expected| <= rel * |expected|.
void ExpectRelative(double actual, double expected, double rel,
                    const std::string& what) {
  EXPECT_NEAR(actual, expected, rel * std::abs(expected)) << what;
}

class AlarmReferenceTest : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    absl::StatusOr<Struct> json = testing::ReadJsonFile(
        testing::ReferencePathFromEnv("PLUMBLINE_ALARM_REF"));
    ASSERT_TRUE(json.ok()) << json.status();
    reference_ = new Struct(*std::move(json));
  }
  static const Struct& Root() { return *reference_; }

  static Struct* reference_;
};
Struct* AlarmReferenceTest::reference_ = nullptr;

// ---- PSI significance ----

TEST_F(AlarmReferenceTest, ChiSquareQuantileMatchesScipy) {
  const Struct& grid = Object(Root(), "chi2_isf");
  const std::vector<double> tails = Numbers(grid, "upper_tail");
  const std::vector<double> dofs = Numbers(grid, "dof");
  const std::vector<double> isf = Numbers(grid, "isf");
  ASSERT_EQ(tails.size(), isf.size());
  for (size_t i = 0; i < tails.size(); ++i) {
    absl::StatusOr<double> q = ChiSquareUpperQuantile(tails[i], dofs[i]);
    ASSERT_TRUE(q.ok()) << q.status();
    // reference: scipy.stats.chi2.isf, SciPy 1.10 (its own cephes-based
    // inverse, not Boost); 1e-12 relative.
    ExpectRelative(
        *q, isf[i], 1e-12,
        "tail " + std::to_string(tails[i]) + " dof " + std::to_string(dofs[i]));
  }
}

TEST_F(AlarmReferenceTest, PsiSignificanceMatchesScipy) {
  for (const Struct& c : Cases(Root(), "psi_cases")) {
    const std::string name = Field(c, "name").string_value();
    const double psi =
        PsiFromProportions(Numbers(c, "baseline"), Numbers(c, "window"));
    // reference: the PSI in numpy with the 1e-4 floor; 1e-12 relative.
    ExpectRelative(psi, Number(c, "psi"), 1e-12, name);
    absl::StatusOr<PsiSignificance> s =
        TestPsi({.psi = psi,
                 .baseline_count = static_cast<int64_t>(Number(c, "n")),
                 .window_count = static_cast<int64_t>(Number(c, "m")),
                 .bins = static_cast<int>(Number(c, "bins"))},
                Number(c, "alpha"));
    ASSERT_TRUE(s.ok()) << s.status();
    ExpectRelative(s->statistic, Number(c, "statistic"), 1e-12, name);
    // reference: scipy.stats.chi2.sf of the statistic on B - 1 dof. 1e-10
    // relative: the tail amplifies the statistic's last-bit differences by
    // about statistic / 2 (up to 50 here) on top of the tail's own 1e-12.
    ExpectRelative(s->p_value, Number(c, "p_value"), 1e-10, name);
    // reference: scipy.stats.chi2.isf(alpha, B - 1) * (1/n + 1/m); 1e-12.
    ExpectRelative(s->critical_psi, Number(c, "critical_psi"), 1e-12, name);
  }
}

// ---- Risk-adjusted CUSUM ----

TEST_F(AlarmReferenceTest, CusumRunLengthMatchesNumpySimulation) {
  const Struct& cusum = Object(Root(), "cusum");
  absl::StatusOr<RiskDistribution> risks =
      RiskDistribution::FromLogOdds(Numbers(cusum, "log_odds"));
  ASSERT_TRUE(risks.ok()) << risks.status();
  for (const Struct& c : Cases(cusum, "charts")) {
    const std::string name = Field(c, "name").string_value();
    const LogOddsChange alternative{Number(c, "shift"), Number(c, "slope")};
    const LogOddsChange truth{Number(c, "truth_shift"),
                              Number(c, "truth_slope")};
    absl::StatusOr<RunLengthEstimate> arl =
        AverageRunLength(alternative, Number(c, "limit"), *risks, truth);
    ASSERT_TRUE(arl.ok()) << arl.status();
    // reference: the mean run length of 10,000 NumPy runs of the chart
    // (alarm_reference.py, its own weights and loop). The Markov-chain ARL
    // must lie within the 99.9% interval of that mean (z = 3.2905, scipy
    // norm.isf(0.0005)) widened by the chain's stated error.
    const double se = Number(c, "standard_error");
    EXPECT_NEAR(arl->value, Number(c, "arl"),
                3.2905 * se + arl->discretisation_error)
        << name << ": chain " << arl->value << ", NumPy " << Number(c, "arl")
        << " +- " << se;
  }
}

// ---- Exact window figures ----

TEST_F(AlarmReferenceTest, ExactFiguresMatchSklearnStatsmodelsAndNumpy) {
  for (const Struct& c : Cases(Root(), "exact_cases")) {
    const std::string name = Field(c, "name").string_value();
    const std::vector<double> z = Numbers(c, "log_odds");
    std::vector<int> y;
    for (double v : Numbers(c, "labels")) y.push_back(static_cast<int>(v));
    // Through a count window of stores (the daemon's path): the largest
    // bucket count <= 10 that divides the case's size.
    const int64_t n = static_cast<int64_t>(z.size());
    int buckets = 10;
    while (n % buckets != 0) --buckets;
    absl::StatusOr<LabelledRecordStore> empty =
        LabelledRecordStore::Create(n / buckets);
    ASSERT_TRUE(empty.ok()) << empty.status();
    absl::StatusOr<CountWindow<LabelledRecordStore>> window =
        CountWindow<LabelledRecordStore>::Create(n, buckets, *empty);
    ASSERT_TRUE(window.ok()) << window.status();
    for (size_t i = 0; i < z.size(); ++i) {
      ASSERT_TRUE(window->Add(z[i], y[i]).ok()) << name << " record " << i;
    }
    absl::StatusOr<ExactOutcomeFigures> f = window->Merged().Result();
    ASSERT_TRUE(f.ok()) << f.status();
    EXPECT_EQ(f->count, n) << name;
    EXPECT_EQ(f->refused, 0) << name;

    ASSERT_TRUE(f->auc.ok()) << f->auc.status();
    // reference: sklearn.metrics.roc_auc_score (scikit-learn 1.2); 1e-12
    // absolute (the "tied" case holds many tied scores).
    EXPECT_NEAR(*f->auc, Number(c, "auc"), 1e-12) << name;

    const Struct& hl = Object(c, "hosmer_lemeshow");
    ASSERT_TRUE(f->hosmer_lemeshow.ok()) << f->hosmer_lemeshow.status();
    // reference: deciles-of-risk Hosmer-Lemeshow written in numpy in
    // alarm_reference.py (its own grouping by searchsorted on sorted
    // ranks), p-value scipy.stats.chi2.sf. Statistic 1e-12 relative (the
    // same sums in another order); p-value 1e-10 relative (the tail
    // amplifies the statistic's last bits, up to 200x at statistic ~400).
    EXPECT_EQ(f->hosmer_lemeshow->groups,
              static_cast<int>(Number(hl, "groups")))
        << name;
    ExpectRelative(f->hosmer_lemeshow->statistic, Number(hl, "statistic"),
                   1e-12, name);
    ExpectRelative(f->hosmer_lemeshow->p_value, Number(hl, "p_value"), 1e-10,
                   name);

    ASSERT_TRUE(f->calibration_intercept.ok())
        << f->calibration_intercept.status();
    // reference: statsmodels 0.13 GLM(Binomial) on a constant with the
    // log-odds as offset, IRLS to tol 1e-14; both fits are iterative with
    // their own stopping rules, so 1e-8 relative (estimate and standard
    // error).
    ExpectRelative(f->calibration_intercept->intercept,
                   Number(c, "calibration_intercept"), 1e-8, name);
    ExpectRelative(f->calibration_intercept->standard_error,
                   Number(c, "calibration_intercept_se"), 1e-8, name);
    ASSERT_TRUE(f->calibration_slope.ok()) << f->calibration_slope.status();
    // reference: statsmodels 0.13 Logit on [1, log-odds], Newton to tol
    // 1e-12; 1e-8 relative.
    ExpectRelative(f->calibration_slope->slope, Number(c, "calibration_slope"),
                   1e-8, name);
    ExpectRelative(f->calibration_slope->slope_standard_error,
                   Number(c, "calibration_slope_se"), 1e-8, name);
  }
}

}  // namespace
}  // namespace plumbline::monitor
