// File: tests/daemon/health/monitor_test.cc
//
// HealthMonitor with a fake clock: what reaches the windows, count and time
// windows, refused and unmonitored records, set version changes, sets
// without baselines, and the rebuild of the windows from a ledger file.
// Expected figures are hand computations from the definitions (formula in
// the comment beside each) on a handful of records; the monitor library's
// own reference tests check the figures against scikit-learn and SciPy.
#include "daemon/health/monitor.h"

#include <cmath>
#include <filesystem>
#include <vector>

#include "absl/strings/str_cat.h"
#include "daemon/ledger/sqlite_ledger.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/testing/health_test_sets.h"
#include "tests/testing/process.h"

namespace plumbline::daemon {
namespace {

using scorer::RawValue;
using testing::BareSetJson;
using testing::BaselineSetJson;
using testing::CompilePlan;
using ::testing::HasSubstr;

// Hand computation of one PSI term, (a - e) ln(a / e).
double Term(double a, double e) { return (a - e) * std::log(a / e); }

class HealthMonitorTest : public ::testing::Test {
 protected:
  void SetUp() override {
    plan_ = CompilePlan(BaselineSetJson("courier", "v1"));
    ASSERT_NE(plan_, nullptr);
    monitor_ = Make(options_);
    ASSERT_NE(monitor_, nullptr);
    monitor_->SyncPlans({plan_});
  }

  std::unique_ptr<HealthMonitor> Make(HealthMonitorOptions options) {
    options.now = [this] { return now_; };
    auto monitor = HealthMonitor::Create(std::move(options));
    EXPECT_TRUE(monitor.ok()) << monitor.status();
    return monitor.ok() ? *std::move(monitor) : nullptr;
  }

  // A record: distance, region, hour (nullopt / NaN = missing).
  static std::vector<RawValue> Row(double distance, const char* region,
                                   double hour) {
    return {
        std::isnan(distance) ? RawValue::Missing() : RawValue::Number(distance),
        region == nullptr ? RawValue::Missing() : RawValue::Text(region),
        std::isnan(hour) ? RawValue::Missing() : RawValue::Number(hour)};
  }

  void Labelled(const std::string& version, double log_odds, int label,
                absl::Time at) {
    LabelledScore l;
    l.record_id = "r";
    l.set_name = "courier";
    l.set_version = version;
    l.log_odds = log_odds;
    l.label = label;
    l.scored_at = at;
    l.observed_at = at;
    monitor_->OnLabelled(l);
  }

  v1::SetHealth Evaluate() {
    monitor_->Evaluate();
    absl::StatusOr<v1::SetHealth> h = monitor_->Health("courier");
    EXPECT_TRUE(h.ok()) << h.status();
    return h.ok() ? *h : v1::SetHealth();
  }

