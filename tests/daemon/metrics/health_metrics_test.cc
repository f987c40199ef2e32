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

TEST_F(HealthMetricsTest, NothingBeforeTheFirstEvaluation) {
  HealthMetrics metrics(monitor_.get());
  EXPECT_THAT(Serialize(metrics), Not(HasSubstr("plumbline_drift_state")));
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
