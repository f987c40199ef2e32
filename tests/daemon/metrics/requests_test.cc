// File: tests/daemon/metrics/requests_test.cc
//
// RequestMetrics' labels: the methods of the served services get their own
// series, every other name a caller invents shares method="unknown".
#include "daemon/metrics/requests.h"

#include <string>

#include "absl/strings/str_cat.h"
#include "absl/time/time.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "plumbline/v1/outcomes.pb.h"
#include "plumbline/v1/scoring.pb.h"
#include "prometheus/registry.h"

namespace plumbline::daemon {
namespace {

size_t Series(prometheus::Registry& registry, const std::string& family) {
  for (const auto& f : registry.Collect()) {
    if (f.name == family) return f.metric.size();
  }
  return 0;
}

class RequestLabelTest : public ::testing::Test {
 protected:
  void SetUp() override {
    // Links the generated files whose services RequestMetrics looks up.
    ASSERT_NE(v1::ScoreRequest::descriptor(), nullptr);
    ASSERT_NE(v1::ReportOutcomeRequest::descriptor(), nullptr);
  }
  prometheus::Registry registry_;
};

TEST_F(RequestLabelTest, ServedMethodsKeepTheirNames) {
  RequestMetrics metrics(registry_);
  EXPECT_EQ(metrics.MethodLabel("/plumbline.v1.Scoring/Score"),
            "plumbline.v1.Scoring/Score");
  EXPECT_EQ(metrics.MethodLabel("plumbline.v1.Scoring/ScoreBatch"),
            "plumbline.v1.Scoring/ScoreBatch");
  EXPECT_EQ(metrics.MethodLabel("/plumbline.v1.Outcomes/ReportOutcome"),
            "plumbline.v1.Outcomes/ReportOutcome");
  EXPECT_EQ(metrics.MethodLabel("/grpc.health.v1.Health/Check"),
            "grpc.health.v1.Health/Check");
}

TEST_F(RequestLabelTest, InventedNamesShareOneLabel) {
  RequestMetrics metrics(registry_);
  for (const char* name :
       {"/plumbline.v1.Scoring/Scores", "/plumbline.v1.Scoring/score",
        "/plumbline.v1/Scoring.Score", "//plumbline.v1.Scoring/Score", "/x", "",
        "/plumbline.v1.Nothing/Score"}) {
    EXPECT_EQ(metrics.MethodLabel(name), "unknown") << name;
  }
}

TEST_F(RequestLabelTest, ThousandsOfUnknownMethodsAddNoSeries) {
  RequestMetrics metrics(registry_);
  metrics.Observe("/plumbline.v1.Scoring/Score", grpc::StatusCode::OK,
                  absl::Milliseconds(1));
  for (int i = 0; i < 5000; ++i) {
    metrics.Observe(absl::StrCat("/attacker.Service/Method", i),
                    grpc::StatusCode::UNIMPLEMENTED, absl::Microseconds(50));
  }
  // One Score series and one "unknown" series in each family.
  EXPECT_EQ(Series(registry_, "plumbline_requests_total"), 2u);
  EXPECT_EQ(Series(registry_, "plumbline_request_duration_seconds"), 2u);
  for (const auto& f : registry_.Collect()) {
    if (f.name != "plumbline_requests_total") continue;
    for (const auto& m : f.metric) {
      if (m.label[1].value == "unknown") {
        EXPECT_EQ(m.label[0].name, "code");
        EXPECT_EQ(m.label[0].value, "UNIMPLEMENTED");
        EXPECT_EQ(m.counter.value, 5000);
      }
    }
  }
}

}  // namespace
}  // namespace plumbline::daemon