  static constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
  absl::Time now_ = absl::FromUnixSeconds(1'800'000'000);
  HealthMonitorOptions options_;
  std::shared_ptr<const scorer::ScoringPlan> plan_;
  std::unique_ptr<HealthMonitor> monitor_;
};

TEST_F(HealthMonitorTest, ScoredAndLabelledRecordsReachBothWindows) {
  const double log_odds[] = {-2, -1, 0, -2};
  const std::vector<RawValue> rows[] = {
      Row(1, "urban", 9), Row(3, "rural", kNaN), Row(30, "suburb", 13),
      Row(kNaN, nullptr, 14)};
  for (int i = 0; i < 4; ++i) {
    monitor_->OnScored(*plan_, rows[i], log_odds[i], now_);
  }
  for (int label : {1, 0, 1, 0}) Labelled("v1", 0.0, label, now_);
  const v1::SetHealth h = Evaluate();
  EXPECT_EQ(h.version(), "v1");
  ASSERT_EQ(h.windows_size(), 2);
  for (const v1::WindowHealth& w : h.windows()) {
    SCOPED_TRACE(w.window());
    EXPECT_EQ(w.scored(), 4);
    EXPECT_EQ(w.labelled(), 4);
    EXPECT_EQ(w.positives(), 2);
    // log-odds 0 is probability 1/2: log-loss ln 2, Brier (1/2)^2,
    // mean predicted minus observed 1/2 - 2/4 = 0, AUC of all-tied scores
    // 1/2 (ties count 1/2), calibration intercept with offset 0: logit of
    // the observed rate 2/4 minus 0 = 0.
    EXPECT_DOUBLE_EQ(w.log_loss().value(), std::log(2.0));
    EXPECT_DOUBLE_EQ(w.brier_score().value(), 0.25);
    EXPECT_DOUBLE_EQ(w.mean_predicted_minus_observed().value(), 0.0);
    EXPECT_DOUBLE_EQ(w.auc().value(), 0.5);
    EXPECT_NEAR(w.calibration_intercept().value(), 0.0, 1e-12);
    EXPECT_EQ(w.exact_records(), 4);
    EXPECT_EQ(w.unstored_labelled(), 0);
    EXPECT_DOUBLE_EQ(w.expected_calibration_error().value(), 0.0);
    // Probabilities 0.119, 0.269, 0.5, 0.119 in bins [0, .2), [.2, .5),
    // [.5, 1]: shares 2/4, 1/4, 1/4 against 0.5, 0.3, 0.2.
    EXPECT_NEAR(w.score_psi().value(),
                Term(0.5, 0.5) + Term(0.25, 0.3) + Term(0.25, 0.2), 1e-15);
    ASSERT_EQ(w.features_size(), 3);
    // distance 1, 3, 30 (one missing) in bins (-inf,2) [2,5) [5,inf): 1/3
    // each against 0.3, 0.4, 0.3; 30 is above the baseline max 20.
    const v1::FeatureHealth& d = w.features(0);
    EXPECT_EQ(d.feature(), "distance_km");
    EXPECT_NEAR(d.psi().value(),
                Term(1.0 / 3, 0.3) + Term(1.0 / 3, 0.4) + Term(1.0 / 3, 0.3),
                1e-15);
    EXPECT_DOUBLE_EQ(d.missing_rate().value(), 0.25);
    EXPECT_DOUBLE_EQ(d.out_of_range_rate().value(), 0.25);
    // region: rural, urban and the unseen "suburb" 1/3 each against rural
    // 0.4, urban 0.6, unseen 0 (floored to 1e-4, monitor/stability.h).
    const v1::FeatureHealth& r = w.features(1);
    EXPECT_NEAR(r.psi().value(),
                Term(1.0 / 3, 0.4) + Term(1.0 / 3, 0.6) + Term(1.0 / 3, 1e-4),
                1e-12);
    EXPECT_DOUBLE_EQ(r.missing_rate().value(), 0.25);
    EXPECT_DOUBLE_EQ(r.out_of_range_rate().value(), 0.25);
    // hour has no baseline: no PSI, but its missing rate.
    const v1::FeatureHealth& hour = w.features(2);
    EXPECT_FALSE(hour.psi().defined());
    EXPECT_EQ(hour.psi().note(), "no baseline");
    EXPECT_FALSE(hour.out_of_range_rate().defined());
    EXPECT_DOUBLE_EQ(hour.missing_rate().value(), 0.25);
  }
  EXPECT_TRUE(h.has_evaluated_at());
  EXPECT_EQ(h.evaluated_at().seconds(), absl::ToUnixSeconds(now_));
  EXPECT_EQ(h.labelled_since_start(), 4);
}

TEST_F(HealthMonitorTest, DenseLevelIndicesCountAsTheirLevels) {
  // Dense rows carry a categorical value as its index in the set's levels:
  // 1 is "rural".
  const std::vector<RawValue> row = {RawValue::Number(3), RawValue::Number(1),
                                     RawValue::Number(9)};
  monitor_->OnScored(*plan_, row, -1, now_);
  const v1::SetHealth h = Evaluate();
  // All records rural: shares 1, 0, 0 against 0.4, 0.6, 0 (floored).
  EXPECT_NEAR(h.windows(0).features(1).psi().value(),
              Term(1, 0.4) + Term(1e-4, 0.6) + Term(1e-4, 1e-4), 1e-12);
  EXPECT_DOUBLE_EQ(h.windows(0).features(1).out_of_range_rate().value(), 0);
}

TEST_F(HealthMonitorTest, UndefinedFiguresSayWhy) {
  for (int i = 0; i < 3; ++i) Labelled("v1", 0.5, 1, now_);
  const v1::SetHealth h = Evaluate();
  const v1::WindowHealth& w = h.windows(0);
  EXPECT_TRUE(w.log_loss().defined());
  EXPECT_FALSE(w.auc().defined());
  EXPECT_THAT(w.auc().note(), HasSubstr("AUC is undefined"));
  EXPECT_FALSE(w.calibration_slope().defined());
  EXPECT_FALSE(w.score_psi().defined());
  EXPECT_EQ(w.score_psi().note(), "no scored records in the window");
}

TEST_F(HealthMonitorTest, SetWithoutBaselinesReportsNoBaseline) {
  auto bare = CompilePlan(BareSetJson("bare", "b1"));
  monitor_->SyncPlans({plan_, bare});
  monitor_->OnScored(*bare, Row(3, "urban", kNaN), 0.1, now_);
  monitor_->Evaluate();
  absl::StatusOr<v1::SetHealth> h = monitor_->Health("bare");
  ASSERT_TRUE(h.ok());
  const v1::WindowHealth& w = h->windows(0);
  EXPECT_FALSE(w.score_psi().defined());
  EXPECT_EQ(w.score_psi().note(), "no baseline: the set has no score_baseline");
  for (const v1::FeatureHealth& f : w.features()) {
    EXPECT_FALSE(f.psi().defined()) << f.feature();
    EXPECT_EQ(f.psi().note(), "no baseline");
    EXPECT_TRUE(f.missing_rate().defined());
  }
  EXPECT_DOUBLE_EQ(w.features(2).missing_rate().value(), 1.0);
}

TEST_F(HealthMonitorTest, CountWindowDropsWholeBuckets) {
  options_.windows.labelled_count = 20;
  options_.windows.buckets = 2;
  monitor_ = Make(options_);
  monitor_->SyncPlans({plan_});
  for (int i = 0; i < 25; ++i) Labelled("v1", 0.0, i % 2, now_);
  // Buckets of 10: the 21st record dropped the oldest full bucket, so the
  // window holds records 11..25.
  const v1::SetHealth h = Evaluate();
  EXPECT_EQ(h.windows(0).labelled(), 15);
  EXPECT_EQ(h.windows(1).labelled(), 25);  // the time window keeps them all
}

TEST_F(HealthMonitorTest, TimeWindowForgetsAndRefusesOldRecords) {
  options_.windows.time_span = absl::Seconds(100);
  options_.windows.buckets = 10;
  options_.windows.labelled_count = 100;
  options_.windows.scored_count = 100;
  monitor_ = Make(options_);
  monitor_->SyncPlans({plan_});
  Labelled("v1", 0.0, 1, now_);
  monitor_->OnScored(*plan_, Row(1, "urban", 9), 0.0, now_);
  now_ += absl::Seconds(200);
  v1::SetHealth h = Evaluate();
  EXPECT_EQ(h.windows(0).labelled(), 1);
  EXPECT_EQ(h.windows(1).labelled(), 0);
  EXPECT_EQ(h.windows(1).scored(), 0);
  // Older than the time window's ring: refused there and counted, kept by
  // the count window.
  Labelled("v1", 0.0, 0, now_ - absl::Seconds(500));
  monitor_->OnScored(*plan_, Row(1, "urban", 9), 0.0,
                     now_ - absl::Seconds(500));
  h = Evaluate();
  EXPECT_EQ(h.windows(0).labelled(), 2);
  EXPECT_EQ(h.windows(0).refused_labelled(), 0);
  EXPECT_EQ(h.windows(1).refused_labelled(), 1);
  EXPECT_EQ(h.windows(1).refused_scored(), 1);
  // A time in the future counts as now.
  Labelled("v1", 0.0, 0, now_ + absl::Hours(5));
  h = Evaluate();
  EXPECT_EQ(h.windows(1).labelled(), 1);
}

TEST_F(HealthMonitorTest, NonFiniteLogOddsAreRefusedNotDropped) {
  Labelled("v1", std::numeric_limits<double>::infinity(), 1, now_);
  const v1::SetHealth h = Evaluate();
  EXPECT_EQ(h.windows(0).labelled(), 0);
  EXPECT_EQ(h.windows(0).refused_labelled(), 1);
  EXPECT_EQ(h.windows(1).refused_labelled(), 1);
}

TEST_F(HealthMonitorTest, NewVersionStartsItsOwnWindows) {
  monitor_->OnScored(*plan_, Row(1, "urban", 9), 0.0, now_);
  Labelled("v1", 0.0, 1, now_);
  auto v2 = CompilePlan(BaselineSetJson("courier", "v2"));
  monitor_->SyncPlans({v2});
  v1::SetHealth h = Evaluate();
  EXPECT_EQ(h.version(), "v2");
  EXPECT_EQ(h.windows(0).scored(), 0);
  EXPECT_EQ(h.windows(0).labelled(), 0);
  // Late records of v1 (in flight during the reload, or an outcome for a v1
  // score) are counted as unmonitored; v1 does not come back.
  monitor_->OnScored(*plan_, Row(1, "urban", 9), 0.0, now_);
  Labelled("v1", 0.0, 0, now_);
  Labelled("v1", 0.0, 1, now_);
  std::vector<UnmonitoredCount> u = monitor_->Unmonitored();
  ASSERT_EQ(u.size(), 2u);
  EXPECT_EQ(u[0].version, "v1");
  EXPECT_EQ(u[0].kind, "labelled");
  EXPECT_EQ(u[0].records, 2);
  EXPECT_EQ(u[1].kind, "scored");
  EXPECT_EQ(u[1].records, 1);
  EXPECT_EQ(monitor_->AllHealth().size(), 1u);
  // A version seen on the request path before the next sync gets windows at
  // once, and the sync that loads it keeps them.
  auto v3 = CompilePlan(BaselineSetJson("courier", "v3"));
  monitor_->OnScored(*v3, Row(1, "urban", 9), 0.0, now_);
  monitor_->SyncPlans({v3});
  h = Evaluate();
  EXPECT_EQ(h.version(), "v3");
  EXPECT_EQ(h.windows(0).scored(), 1);
}

TEST_F(HealthMonitorTest, UnknownSetIsNotFound) {
  absl::StatusOr<v1::SetHealth> h = monitor_->Health("nope");
  EXPECT_EQ(h.status().code(), absl::StatusCode::kNotFound);
}

TEST_F(HealthMonitorTest, DriftPolicyJudgesEachEvaluation) {
  HealthMonitorOptions options;
  v1::DriftPolicy config;
  config.set_min_scored(10);
  options.policy = *DriftPolicy::FromConfig(config);
  monitor_ = Make(options);
  monitor_->SyncPlans({plan_});
  // Every probability 0.5: all in the last score bin (baseline 0.2).
  for (int i = 0; i < 10; ++i) {
    monitor_->OnScored(*plan_, Row(3, "urban", 9), 0.0, now_);
  }
  const v1::SetHealth h = Evaluate();
  EXPECT_EQ(h.state(), v1::DRIFTING);
  EXPECT_EQ(h.reasons(0).metric(), "score_psi");
}

TEST_F(HealthMonitorTest, TransitionsAreCountedWithTheirTrigger) {
  HealthMonitorOptions options;
  v1::DriftPolicy config;
  config.set_min_scored(10);
  config.set_release_evaluations(2);
  options.policy = *DriftPolicy::FromConfig(config);
  monitor_ = Make(options);
  monitor_->SyncPlans({plan_});
  for (int i = 0; i < 10; ++i) {
    monitor_->OnScored(*plan_, Row(3, "urban", 9), 0.0, now_);
  }
  // Drifting at the first evaluation, held at the second: one transition.
  EXPECT_EQ(Evaluate().state(), v1::DRIFTING);
  EXPECT_EQ(Evaluate().state(), v1::DRIFTING);
  std::vector<TransitionCount> t = monitor_->Transitions();
  ASSERT_EQ(t.size(), 1u);
  EXPECT_EQ(t[0].from, "steady");
  EXPECT_EQ(t[0].to, "drifting");
  // The set's score baseline records no count: PSI judges on effect size.
  EXPECT_EQ(t[0].trigger, "score_psi");
  EXPECT_EQ(t[0].transitions, 1);
}

TEST_F(HealthMonitorTest, OutcomeHorizonWaitsForMatureCohorts) {
  HealthMonitorOptions options;
  options.windows.outcome_horizon = absl::Hours(1);
  monitor_ = Make(options);
  monitor_->SyncPlans({plan_});
  // Scored now, labelled now: waits an hour.
  monitor_->OnScored(*plan_, Row(3, "urban", 9), 0.0, now_);
  Labelled("v1", 0.0, 1, now_);
  v1::SetHealth h = Evaluate();
  EXPECT_EQ(h.outcome_horizon_seconds(), 3600);
  EXPECT_EQ(h.immature_labelled(), 1);
  EXPECT_EQ(h.windows(0).labelled(), 0);
  EXPECT_EQ(h.windows(1).labelled(), 0);
  // Coverage by age: bands of 2 h / 4 = 30 min; the record is 0 old, scored
  // and labelled: coverage 1 in the first band, which is not mature.
  ASSERT_EQ(h.outcome_coverage_size(), 4);
  EXPECT_EQ(h.outcome_coverage(0).max_age_seconds(), 1800);
  EXPECT_EQ(h.outcome_coverage(0).scored(), 1);
  EXPECT_EQ(h.outcome_coverage(0).labelled(), 1);
  EXPECT_EQ(h.outcome_coverage(0).coverage().value(), 1.0);
  EXPECT_FALSE(h.outcome_coverage(0).mature());
  EXPECT_TRUE(h.outcome_coverage(2).mature());
  EXPECT_TRUE(h.outcome_coverage(3).mature());
  // An hour later the cohort is mature: in both windows (the time window by
  // score time), and in the charts.
  now_ += absl::Hours(1);
  h = Evaluate();
  EXPECT_EQ(h.immature_labelled(), 0);
  EXPECT_EQ(h.windows(0).labelled(), 1);
  EXPECT_EQ(h.windows(1).labelled(), 1);
  ASSERT_GE(h.cusum_size(), 2);
  EXPECT_EQ(h.cusum(0).records(), 1);
  // Exactly 1 h old, its cohort bucket is the last of band 1 (bands hold
  // whole buckets of 2 h / 20 = 6 min before the current one).
  EXPECT_EQ(h.outcome_coverage(1).scored(), 1);
  EXPECT_FALSE(h.outcome_coverage(1).mature());
  // One bucket later it is in band 2, [1 h, 1.5 h) nominal, mature.
  now_ += absl::Minutes(6);
  h = Evaluate();
  EXPECT_EQ(h.outcome_coverage(2).scored(), 1);
  EXPECT_EQ(h.outcome_coverage(2).coverage().value(), 1.0);
  EXPECT_TRUE(h.outcome_coverage(2).mature());
}

TEST_F(HealthMonitorTest, CusumChartsFollowTheHandRecursion) {
  v1::SetHealth h = Evaluate();  // chooses the limits
  ASSERT_EQ(h.cusum_size(), 3);
  EXPECT_EQ(h.cusum(0).chart(), "upper");
  EXPECT_EQ(h.cusum(1).chart(), "lower");
  EXPECT_EQ(h.cusum(2).chart(), "slope");
  for (const v1::CusumChart& c : h.cusum()) {
    ASSERT_TRUE(c.ready()) << c.chart() << ": " << c.note();
    EXPECT_GT(c.limit(), 0);
    // The stated ARL: ChooseControlLimit solves to 1e-6 relative.
    EXPECT_NEAR(c.arl_records(), 100000, 1);
    // The baseline has no min or max: said in the note.
    EXPECT_THAT(c.note(), HasSubstr("no usable min or max"));
  }
  // Records at log-odds 0 (p = 1/2), labels 1, 1, 0. Upper chart, R = 1.5:
  // W(y=1) = log(R / (1 - p + R p)) = log(1.5 / 1.25), W(y=0) =
  // log(1 / 1.25) (Steiner et al. 2000). S = max(0, S + W).
  for (int label : {1, 1, 0}) Labelled("v1", 0.0, label, now_);
  h = Evaluate();
  const double up = std::log(1.5 / 1.25), down = std::log(1 / 1.25);
  EXPECT_NEAR(h.cusum(0).value(), std::max(0.0, 2 * up + down), 1e-12);
  EXPECT_EQ(h.cusum(0).records(), 3);
  // Lower chart, R = 1/1.5: W(y=1) = log(R / (1 - p + R p)).
  const double r = 1 / 1.5;
  double s = 0;
  for (int label : {1, 1, 0}) {
    s = std::max(0.0, s + (label == 1 ? std::log(r / (0.5 + r * 0.5))
                                      : std::log(1 / (0.5 + r * 0.5))));
  }
  EXPECT_NEAR(h.cusum(1).value(), s, 1e-12);
}

TEST_F(HealthMonitorTest, TimeWindowStoreBoundLeavesRecordsOutOfExactFigures) {
  HealthMonitorOptions options;
  options.windows.record_store_max_records = 20;  // 1 per bucket of 20
  monitor_ = Make(options);
  monitor_->SyncPlans({plan_});
  Labelled("v1", -1.0, 0, now_);
  Labelled("v1", 1.0, 1, now_);
  Labelled("v1", 0.5, 1, now_);
  const v1::SetHealth h = Evaluate();
  const v1::WindowHealth& time = h.windows(1);
  EXPECT_EQ(time.window(), "time");
  EXPECT_EQ(time.labelled(), 3);
  EXPECT_EQ(time.exact_records(), 1);
  EXPECT_EQ(time.unstored_labelled(), 2);
  // One class among the kept records: no AUC, and the count window (which
  // keeps its whole 5000) has it: 2 positives above the negative, AUC 1.
  EXPECT_FALSE(time.auc().defined());
  EXPECT_EQ(h.windows(0).exact_records(), 3);
  EXPECT_EQ(h.windows(0).auc().value(), 1.0);
}

// ---- Rebuild from the ledger ----

class HealthRebuildTest : public HealthMonitorTest {
 protected:
  void SetUp() override {
    HealthMonitorTest::SetUp();
    // A directory of its own (mkdtemp): tests of other checkouts may run
    // at the same time, and a ledger takes a lock.
    dir_ = std::filesystem::path(temp_.path());
    LedgerOptions options;
    options.path = (dir_ / "ledger.db").string();
    options.durable_commits = false;
    auto ledger = SqliteLedger::Open(options);
    ASSERT_TRUE(ledger.ok()) << ledger.status();
    ledger_ = *std::move(ledger);
  }
  void TearDown() override {
    ledger_.reset();
    std::filesystem::remove_all(dir_);
  }

