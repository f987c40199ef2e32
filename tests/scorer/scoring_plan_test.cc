#include "scorer/scoring_plan.h"

#include <cmath>
#include <limits>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "scorer/coefficient_set.h"
#include "tests/scorer/test_sets.h"

namespace plumbline::scorer {
namespace {

using ::testing::HasSubstr;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kInf = std::numeric_limits<double>::infinity();

// Expected values in this file are worked out by hand from the coefficients
// in tests/scorer/test_sets.h (see the comment there).
class ScoringPlanTest : public ::testing::Test {
 protected:
  void SetUp() override {
    auto set = ParseCoefficientSet(testing::kAllTransformsSetJson, "test");
    ASSERT_TRUE(set.ok()) << set.status();
    auto plan = ScoringPlan::Compile(*set, "test");
    ASSERT_TRUE(plan.ok()) << plan.status();
    plan_ = *plan;
  }

  // distance_km, weight_kg, building, hour, rain_mm
  std::vector<RawValue> Row(RawValue d, RawValue w, RawValue b, RawValue h,
                            RawValue r) {
    return {d, w, b, h, r};
  }
  std::vector<RawValue> Typical() {
    return Row(RawValue::Number(9), RawValue::Number(2), RawValue::Text("flat"),
               RawValue::Number(18), RawValue::Number(3));
  }
  double LogOdds(const std::vector<RawValue>& row) {
    auto r = plan_->Score(row);
    EXPECT_TRUE(r.ok()) << r.status();
    return r.ok() ? r->log_odds : kNaN;
  }
  absl::Status ScoreError(const std::vector<RawValue>& row) {
    auto r = plan_->Score(row);
    return r.ok() ? absl::OkStatus() : r.status();
  }

