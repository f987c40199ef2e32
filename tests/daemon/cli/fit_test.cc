// File: tests/daemon/cli/fit_test.cc
//
// `plumbctl fit` end to end: the real plumbctl binary fits CSV files that
// tests/daemon/fit_cli_reference.py wrote in the same ctest run (fixture
// fit_cli_reference, directory in PLUMBLINE_FIT_CLI_REF), and its printed
// table and written set file are checked against the statsmodels and
// scikit-learn fits that script made; the set is loaded by a real plumbd
// and scores its training rows. Failures must name the problem and write
// nothing. In-process tests cover the CSV typing, the progress lines (with
// a fake clock) and the default version.
#include "daemon/cli/fit.h"

#include <cmath>
#include <filesystem>
#include <map>
#include <sstream>
#include <string>
#include <vector>

#include "absl/strings/match.h"
#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_split.h"
#include "absl/time/civil_time.h"
#include "daemon/csv/table.h"
#include "daemon/csv/training.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "scorer/coefficient_set.h"
#include "tests/scorer/fit_test_data.h"
#include "tests/testing/json_file.h"
#include "tests/testing/process.h"

namespace plumbline::daemon {
namespace {

using ::plumbline::testing::Number;
using ::plumbline::testing::Section;
using ::plumbline::testing::Vector;
using ::testing::HasSubstr;
using ::testing::Not;
using testing::PlumbdProcess;
using testing::ProcessResult;
using testing::ReadTextFile;
using testing::RunProcess;
using testing::TempDir;
using testing::WriteTextFile;
using Struct = google::protobuf::Struct;

// The agreement required with statsmodels and scikit-learn (the brief's
// bound); the table prints 9 significant digits, p-values 6.
constexpr double kRelative = 1e-6;
constexpr double kPrintedPValue = 1e-5;

void ExpectRelative(double got, double want, double rel,
                    const std::string& what) {
  EXPECT_LE(std::abs(got - want), rel * std::abs(want))
      << what << ": got " << got << ", want " << want;
}

double ParseNumber(absl::string_view text) {
  double v = std::nan("");
  EXPECT_TRUE(absl::SimpleAtod(text, &v)) << "not a number: '" << text << "'";
  return v;
}

// The words of the first line of `text` that starts with `label` + "  ",
// without the label's own words; with `table_header`, only lines after the
// first one starting with it count.
std::vector<std::string> LineAfter(const std::string& text,
                                   const std::string& label,
                                   const std::string& table_header = "") {
  bool in_table = table_header.empty();
  for (absl::string_view line : absl::StrSplit(text, '\n')) {
    if (!in_table) {
      in_table = absl::StartsWith(line, table_header);
      continue;
    }
    if (absl::StartsWith(line, label + "  ")) {
      return absl::StrSplit(line.substr(label.size()), ' ',
                            absl::SkipWhitespace());
    }
  }
  ADD_FAILURE() << "no line '" << label << "' in:\n" << text;
  return {"nan", "nan", "nan", "nan"};
}

double Statistic(const std::string& text, const std::string& label) {
  return ParseNumber(LineAfter(text, label)[0]);
}

// Coefficients of a set by design-column name ("intercept", "x",
// "region=rural"); reference levels (coefficient 0) are left out.
std::map<std::string, double> CoefficientsByName(
    const v1::CoefficientSet& set) {
  std::map<std::string, double> out = {{"intercept", set.intercept()}};
  for (const v1::Feature& f : set.features()) {
    if (f.has_numeric()) out[f.name()] = f.numeric().coefficient();
    if (!f.has_categorical()) continue;
    for (const auto& level : f.categorical().levels()) {
      if (level.value() == f.categorical().reference_level()) {
        EXPECT_EQ(level.coefficient(), 0.0) << f.name() << "=" << level.value();
        continue;
      }
      out[absl::StrCat(f.name(), "=", level.value())] = level.coefficient();
    }
  }
  for (const v1::Feature& f : set.features()) {
    if (f.missing().kind() == v1::MissingRule::INDICATOR) {
      out[absl::StrCat(f.name(), ":missing")] =
          f.missing().indicator_coefficient();
    }
  }
  return out;
}

TrainingColumns Columns(std::string target, std::string weights = "",
                        std::vector<std::string> features = {},
                        std::vector<std::string> categorical = {}) {
  TrainingColumns c;
  c.target = std::move(target);
  c.weights = std::move(weights);
  c.features = std::move(features);
  c.categorical = std::move(categorical);
  return c;
}

class FitCliTest : public ::testing::Test {
 protected:
  void SetUp() override {
    ref_dir_ =
        plumbline::testing::ReferencePathFromEnv("PLUMBLINE_FIT_CLI_REF");
    absl::StatusOr<Struct> ref =
        plumbline::testing::ReadJsonFile(ref_dir_ + "/reference.json");
    ASSERT_TRUE(ref.ok()) << ref.status();
    ref_ = *std::move(ref);
  }

