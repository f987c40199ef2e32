// File: tests/daemon/metrics/health_metrics_test.cc
//
// The Prometheus side of the monitor: the health collectable (names,
// labels, undefined figures left out), the request counters, and the
// exporter's HTTP endpoint on an ephemeral port.
#include <cmath>

#include "daemon/metrics/exporter.h"
#include "daemon/metrics/health.h"
#include "daemon/metrics/requests.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "prometheus/text_serializer.h"
#include "tests/testing/health_test_sets.h"
#include "tests/testing/http.h"

namespace plumbline::daemon {
namespace {

using scorer::RawValue;
using testing::FindSample;
using ::testing::HasSubstr;
using ::testing::Not;
using testing::ParseExposition;

std::string Serialize(const prometheus::Collectable& c) {
  return prometheus::TextSerializer().Serialize(c.Collect());
}

class HealthMetricsTest : public ::testing::Test {
 protected:
  void SetUp() override {
    plan_ = testing::CompilePlan(testing::BaselineSetJson("courier", "v1"));
    HealthMonitorOptions options;
    options.now = [] { return absl::FromUnixSeconds(1'800'000'000); };
    monitor_ = *HealthMonitor::Create(options);
    monitor_->SyncPlans({plan_});
  }
  std::shared_ptr<const scorer::ScoringPlan> plan_;
  std::unique_ptr<HealthMonitor> monitor_;
};

TEST_F(HealthMetricsTest, SteadyEmptySeriesBeforeTheFirstEvaluation) {
  HealthMetrics metrics(monitor_.get());
  const std::vector<testing::Sample> samples =
      ParseExposition(Serialize(metrics));
  EXPECT_EQ(FindSample(samples, "plumbline_drift_state",
                       {{"set", "courier"}, {"version", "v1"}}),
            0.0);
  for (const char* window : {"count", "time"}) {
    for (const char* kind : {"labelled", "scored"}) {
      EXPECT_EQ(FindSample(samples, "plumbline_window_records",
                           {{"set", "courier"},
                            {"version", "v1"},
                            {"window", window},
                            {"kind", kind}}),
                0.0)
          << window << " " << kind;
    }
  }
  // No evaluation yet: no timestamp, so the staleness alert cannot fire on
  // a made-up time.
  EXPECT_EQ(FindSample(samples, "plumbline_health_evaluated_timestamp_seconds",
                       {{"set", "courier"}, {"version", "v1"}}),
            std::nullopt);
}

// Issue 13: after approve / activate the new active version has its series
// at once (the registry's refresh calls SyncPlans; the tick comes later).
TEST_F(HealthMetricsTest, ANewActiveVersionHasItsSeriesAtOnce) {
  monitor_->Evaluate();
  auto v2 = testing::CompilePlan(testing::BaselineSetJson("courier", "v2"));
  monitor_->SyncPlans({v2});  // v2 active, v1 retired
  HealthMetrics metrics(monitor_.get());
  const std::vector<testing::Sample> samples =
      ParseExposition(Serialize(metrics));
  EXPECT_EQ(FindSample(samples, "plumbline_drift_state",
                       {{"set", "courier"}, {"version", "v2"}}),
            0.0);
  EXPECT_EQ(FindSample(samples, "plumbline_window_records",
                       {{"set", "courier"},
                        {"version", "v2"},
                        {"window", "count"},
                        {"kind", "labelled"}}),
            0.0);
  EXPECT_EQ(FindSample(samples, "plumbline_drift_state",
                       {{"set", "courier"}, {"version", "v1"}}),
            std::nullopt);
}

TEST_F(HealthMetricsTest, ChartsTestsAndTransitions) {
  HealthMonitorOptions options;
  options.now = [] { return absl::FromUnixSeconds(1'800'000'000); };
  v1::DriftPolicy config;
  config.set_min_scored(10);
  options.policy = *DriftPolicy::FromConfig(config);
  monitor_ = *HealthMonitor::Create(options);
  monitor_->SyncPlans({plan_});
  const std::vector<RawValue> row = {
      RawValue::Number(3), RawValue::Text("urban"), RawValue::Missing()};
  for (int i = 0; i < 10; ++i) {
    monitor_->OnScored(*plan_, row, 0.0, absl::FromUnixSeconds(1'800'000'000));
  }
  monitor_->Evaluate();
  monitor_->Evaluate();
  HealthMetrics metrics(monitor_.get());
  const std::string text = Serialize(metrics);
  const std::vector<testing::Sample> samples = ParseExposition(text);
  // One transition, counted once over two evaluations.
  EXPECT_EQ(FindSample(samples, "plumbline_drift_transitions_total",
                       {{"set", "courier"},
                        {"version", "v1"},
                        {"from", "steady"},
                        {"to", "drifting"},
                        {"trigger", "score_psi"}}),
            1.0);
  EXPECT_THAT(text,
              HasSubstr("# TYPE plumbline_drift_transitions_total counter"));
  EXPECT_THAT(text, HasSubstr("# TYPE plumbline_cusum_alarms_total counter"));
  for (const char* chart : {"upper", "lower", "slope"}) {
    const std::map<std::string, std::string> l = {
        {"set", "courier"}, {"version", "v1"}, {"chart", chart}};
    EXPECT_EQ(FindSample(samples, "plumbline_cusum_value", l), 0.0) << chart;
    EXPECT_GT(FindSample(samples, "plumbline_cusum_limit", l).value_or(0), 0);
    EXPECT_EQ(FindSample(samples, "plumbline_cusum_alarms_total", l), 0.0);
  }
  // The test set's baselines record no count: no p-values exported.
  EXPECT_THAT(text, Not(HasSubstr("plumbline_score_psi_p_value{")));
  EXPECT_EQ(FindSample(samples, "plumbline_outcome_horizon_seconds",
                       {{"set", "courier"}, {"version", "v1"}}),
            0.0);
  EXPECT_THAT(text, Not(HasSubstr("NaN")));
}

TEST_F(HealthMetricsTest, DefinedFiguresOnlyWithTheirLabels) {
  const std::vector<RawValue> row = {
      RawValue::Number(3), RawValue::Text("urban"), RawValue::Missing()};
  monitor_->OnScored(*plan_, row, 0.0, absl::FromUnixSeconds(1'800'000'000));
  LabelledScore l;
  l.set_name = "courier";
  l.set_version = "v1";
  l.label = 1;
  l.observed_at = absl::FromUnixSeconds(1'800'000'000);
  monitor_->OnLabelled(l);
  monitor_->Evaluate();
  HealthMetrics metrics(monitor_.get());
  const std::string text = Serialize(metrics);
  const std::vector<testing::Sample> samples = ParseExposition(text);
  const std::map<std::string, std::string> count = {
      {"set", "courier"}, {"version", "v1"}, {"window", "count"}};
  EXPECT_EQ(FindSample(samples, "plumbline_drift_state",
                       {{"set", "courier"}, {"version", "v1"}}),
            0.0);
  EXPECT_EQ(FindSample(samples, "plumbline_window_records",
                       {{"window", "time"}, {"kind", "labelled"}}),
            1.0);
  // One labelled record at log-odds 0: log-loss ln 2 (hand computation).
  EXPECT_NEAR(*FindSample(samples, "plumbline_log_loss", count), std::log(2.0),
              1e-15);
  // One class only: no AUC, no calibration slope, no Hosmer-Lemeshow.
  EXPECT_THAT(text, Not(HasSubstr("plumbline_auc{")));
  EXPECT_THAT(text, Not(HasSubstr("plumbline_calibration_slope{")));
  EXPECT_THAT(text, Not(HasSubstr("plumbline_hosmer_lemeshow_p_value{")));
  EXPECT_THAT(text, Not(HasSubstr("NaN")));
  // hour has no baseline: a missing ratio but no PSI.
  std::map<std::string, std::string> hour = count;
  hour["feature"] = "hour";
  EXPECT_EQ(FindSample(samples, "plumbline_feature_missing_ratio", hour), 1.0);
  EXPECT_EQ(FindSample(samples, "plumbline_feature_psi", hour), std::nullopt);
  std::map<std::string, std::string> distance = count;
  distance["feature"] = "distance_km";
  EXPECT_EQ(
      FindSample(samples, "plumbline_feature_out_of_range_ratio", distance),
      0.0);
  EXPECT_THAT(
      text, HasSubstr("# TYPE plumbline_window_refused_records_total counter"));
  EXPECT_THAT(text, HasSubstr("# TYPE plumbline_score_psi gauge"));
}

TEST(RequestMetricsTest, CountsByMethodAndCodeName) {
  prometheus::Registry registry;
  RequestMetrics metrics(registry);
  metrics.Observe("plumbline.v1.Scoring/Score", grpc::StatusCode::OK,
                  absl::Microseconds(300));
  metrics.Observe("plumbline.v1.Scoring/Score", grpc::StatusCode::OK,
                  absl::Milliseconds(2));
  metrics.Observe("plumbline.v1.Scoring/Score", grpc::StatusCode::NOT_FOUND,
                  absl::Microseconds(50));
  const auto samples = ParseExposition(
      prometheus::TextSerializer().Serialize(registry.Collect()));
  EXPECT_EQ(
      FindSample(samples, "plumbline_requests_total",
                 {{"method", "plumbline.v1.Scoring/Score"}, {"code", "OK"}}),
      2.0);
  EXPECT_EQ(FindSample(samples, "plumbline_requests_total",
                       {{"method", "plumbline.v1.Scoring/Score"},
                        {"code", "NOT_FOUND"}}),
            1.0);
  EXPECT_EQ(FindSample(samples, "plumbline_request_duration_seconds_count",
                       {{"method", "plumbline.v1.Scoring/Score"}}),
            3.0);
  // 300 µs, 2 ms and 50 µs: two at or below the 1 ms bucket bound.
  EXPECT_EQ(
      FindSample(samples, "plumbline_request_duration_seconds_bucket",
                 {{"method", "plumbline.v1.Scoring/Score"}, {"le", "0.001"}}),
      2.0);
}

TEST(MetricsExporterTest, ServesOnAnEphemeralPortAndRefusesABusyOne) {
  absl::StatusOr<std::unique_ptr<MetricsExporter>> exporter =
      MetricsExporter::Start("127.0.0.1:0");
  ASSERT_TRUE(exporter.ok()) << exporter.status();
  const std::string addr = (*exporter)->bound_address();
  EXPECT_THAT(addr, ::testing::StartsWith("127.0.0.1:"));
  EXPECT_NE(addr, "127.0.0.1:0");
  RequestMetrics requests((*exporter)->registry());
  requests.Observe("plumbline.v1.Monitor/GetSetHealth", grpc::StatusCode::OK,
                   absl::Milliseconds(1));
  absl::StatusOr<std::string> body = testing::HttpGet(addr, "/metrics");
  ASSERT_TRUE(body.ok()) << body.status();
  EXPECT_THAT(*body, HasSubstr("plumbline_requests_total{"));

  absl::StatusOr<std::unique_ptr<MetricsExporter>> second =
      MetricsExporter::Start(addr);
  ASSERT_FALSE(second.ok());
  EXPECT_EQ(second.status().code(), absl::StatusCode::kUnavailable);
  EXPECT_THAT(second.status().message(), HasSubstr(addr));
}

}  // namespace
}  // namespace plumbline::daemon
