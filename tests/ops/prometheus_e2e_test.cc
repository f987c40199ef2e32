// File: tests/ops/prometheus_e2e_test.cc
//
// ops/prometheus end to end: a real plumbd serves a set and receives records
// far from the set's baselines, so its drift policy (tick 1 s in the test
// config) says `drifting`; then Debian's prometheus server scrapes it and
// evaluates the real alert rules, and its HTTP API must show the drift,
// stability and refit-failed alerts firing for that set.
//
// Prometheus gets copies of the ops files with as little changed as
// possible, so the test checks the files an operator installs:
//  - prometheus.yml: only the target (plumbd's metrics address) and the
//    scrape and evaluation intervals (15s -> 1s);
//  - plumbline_alerts.yml: only every `for:` duration, set to 0s, so the
//    test need not wait out minutes of `for`; expressions, labels and
//    annotations are the installed ones.
// Skipped (GTEST_SKIP) only when the prometheus binary is not installed
// (Debian package prometheus; ops/setup installs it). Waits poll with a
// generous safety net (no timing assertions); plumbd and prometheus are
// stopped when the test ends, however it ends.
#include <grpcpp/client_context.h>
#include <sys/stat.h>
#include <unistd.h>

#include <functional>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_join.h"
#include "absl/strings/str_split.h"
#include "absl/strings/strip.h"
#include "absl/time/clock.h"
#include "absl/time/time.h"
#include "google/protobuf/struct.pb.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"
#include "plumbline/v1/scoring.grpc.pb.h"
#include "tests/ops/prometheus_server.h"
#include "tests/testing/health_test_sets.h"
#include "tests/testing/http.h"
#include "tests/testing/process.h"

namespace plumbline::ops {
namespace {

using daemon::testing::FindSample;
using daemon::testing::HttpGet;
using daemon::testing::ParseExposition;
using daemon::testing::PlumbdProcess;
using daemon::testing::ReadTextFile;
using daemon::testing::TempDir;
using daemon::testing::WriteTextFile;
using google::protobuf::Struct;
using google::protobuf::Value;

constexpr char kSet[] = "parcel_drift";
constexpr char kVersion[] = "e2e-1";
// Above the 500 scored records the stability alerts require (and plumbd's
// default min_scored).
constexpr int kRecords = 600;

// Calls `condition` every 100 ms until it returns true; gives up after 120 s.
// A safety net for a slow, loaded machine (prometheus discovers its target
// a few seconds after start), not a speed requirement.
bool WaitFor(const std::function<bool()>& condition) {
  const absl::Time give_up = absl::Now() + absl::Seconds(120);
  while (!condition()) {
    if (absl::Now() > give_up) return false;
    absl::SleepFor(absl::Milliseconds(100));
  }
  return true;
}

// `text` with the one occurrence of `from` replaced by `to`; an error naming
// `file` if `from` occurs other than exactly once.
absl::StatusOr<std::string> ReplaceOnce(const std::string& text,
                                        const std::string& from,
                                        const std::string& to,
                                        const std::string& file) {
  const size_t at = text.find(from);
  if (at == std::string::npos || text.find(from, at + 1) != std::string::npos) {
    return absl::FailedPreconditionError(absl::StrCat(
        file, ": expected exactly one '", from,
        "'; the file changed, update tests/ops/prometheus_e2e_test.cc"));
  }
  std::string out = text;
  out.replace(at, from.size(), to);
  return out;
}

// ops/prometheus/prometheus.yml scraping `target` every second.
absl::StatusOr<std::string> TestScrapeConfig(const std::string& target) {
  const std::string file = PLUMBLINE_OPS_DIR "/prometheus/prometheus.yml";
  absl::StatusOr<std::string> text = ReadTextFile(file);
  for (const auto& [from, to] :
       std::vector<std::pair<std::string, std::string>>{
           {"\"127.0.0.1:7391\"", absl::StrCat("\"", target, "\"")},
           {"scrape_interval: 15s", "scrape_interval: 1s"},
           {"evaluation_interval: 15s", "evaluation_interval: 1s"}}) {
    text = ReplaceOnce(*text, from, to, file);
    if (!text.ok()) return text.status();
  }
  return text;
}

// ops/prometheus/plumbline_alerts.yml with every `for:` set to 0s.
absl::StatusOr<std::string> TestRules() {
  const std::string file = PLUMBLINE_OPS_DIR "/prometheus/plumbline_alerts.yml";
  std::vector<std::string> lines = absl::StrSplit(ReadTextFile(file), '\n');
  int changed = 0;
  for (std::string& line : lines) {
    absl::string_view body = absl::StripLeadingAsciiWhitespace(line);
    if (!absl::StartsWith(body, "for:")) continue;
    line = absl::StrCat(line.substr(0, line.size() - body.size()), "for: 0s");
    ++changed;
  }
  if (changed == 0) {
    return absl::FailedPreconditionError(
        absl::StrCat(file, ": no `for:` line found; update the test"));
  }
  return absl::StrJoin(lines, "\n");
}

// The alerts of a /api/v1/alerts answer; empty if it does not parse.
std::vector<Struct> ParseAlerts(const std::string& json) {
  Struct answer;
  if (!google::protobuf::util::JsonStringToMessage(json, &answer).ok())
    return {};
  auto data = answer.fields().find("data");
  if (data == answer.fields().end()) return {};
  auto alerts = data->second.struct_value().fields().find("alerts");
  if (alerts == data->second.struct_value().fields().end()) return {};
  std::vector<Struct> out;
  for (const Value& v : alerts->second.list_value().values()) {
    out.push_back(v.struct_value());
  }
  return out;
}

std::string StringField(const Struct& s, const std::string& key) {
  auto it = s.fields().find(key);
  return it == s.fields().end() ? "" : it->second.string_value();
}

const Struct& StructField(const Struct& s, const std::string& key) {
  static const Struct* const kEmpty = new Struct();
  auto it = s.fields().find(key);
  return it == s.fields().end() ? *kEmpty : it->second.struct_value();
}

// The firing alert whose labels include `labels` (alertname among them).
std::optional<Struct> FindFiring(
    const std::vector<Struct>& alerts,
    const std::map<std::string, std::string>& labels) {
  for (const Struct& alert : alerts) {
    if (StringField(alert, "state") != "firing") continue;
    const Struct& have = StructField(alert, "labels");
    bool all = true;
    for (const auto& [key, value] : labels) {
      all = all && StringField(have, key) == value;
    }
    if (all) return alert;
  }
  return std::nullopt;
}

class PrometheusEndToEndTest : public ::testing::Test {
 protected:
  void SetUp() override {
    if (access(PROMETHEUS_PATH, X_OK) != 0) {
      GTEST_SKIP() << "prometheus not found at '" << PROMETHEUS_PATH
                   << "' (Debian package prometheus; ops/setup installs it, "
                      "then reconfigure): the alert rules were not run "
                      "against a real Prometheus";
    }
  }

