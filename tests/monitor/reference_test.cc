// File: tests/monitor/reference_test.cc
//
// The monitor's pure functions against scikit-learn 1.2, statsmodels 0.13
// and SciPy 1.10 (Debian packages). tests/monitor/monitor_reference.py
// writes the data and the reference values as JSON in the same ctest run
// (fixture monitor_reference) and passes the path in PLUMBLINE_MONITOR_REF.
//
// Tolerance 1e-12 relative unless stated: the references compute the same
// closed forms in double precision. The statsmodels fit is iterative (its own
// Newton stopping rule), so its estimates are compared to 1e-8.
#include <cmath>
#include <cstddef>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "google/protobuf/struct.pb.h"
#include "gtest/gtest.h"
#include "monitor/auc.h"
#include "monitor/calibration_fit.h"
#include "monitor/hosmer_lemeshow.h"
#include "monitor/incomplete_gamma.h"
#include "monitor/metrics.h"
#include "monitor/paired_comparison.h"
#include "monitor/reliability.h"
#include "monitor/stability.h"
#include "tests/testing/json_file.h"

namespace plumbline::monitor {
namespace {

using google::protobuf::Struct;
using google::protobuf::Value;

constexpr double kRel = 1e-12;
constexpr double kIterativeRel = 1e-8;

// ---- Reading the JSON ----

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
std::vector<int> Labels(const Struct& s) {
  std::vector<int> out;
  for (double v : Numbers(s, "labels")) out.push_back(static_cast<int>(v));
  return out;
}

class MonitorReferenceTest : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    absl::StatusOr<Struct> json = testing::ReadJsonFile(
        testing::ReferencePathFromEnv("PLUMBLINE_MONITOR_REF"));
    ASSERT_TRUE(json.ok()) << json.status();
    reference_ = new Struct(*std::move(json));
  }
  static const Struct& Root() { return *reference_; }
  static std::vector<Struct> LabelledCases() {
    std::vector<Struct> cases;
    for (const Value& v : Field(Root(), "labelled").list_value().values()) {
      cases.push_back(v.struct_value());
    }
    EXPECT_EQ(cases.size(), 5u);
    return cases;
  }

  static Struct* reference_;
};
Struct* MonitorReferenceTest::reference_ = nullptr;

// |actual - expected| <= rel * |expected|.
void ExpectRelative(double actual, double expected, double rel,
                    const std::string& what) {
  EXPECT_NEAR(actual, expected, rel * std::abs(expected)) << what;
}

// ---- Labelled figures ----

TEST_F(MonitorReferenceTest, LossAucAndCalibrationInTheLarge) {
  for (const Struct& c : LabelledCases()) {
    const std::string name = Field(c, "name").string_value();
    const std::vector<double> z = Numbers(c, "log_odds");
    const std::vector<double> p = Numbers(c, "probability");
    const std::vector<int> y = Labels(c);

    absl::StatusOr<double> ll = LogLoss(z, y);
    ASSERT_TRUE(ll.ok()) << ll.status();
    // reference: sklearn.metrics.log_loss, scikit-learn 1.2
    ExpectRelative(*ll, Number(c, "log_loss"), kRel, name);

    absl::StatusOr<double> brier = BrierScore(p, y);
    ASSERT_TRUE(brier.ok()) << brier.status();
    // reference: sklearn.metrics.brier_score_loss, scikit-learn 1.2
    ExpectRelative(*brier, Number(c, "brier"), kRel, name);

    absl::StatusOr<double> auc = Auc(z, y);
    ASSERT_TRUE(auc.ok()) << auc.status();
    // reference: sklearn.metrics.roc_auc_score, scikit-learn 1.2 (the
    // "tied" and "five_levels" cases hold tied scores)
    ExpectRelative(*auc, Number(c, "auc"), kRel, name);

    absl::StatusOr<double> citl = CalibrationInTheLarge(p, y);
    ASSERT_TRUE(citl.ok()) << citl.status();
    // reference: numpy.mean(p) - numpy.mean(y), numpy 1.24; absolute
    // tolerance since the difference of two means can be near 0.
    EXPECT_NEAR(*citl, Number(c, "citl"), kRel) << name;
  }
}

