// File: tests/ops/ops_files_test.cc
//
// The sample production config ops/config/plumbd.production.json loads with
// plumbd's own loader (ReadDaemonConfigFile: protobuf JSON, unknown fields
// rejected) and its drift policy passes the monitor's checks; and the ops
// files agree with one another: the systemd unit's directories and --config
// path, the config's paths, the Prometheus scrape target and the alert
// thresholds that repeat config values.
#include <string>
#include <vector>

#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/strings/str_split.h"
#include "daemon/server/health_options.h"
#include "daemon/server/options.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"

namespace plumbline::ops {
namespace {

using daemon::testing::ReadTextFile;

const std::string kConfigFile =
    PLUMBLINE_OPS_DIR "/config/plumbd.production.json";
const std::string kUnitFile = PLUMBLINE_OPS_DIR "/systemd/plumbd.service";
const std::string kScrapeFile = PLUMBLINE_OPS_DIR "/prometheus/prometheus.yml";
const std::string kRulesFile =
    PLUMBLINE_OPS_DIR "/prometheus/plumbline_alerts.yml";

// The value of the unit file's first `key=` line, "" if none.
std::string UnitValue(const std::string& unit, absl::string_view key) {
  for (absl::string_view line : absl::StrSplit(unit, '\n')) {
    if (absl::StartsWith(line, absl::StrCat(key, "="))) {
      return std::string(line.substr(key.size() + 1));
    }
  }
  return "";
}

// The threshold `value` written as in the rules file (two decimals).
std::string Threshold(double value) { return absl::StrFormat("%.2f", value); }

TEST(ProductionConfigTest, LoadsWithPlumbdsOwnLoader) {
  absl::StatusOr<v1::DaemonConfig> config =
      daemon::ReadDaemonConfigFile(kConfigFile);
  ASSERT_TRUE(config.ok()) << config.status();
  absl::StatusOr<daemon::DaemonOptions> options =
      daemon::LoadDaemonOptions(kConfigFile);
  ASSERT_TRUE(options.ok()) << options.status();
  // The drift policy as plumbd checks it at startup (refuses to start on an
  // error naming the field).
  absl::StatusOr<daemon::HealthMonitorOptions> health =
      daemon::HealthMonitorOptionsFrom(options->windows, options->drift_policy);
  ASSERT_TRUE(health.ok()) << health.status();

  // Production choices the README promises.
  EXPECT_EQ(options->ledger.path, "/var/lib/plumbline/ledger.db");
  EXPECT_EQ(options->ledger.ack, daemon::LedgerOptions::Ack::kCommitted);
  EXPECT_TRUE(options->ledger.durable_commits);
  EXPECT_EQ(options->sets_dir, "/etc/plumbline/sets");
  EXPECT_EQ(options->drift_policy.thresholds.size(), 4u);
  // 30 days: outcome figures and the CUSUM charts over mature cohorts.
  EXPECT_EQ(options->drift_policy.outcome_horizon, absl::Hours(24 * 30));
  EXPECT_EQ(health->windows.outcome_horizon, absl::Hours(24 * 30));
  EXPECT_EQ(health->policy.alpha(), 0.01);
  EXPECT_EQ(options->refit.mode(), v1::RefitPolicy::PROPOSE);
  // At least one batch fits the ledger queue (else plumbd warns at startup).
  EXPECT_GE(options->ledger.queue_capacity_rows, options->max_batch_records);
}

TEST(ProductionFilesTest, UnitConfigAndScrapeTargetAgree) {
  const std::string unit = ReadTextFile(kUnitFile);
  ASSERT_FALSE(unit.empty()) << "cannot read " << kUnitFile;
  absl::StatusOr<daemon::DaemonOptions> options =
      daemon::LoadDaemonOptions(kConfigFile);
  ASSERT_TRUE(options.ok()) << options.status();

  // The unit starts plumbd with the config installed in its configuration
  // directory; the ledger lives in its state directory, the sets in its
  // (read-only) configuration directory.
  EXPECT_EQ(UnitValue(unit, "ExecStart"),
            "/usr/local/bin/plumbd --config /etc/plumbline/plumbd.json");
  EXPECT_EQ(UnitValue(unit, "ConfigurationDirectory"), "plumbline");
  EXPECT_EQ(UnitValue(unit, "StateDirectory"), "plumbline");
  EXPECT_EQ(UnitValue(unit, "ProtectSystem"), "strict");
  EXPECT_TRUE(absl::StartsWith(options->ledger.path, "/var/lib/plumbline/"))
      << options->ledger.path;
  EXPECT_TRUE(absl::StartsWith(options->sets_dir, "/etc/plumbline/"))
      << options->sets_dir;

  // Prometheus scrapes the config's metrics address.
  const std::string scrape = ReadTextFile(kScrapeFile);
  EXPECT_TRUE(absl::StrContains(
      scrape, absl::StrCat("targets: [\"", options->metrics_listen, "\"]")))
      << kScrapeFile << " does not scrape " << options->metrics_listen;
}

TEST(ProductionFilesTest, AlertThresholdsRepeatTheConfig) {
  const std::string rules = ReadTextFile(kRulesFile);
  ASSERT_FALSE(rules.empty()) << "cannot read " << kRulesFile;
  absl::StatusOr<v1::DaemonConfig> config =
      daemon::ReadDaemonConfigFile(kConfigFile);
  ASSERT_TRUE(config.ok()) << config.status();
  const v1::DriftPolicy& policy = config->drift_policy();

  // The stability and calibration alerts use the config's drifting
  // thresholds and minimum window counts.
  int checked = 0;
  for (const v1::MetricThreshold& t : policy.thresholds()) {
    std::string metric;
    if (t.metric() == "score_psi") metric = "plumbline_score_psi";
    if (t.metric() == "feature_psi") metric = "plumbline_feature_psi";
    if (t.metric() == "expected_calibration_error") {
      metric = "plumbline_expected_calibration_error";
    }
    if (metric.empty()) continue;
    const std::string expr =
        absl::StrCat(metric, " > ", Threshold(t.drifting()));
    EXPECT_TRUE(absl::StrContains(rules, expr))
        << kRulesFile << " lacks " << expr;
    ++checked;
  }
  EXPECT_EQ(checked, 3);
  EXPECT_TRUE(absl::StrContains(
      rules, absl::StrCat("plumbline_window_records{kind=\"scored\"} >= ",
                          policy.min_scored())));
  EXPECT_TRUE(absl::StrContains(
      rules, absl::StrCat("plumbline_window_records{kind=\"labelled\"} >= ",
                          policy.min_labelled())));

  // Ledger queue: a share of the capacity plumbd exports, so it follows
  // whatever the config sets.
  EXPECT_TRUE(absl::StrContains(rules,
                                "plumbline_ledger_queue_rows / "
                                "plumbline_ledger_queue_capacity_rows > 0.8"));
}

}  // namespace
}  // namespace plumbline::ops