  testing::TempDir temp_;
  std::filesystem::path dir_;
  std::unique_ptr<Ledger> ledger_;
  std::vector<OutcomeEntry> outcomes_;
};

TEST_F(HealthRebuildTest, RebuiltWindowsEqualLiveOnes) {
  options_.windows.labelled_count = 10;
  options_.windows.scored_count = 10;
  options_.windows.buckets = 2;
  std::unique_ptr<HealthMonitor> live = Make(options_);
  live->SyncPlans({plan_});
  std::vector<ScoreEntry> scores;
  const char* regions[] = {"urban", "rural", "suburb"};
  for (int i = 0; i < 15; ++i) {
    const double log_odds = -2.0 + 0.25 * i;
    const absl::Time at = now_ - absl::Minutes(30 - i);
    const std::vector<RawValue> row = Row(1.5 * i, regions[i % 3], 8 + i);
    ScoreEntry e{absl::StrCat("r", i),
                 "courier",
                 "v1",
                 ScoreRole::kActive,
                 at,
                 log_odds,
                 0,
                 absl::StrCat(R"({"distance_km":)", 1.5 * i, R"(,"region":")",
                              regions[i % 3], R"(","hour":)", 8 + i, "}")};
    scores.push_back(e);
    live->OnScored(*plan_, row, log_odds, at);
  }
  // Another version's rows are not rebuilt (nor do they take the place of
  // this version's rows among the newest).
  for (int i = 0; i < 12; ++i) {
    scores.push_back({absl::StrCat("old", i), "courier", "v0",
                      ScoreRole::kActive, now_, 3.0, 0, "{}"});
    outcomes_.push_back({absl::StrCat("old", i), 1, now_});
  }
  ASSERT_TRUE(ledger_->AppendScores(scores).ok());
  std::vector<OutcomeEntry> outcomes = outcomes_;
  for (int i = 0; i < 15; ++i) {
    outcomes.push_back({absl::StrCat("r", i), i % 3 == 0 ? 1 : 0,
                        now_ - absl::Minutes(20 - i)});
  }
  auto results = ledger_->ReportOutcomes(outcomes);
  ASSERT_TRUE(results.ok()) << results.status();
  for (const OutcomeResult& r : *results) {
    ASSERT_TRUE(r.status.ok()) << r.status;
    for (const LabelledScore& l : r.labelled) {
      if (l.set_version == "v1") {
        LabelledScore copy = l;
        live->OnLabelled(copy);
      }
    }
  }