  ProcessResult Plumbctl(std::vector<std::string> args) {
    args.insert(args.begin(), PLUMBCTL_PATH);
    absl::StatusOr<ProcessResult> result = RunProcess(args, dir_.path());
    EXPECT_TRUE(result.ok()) << result.status();
    return result.ok() ? *result : ProcessResult();
  }
  // `plumbctl fit` on the reference file `csv`; the set goes to `out`.
  ProcessResult Fit(const std::string& csv, const std::string& out,
                    std::vector<std::string> extra) {
    std::vector<std::string> args = {
        "fit", "--csv", ref_dir_ + "/" + csv, "--out", out, "--name", "fitted"};
    args.insert(args.end(), extra.begin(), extra.end());
    return Plumbctl(args);
  }
  v1::CoefficientSet ReadSet(const std::string& path) {
    absl::StatusOr<v1::CoefficientSet> set =
        scorer::ReadCoefficientSetFile(path);
    EXPECT_TRUE(set.ok()) << set.status();
    return set.ok() ? *set : v1::CoefficientSet();
  }
  // The "probability" column of a scored CSV file.
  std::vector<double> Probabilities(const std::string& path) {
    absl::StatusOr<CsvTable> table = ParseCsv(ReadTextFile(path), path);
    EXPECT_TRUE(table.ok()) << table.status();
    std::vector<double> p;
    if (!table.ok()) return p;
    const auto it =
        std::find(table->header.begin(), table->header.end(), "probability");
    EXPECT_NE(it, table->header.end());
    if (it == table->header.end()) return p;
    const size_t c = static_cast<size_t>(it - table->header.begin());
    for (const auto& row : table->rows) p.push_back(ParseNumber(row[c]));
    return p;
  }