  // Starts plumbd with one baseline set and a 1 s drift-policy tick.
  void StartPlumbd() {
    ASSERT_EQ(mkdir(dir_.File("sets").c_str(), 0755), 0);
    ASSERT_TRUE(WriteTextFile(dir_.File("sets/parcel_drift.json"),
                              daemon::testing::BaselineSetJson(kSet, kVersion))
                    .ok());
    const std::string config = dir_.File("plumbd.json");
    ASSERT_TRUE(WriteTextFile(config, absl::StrCat(R"({
  "sets_dir": ")",
                                                   dir_.File("sets"), R"(",
  "ledger_path": ")",
                                                   dir_.File("ledger.db"), R"(",
  "metrics_listen": "127.0.0.1:0",
  "ledger": {"relaxed_commits": true},
  "drift_policy": {"tick_seconds": 1}
})"))
                    .ok());
    auto plumbd = PlumbdProcess::Start(dir_.path(), {"--config", config});
    ASSERT_TRUE(plumbd.ok()) << plumbd.status();
    plumbd_ = *std::move(plumbd);
    metrics_addr_ = plumbd_->MetricsAddress();
    ASSERT_FALSE(metrics_addr_.empty()) << plumbd_->Log();
  }

  // Scores records far from every baseline of the set (see
  // tests/daemon/health_test_sets.h): distance 18 km (baseline mostly below
  // 5), region always rural (baseline 40%), so probability 0.98 (baseline:
  // 20% above 0.5).
  void ScoreDriftingRecords() {
    v1::ScoreBatchRequest request;
    request.set_set(kSet);
    for (int i = 0; i < kRecords; ++i) {
      v1::Record* record = request.add_records();
      record->set_record_id(absl::StrCat("drift-", i));
      auto& features = *record->mutable_features()->mutable_fields();
      features["distance_km"].set_number_value(18);
      features["region"].set_string_value("rural");
      features["hour"].set_number_value(20);
    }
    grpc::ClientContext context;
    v1::ScoreBatchReply reply;
    const grpc::Status s = daemon::testing::NewScoringStub(plumbd_->addr())
                               ->ScoreBatch(&context, request, &reply);
    ASSERT_TRUE(s.ok()) << s.error_message();
    ASSERT_EQ(reply.scores_size(), kRecords);
  }

  // Polls /api/v1/alerts until an alert whose labels include `labels` is
  // firing; keeps the last answer in answer_ and its alerts in alerts_.
  bool WaitForFiring(const std::map<std::string, std::string>& labels) {
    return WaitFor([&] {
      absl::StatusOr<std::string> body =
          HttpGet(prometheus_->addr(), "/api/v1/alerts");
      if (!body.ok()) return false;
      answer_ = *body;
      alerts_ = ParseAlerts(answer_);
      return FindFiring(alerts_, labels).has_value();
    });
  }