TEST_F(MonitorReferenceTest, PairedLogLossComparison) {
  for (const Struct& c : LabelledCases()) {
    const std::string name = Field(c, "name").string_value();
    const Struct& ref = Object(c, "paired");
    absl::StatusOr<PairedLogLoss> got = ComparePairedLogLoss(
        Numbers(c, "log_odds"), Numbers(ref, "candidate_log_odds"), Labels(c));
    ASSERT_TRUE(got.ok()) << got.status();
    // reference: sklearn.metrics.log_loss, scikit-learn 1.2
    ExpectRelative(got->active_log_loss, Number(ref, "active_log_loss"), kRel,
                   name);
    ExpectRelative(got->candidate_log_loss, Number(ref, "candidate_log_loss"),
                   kRel, name);
    // reference: numpy.mean of per-record scipy.special.log_expit losses;
    // scipy.stats.sem (ddof 1); scipy.stats.norm.ppf(0.975) for the interval.
    // Absolute tolerance on the mean difference, which can be near 0.
    EXPECT_NEAR(got->mean_difference, Number(ref, "mean_difference"), 1e-12)
        << name;
    ExpectRelative(got->standard_error, Number(ref, "standard_error"), 1e-10,
                   name);
    EXPECT_NEAR(got->lower_95, Number(ref, "lower_95"), 1e-12) << name;
    EXPECT_NEAR(got->upper_95, Number(ref, "upper_95"), 1e-12) << name;
  }
}

// Compares the non-empty bins of `table` with calibration_curve's output.
void ExpectSameCurve(const ReliabilityTable& table, const Struct& curve,
                     const std::string& what) {
  const std::vector<double> observed = Numbers(curve, "observed");
  const std::vector<double> predicted = Numbers(curve, "predicted");
  std::vector<const ReliabilityBin*> filled;
  for (const ReliabilityBin& bin : table.bins) {
    if (bin.count > 0) filled.push_back(&bin);
  }
  ASSERT_EQ(filled.size(), observed.size()) << what;
  for (size_t i = 0; i < filled.size(); ++i) {
    ExpectRelative(filled[i]->observed_rate, observed[i], kRel,
                   what + " observed, bin " + std::to_string(i));
    ExpectRelative(filled[i]->mean_predicted, predicted[i], kRel,
                   what + " predicted, bin " + std::to_string(i));
  }
}

TEST_F(MonitorReferenceTest, ReliabilityTablesMatchCalibrationCurve) {
  for (const Struct& c : LabelledCases()) {
    const std::string name = Field(c, "name").string_value();
    const std::vector<double> p = Numbers(c, "probability");
    const std::vector<int> y = Labels(c);
    const Struct& curves = Object(c, "curves");
    for (int bins : {5, 10, 15}) {
      const std::string b = std::to_string(bins);
      absl::StatusOr<ReliabilityTable> uniform =
          EqualWidthReliability(p, y, bins);
      ASSERT_TRUE(uniform.ok()) << uniform.status();
      // reference: sklearn.calibration.calibration_curve(strategy="uniform"),
      // scikit-learn 1.2
      ExpectSameCurve(*uniform, Object(curves, "uniform_" + b),
                      name + " uniform " + b);

      absl::StatusOr<ReliabilityTable> quantile =
          EqualCountReliability(p, y, bins);
      ASSERT_TRUE(quantile.ok()) << quantile.status();
      // reference: sklearn.calibration.calibration_curve(strategy="quantile"),
      // scikit-learn 1.2
      ExpectSameCurve(*quantile, Object(curves, "quantile_" + b),
                      name + " quantile " + b);
      // reference: numpy.percentile(p, linspace(0, 1, B + 1) * 100), numpy
      // 1.24: the edges are reproduced operation for operation, so equal.
      const std::vector<double> edges = Numbers(curves, "quantile_edges_" + b);
      ASSERT_EQ(edges.size(), quantile->bins.size() + 1);
      for (size_t i = 0; i < quantile->bins.size(); ++i) {
        EXPECT_EQ(quantile->bins[i].lower, edges[i]) << name << " edge " << i;
      }
      EXPECT_EQ(quantile->bins.back().upper, edges.back()) << name;
    }
  }
}

