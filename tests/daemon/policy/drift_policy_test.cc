// File: tests/daemon/policy/drift_policy_test.cc
//
// The drift policy on hand-made window figures: every threshold direction,
// the minimum counts, thresholds relative to the training log-loss, figures
// without a baseline, the PSI significance gate, CUSUM alarms, hysteresis
// and dwell (DriftTracker), and the validation of config thresholds. The
// figures, p-values and chart values are invented inputs; the expected
// states follow from the thresholds by comparison alone.
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

// A PSI test result as plumbd's windows report it.
v1::PsiTest PsiTestOf(double p_value, double test_alpha = 0.001) {
  v1::PsiTest t;
  t.set_defined(true);
  t.set_p_value(p_value);
  t.set_test_alpha(test_alpha);
  t.set_critical_psi(0.02);
  t.set_baseline_count(20000);
  t.set_window_count(5000);
  t.set_degrees_of_freedom(9);
  return t;
}

TEST(DriftPolicyTest, DefaultsWhenTheConfigIsEmpty) {
  absl::StatusOr<DriftPolicy> p = DriftPolicy::FromConfig({});
  ASSERT_TRUE(p.ok());
  EXPECT_EQ(p->min_labelled(), 500);
  EXPECT_EQ(p->min_scored(), 500);
  EXPECT_EQ(p->tick(), absl::Seconds(15));
  EXPECT_EQ(p->alpha(), 0.01);
  EXPECT_EQ(p->release_evaluations(), 3);
  EXPECT_EQ(p->release_ratio(), 0.8);
  std::vector<std::string> metrics;
  for (const DriftThreshold& t : p->thresholds()) metrics.push_back(t.metric);
  // Only figures with a stated false-alarm rate judge by default.
  EXPECT_THAT(metrics, ElementsAre("score_psi", "feature_psi"));
  // Release at 0.8 x the entry thresholds 0.10 and 0.25.
  EXPECT_DOUBLE_EQ(p->thresholds()[0].watch_release, 0.08);
  EXPECT_DOUBLE_EQ(p->thresholds()[0].drifting_release, 0.2);
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
  const DriftPolicy policy = Policy(
      "thresholds { metric: 'mean_predicted_minus_observed' watch: 0.05 "
      "drifting: 0.10 direction: DISTANCE }");
  v1::SetHealth h = Health();
  v1::Figure* citl =
      h.mutable_windows(0)->mutable_mean_predicted_minus_observed();
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

TEST(DriftPolicyTest, ExpectedCalibrationError) {
  const DriftPolicy policy = Policy(
      "thresholds { metric: 'expected_calibration_error' watch: 0.05 "
      "drifting: 0.10 }");
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

constexpr char kLogLoss[] =
    "thresholds { metric: 'log_loss' watch: 1.10 drifting: 1.25 "
    "relative_to_training: true }";

TEST(DriftPolicyTest, LogLossRelativeToTraining) {
  const DriftPolicy policy = Policy(kLogLoss);
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
  const DriftPolicy policy = Policy(kLogLoss);
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
  const DriftPolicy policy = Policy(
      "min_labelled: 200 min_scored: 300 "
      "thresholds { metric: 'expected_calibration_error' watch: 0.05 "
      "drifting: 0.10 } "
      "thresholds { metric: 'score_psi' watch: 0.1 drifting: 0.25 }");
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
      {"thresholds { metric: 'mean_predicted_minus_observed' watch: -1 "
       "drifting: 0.1 direction: DISTANCE }",
       "must be >= 0"},
      {"thresholds { metric: 'calibration_in_the_large' watch: 0.05 "
       "drifting: 0.1 direction: DISTANCE }",
       "drift_policy.thresholds[0].metric: 'calibration_in_the_large' was "
       "the difference of means and is now named "
       "'mean_predicted_minus_observed'"},
      {"thresholds { metric: 'score_psi' watch: 0.1 drifting: 0.25 "
       "drifting_release: 0.3 }",
       "drift_policy.thresholds[0].drifting_release: a release threshold "
       "must be finite and on the good side of its entry threshold (<= "
       "0.25); got 0.3"},
      {"thresholds { metric: 'auc' watch: 0.7 drifting: 0.6 direction: "
       "BELOW watch_release: 0.65 }",
       "drift_policy.thresholds[0].watch_release: a release threshold must "
       "be finite and on the good side of its entry threshold (>= 0.7)"},
      {"alpha: 1.5", "drift_policy.alpha: must lie in (0, 1), got 1.5"},
      {"release_ratio: 1.2",
       "drift_policy.release_ratio: must lie in (0, 1], got 1.2"},
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

TEST(DriftPolicyTest, PsiJudgesOnlyWhenSignificantAndMaterial) {
  const DriftPolicy policy;  // PSI 0.10 / 0.25
  v1::SetHealth h = Health();
  v1::WindowHealth* w = h.mutable_windows(0);
  // Material (0.30 > 0.25) but not significant at the test's level 0.001.
  *w->mutable_score_psi() = DefinedFigure(0.30);
  *w->mutable_score_psi_test() = PsiTestOf(/*p_value=*/0.02);
  EXPECT_EQ(Judge(policy, h), v1::STEADY);
  // Significant but not material (0.05 <= 0.10).
  *w->mutable_score_psi() = DefinedFigure(0.05);
  *w->mutable_score_psi_test() = PsiTestOf(1e-9);
  EXPECT_EQ(Judge(policy, h), v1::STEADY);
  // Both: drifting, and the reason names the test and its p-value.
  *w->mutable_score_psi() = DefinedFigure(0.30);
  policy.Judge(Training(0.4), &h);
  EXPECT_EQ(h.state(), v1::DRIFTING);
  ASSERT_EQ(h.reasons_size(), 1);
  EXPECT_EQ(h.reasons(0).test(), "psi_test");
  EXPECT_EQ(h.reasons(0).p_value(), 1e-9);
  EXPECT_THAT(h.reasons(0).text(),
              HasSubstr("score_psi 0.3 above the drifting threshold 0.25 and "
                        "significant: PSI test p-value 1e-09 < 0.001 "
                        "(critical PSI 0.02 at n = 20000, m = 5000, 9 "
                        "degrees of freedom)"));
}

TEST(DriftPolicyTest, PsiWithoutBaselineCountJudgesOnEffectSize) {
  const DriftPolicy policy;
  v1::SetHealth h = Health();
  v1::FeatureHealth* f = h.mutable_windows(0)->add_features();
  f->set_feature("rainfall_mm");
  *f->mutable_psi() = DefinedFigure(0.4);
  f->mutable_psi_test()->set_note(
      "the baseline records no count (n): no test; the PSI judges on its "
      "effect size alone");
  policy.Judge(Training(0.4), &h);
  EXPECT_EQ(h.state(), v1::DRIFTING);
  ASSERT_EQ(h.reasons_size(), 1);
  EXPECT_EQ(h.reasons(0).test(), "psi");
  EXPECT_THAT(h.reasons(0).text(), HasSubstr("no significance test"));
  EXPECT_THAT(h.notes(), ::testing::Contains(HasSubstr(
                             "feature_psi of 'rainfall_mm': the baseline "
                             "records no count")));
}

v1::CusumChart Chart(const std::string& name, int64_t alarms, double at) {
  v1::CusumChart c;
  c.set_chart(name);
  c.set_ready(true);
  c.set_alternative_shift(std::log(1.5));
  c.set_alternative_slope(1);
  c.set_limit(6.99);
  c.set_arl_records(100000);
  c.set_alarms(alarms);
  c.set_last_alarm_value(at);
  return c;
}

TEST(DriftPolicyTest, CusumAlarmSinceTheLastEvaluationDrifts) {
  const DriftPolicy policy;
  v1::SetHealth h = Health();
  *h.add_cusum() = Chart("upper", 0, 0);
  EXPECT_EQ(Judge(policy, h), v1::STEADY);
  *h.mutable_cusum(0) = Chart("upper", 1, 7.02);
  policy.Judge(Training(0.4), &h);
  EXPECT_EQ(h.state(), v1::DRIFTING);
  ASSERT_EQ(h.reasons_size(), 1);
  EXPECT_EQ(h.reasons(0).metric(), "cusum_upper");
  EXPECT_EQ(h.reasons(0).test(), "cusum");
  EXPECT_EQ(h.reasons(0).value(), 7.02);
  EXPECT_EQ(h.reasons(0).threshold(), 6.99);
  EXPECT_THAT(h.reasons(0).text(),
              HasSubstr("cusum upper (odds ratio 1.5): 1 alarm since the last "
                        "evaluation, the last at chart value 7.02 >= limit "
                        "6.99 (in-control ARL 100000 labelled records)"));
  // The same alarm seen before is no new signal.
  const absl::flat_hash_map<std::string, int64_t> seen = {{"upper", 1}};
  policy.Judge(Training(0.4), &h, &seen);
  EXPECT_EQ(h.state(), v1::STEADY);
}

// The states a tracker goes through for a sequence of score PSIs (each
// significant: p-value 1e-9).
std::vector<v1::DriftState> Track(const DriftPolicy& policy,
                                  const std::vector<double>& psi,
                                  DriftTracker* tracker) {
  std::vector<v1::DriftState> states;
  for (double x : psi) {
    v1::SetHealth h = Health();
    *h.mutable_windows(0)->mutable_score_psi() = DefinedFigure(x);
    *h.mutable_windows(0)->mutable_score_psi_test() = PsiTestOf(1e-9);
    tracker->Evaluate(policy, Training(0.4), &h);
    states.push_back(h.state());
  }
  return states;
}

TEST(DriftTrackerTest, AFigureHoveringAtTheThresholdDoesNotFlap) {
  const DriftPolicy policy;  // drifting 0.25, released below 0.20, 3 in a row
  absl::StatusOr<DriftTracker> tracker = DriftTracker::Create(policy);
  ASSERT_TRUE(tracker.ok());
  // Around 0.25 for ten evaluations: drifting at the first crossing, and
  // never released (0.24 is not below the release threshold 0.20).
  std::vector<v1::DriftState> states = Track(
      policy, {0.26, 0.24, 0.26, 0.24, 0.26, 0.24, 0.26, 0.24, 0.26, 0.24},
      &*tracker);
  EXPECT_THAT(states, ::testing::Each(v1::DRIFTING));
  // Down to 0.05 (below both release thresholds, 0.20 and 0.08): held for
  // two evaluations, released to steady at the third.
  states = Track(policy, {0.05, 0.05, 0.05}, &*tracker);
  EXPECT_THAT(states, ElementsAre(v1::DRIFTING, v1::DRIFTING, v1::STEADY));
}

TEST(DriftTrackerTest, ReleaseNeedsConsecutiveEvaluations) {
  const DriftPolicy policy = Policy("release_evaluations: 2");
  absl::StatusOr<DriftTracker> tracker = DriftTracker::Create(policy);
  ASSERT_TRUE(tracker.ok());
  // Watch at 0.12; 0.07 (below 0.08) once, then 0.09 breaks the run.
  EXPECT_THAT(
      Track(policy, {0.12, 0.07, 0.09, 0.07, 0.07}, &*tracker),
      ElementsAre(v1::WATCH, v1::WATCH, v1::WATCH, v1::WATCH, v1::STEADY));
}

TEST(DriftTrackerTest, TransitionsCarryTheirTriggerAndReason) {
  const DriftPolicy policy;
  absl::StatusOr<DriftTracker> tracker = DriftTracker::Create(policy);
  ASSERT_TRUE(tracker.ok());
  v1::SetHealth h = Health();
  h.mutable_evaluated_at()->set_seconds(1000);
  *h.add_cusum() = Chart("lower", 2, 7.5);
  std::optional<PolicyTransition> t =
      tracker->Evaluate(policy, Training(0.4), &h);
  ASSERT_TRUE(t.has_value());
  EXPECT_EQ(t->from, v1::STEADY);
  EXPECT_EQ(t->to, v1::DRIFTING);
  EXPECT_EQ(t->trigger, "cusum_lower");
  EXPECT_THAT(t->reason, HasSubstr("entered drifting: cusum lower"));
  EXPECT_THAT(t->reason, HasSubstr("2 alarms since the last evaluation, the "
                                   "last at chart value 7.5"));
  EXPECT_EQ(h.last_transition().to(), v1::DRIFTING);
  EXPECT_EQ(h.last_transition().at().seconds(), 1000);
  // No new alarm: held (with a note) for two evaluations, released at the
  // third.
  for (int i = 0; i < 2; ++i) {
    EXPECT_FALSE(tracker->Evaluate(policy, Training(0.4), &h).has_value());
    EXPECT_EQ(h.state(), v1::DRIFTING);
    EXPECT_EQ(h.release_run(), i + 1);
    EXPECT_THAT(h.notes(), ::testing::Contains(HasSubstr(
                               "drifting held: its release condition has held "
                               "for")));
  }
  t = tracker->Evaluate(policy, Training(0.4), &h);
  ASSERT_TRUE(t.has_value());
  EXPECT_EQ(t->to, v1::STEADY);
  EXPECT_EQ(t->trigger, "released");
}

}  // namespace
}  // namespace plumbline::daemon