  std::string ref_dir_;
  Struct ref_;
  TempDir dir_;
};

TEST_F(FitCliTest, SpectorMatchesStatsmodelsLogit) {
  const std::string out = dir_.File("spector.json");
  const ProcessResult r = Fit(
      "spector.csv", out,
      {"--target", "GRADE", "--features", "GPA,TUCE,PSI", "--version", "v1"});
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const Struct& std_ref = Section(Section(ref_, "spector"), "std");
  const Struct& raw_ref = Section(Section(ref_, "spector"), "raw");

  // The printed table is the fit on the design plumbctl builds (columns
  // centred and scaled). Reference: statsmodels Logit on
  // statsmodels.datasets.spector with GPA, TUCE, PSI standardised by numpy
  // mean and std (ddof=0); the data as in Greene, Econometric Analysis.
  const std::vector<std::string> rows = {"intercept", "GPA", "TUCE", "PSI"};
  const Eigen::VectorXd params = Vector(std_ref, "params");
  const Eigen::VectorXd bse = Vector(std_ref, "bse");
  const Eigen::VectorXd z = Vector(std_ref, "z");
  const Eigen::VectorXd p = Vector(std_ref, "p");
  ASSERT_EQ(params.size(), 4);
  Eigen::VectorXd printed_se(4);
  for (Eigen::Index j = 0; j < 4; ++j) {
    const std::vector<std::string> words =
        LineAfter(r.out, rows[j], "column  ");
    ASSERT_EQ(words.size(), 4u) << rows[j];
    ExpectRelative(ParseNumber(words[0]), params[j], kRelative,
                   rows[j] + " estimate");  // statsmodels Logit.params
    ExpectRelative(ParseNumber(words[1]), bse[j], kRelative,
                   rows[j] + " std_error");  // statsmodels Logit.bse
    ExpectRelative(ParseNumber(words[2]), z[j], kRelative,
                   rows[j] + " z");  // statsmodels Logit.tvalues
    ExpectRelative(ParseNumber(words[3]), p[j], kPrintedPValue,
                   rows[j] + " p_value");  // statsmodels Logit.pvalues
    printed_se[j] = ParseNumber(words[1]);
  }

  // The set file: centre and scale are numpy's mean and std (ddof=0); undoing
  // them gives statsmodels Logit on the raw spector columns.
  const v1::CoefficientSet set = ReadSet(out);
  ASSERT_EQ(set.features_size(), 3);
  const Eigen::VectorXd centre = Vector(std_ref, "centre");
  const Eigen::VectorXd scale = Vector(std_ref, "scale");
  const Eigen::VectorXd raw_params = Vector(raw_ref, "params");
  const Eigen::VectorXd raw_bse = Vector(raw_ref, "bse");
  double raw_intercept = set.intercept();
  for (int j = 0; j < 3; ++j) {
    const v1::NumericTransform& t = set.features(j).numeric();
    EXPECT_EQ(set.features(j).name(), rows[static_cast<size_t>(j + 1)]);
    ExpectRelative(t.center(), centre[j], 1e-12, "centre");  // numpy mean
    ExpectRelative(t.scale(), scale[j], 1e-12, "scale");     // numpy std
    raw_intercept -= t.coefficient() * t.center() / t.scale();
    // statsmodels Logit.params and .bse on the raw columns
    ExpectRelative(t.coefficient() / t.scale(), raw_params[j + 1], kRelative,
                   rows[static_cast<size_t>(j + 1)] + " raw estimate");
    ExpectRelative(printed_se[j + 1] / t.scale(), raw_bse[j + 1], kRelative,
                   rows[static_cast<size_t>(j + 1)] + " raw std_error");
  }
  ExpectRelative(raw_intercept, raw_params[0], kRelative, "raw intercept");

  // Fit statistics: statsmodels Logit.llf, .llnull, .aic, .prsquared;
  // deviance = -2 llf.
  const double llf = Number(raw_ref, "llf");
  ExpectRelative(set.provenance().training_log_likelihood(), llf, kRelative,
                 "set log-likelihood");
  ExpectRelative(Statistic(r.out, "log-likelihood"), llf, kRelative, "llf");
  ExpectRelative(Statistic(r.out, "null log-likelihood"),
                 Number(raw_ref, "llnull"), kRelative, "llnull");
  ExpectRelative(Statistic(r.out, "deviance"), -2 * llf, kRelative, "deviance");
  ExpectRelative(Statistic(r.out, "AIC"), Number(raw_ref, "aic"), kRelative,
                 "aic");
  ExpectRelative(Statistic(r.out, "McFadden pseudo-R^2"),
                 Number(raw_ref, "prsquared"), kRelative, "prsquared");
  EXPECT_EQ(Statistic(r.out, "rows"), 32);
  EXPECT_THAT(LineAfter(r.out, "converged")[0], "yes");

  EXPECT_EQ(set.name(), "fitted");
  EXPECT_EQ(set.version(), "v1");
  EXPECT_EQ(set.provenance().created_by(), "plumbctl fit");
  EXPECT_EQ(set.provenance().method(), "IRLS");
  EXPECT_EQ(set.provenance().training_rows(), 32);
  EXPECT_THAT(set.provenance().training_data(), HasSubstr("spector.csv"));
  EXPECT_THAT(set.provenance().training_data(), HasSubstr("32 rows"));
  EXPECT_THAT(r.out, HasSubstr("wrote set fitted version v1 to " + out));
}

TEST_F(FitCliTest, WeightsMatchStatsmodelsGlmFrequencyWeights) {
  const std::string out = dir_.File("weighted.json");
  const ProcessResult r = Fit(
      "spector.csv", out,
      {"--target", "GRADE", "--features", "GPA,TUCE,PSI", "--weights", "w"});
  ASSERT_EQ(r.exit_code, 0) << r.err;
  // statsmodels GLM(Binomial, freq_weights=w).params and .llf on the raw
  // spector columns.
  const Struct& ref = Section(ref_, "spector_weighted");
  const Eigen::VectorXd want = Vector(ref, "params");
  const v1::CoefficientSet set = ReadSet(out);
  ASSERT_EQ(set.features_size(), 3);
  double intercept = set.intercept();
  for (int j = 0; j < 3; ++j) {
    const v1::NumericTransform& t = set.features(j).numeric();
    intercept -= t.coefficient() * t.center() / t.scale();
    ExpectRelative(t.coefficient() / t.scale(), want[j + 1], kRelative,
                   set.features(j).name());
  }
  ExpectRelative(intercept, want[0], kRelative, "intercept");
  ExpectRelative(Statistic(r.out, "log-likelihood"), Number(ref, "llf"),
                 kRelative, "llf");
  EXPECT_EQ(Statistic(r.out, "weight sum"), 63);  // sum of 1 + (i mod 3)
  EXPECT_THAT(set.provenance().training_data(),
              HasSubstr("weights column 'w'"));
}

TEST_F(FitCliTest, PlumbdLoadsTheSetAndScoresTheFittedProbabilities) {
  std::filesystem::create_directory(dir_.File("sets"));
  const std::string set_file = dir_.File("sets/spector.json");
  const std::string csv = ref_dir_ + "/spector.csv";
  ASSERT_EQ(Fit("spector.csv", set_file,
                {"--target", "GRADE", "--features", "GPA,TUCE,PSI"})
                .exit_code,
            0);
  absl::StatusOr<std::unique_ptr<PlumbdProcess>> plumbd = PlumbdProcess::Start(
      dir_.path(),
      {"--sets", dir_.File("sets"), "--ledger", dir_.File("ledger.db")});
  ASSERT_TRUE(plumbd.ok()) << plumbd.status();
  const ProcessResult sets = Plumbctl({"sets", "--addr", (*plumbd)->addr()});
  ASSERT_EQ(sets.exit_code, 0) << sets.err;
  EXPECT_THAT(sets.out, HasSubstr("fitted"));
  EXPECT_THAT(sets.out, HasSubstr("fit-"));  // the default version

  const ProcessResult online =
      Plumbctl({"score", "--addr", (*plumbd)->addr(), "--set", "fitted",
                "--csv", csv, "--out", dir_.File("online.csv")});
  ASSERT_EQ(online.exit_code, 0) << online.err;
  const ProcessResult offline =
      Plumbctl({"score", "--set-file", set_file, "--csv", csv, "--out",
                dir_.File("offline.csv")});
  ASSERT_EQ(offline.exit_code, 0) << offline.err;

  // statsmodels Logit(GRADE ~ 1 + GPA + TUCE + PSI).predict() on the
  // training rows.
  const Eigen::VectorXd want =
      Vector(Section(Section(ref_, "spector"), "raw"), "predict");
  for (const char* file : {"online.csv", "offline.csv"}) {
    const std::vector<double> got = Probabilities(dir_.File(file));
    ASSERT_EQ(got.size(), static_cast<size_t>(want.size())) << file;
    for (size_t i = 0; i < got.size(); ++i) {
      EXPECT_NEAR(got[i], want[static_cast<Eigen::Index>(i)], 1e-9)
          << file << " row " << i + 1;
    }
  }
}

TEST_F(FitCliTest, CategoricalColumnsAndL2MatchStatsmodelsAndScikitLearn) {
  const Struct& ref = Section(ref_, "courier");
  struct Case {
    std::vector<std::string> flags;
    std::string section;
    bool depot_categorical;
  };
  const double lambda = Number(ref, "l2_lambda");
  const std::vector<Case> cases = {
      // statsmodels Logit on the standardised / one-hot design
      {{}, "numeric_depot", false},
      {{"--categorical", "depot_code"}, "categorical_depot", true},
      // scikit-learn 1.2 LogisticRegression(penalty="l2", C=1/lambda,
      // solver="newton-cholesky", tol=1e-12)
      {{"--categorical", "depot_code", "--l2", absl::StrCat(lambda)},
       "l2",
       true}};
  for (const Case& c : cases) {
    SCOPED_TRACE(c.section);
    const std::string out = dir_.File(c.section + ".json");
    // The reference imputes (the mean, the most frequent level).
    std::vector<std::string> flags = {"--target", "failed", "--missing_default",
                                      "impute"};
    flags.insert(flags.end(), c.flags.begin(), c.flags.end());
    const ProcessResult r = Fit("courier.csv", out, flags);
    ASSERT_EQ(r.exit_code, 0) << r.err;
    const v1::CoefficientSet set = ReadSet(out);
    // Every column but the target and record_id, in file order.
    ASSERT_EQ(set.features_size(), 4);
    EXPECT_EQ(set.features(0).name(), "distance_km");
    EXPECT_TRUE(set.features(0).has_numeric());
    EXPECT_EQ(set.features(1).name(), "region");  // text: categorical
    ASSERT_TRUE(set.features(1).has_categorical());
    EXPECT_EQ(set.features(1).categorical().levels_size(), 3);
    EXPECT_EQ(set.features(1).categorical().reference_level(), "urban");
    EXPECT_EQ(set.features(2).name(), "depot_code");
    EXPECT_EQ(set.features(2).has_categorical(), c.depot_categorical);
    EXPECT_EQ(set.features(2).has_numeric(), !c.depot_categorical);

    const Struct& fit_ref = Section(ref, c.section);
    std::vector<std::string> names;
    for (const auto& v : fit_ref.fields().at("names").list_value().values()) {
      names.push_back(v.string_value());
    }
    const Eigen::VectorXd want = Vector(fit_ref, "params");
    const std::map<std::string, double> got = CoefficientsByName(set);
    ASSERT_EQ(got.size(), names.size());
    for (size_t j = 0; j < names.size(); ++j) {
      ASSERT_TRUE(got.contains(names[j])) << names[j];
      ExpectRelative(got.at(names[j]), want[static_cast<Eigen::Index>(j)],
                     kRelative, names[j]);
    }
    if (c.section == "l2") {
      EXPECT_EQ(set.provenance().method(),
                absl::StrCat("IRLS, L2 lambda=", lambda));
      EXPECT_THAT(r.out, HasSubstr("Standard errors, z and p-values are not "
                                   "reported for a penalised fit"));
      EXPECT_THAT(r.out, Not(HasSubstr("std_error")));
    } else {
      // statsmodels Logit.llf
      ExpectRelative(Statistic(r.out, "log-likelihood"), Number(fit_ref, "llf"),
                     kRelative, "llf");
    }
  }
}

// The coefficients of `set` against the reference section `section` of
// courier (names and params, intercept first).
void ExpectCourierFit(const Struct& ref, const std::string& section,
                      const v1::CoefficientSet& set) {
  const Struct& fit_ref = Section(ref, section);
  std::vector<std::string> names;
  for (const auto& v : fit_ref.fields().at("names").list_value().values()) {
    names.push_back(v.string_value());
  }
  const Eigen::VectorXd want = Vector(fit_ref, "params");
  const std::map<std::string, double> got = CoefficientsByName(set);
  ASSERT_EQ(got.size(), names.size());
  for (size_t j = 0; j < names.size(); ++j) {
    ASSERT_TRUE(got.contains(names[j])) << names[j];
    ExpectRelative(got.at(names[j]), want[static_cast<Eigen::Index>(j)],
                   kRelative, names[j]);
  }
}

TEST_F(FitCliTest, MissingValuesAreRefusedUnlessARuleIsChosen) {
  // Default: reject. courier.csv has 14 blank distance_km cells and 8
  // blank region cells (fit_cli_reference.py, seeded).
  const std::string refused = dir_.File("refused.json");
  const ProcessResult r = Fit("courier.csv", refused, {"--target", "failed"});
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_THAT(r.err,
              HasSubstr("missing values in feature columns whose rule "
                        "is reject: column 'distance_km' has 14 (rows "));
  EXPECT_THAT(r.err, HasSubstr(" \xE2\x80\xA6 and 9 more); column 'region' "
                               "has 8 (rows "));
  EXPECT_THAT(r.err, HasSubstr("--missing distance_km=impute|indicator"));
  // The table comes first: column, missing, share, rule.
  EXPECT_THAT(r.err, HasSubstr("distance_km  14       3.5%   reject"));
  EXPECT_THAT(r.err, HasSubstr("parcel_kg    0        0.0%   reject"));
  EXPECT_FALSE(std::filesystem::exists(refused));

  // --missing per column: distance_km with an indicator, region imputed.
  // Reference: statsmodels Logit on the design with the indicator column.
  const Struct& ref = Section(ref_, "courier");
  const std::string out = dir_.File("indicator.json");
  const ProcessResult ind =
      Fit("courier.csv", out,
          {"--target", "failed", "--missing", "distance_km=indicator",
           "--missing", "region=impute"});
  ASSERT_EQ(ind.exit_code, 0) << ind.err;
  EXPECT_THAT(ind.err, HasSubstr("distance_km  14       3.5%   indicator"));
  EXPECT_THAT(ind.err, HasSubstr("region       8        2.0%   impute"));
  const v1::CoefficientSet set = ReadSet(out);
  ExpectCourierFit(ref, "indicator", set);
  ExpectRelative(Statistic(ind.out, "log-likelihood"),
                 Number(Section(ref, "indicator"), "llf"), kRelative, "llf");
  // The rules go into the set; columns without missing cells keep the
  // default, reject.
  ASSERT_EQ(set.features_size(), 4);
  EXPECT_EQ(set.features(0).missing().kind(), v1::MissingRule::INDICATOR);
  EXPECT_EQ(set.features(1).missing().kind(), v1::MissingRule::IMPUTE);
  EXPECT_EQ(set.features(3).missing().kind(), v1::MissingRule::REJECT);
}

TEST_F(FitCliTest, NaTokensAreMissingValuesAsBlankCellsAre) {
  // courier_na.csv writes courier.csv's blank cells as NA and n/a: with
  // --na the fit is statsmodels' imputed fit of courier.csv.
  const std::string out = dir_.File("na.json");
  const ProcessResult r = Fit(
      "courier_na.csv", out,
      {"--target", "failed", "--na", "NA,n/a", "--missing_default", "impute"});
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_THAT(r.err, HasSubstr("missing values (blank cells and --na "
                               "tokens):"));
  ExpectCourierFit(Section(ref_, "courier"), "numeric_depot", ReadSet(out));

  // Without --na, NA makes distance_km a numeric column with stray text.
  const ProcessResult plain =
      Fit("courier_na.csv", dir_.File("plain.json"), {"--target", "failed"});
  EXPECT_EQ(plain.exit_code, 1);
  EXPECT_THAT(plain.err,
              HasSubstr("column 'distance_km' looks numeric (386 of 400 "
                        "present cells are numbers) but 14 cells are not: "
                        "'NA'. If they mark missing values, pass --na NA"));
}

TEST_F(FitCliTest, TargetWordsAndDecimalsAreLabels) {
  // GRADE as true / TRUE / 1.0 and false / 0 / 0.0: the fit of spector.csv
  // (statsmodels Logit on the standardised columns).
  const ProcessResult r = Fit("spector_labels.csv", dir_.File("labels.json"),
                              {"--target", "GRADE"});
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const Eigen::VectorXd params =
      Vector(Section(Section(ref_, "spector"), "std"), "params");
  const std::vector<std::string> rows = {"intercept", "GPA", "TUCE", "PSI"};
  for (Eigen::Index j = 0; j < 4; ++j) {
    ExpectRelative(ParseNumber(LineAfter(r.out, rows[j], "column  ")[0]),
                   params[j], kRelative, rows[j]);
  }
}

struct FailureCase {
  std::string name;
  std::string csv;
  std::vector<std::string> flags;
  std::vector<std::string> messages;  // substrings of stderr
};

// 27 numbers and 3 text cells in column kg: 90% numbers, the threshold.
std::string StrayTextCsv() {
  std::string csv = "kg,y\n";
  for (int r = 1; r <= 27; ++r) absl::StrAppend(&csv, r, ",", r % 2, "\n");
  return csv + "?,0\nheavy,1\n?,1\n";
}

TEST_F(FitCliTest, FailuresNameTheProblemAndWriteNothing) {
  const std::vector<FailureCase> cases = {
      {"missing_target",
       "x,y\n1,0\n2,1\n",
       {"--target", "failed"},
       {"INVALID_ARGUMENT", "has no column 'failed' (named by --target)",
        "its columns are: x, y"}},
      {"label_2",
       "x,y\n1,0\n2,2\n3,1\n",
       {"--target", "y"},
       {"INVALID_ARGUMENT",
        "row 2 (line 3), column 'y': target '2' is not a label"}},
      {"complete_separation",
       "x,y\n1,0\n2,0\n3,0\n4,1\n5,1\n6,1\n",
       {"--target", "y"},
       {"FAILED_PRECONDITION", "complete separation: column 'x'", "--l2"}},
      {"quasi_separation",
       "distance_km,region,y\n1,urban,0\n2,urban,1\n3,urban,0\n4,urban,1\n"
       "5,urban,1\n6,urban,0\n2.5,rural,1\n3.5,rural,1\n1.5,suburban,0\n"
       "4.5,suburban,1\n5.5,suburban,0\n0.5,suburban,1\n",
       {"--target", "y"},
       {"FAILED_PRECONDITION", "quasi-complete separation",
        "column 'region=rural'"}},
      {"constant_column",
       "x,c,y\n1,5,0\n2,5,1\n3,5,0\n4,5,1\n",
       {"--target", "y"},
       {"FAILED_PRECONDITION",
        "feature 'c' cannot be fitted: every training "
        "value is 5"}},
      {"collinear_columns",
       "a,b,y\n1,3,0\n2,5,1\n3,7,0\n4,9,1\n5,11,1\n6,13,0\n",
       {"--target", "y"},
       {"FAILED_PRECONDITION", "columns 'a' and 'b' are collinear"}},
      {"one_label",
       "x,y\n1,1\n2,1\n3,1\n",
       {"--target", "y"},
       {"FAILED_PRECONDITION", "all labels are 1"}},
      {"negative_weight",
       "x,y,w\n1,0,1\n2,1,-1\n3,1,1\n",
       {"--target", "y", "--weights", "w"},
       {"INVALID_ARGUMENT", "row 2 (line 3), column 'w': weight '-1'"}},
      {"target_word",
       "x,y\n1,0\n2,yes\n3,1\n",
       {"--target", "y"},
       {"INVALID_ARGUMENT",
        "row 2 (line 3), column 'y': target 'yes' is not a label"}},
      {"target_missing",
       "x,y\n1,0\n2,\n3,1\n",
       {"--target", "y"},
       {"INVALID_ARGUMENT", "row 2 (line 3), column 'y': target '' is not"}},
      {"stray_text",
       StrayTextCsv(),
       {"--target", "y"},
       {"INVALID_ARGUMENT",
        "column 'kg' looks numeric (27 of 30 present cells are numbers) but "
        "3 cells are not: '?', 'heavy'. If they mark missing values, pass "
        "--na ?,heavy; if the column is a code, --categorical kg"}},
      {"missing_not_a_feature",
       "x,z,y\n1,2,0\n2,3,1\n",
       {"--target", "y", "--features", "x", "--missing", "z=impute"},
       {"INVALID_ARGUMENT",
        "--missing names column 'z', which is not a "
        "feature"}},
      {"unknown_feature",
       "x,y\n1,0\n2,1\n",
       {"--target", "y", "--features", "x,z"},
       {"INVALID_ARGUMENT", "has no column 'z' (named by --features)"}},
  };
  for (const FailureCase& c : cases) {
    SCOPED_TRACE(c.name);
    const std::string csv = dir_.File(c.name + ".csv");
    ASSERT_TRUE(WriteTextFile(csv, c.csv).ok());
    // An earlier set at --out must survive a failed fit untouched.
    const std::string out = dir_.File(c.name + ".json");
    ASSERT_TRUE(WriteTextFile(out, "earlier set").ok());
    std::vector<std::string> args = {"fit", "--csv",  csv,      "--out",
                                     out,   "--name", "failing"};
    args.insert(args.end(), c.flags.begin(), c.flags.end());
    const ProcessResult r = Plumbctl(args);
    EXPECT_EQ(r.exit_code, 1) << r.err;
    for (const std::string& m : c.messages) EXPECT_THAT(r.err, HasSubstr(m));
    EXPECT_EQ(ReadTextFile(out), "earlier set");
    EXPECT_FALSE(std::filesystem::exists(out + ".tmp"));
  }
  // Missing flags and bad rules are usage errors.
  const ProcessResult usage = Plumbctl({"fit", "--csv", "x.csv"});
  EXPECT_EQ(usage.exit_code, 2);
  EXPECT_THAT(usage.err, HasSubstr("fit needs --target COLUMN"));
  const std::vector<std::string> base = {"fit",      "--csv",  "x.csv",
                                         "--target", "y",      "--out",
                                         "o.json",   "--name", "n"};
  for (const auto& [flags, message] :
       std::vector<std::pair<std::vector<std::string>, std::string>>{
           {{"--missing", "x=guess"},
            "--missing: 'guess' is not a missing-value rule"},
           {{"--missing", "x"}, "expected COLUMN=impute|indicator|reject"},
           {{"--missing_default", "zero"},
            "--missing_default: 'zero' is not a missing-value rule"},
           {{"--na", "NA,,-"}, "an empty token"}}) {
    std::vector<std::string> args = base;
    args.insert(args.end(), flags.begin(), flags.end());
    const ProcessResult bad = Plumbctl(args);
    EXPECT_EQ(bad.exit_code, 2) << message;
    EXPECT_THAT(bad.err, HasSubstr(message));
  }
}

// In-process: the progress lines under a fake clock and the default version.
TEST_F(FitCliTest, ProgressLinesAndDefaultVersionInProcess) {
  const absl::Time t0 = absl::FromCivil(
      absl::CivilSecond(2026, 12, 2, 9, 30, 0), absl::UTCTimeZone());
  EXPECT_EQ(DefaultFitVersion(t0), "fit-20261202T093000Z");
  for (const FitProgressLines mode :
       {FitProgressLines::kAlways, FitProgressLines::kAfterOneSecond,
        FitProgressLines::kNever}) {
    FitCommandOptions options;
    options.csv = ref_dir_ + "/spector.csv";
    options.columns = Columns("GRADE", "", {"GPA", "TUCE", "PSI"});
    options.out = dir_.File("progress.json");
    options.name = "progress";
    options.progress = mode;
    // Each reading of the clock advances it by 0.6 s: the first reading is
    // the start, iteration 1 reads 0.6 s, iteration 2 reads 1.2 s.
    absl::Time now = t0 - absl::Milliseconds(600);
    options.now = [&now] { return now += absl::Milliseconds(600); };
    std::ostringstream out, err;
    ASSERT_TRUE(RunFitCommand(options, out, err).ok()) << err.str();
    const int iterations = static_cast<int>(Statistic(out.str(), "iterations"));
    ASSERT_GT(iterations, 2);
    // The progress lines, not the missing-data table before them.
    std::vector<std::string> lines;
    for (absl::string_view line : absl::StrSplit(err.str(), '\n')) {
      if (absl::StartsWith(line, "fit: ")) lines.emplace_back(line);
    }
    switch (mode) {
      case FitProgressLines::kAlways:
        ASSERT_EQ(lines.size(), static_cast<size_t>(iterations));
        EXPECT_THAT(lines[0], HasSubstr("fit: iteration 1: log-likelihood -"));
        EXPECT_THAT(lines[0], HasSubstr("max |gradient| "));
        break;
      case FitProgressLines::kAfterOneSecond:
        ASSERT_EQ(lines.size(), static_cast<size_t>(iterations - 1));
        EXPECT_THAT(lines[0], HasSubstr("fit: iteration 2: "));
        break;
      case FitProgressLines::kNever:
        EXPECT_TRUE(lines.empty());
        break;
    }
    const v1::CoefficientSet set = ReadSet(options.out);
    EXPECT_EQ(set.version(), "fit-20261202T093000Z");
    EXPECT_EQ(set.provenance().created_at().seconds(), absl::ToUnixSeconds(t0));
  }
}

// In-process: column roles and kinds from CSV text.
TEST(CsvTrainingTest, InfersKindsAndRoles) {
  absl::StatusOr<CsvTable> table = ParseCsv(
      "record_id,distance_km,region,code,w,failed\n"
      "a,1.5,urban,11,1,0\n"
      "b,,rural,12,2,1\n"
      "c,3,,11,0.5,1\n",
      "t.csv");
  ASSERT_TRUE(table.ok()) << table.status();
  absl::StatusOr<TrainingData> data = TrainingDataFromCsv(
      *table, Columns("failed", "w", {}, {"code"}), "t.csv");
  ASSERT_TRUE(data.ok()) << data.status();
  ASSERT_EQ(data->specs.size(),
            3u);  // record_id, w and failed are not features
  EXPECT_EQ(data->specs[0].name, "distance_km");
  EXPECT_EQ(data->specs[0].kind, scorer::FeatureKind::kNumeric);
  EXPECT_EQ(data->specs[1].kind, scorer::FeatureKind::kCategorical);
  EXPECT_EQ(data->specs[2].kind, scorer::FeatureKind::kCategorical);  // forced
  EXPECT_EQ(data->records[1][0].kind, scorer::RawValue::Kind::kMissing);
  EXPECT_EQ(data->records[2][1].kind, scorer::RawValue::Kind::kMissing);
  EXPECT_EQ(data->records[0][2].text, "11");
  EXPECT_EQ(data->labels, Eigen::Vector3d(0, 1, 1));
  EXPECT_EQ(data->weights, Eigen::Vector3d(1, 2, 0.5));

  EXPECT_THAT(SplitColumnList(" a, b ,,c"),
              ::testing::ElementsAre("a", "b", "c"));
  absl::StatusOr<TrainingData> two_roles =
      TrainingDataFromCsv(*table, Columns("failed", "", {"failed"}), "t.csv");
  EXPECT_THAT(two_roles.status().message(),
              HasSubstr("'failed' is the target column"));
  absl::StatusOr<TrainingData> not_feature = TrainingDataFromCsv(
      *table, Columns("failed", "", {"region"}, {"code"}), "t.csv");
  EXPECT_THAT(not_feature.status().message(),
              HasSubstr("'code', which is not a feature"));
  absl::StatusOr<TrainingData> text_weight =
      TrainingDataFromCsv(*table, Columns("failed", "region"), "t.csv");
  EXPECT_THAT(text_weight.status().message(),
              HasSubstr("row 1 (line 2), column 'region': weight 'urban'"));
}

}  // namespace
}  // namespace plumbline::daemon
