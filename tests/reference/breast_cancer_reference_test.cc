// File: tests/reference/breast_cancer_reference_test.cc
//
// Checks Plumbline's scoring and log-loss against scikit-learn on real data:
// tests/reference/sklearn_breast_cancer.py fits StandardScaler +
// LogisticRegression on load_breast_cancer (Wisconsin diagnostic
// breast-cancer data, 569 rows x 30 features, shipped inside scikit-learn)
// and writes the fitted model and its outputs as JSON; ctest runs it first
// and passes the path in PLUMBLINE_BREAST_CANCER_REF. Here the same model
// becomes a coefficient set whose numeric transforms do the standardisation
// (center = mean_, scale = scale_, coefficient = coef_).
#include <cmath>
#include <memory>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/strings/str_cat.h"
#include "google/protobuf/struct.pb.h"
#include "google/protobuf/util/message_differencer.h"
#include "gtest/gtest.h"
#include "monitor/metrics.h"
#include "scorer/coefficient_set.h"
#include "scorer/scoring_plan.h"
#include "tests/testing/json_file.h"

namespace plumbline {
namespace {

using scorer::RawValue;
using scorer::RowMatrix;
using scorer::ScoringPlan;

// What sklearn_breast_cancer.py wrote.
struct Reference {
  std::vector<std::string> feature_names;
  std::vector<double> mean, scale, coef;
  double intercept = 0;
  RowMatrix x;  // raw rows, columns in feature_names order
  std::vector<int> y;
  std::vector<double> proba, decision;
  double log_loss = 0;
  std::string sklearn_version;
};

absl::StatusOr<Reference> LoadReference(const std::string& path) {
  absl::StatusOr<google::protobuf::Struct> json = testing::ReadJsonFile(path);
  if (!json.ok()) return json.status();
  const auto& fields = json->fields();
  for (const char* key :
       {"feature_names", "intercept", "X", "log_loss", "sklearn_version"}) {
    if (!fields.contains(key)) {
      return absl::InvalidArgumentError(
          absl::StrCat(path, ": no \"", key, "\""));
    }
  }
  Reference ref;
  for (const auto& name : fields.at("feature_names").list_value().values()) {
    ref.feature_names.push_back(name.string_value());
  }
  for (auto [key, out] : {std::pair{"mean", &ref.mean},
                          {"scale", &ref.scale},
                          {"coef", &ref.coef},
                          {"predict_proba", &ref.proba},
                          {"decision_function", &ref.decision}}) {
    absl::StatusOr<std::vector<double>> list = testing::NumberList(*json, key);
    if (!list.ok())
      return absl::InvalidArgumentError(
          absl::StrCat(path, ": ", list.status().message()));
    *out = *std::move(list);
  }
  absl::StatusOr<std::vector<double>> y = testing::NumberList(*json, "y");
  if (!y.ok()) return y.status();
  for (double label : *y) ref.y.push_back(static_cast<int>(label));
  ref.intercept = fields.at("intercept").number_value();
  ref.log_loss = fields.at("log_loss").number_value();
  ref.sklearn_version = fields.at("sklearn_version").string_value();

  const auto& rows = fields.at("X").list_value().values();
  const int cols = static_cast<int>(ref.feature_names.size());
  ref.x.resize(rows.size(), cols);
  for (int i = 0; i < rows.size(); ++i) {
    const auto& row = rows[i].list_value().values();
    if (row.size() != cols) {
      return absl::InvalidArgumentError(absl::StrCat(
          path, ": X[", i, "] has ", row.size(), " values, want ", cols));
    }
    for (int j = 0; j < cols; ++j) ref.x(i, j) = row[j].number_value();
  }
  const size_t n = rows.size();
  if (ref.y.size() != n || ref.proba.size() != n || ref.decision.size() != n ||
      ref.mean.size() != ref.feature_names.size() ||
      ref.scale.size() != ref.feature_names.size() ||
      ref.coef.size() != ref.feature_names.size()) {
    return absl::InvalidArgumentError(absl::StrCat(path, ": lengths differ"));
  }
  return ref;
}

// The fitted pipeline as a coefficient set.
v1::CoefficientSet SetFromReference(const Reference& ref) {
  v1::CoefficientSet set;
  set.set_name("breast_cancer_reference");
  set.set_version(absl::StrCat("sklearn-", ref.sklearn_version));
  set.set_description(
      "StandardScaler + LogisticRegression fitted by scikit-learn on "
      "load_breast_cancer (Wisconsin diagnostic breast-cancer data)");
  set.set_intercept(ref.intercept);
  for (size_t j = 0; j < ref.feature_names.size(); ++j) {
    v1::Feature* feature = set.add_features();
    feature->set_name(ref.feature_names[j]);
    v1::NumericTransform* numeric = feature->mutable_numeric();
    numeric->set_center(ref.mean[j]);
    numeric->set_scale(ref.scale[j]);
    numeric->set_coefficient(ref.coef[j]);
  }
  return set;
}

class BreastCancerReferenceTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const std::string path =
        testing::ReferencePathFromEnv("PLUMBLINE_BREAST_CANCER_REF");
    ASSERT_FALSE(path.empty());
    absl::StatusOr<Reference> ref = LoadReference(path);
    ASSERT_TRUE(ref.ok()) << ref.status();
    ref_ = *std::move(ref);
    ASSERT_EQ(ref_.x.rows(), 569);
    ASSERT_EQ(ref_.x.cols(), 30);
    absl::StatusOr<std::shared_ptr<const ScoringPlan>> plan =
        ScoringPlan::Compile(SetFromReference(ref_), "breast_cancer_reference");
    ASSERT_TRUE(plan.ok()) << plan.status();
    plan_ = *std::move(plan);
    // Feature j of the set is column j of X.
    for (int j = 0; j < ref_.x.cols(); ++j) {
      ASSERT_EQ(plan_->FeatureIndex(ref_.feature_names[j]), j);
      columns_.push_back(j);
    }
  }