TEST_F(MonitorReferenceTest, CalibrationInterceptSlopeMatchesStatsmodels) {
  for (const Struct& c : LabelledCases()) {
    const std::string name = Field(c, "name").string_value();
    absl::StatusOr<CalibrationFit> fit =
        CalibrationInterceptSlope(Numbers(c, "log_odds"), Labels(c));
    ASSERT_TRUE(fit.ok()) << name << ": " << fit.status();
    const Struct& logit = Object(c, "logit");
    // reference: statsmodels.api.Logit(y, [1, log-odds]).fit(method="newton"),
    // statsmodels 0.13; 1e-8 because both sides stop an iteration.
    ExpectRelative(fit->intercept, Number(logit, "intercept"), kIterativeRel,
                   name + " intercept");
    ExpectRelative(fit->slope, Number(logit, "slope"), kIterativeRel,
                   name + " slope");
    // reference: statsmodels Logit results .bse, statsmodels 0.13
    ExpectRelative(fit->intercept_standard_error, Number(logit, "intercept_se"),
                   kIterativeRel, name + " intercept se");
    ExpectRelative(fit->slope_standard_error, Number(logit, "slope_se"),
                   kIterativeRel, name + " slope se");
  }
}

TEST_F(MonitorReferenceTest, HosmerLemeshowMatchesNumpyAndScipy) {
  for (const Struct& c : LabelledCases()) {
    const std::string name = Field(c, "name").string_value();
    const std::vector<double> p = Numbers(c, "probability");
    const std::vector<int> y = Labels(c);

    absl::StatusOr<HosmerLemeshowResult> deciles = HosmerLemeshow(p, y, 10);
    ASSERT_TRUE(deciles.ok()) << name << ": " << deciles.status();
    const Struct& ref = Object(c, "hosmer_lemeshow");
    // reference: statistic in numpy on calibration_curve's quantile groups,
    // p-value scipy.stats.chi2.sf(stat, groups - 2), SciPy 1.10
    EXPECT_EQ(deciles->groups, static_cast<int>(Number(ref, "groups"))) << name;
    ExpectRelative(deciles->statistic, Number(ref, "statistic"), kRel, name);
    ExpectRelative(deciles->p_value, Number(ref, "p_value"), kRel, name);

    absl::StatusOr<ReliabilityTable> uniform = EqualWidthReliability(p, y, 10);
    ASSERT_TRUE(uniform.ok());
    absl::StatusOr<HosmerLemeshowResult> fixed =
        HosmerLemeshowFromTable(*uniform);
    const Struct& ref_fixed = Object(c, "hosmer_lemeshow_uniform");
    if (Number(ref_fixed, "groups") < 3) {
      EXPECT_EQ(fixed.status().code(), absl::StatusCode::kFailedPrecondition);
      continue;
    }
    ASSERT_TRUE(fixed.ok()) << name << ": " << fixed.status();
    // reference: as above on calibration_curve's uniform groups
    EXPECT_EQ(fixed->groups, static_cast<int>(Number(ref_fixed, "groups")));
    ExpectRelative(fixed->statistic, Number(ref_fixed, "statistic"), kRel,
                   name + " uniform");
    ExpectRelative(fixed->p_value, Number(ref_fixed, "p_value"), kRel,
                   name + " uniform");
  }
}

TEST_F(MonitorReferenceTest, ChiSquareSurvivalMatchesScipy) {
  const Struct& grid = Object(Root(), "chi2");
  const std::vector<double> x = Numbers(grid, "x");
  const std::vector<double> dof = Numbers(grid, "dof");
  const std::vector<double> sf = Numbers(grid, "sf");
  ASSERT_EQ(x.size(), sf.size());
  ASSERT_GT(x.size(), 400u);
  for (size_t i = 0; i < x.size(); ++i) {
    absl::StatusOr<double> q = ChiSquareSurvival(x[i], dof[i]);
    ASSERT_TRUE(q.ok()) << q.status();
    // reference: scipy.stats.chi2.sf(x, dof), SciPy 1.10 (values > 1e-300)
    ExpectRelative(
        *q, sf[i], kRel,
        "x = " + std::to_string(x[i]) + ", dof = " + std::to_string(dof[i]));
  }
}

