// File: tests/daemon/policy/drift_policy_test.cc
//
// The drift policy on hand-made window figures: every threshold direction,
// the minimum counts, thresholds relative to the training log-loss, figures
// without a baseline, and the validation of config thresholds. The figures
// are invented inputs; the expected states follow from the thresholds by
// comparison alone.
#include "daemon/policy/drift_policy.h"

#include "daemon/policy/figures.h"
#include "gmock/gmock.h"
#include "google/protobuf/text_format.h"
#include "gtest/gtest.h"

namespace plumbline::daemon {
namespace {

using ::testing::ElementsAre;
using ::testing::HasSubstr;

// One window ("count") with enough records to judge, every figure undefined.
v1::SetHealth Health(int64_t labelled = 1000, int64_t scored = 1000) {
  v1::SetHealth h;
  h.set_set("courier");
  h.set_version("v1");
  v1::WindowHealth* w = h.add_windows();
  w->set_window("count");
  w->set_labelled(labelled);
  w->set_scored(scored);
  return h;
}

v1::Provenance Training(double log_loss) {
  v1::Provenance p;
  p.set_training_log_loss(log_loss);
  return p;
}

v1::DriftPolicy Config(const std::string& text) {
  v1::DriftPolicy c;
  EXPECT_TRUE(google::protobuf::TextFormat::ParseFromString(text, &c)) << text;
  return c;
}

DriftPolicy Policy(const std::string& text) {
  absl::StatusOr<DriftPolicy> p = DriftPolicy::FromConfig(Config(text));
  EXPECT_TRUE(p.ok()) << p.status();
  return p.ok() ? *p : DriftPolicy();
}

v1::DriftState Judge(const DriftPolicy& policy, v1::SetHealth h,
                     double training = 0.4) {
  policy.Judge(Training(training), &h);
  return h.state();
}

TEST(DriftPolicyTest, DefaultsWhenTheConfigIsEmpty) {
  absl::StatusOr<DriftPolicy> p = DriftPolicy::FromConfig({});
  ASSERT_TRUE(p.ok());
  EXPECT_EQ(p->min_labelled(), 500);
  EXPECT_EQ(p->min_scored(), 500);
  EXPECT_EQ(p->tick(), absl::Seconds(15));
  std::vector<std::string> metrics;
  for (const DriftThreshold& t : p->thresholds()) metrics.push_back(t.metric);
  EXPECT_THAT(metrics, ElementsAre("score_psi", "feature_psi", "log_loss",
                                   "expected_calibration_error",
                                   "calibration_in_the_large"));
}

TEST(DriftPolicyTest, ScorePsiAboveDefaults) {
  const DriftPolicy policy;
  v1::SetHealth h = Health();
  *h.mutable_windows(0)->mutable_score_psi() = DefinedFigure(0.10);
  EXPECT_EQ(Judge(policy, h), v1::STEADY);  // equal is not above
  *h.mutable_windows(0)->mutable_score_psi() = DefinedFigure(0.11);
  EXPECT_EQ(Judge(policy, h), v1::WATCH);
  *h.mutable_windows(0)->mutable_score_psi() = DefinedFigure(0.26);
  policy.Judge(Training(0.4), &h);
  EXPECT_EQ(h.state(), v1::DRIFTING);
  ASSERT_EQ(h.reasons_size(), 1);
  const v1::DriftReason& r = h.reasons(0);
  EXPECT_EQ(r.metric(), "score_psi");
  EXPECT_EQ(r.window(), "count");
  EXPECT_EQ(r.feature(), "");
  EXPECT_EQ(r.value(), 0.26);
  EXPECT_EQ(r.threshold(), 0.25);
  EXPECT_EQ(r.state(), v1::DRIFTING);
  EXPECT_THAT(r.text(),
              HasSubstr("score_psi 0.26 above the drifting threshold 0.25"));
}

TEST(DriftPolicyTest, FeaturePsiNamesTheFeature) {
  const DriftPolicy policy;
  v1::SetHealth h = Health();
  v1::FeatureHealth* rain = h.mutable_windows(0)->add_features();
  rain->set_feature("rainfall_mm");
  *rain->mutable_psi() = DefinedFigure(0.9);
  v1::FeatureHealth* dist = h.mutable_windows(0)->add_features();
  dist->set_feature("distance_km");
  *dist->mutable_psi() = DefinedFigure(0.12);
  policy.Judge(Training(0.4), &h);
  EXPECT_EQ(h.state(), v1::DRIFTING);
  ASSERT_EQ(h.reasons_size(), 2);
  EXPECT_EQ(h.reasons(0).feature(), "rainfall_mm");  // most severe first
  EXPECT_EQ(h.reasons(0).state(), v1::DRIFTING);
  EXPECT_EQ(h.reasons(1).feature(), "distance_km");
  EXPECT_EQ(h.reasons(1).state(), v1::WATCH);
}

TEST(DriftPolicyTest, BelowDirection) {
  const DriftPolicy policy = Policy(
      "thresholds { metric: 'auc' watch: 0.7 drifting: 0.6 direction: BELOW }");
  v1::SetHealth h = Health();
  *h.mutable_windows(0)->mutable_auc() = DefinedFigure(0.75);
  EXPECT_EQ(Judge(policy, h), v1::STEADY);
  *h.mutable_windows(0)->mutable_auc() = DefinedFigure(0.65);
  EXPECT_EQ(Judge(policy, h), v1::WATCH);
  *h.mutable_windows(0)->mutable_auc() = DefinedFigure(0.55);
  EXPECT_EQ(Judge(policy, h), v1::DRIFTING);
}

TEST(DriftPolicyTest, DistanceDirectionBothSides) {
  const DriftPolicy policy;  // calibration_in_the_large 0.05 / 0.10 from 0
  v1::SetHealth h = Health();
  v1::Figure* citl = h.mutable_windows(0)->mutable_calibration_in_the_large();
  *citl = DefinedFigure(0.03);
  EXPECT_EQ(Judge(policy, h), v1::STEADY);
  *citl = DefinedFigure(-0.07);
  EXPECT_EQ(Judge(policy, h), v1::WATCH);
  *citl = DefinedFigure(0.12);
  EXPECT_EQ(Judge(policy, h), v1::DRIFTING);
  *citl = DefinedFigure(-0.12);
  EXPECT_EQ(Judge(policy, h), v1::DRIFTING);
  // Around a target other than 0: calibration slope around 1.
  const DriftPolicy slope = Policy(
      "thresholds { metric: 'calibration_slope' watch: 0.2 drifting: 0.4 "
      "direction: DISTANCE target: 1 }");
  v1::SetHealth s = Health();
  *s.mutable_windows(0)->mutable_calibration_slope() = DefinedFigure(1.1);
  EXPECT_EQ(Judge(slope, s), v1::STEADY);
  *s.mutable_windows(0)->mutable_calibration_slope() = DefinedFigure(0.7);
  EXPECT_EQ(Judge(slope, s), v1::WATCH);
  *s.mutable_windows(0)->mutable_calibration_slope() = DefinedFigure(1.5);
  EXPECT_EQ(Judge(slope, s), v1::DRIFTING);
}

TEST(DriftPolicyTest, ExpectedCalibrationErrorDefaults) {
  const DriftPolicy policy;
  v1::SetHealth h = Health();
  *h.mutable_windows(0)->mutable_expected_calibration_error() =
      DefinedFigure(0.04);
  EXPECT_EQ(Judge(policy, h), v1::STEADY);
  *h.mutable_windows(0)->mutable_expected_calibration_error() =
      DefinedFigure(0.06);
  EXPECT_EQ(Judge(policy, h), v1::WATCH);
  *h.mutable_windows(0)->mutable_expected_calibration_error() =
      DefinedFigure(0.11);
  EXPECT_EQ(Judge(policy, h), v1::DRIFTING);
}

TEST(DriftPolicyTest, LogLossRelativeToTraining) {
  const DriftPolicy policy;  // 1.10x / 1.25x the training log-loss
  v1::SetHealth h = Health();
  // Training log-loss 0.4: watch above 0.44, drifting above 0.5.
  *h.mutable_windows(0)->mutable_log_loss() = DefinedFigure(0.43);
  EXPECT_EQ(Judge(policy, h, 0.4), v1::STEADY);
  *h.mutable_windows(0)->mutable_log_loss() = DefinedFigure(0.45);
  EXPECT_EQ(Judge(policy, h, 0.4), v1::WATCH);
  *h.mutable_windows(0)->mutable_log_loss() = DefinedFigure(0.51);
  policy.Judge(Training(0.4), &h);
  EXPECT_EQ(h.state(), v1::DRIFTING);
  ASSERT_EQ(h.reasons_size(), 1);
  EXPECT_DOUBLE_EQ(h.reasons(0).threshold(), 0.5);
  EXPECT_THAT(h.reasons(0).text(), HasSubstr("1.25 x training log-loss 0.4"));
}

TEST(DriftPolicyTest, LogLossCannotJudgeWithoutTrainingFigure) {
  const DriftPolicy policy;
  v1::SetHealth h = Health();
  *h.mutable_windows(0)->mutable_log_loss() = DefinedFigure(5.0);
  policy.Judge(v1::Provenance(), &h);
  EXPECT_EQ(h.state(), v1::STEADY);
  EXPECT_EQ(h.reasons_size(), 0);
  EXPECT_THAT(h.notes(),
              ::testing::Contains("log_loss cannot judge: the set has no "
                                  "provenance.training_log_loss"));
}

TEST(DriftPolicyTest, MinimumCounts) {
  const DriftPolicy policy = Policy("min_labelled: 200 min_scored: 300");
  v1::SetHealth h = Health(/*labelled=*/199, /*scored=*/299);
  v1::WindowHealth* w = h.mutable_windows(0);
  *w->mutable_expected_calibration_error() = DefinedFigure(0.5);
  *w->mutable_score_psi() = DefinedFigure(3.0);
  policy.Judge(Training(0.4), &h);
  EXPECT_EQ(h.state(), v1::STEADY);
  EXPECT_THAT(h.notes(),
              ::testing::Contains(
                  HasSubstr("count window: 199 labelled records, fewer than "
                            "min_labelled 200: outcome figures do not judge")));
  EXPECT_THAT(h.notes(), ::testing::Contains(HasSubstr(
                             "299 scored records, fewer than min_scored 300")));
  // One more labelled record: the outcome figure judges, PSI still not.
  h.mutable_windows(0)->set_labelled(200);
  policy.Judge(Training(0.4), &h);
  EXPECT_EQ(h.state(), v1::DRIFTING);
  ASSERT_EQ(h.reasons_size(), 1);
  EXPECT_EQ(h.reasons(0).metric(), "expected_calibration_error");
  h.mutable_windows(0)->set_scored(300);
  policy.Judge(Training(0.4), &h);
  EXPECT_EQ(h.reasons_size(), 2);
}

TEST(DriftPolicyTest, UndefinedFiguresNeverJudge) {
  const DriftPolicy policy;
  v1::SetHealth h = Health();
  *h.mutable_windows(0)->mutable_score_psi() =
      UndefinedFigure("no baseline: the set has no score_baseline");
  v1::FeatureHealth* f = h.mutable_windows(0)->add_features();
  f->set_feature("hour");
  *f->mutable_psi() = UndefinedFigure("no baseline");
  *f->mutable_missing_rate() = DefinedFigure(0.2);
  policy.Judge(Training(0.4), &h);
  EXPECT_EQ(h.state(), v1::STEADY);
  EXPECT_THAT(h.notes(), ::testing::Contains(
                             "score_psi cannot judge: no baseline: the set "
                             "has no score_baseline"));
  EXPECT_THAT(
      h.notes(),
      ::testing::Contains("feature_psi of 'hour' cannot judge: no baseline"));
}

TEST(DriftPolicyTest, StateIsTheWorstOverWindows) {
  const DriftPolicy policy;
  v1::SetHealth h = Health();
  *h.add_windows() = h.windows(0);
  h.mutable_windows(1)->set_window("time");
  *h.mutable_windows(0)->mutable_score_psi() = DefinedFigure(0.15);
  *h.mutable_windows(1)->mutable_score_psi() = DefinedFigure(0.30);
  policy.Judge(Training(0.4), &h);
  EXPECT_EQ(h.state(), v1::DRIFTING);
  ASSERT_EQ(h.reasons_size(), 2);
  EXPECT_EQ(h.reasons(0).window(), "time");
  EXPECT_EQ(h.reasons(1).window(), "count");
}

TEST(DriftPolicyTest, ConfigValidationNamesTheField) {
  struct Case {
    const char* config;
    const char* message;
  } cases[] = {
      {"thresholds { metric: 'psi' watch: 1 drifting: 2 }",
       "drift_policy.thresholds[0].metric: unknown metric 'psi'"},
      {"thresholds { metric: 'auc' watch: 0.6 drifting: 0.7 direction: BELOW }",
       "drift_policy.thresholds[0].watch: direction BELOW needs watch >= "
       "drifting"},
      {"thresholds { metric: 'score_psi' watch: 0.3 drifting: 0.2 }",
       "drift_policy.thresholds[0].watch: direction ABOVE needs watch <= "
       "drifting"},
      {"thresholds { metric: 'calibration_in_the_large' watch: -1 "
       "drifting: 0.1 direction: DISTANCE }",
       "must be >= 0"},
      {"thresholds { metric: 'auc' watch: 1.1 drifting: 1.2 "
       "relative_to_training: true }",
       "drift_policy.thresholds[0].relative_to_training: only log_loss"},
      {"thresholds { metric: 'score_psi' watch: 0.1 drifting: 0.2 } "
       "thresholds { metric: 'score_psi' watch: 0.1 drifting: 0.3 }",
       "drift_policy.thresholds[1].metric: 'score_psi' has a threshold "
       "already"},
  };
  for (const Case& c : cases) {
    absl::StatusOr<DriftPolicy> p = DriftPolicy::FromConfig(Config(c.config));
    ASSERT_FALSE(p.ok()) << c.config;
    EXPECT_EQ(p.status().code(), absl::StatusCode::kInvalidArgument);
    EXPECT_THAT(p.status().message(), HasSubstr(c.message)) << c.config;
  }
}

TEST(DriftPolicyTest, ConfigThresholdsReplaceTheDefaults) {
  const DriftPolicy policy = Policy(
      "thresholds { metric: 'missing_rate' watch: 0.1 drifting: 0.3 } "
      "tick_seconds: 2");
  EXPECT_EQ(policy.tick(), absl::Seconds(2));
  v1::SetHealth h = Health();
  *h.mutable_windows(0)->mutable_score_psi() = DefinedFigure(9.0);  // no rule
  v1::FeatureHealth* f = h.mutable_windows(0)->add_features();
  f->set_feature("weight");
  *f->mutable_missing_rate() = DefinedFigure(0.2);
  policy.Judge(Training(0.4), &h);
  EXPECT_EQ(h.state(), v1::WATCH);
  ASSERT_EQ(h.reasons_size(), 1);
  EXPECT_EQ(h.reasons(0).metric(), "missing_rate");
  EXPECT_EQ(h.reasons(0).feature(), "weight");
}

}  // namespace
}  // namespace plumbline::daemon