  std::shared_ptr<const ScoringPlan> plan_;
};

TEST_F(ScoringPlanTest, LaysOutTheEncodedRow) {
  // 1 numeric + (1 numeric + 1 indicator) + 3 levels + 3 bins + 1 numeric.
  EXPECT_EQ(plan_->encoded_width(), 10);
  EXPECT_EQ(plan_->FeatureIndex("hour"), 3);
  EXPECT_EQ(plan_->FeatureIndex("nope"), -1);
  EXPECT_EQ(plan_->LevelIndex(2, "office"), 2);
  EXPECT_EQ(plan_->LevelIndex(2, "barn"), -1);
}

TEST_F(ScoringPlanTest, ScoresEveryTransform) {
  // -1.5 + 0.5*(9-5)/2 - 0.25*2 + 0.8 + 0.6 + 0.1*3 = 0.7
  auto r = plan_->Score(Typical());
  ASSERT_TRUE(r.ok()) << r.status();
  EXPECT_NEAR(r->log_odds, 0.7, 1e-15);
  EXPECT_NEAR(r->probability, 1.0 / (1.0 + std::exp(-0.7)), 1e-16);
}

TEST_F(ScoringPlanTest, NumericClipsAndStandardises) {
  auto row = Typical();
  row[0] = RawValue::Number(100);  // clipped to 20: 0.5 * 7.5 = 3.75
  EXPECT_NEAR(LogOdds(row), 0.7 - 1.0 + 3.75, 1e-14);
  row[0] = RawValue::Number(-3);  // clipped to 0: 0.5 * -2.5 = -1.25
  EXPECT_NEAR(LogOdds(row), 0.7 - 1.0 - 1.25, 1e-14);
}

TEST_F(ScoringPlanTest, BinsAreClosedOnTheLeft) {
  auto row = Typical();
  row[3] = RawValue::Number(8.999);  // bin 0: 0.3
  EXPECT_NEAR(LogOdds(row), 0.7 - 0.6 + 0.3, 1e-14);
  row[3] = RawValue::Number(9);  // bin 1: 0
  EXPECT_NEAR(LogOdds(row), 0.7 - 0.6, 1e-14);
  row[3] = RawValue::Number(17);  // bin 2: 0.6
  EXPECT_NEAR(LogOdds(row), 0.7, 1e-14);
}

TEST_F(ScoringPlanTest, CategoricalLevels) {
  auto row = Typical();
  row[2] = RawValue::Text("office");
  EXPECT_NEAR(LogOdds(row), 0.7 - 0.8 - 0.4, 1e-14);
  row[2] = RawValue::Text("barn");  // unseen -> missing -> impute "house" (0)
  EXPECT_NEAR(LogOdds(row), 0.7 - 0.8, 1e-14);
}

TEST_F(ScoringPlanTest, MissingRules) {
  auto row = Typical();
  row[0] = RawValue::Missing();  // impute 5 -> 0
  EXPECT_NEAR(LogOdds(row), 0.7 - 1.0, 1e-14);
  row = Typical();
  row[1] = RawValue::Missing();  // indicator 0.7 replaces -0.5
  EXPECT_NEAR(LogOdds(row), 0.7 + 0.5 + 0.7, 1e-14);
  row = Typical();
  row[2] = RawValue::Missing();  // impute "house" -> 0
  EXPECT_NEAR(LogOdds(row), 0.7 - 0.8, 1e-14);
  row = Typical();
  row[3] = RawValue::Missing();  // reject
  absl::Status st = ScoreError(row);
  EXPECT_EQ(st.code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(st.message(), HasSubstr("feature 'hour': value is missing"));
}

TEST_F(ScoringPlanTest, RefusesBadValuesNamingTheFeature) {
  struct Case {
    int feature;
    RawValue value;
    const char* expected;
  };
  const Case cases[] = {
      {0, RawValue::Text("far"), "feature 'distance_km': expected a number"},
      {2, RawValue::Number(1), "feature 'building': expected a level name"},
      {4, RawValue::Number(kNaN), "feature 'rain_mm': value is NaN"},
      {4, RawValue::Number(kInf), "feature 'rain_mm': value is infinite"},
      {3, RawValue::Number(-kInf), "feature 'hour': value is infinite"},
      {4, RawValue::Missing(), "feature 'rain_mm': value is missing"},
  };
  for (const Case& c : cases) {
    auto row = Typical();
    row[c.feature] = c.value;
    absl::Status st = ScoreError(row);
    EXPECT_EQ(st.code(), absl::StatusCode::kInvalidArgument) << c.expected;
    EXPECT_THAT(st.message(), HasSubstr(c.expected));
  }
}

TEST_F(ScoringPlanTest, UnseenRejectNamesTheLevel) {
  auto set = ParseCoefficientSet(testing::kAllTransformsSetJson, "test");
  ASSERT_TRUE(set.ok());
  set->mutable_features(2)->mutable_categorical()->set_unseen(
      v1::CategoricalTransform::UNSEEN_REJECT);
  auto plan = ScoringPlan::Compile(*set, "test");
  ASSERT_TRUE(plan.ok());
  auto row = Typical();
  row[2] = RawValue::Text("barn");
  auto r = (*plan)->Score(row);
  ASSERT_FALSE(r.ok());
  EXPECT_THAT(r.status().message(), HasSubstr("level \"barn\" is not one of"));
  set->mutable_features(2)->mutable_categorical()->set_unseen(
      v1::CategoricalTransform::UNSEEN_ZERO);
  plan = ScoringPlan::Compile(*set, "test");
  ASSERT_TRUE(plan.ok());
  r = (*plan)->Score(row);
  ASSERT_TRUE(r.ok());
  EXPECT_NEAR(r->log_odds, 0.7 - 0.8, 1e-14);
}

TEST_F(ScoringPlanTest, ReasonsAgainstTheReferencePoint) {
  // Contributions minus reference: distance +1.0, weight -0.5, building +0.8,
  // hour +0.6 (reference 12 is bin 1 with 0), rain +0.3.
  auto r = plan_->Score(Typical(), {.top = 3});
  ASSERT_TRUE(r.ok());
  ASSERT_EQ(r->reasons.size(), 3u);
  EXPECT_EQ(plan_->feature_name(r->reasons[0].feature), "distance_km");
  EXPECT_NEAR(r->reasons[0].contribution, 1.0, 1e-15);
  EXPECT_EQ(plan_->feature_name(r->reasons[1].feature), "building");
  EXPECT_EQ(plan_->feature_name(r->reasons[2].feature), "hour");

  r = plan_->Score(Typical(), {.top = 5, .order = ReasonOrder::kLowersLogOdds});
  ASSERT_TRUE(r.ok());
  ASSERT_EQ(r->reasons.size(), 1u);  // only weight lowered the log-odds
  EXPECT_EQ(plan_->feature_name(r->reasons[0].feature), "weight_kg");
  EXPECT_NEAR(r->reasons[0].contribution, -0.5, 1e-15);

  r = plan_->Score(Typical(), {.top = 5, .order = ReasonOrder::kMagnitude});
  ASSERT_TRUE(r.ok());
  ASSERT_EQ(r->reasons.size(), 5u);
  EXPECT_EQ(plan_->feature_name(r->reasons[3].feature), "weight_kg");
  EXPECT_EQ(plan_->feature_name(r->reasons[4].feature), "rain_mm");

  // The reasons add up to log-odds minus the log-odds at the reference point.
  r = plan_->Score(Typical(), {.top = 5, .order = ReasonOrder::kMagnitude});
  double sum = 0;
  for (const Reason& reason : r->reasons) sum += reason.contribution;
  EXPECT_NEAR(sum, 0.7 - (-1.5), 1e-14);
}

TEST_F(ScoringPlanTest, DenseMatchesNamedIncludingMissingAndLevels) {
  // Columns in a shuffled order, building as level index, weight absent.
  // column_of_feature: distance->2, weight->absent, building->0, hour->1,
  // rain->3
  const std::vector<int> column_of_feature = {2, -1, 0, 1, 3};
  RowMatrix raw(3, 4);
  raw << 1, 18, 9, 3,  // flat
      2, 8, 100, 0,    // office, clipped distance
      0, 12, kNaN, 1;  // house, distance missing (NaN) -> impute
  Eigen::VectorXd lo(3), p(3);
  DenseOptions options{.nan_is_missing = true};
  ASSERT_TRUE(plan_->ScoreDense(raw, column_of_feature, options, lo, p).ok());
  const std::vector<std::vector<RawValue>> named = {
      Row(RawValue::Number(9), RawValue::Missing(), RawValue::Text("flat"),
          RawValue::Number(18), RawValue::Number(3)),
      Row(RawValue::Number(100), RawValue::Missing(), RawValue::Text("office"),
          RawValue::Number(8), RawValue::Number(0)),
      Row(RawValue::Missing(), RawValue::Missing(), RawValue::Text("house"),
          RawValue::Number(12), RawValue::Number(1)),
  };
  for (int i = 0; i < 3; ++i) {
    auto r = plan_->Score(named[i]);
    ASSERT_TRUE(r.ok()) << r.status();
    EXPECT_EQ(lo[i], r->log_odds) << i;
    EXPECT_EQ(p[i], r->probability) << i;
  }
  // Row 0 by hand: -1.5 + 1.0 + 0.7 (indicator) + 0.8 + 0.6 + 0.3 = 1.9
  EXPECT_NEAR(lo[0], 1.9, 1e-14);
}

TEST_F(ScoringPlanTest, DenseRefusesNaNUnlessAskedAndBadLevelIndex) {
  const std::vector<int> identity = {0, 1, 2, 3, 4};
  RowMatrix raw(2, 5);
  raw << 9, 2, 1, 18, 3, 9, 2, 1, 18, kNaN;
  Eigen::VectorXd lo(2), p(2);
  absl::Status st = plan_->ScoreDense(raw, identity, {}, lo, p);
  EXPECT_EQ(st.code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(st.message(),
              HasSubstr("rows[1]: feature 'rain_mm': value is NaN"));
  raw(1, 4) = 3;
  raw(1, 2) = 3;  // only 3 levels
  st = plan_->ScoreDense(raw, identity, {}, lo, p);
  EXPECT_THAT(st.message(),
              HasSubstr("rows[1]: feature 'building': level index"));
  raw(1, 2) = 0.5;
  st = plan_->ScoreDense(raw, identity, {}, lo, p);
  EXPECT_THAT(st.message(), HasSubstr("level index must be an integer"));
}

TEST(ScoringPlanNumericTest, DenseFastPathMatchesNamedPath) {
  // An all-numeric set takes ScoreDense's fast path; it must agree bit for
  // bit with the general path used by Score().
  v1::CoefficientSet set;
  set.set_name("numeric_only");
  set.set_version("1");
  set.set_intercept(0.25);
  const int d = 7;
  for (int j = 0; j < d; ++j) {
    v1::Feature* f = set.add_features();
    f->set_name("x" + std::to_string(j));
    f->mutable_numeric()->set_center(0.1 * j);
    f->mutable_numeric()->set_scale(1.0 + j);
    f->mutable_numeric()->set_coefficient(j % 2 == 0 ? 0.3 : -0.2);
    if (j == 3) f->mutable_numeric()->set_clip_high(1.0);
  }
  auto plan = ScoringPlan::Compile(set, "test");
  ASSERT_TRUE(plan.ok()) << plan.status();
  const int n = 1000;  // spans several blocks
  RowMatrix raw = RowMatrix::Random(n, d) * 3.0;
  Eigen::VectorXd lo(n), p(n);
  std::vector<int> identity(d);
  for (int j = 0; j < d; ++j) identity[j] = j;
  ASSERT_TRUE((*plan)->ScoreDense(raw, identity, {}, lo, p).ok());
  for (int i = 0; i < n; ++i) {
    std::vector<RawValue> row;
    for (int j = 0; j < d; ++j) row.push_back(RawValue::Number(raw(i, j)));
    auto r = (*plan)->Score(row);
    ASSERT_TRUE(r.ok());
    EXPECT_NEAR(lo[i], r->log_odds, 1e-14) << i;
    EXPECT_NEAR(p[i], r->probability, 1e-15) << i;
  }
}

// Found by tests/fuzz/fuzz_coefficient_set: a valid set and finite values
// gave a NaN probability. weight_kg's scale of 1e-300 turns a value of 1e10
// into +inf, and an infinite standardised value times any coefficient (0 or
// not) is no score; nor is a sum of finite contributions past the largest
// double. Each is refused naming the feature or the record.
TEST(ScoringPlanOverflowTest, ExtremeValuesAreRefusedNotScoredAsNaN) {
  v1::CoefficientSet set;
  set.set_name("extreme");
  set.set_version("1");
  v1::Feature* tiny = set.add_features();
  tiny->set_name("tiny_scale");
  tiny->mutable_numeric()->set_scale(1e-300);
  tiny->mutable_numeric()->set_coefficient(0);
  tiny->mutable_missing()->set_kind(v1::MissingRule::IMPUTE);
  for (const char* name : {"big_up", "big_down"}) {
    v1::Feature* f = set.add_features();
    f->set_name(name);
    f->mutable_numeric()->set_scale(1);
    f->mutable_numeric()->set_coefficient(name[4] == 'u' ? 1e300 : -1e300);
  }
  auto plan = ScoringPlan::Compile(set, "test");
  ASSERT_TRUE(plan.ok()) << plan.status();
  const auto score = [&](double a, double b, double c) {
    return (*plan)->Score(std::vector<RawValue>{
        RawValue::Number(a), RawValue::Number(b), RawValue::Number(c)});
  };
  ASSERT_TRUE(score(1, 1, 1).ok());

  absl::StatusOr<ScoreResult> r = score(1e10, 1, 1);
  EXPECT_EQ(r.status().code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(r.status().message(),
              HasSubstr("feature 'tiny_scale': value 1e+10 is too far from "
                        "the centre"));
  // 1e300 * 1e10 overflows: +inf, then -inf from the other feature.
  r = score(0, 1e10, 1e10);
  EXPECT_EQ(r.status().code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(r.status().message(),
              HasSubstr("set 'extreme': the log-odds come to"));
  r = score(0, 1e10, 0);  // +inf alone: no probability either
  EXPECT_EQ(r.status().code(), absl::StatusCode::kInvalidArgument);

  // The dense path, fast (all numeric, all present) and general.
  RowMatrix raw(2, 3);
  raw << 1, 1, 1, 1e10, 1, 1;
  Eigen::VectorXd lo(2), p(2);
  absl::Status dense = (*plan)->ScoreDense(raw, {0, 1, 2}, {}, lo, p);
  EXPECT_EQ(dense.code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(dense.message(), HasSubstr("rows[1]: feature 'tiny_scale'"));
  raw << 1, 1, 1, 0, 1e10, 1e10;
  dense = (*plan)->ScoreDense(raw, {0, 1, 2}, {}, lo, p);
  EXPECT_THAT(dense.message(), HasSubstr("rows[1]: set 'extreme': the "
                                         "log-odds come to"));
  dense = (*plan)->ScoreDense(raw, {-1, 1, 2}, {}, lo, p);  // general path
  EXPECT_THAT(dense.message(), HasSubstr("rows[1]: set 'extreme'"));
}

}  // namespace
}  // namespace plumbline::scorer