  // Scores every row through ScoreDense.
  void ScoreAll(const ScoringPlan& plan, Eigen::VectorXd& log_odds,
                Eigen::VectorXd& probability) {
    log_odds.resize(ref_.x.rows());
    probability.resize(ref_.x.rows());
    absl::Status status =
        plan.ScoreDense(ref_.x, columns_, {}, log_odds, probability);
    ASSERT_TRUE(status.ok()) << status;
  }

  Reference ref_;
  std::shared_ptr<const ScoringPlan> plan_;
  std::vector<int> columns_;
};

TEST_F(BreastCancerReferenceTest, ScoreMatchesPredictProba) {
  std::vector<RawValue> values(plan_->num_features());
  for (int i = 0; i < ref_.x.rows(); ++i) {
    for (int j = 0; j < ref_.x.cols(); ++j) {
      values[j] = RawValue::Number(ref_.x(i, j));
    }
    absl::StatusOr<scorer::ScoreResult> result = plan_->Score(values);
    ASSERT_TRUE(result.ok()) << "row " << i << ": " << result.status();
    // reference: scikit-learn LogisticRegression.predict_proba /
    // sklearn.metrics.log_loss on load_breast_cancer (Wisconsin diagnostic
    // breast-cancer data)
    EXPECT_NEAR(result->probability, ref_.proba[i], 1e-12) << "row " << i;
    // reference: scikit-learn LogisticRegression.decision_function on
    // load_breast_cancer (Wisconsin diagnostic breast-cancer data)
    EXPECT_NEAR(result->log_odds, ref_.decision[i], 1e-9) << "row " << i;
  }
}

TEST_F(BreastCancerReferenceTest, ScoreDenseMatchesPredictProba) {
  Eigen::VectorXd log_odds, probability;
  ScoreAll(*plan_, log_odds, probability);
  for (int i = 0; i < ref_.x.rows(); ++i) {
    // reference: scikit-learn LogisticRegression.predict_proba /
    // sklearn.metrics.log_loss on load_breast_cancer (Wisconsin diagnostic
    // breast-cancer data)
    EXPECT_NEAR(probability[i], ref_.proba[i], 1e-12) << "row " << i;
    // reference: scikit-learn LogisticRegression.decision_function on
    // load_breast_cancer (Wisconsin diagnostic breast-cancer data)
    EXPECT_NEAR(log_odds[i], ref_.decision[i], 1e-9) << "row " << i;
  }
}

TEST_F(BreastCancerReferenceTest, LogLossMatchesSklearn) {
  Eigen::VectorXd log_odds, probability;
  ScoreAll(*plan_, log_odds, probability);
  absl::StatusOr<double> log_loss = monitor::LogLoss(
      absl::MakeConstSpan(log_odds.data(), log_odds.size()), ref_.y);
  ASSERT_TRUE(log_loss.ok()) << log_loss.status();
  // reference: scikit-learn LogisticRegression.predict_proba /
  // sklearn.metrics.log_loss on load_breast_cancer (Wisconsin diagnostic
  // breast-cancer data)
  EXPECT_NEAR(*log_loss, ref_.log_loss, 1e-10 * ref_.log_loss);
}

TEST_F(BreastCancerReferenceTest, JsonRoundTripKeepsEveryProbability) {
  absl::StatusOr<std::string> json = scorer::CoefficientSetToJson(plan_->set());
  ASSERT_TRUE(json.ok()) << json.status();
  absl::StatusOr<v1::CoefficientSet> parsed =
      scorer::ParseCoefficientSet(*json, "round trip");
  ASSERT_TRUE(parsed.ok()) << parsed.status();
  // Every double must survive the JSON text exactly.
  EXPECT_TRUE(google::protobuf::util::MessageDifferencer::Equals(*parsed,
                                                                 plan_->set()));
  absl::StatusOr<std::shared_ptr<const ScoringPlan>> reloaded =
      ScoringPlan::Compile(*std::move(parsed), "round trip");
  ASSERT_TRUE(reloaded.ok()) << reloaded.status();

  Eigen::VectorXd log_odds, probability, log_odds2, probability2;
  ScoreAll(*plan_, log_odds, probability);
  ScoreAll(**reloaded, log_odds2, probability2);
  for (int i = 0; i < ref_.x.rows(); ++i) {
    EXPECT_EQ(probability2[i], probability[i]) << "row " << i;
    // reference: scikit-learn LogisticRegression.predict_proba /
    // sklearn.metrics.log_loss on load_breast_cancer (Wisconsin diagnostic
    // breast-cancer data)
    EXPECT_NEAR(probability2[i], ref_.proba[i], 1e-12) << "row " << i;
  }
}

}  // namespace
}  // namespace plumbline