  monitor_ = Make(options_);
  monitor_->SyncPlans({plan_});
  ASSERT_TRUE(monitor_->Rebuild(*ledger_).ok());
  live->Evaluate();
  const v1::SetHealth want = *live->Health("courier");
  const v1::SetHealth got = Evaluate();
  // Count windows of 10 in buckets of 5: live saw 15 records and holds the
  // last 10; the rebuild reads the newest 10 and holds them all.
  EXPECT_EQ(got.windows(0).labelled(), 10);
  EXPECT_EQ(want.windows(0).labelled(), 10);
  EXPECT_EQ(got.windows(0).scored(), 10);
  EXPECT_EQ(got.windows(1).labelled(), 15);
  EXPECT_EQ(got.windows(1).scored(), 15);
  // Outcomes since start count live ones only: rebuilt ones are not new.
  EXPECT_EQ(want.labelled_since_start(), 15);
  EXPECT_EQ(got.labelled_since_start(), 0);
  for (int w = 0; w < 2; ++w) {
    SCOPED_TRACE(w);
    EXPECT_DOUBLE_EQ(got.windows(w).log_loss().value(),
                     want.windows(w).log_loss().value());
    EXPECT_DOUBLE_EQ(got.windows(w).auc().value(),
                     want.windows(w).auc().value());
    EXPECT_DOUBLE_EQ(got.windows(w).score_psi().value(),
                     want.windows(w).score_psi().value());
    for (int f = 0; f < 3; ++f) {
      EXPECT_DOUBLE_EQ(got.windows(w).features(f).missing_rate().value(),
                       want.windows(w).features(f).missing_rate().value());
      EXPECT_EQ(got.windows(w).features(f).psi().value(),
                want.windows(w).features(f).psi().value());
    }
  }
}

TEST_F(HealthRebuildTest, UnreadableRowsAreSkipped) {
  ASSERT_TRUE(
      ledger_
          ->AppendScores({{"good", "courier", "v1", ScoreRole::kActive, now_,
                           0.5, 0, R"({"distance_km":3,"region":1})"},
                          {"bad", "courier", "v1", ScoreRole::kActive, now_,
                           0.5, 0, R"({"distance_km":"far"})"},
                          {"worse", "courier", "v1", ScoreRole::kActive, now_,
                           0.5, 0, "not json"}})
          .ok());
  ASSERT_TRUE(monitor_->Rebuild(*ledger_).ok());
  const v1::SetHealth h = Evaluate();
  EXPECT_EQ(h.windows(0).scored(), 1);
  EXPECT_EQ(h.windows(1).scored(), 1);
  // The stored level index 1 is "rural".
  EXPECT_DOUBLE_EQ(h.windows(0).features(1).out_of_range_rate().value(), 0);
}

}  // namespace
}  // namespace plumbline::daemon