// ---- Population stability ----

TEST_F(MonitorReferenceTest, NumericPsiMatchesRelEntr) {
  for (const Value& v : Field(Root(), "psi_numeric").list_value().values()) {
    const Struct& c = v.struct_value();
    const std::string name = Field(c, "name").string_value();
    absl::StatusOr<BinnedBaseline> baseline =
        BinnedBaseline::Create(Numbers(c, "edges"), Numbers(c, "expected"));
    ASSERT_TRUE(baseline.ok()) << baseline.status();
    std::vector<double> values;
    for (const Value& x : Field(c, "values").list_value().values()) {
      values.push_back(x.kind_case() == Value::kNullValue ? std::nan("")
                                                          : x.number_value());
    }
    std::optional<ValueRange> range;
    if (c.fields().contains("clip")) {
      const std::vector<double> clip = Numbers(c, "clip");
      range = ValueRange{clip[0], clip[1]};
    }
    absl::StatusOr<StabilityFigures> f =
        NumericStability(*baseline, values, range);
    ASSERT_TRUE(f.ok()) << f.status();
    ASSERT_TRUE(f->psi.has_value());
    // reference: sum of scipy.special.rel_entr(a, e) + rel_entr(e, a) after
    // the 1e-4 floor, SciPy 1.10
    ExpectRelative(*f->psi, Number(c, "psi"), kRel, name);
    // reference: numpy counts (numpy.searchsorted(edges, side="right"),
    // numpy.isnan), numpy 1.24
    const std::vector<double> actual = Numbers(c, "actual");
    ASSERT_EQ(f->proportions.size(), actual.size());
    for (size_t i = 0; i < actual.size(); ++i) {
      ExpectRelative(f->proportions[i], actual[i], kRel, name);
    }
    ExpectRelative(f->missing_rate, Number(c, "missing_rate"), kRel, name);
    ExpectRelative(f->out_of_range_rate, Number(c, "out_of_range_rate"), kRel,
                   name);
  }
}

TEST_F(MonitorReferenceTest, CategoricalPsiMatchesRelEntr) {
  const Struct& c = Object(Root(), "psi_categorical");
  std::vector<std::pair<std::string, double>> levels;
  const std::vector<double> expected = Numbers(c, "expected");
  const auto& names = Field(c, "levels").list_value().values();
  for (int i = 0; i < names.size(); ++i) {
    levels.emplace_back(names[i].string_value(), expected[i]);
  }
  absl::StatusOr<CategoricalBaseline> baseline =
      CategoricalBaseline::Create(levels);
  ASSERT_TRUE(baseline.ok()) << baseline.status();
  std::vector<std::optional<absl::string_view>> values;
  for (const Value& x : Field(c, "values").list_value().values()) {
    if (x.kind_case() == Value::kNullValue) {
      values.push_back(std::nullopt);
    } else {
      values.push_back(absl::string_view(x.string_value()));
    }
  }
  absl::StatusOr<StabilityFigures> f = CategoricalStability(*baseline, values);
  ASSERT_TRUE(f.ok()) << f.status();
  // reference: sum of scipy.special.rel_entr(a, e) + rel_entr(e, a) with
  // unseen levels pooled in one bin of baseline share 0, after the 1e-4
  // floor, SciPy 1.10
  ExpectRelative(*f->psi, Number(c, "psi"), kRel, "vehicle");
  // reference: counts in Python over the same draws
  ExpectRelative(f->missing_rate, Number(c, "missing_rate"), kRel, "vehicle");
  ExpectRelative(f->out_of_range_rate, Number(c, "out_of_range_rate"), kRel,
                 "vehicle");
  const std::vector<double> actual = Numbers(c, "actual");
  ASSERT_EQ(f->proportions.size(), actual.size());
  for (size_t i = 0; i < actual.size(); ++i) {
    ExpectRelative(f->proportions[i], actual[i], kRel, "vehicle");
  }
}

}  // namespace
}  // namespace plumbline::monitor