  // Members in this order: prometheus stops before plumbd, both before the
  // directory is removed.
  TempDir dir_;
  std::unique_ptr<PlumbdProcess> plumbd_;
  std::unique_ptr<testing::PrometheusServer> prometheus_;
  std::string metrics_addr_;
  std::string answer_;
  std::vector<Struct> alerts_;
};

TEST_F(PrometheusEndToEndTest, DriftAndRefitAlertsFireFromARealScrape) {
  ASSERT_NO_FATAL_FAILURE(StartPlumbd());
  ASSERT_NO_FATAL_FAILURE(ScoreDriftingRecords());
  // plumbd itself says drifting before Prometheus is involved, so a failure
  // below is the rules' or the scrape's.
  const std::map<std::string, std::string> version = {{"set", kSet},
                                                      {"version", kVersion}};
  std::string exposition;
  ASSERT_TRUE(WaitFor([&] {
    absl::StatusOr<std::string> body = HttpGet(metrics_addr_, "/metrics");
    if (!body.ok()) return false;
    exposition = *body;
    return FindSample(ParseExposition(exposition), "plumbline_drift_state",
                      version) == 2.0;
  })) << "plumbd never reported drifting; last scrape:\n"
      << exposition;

  // Prometheus with the ops files (see the file comment).
  ASSERT_EQ(mkdir(dir_.File("prometheus").c_str(), 0755), 0);
  absl::StatusOr<std::string> config = TestScrapeConfig(metrics_addr_);
  ASSERT_TRUE(config.ok()) << config.status();
  absl::StatusOr<std::string> rules = TestRules();
  ASSERT_TRUE(rules.ok()) << rules.status();
  const std::string config_file = dir_.File("prometheus/prometheus.yml");
  ASSERT_TRUE(WriteTextFile(config_file, *config).ok());
  ASSERT_TRUE(
      WriteTextFile(dir_.File("prometheus/plumbline_alerts.yml"), *rules).ok());
  auto prometheus = testing::PrometheusServer::Start(
      PROMETHEUS_PATH, config_file, dir_.File("prometheus"));
  ASSERT_TRUE(prometheus.ok()) << prometheus.status();
  prometheus_ = *std::move(prometheus);

  const std::map<std::string, std::string> drifting = {
      {"alertname", "PlumblineSetDrifting"},
      {"severity", "warning"},
      {"job", "plumbline"},
      {"instance", metrics_addr_},
      {"set", kSet},
      {"version", kVersion}};
  ASSERT_TRUE(WaitForFiring(drifting))
      << "PlumblineSetDrifting never fired; last /api/v1/alerts:\n"
      << answer_ << "\n/api/v1/targets:\n"
      << HttpGet(prometheus_->addr(), "/api/v1/targets").value_or("")
      << "\nprometheus log:\n"
      << prometheus_->Log();
  EXPECT_EQ(
      StringField(StructField(*FindFiring(alerts_, drifting), "annotations"),
                  "summary"),
      "Set parcel_drift version e2e-1 is drifting");

  // The stability alerts: the set's score and both features with a baseline
  // shifted far beyond PSI 0.25 in both windows, which hold 600 records.
  for (const char* window : {"count", "time"}) {
    EXPECT_TRUE(WaitForFiring({{"alertname", "PlumblineScorePsiHigh"},
                               {"set", kSet},
                               {"window", window}}))
        << window << ":\n"
        << answer_;
    for (const char* feature : {"distance_km", "region"}) {
      EXPECT_TRUE(WaitForFiring({{"alertname", "PlumblineFeaturePsiHigh"},
                                 {"set", kSet},
                                 {"window", window},
                                 {"feature", feature}}))
          << window << " " << feature << ":\n"
          << answer_;
    }
  }

  // Drifting starts a refit (refit.mode PROPOSE, the default); with no
  // outcome reported it has no labelled records and fails, which plumbd
  // counts in plumbline_refit_jobs_total{result="failed"}.
  EXPECT_TRUE(WaitForFiring({{"alertname", "PlumblineRefitFailed"},
                             {"set", kSet},
                             {"result", "failed"},
                             {"instance", metrics_addr_}}))
      << answer_ << "\nplumbd log:\n"
      << plumbd_->Log();

  // No alert that this traffic cannot justify: every call was OK, nothing
  // was refused, no outcome arrived (no calibration figure) and the ledger
  // queue never held more than 600 rows. (Down and latency are left out:
  // they depend on how fast this machine answers.)
  for (const Struct& a : alerts_) {
    const std::string name = StringField(StructField(a, "labels"), "alertname");
    EXPECT_TRUE(name != "PlumblineErrorRatioHigh" &&
                name != "PlumblineCallsRefused" &&
                name != "PlumblineCalibrationErrorHigh" &&
                name != "PlumblineOutcomeChartAlarm" &&
                name != "PlumblineLedgerQueueSaturated")
        << name << " is active:\n"
        << answer_;
  }
}

}  // namespace
}  // namespace plumbline::ops
