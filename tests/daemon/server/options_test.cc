// File: tests/daemon/server/options_test.cc
#include "daemon/server/options.h"

#include "absl/strings/str_cat.h"
#include "daemon/server/health_options.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;
using testing::TempDir;
using testing::WriteTextFile;

TEST(DaemonOptionsTest, EmptyConfigGivesTheDocumentedDefaults) {
  // The defaults of proto/plumbline/v1/config.proto's comments.
  const DaemonOptions options = OptionsFromConfig(v1::DaemonConfig());
  EXPECT_EQ(options.listen, "127.0.0.1:7390");
  EXPECT_EQ(options.sets_dir, "./sets");
  EXPECT_EQ(options.metrics_listen, "127.0.0.1:7391");
  EXPECT_EQ(options.ledger.path, "./var/ledger.db");
  EXPECT_EQ(options.max_batch_records, 10000u);
  EXPECT_EQ(options.max_reasons, 20u);
  EXPECT_EQ(options.max_message_bytes, 64u * 1024u * 1024u);
  // LedgerConfig.
  EXPECT_EQ(options.ledger.ack, LedgerOptions::Ack::kCommitted);
  EXPECT_EQ(options.ledger.queue_capacity_rows, 200000u);
  EXPECT_EQ(options.ledger.max_group_rows, 50000u);
  EXPECT_TRUE(options.ledger.durable_commits);
  EXPECT_EQ(options.ledger.retention_age, absl::InfiniteDuration());
  EXPECT_EQ(options.ledger.retention_rows, 0);
  // WindowConfig.
  EXPECT_EQ(options.windows.labelled_count, 5000u);
  EXPECT_EQ(options.windows.scored_count, 10000u);
  EXPECT_EQ(options.windows.time, absl::Seconds(86400));
  EXPECT_EQ(options.windows.buckets, 20u);
  // DriftPolicy.
  EXPECT_TRUE(options.drift_policy.thresholds.empty());
  EXPECT_EQ(options.drift_policy.min_labelled, 500u);
  EXPECT_EQ(options.drift_policy.min_scored, 500u);
  EXPECT_EQ(options.drift_policy.tick, absl::Seconds(15));
}

TEST(DaemonOptionsTest, LedgerWindowAndPolicySectionsOverrideDefaults) {
  TempDir dir;
  const std::string path = dir.File("plumbd.json");
  ASSERT_TRUE(WriteTextFile(path, R"({"ledger_path": "/srv/ledger.db",
      "ledger": {"ack": "ACK_QUEUED", "queue_capacity_rows": 5,
                 "max_group_rows": 7, "relaxed_commits": true,
                 "retention_seconds": 3600, "retention_rows": 1000},
      "windows": {"labelled_count": 10, "scored_count": 20,
                  "time_seconds": 60, "buckets": 4},
      "drift_policy": {"thresholds": [{"metric": "auc", "watch": 0.7,
                                       "drifting": 0.6, "direction": "BELOW"}],
                       "min_labelled": 30, "min_scored": 40,
                       "tick_seconds": 2}})")
                  .ok());
  absl::StatusOr<DaemonOptions> options = LoadDaemonOptions(path);
  ASSERT_TRUE(options.ok()) << options.status();
  EXPECT_EQ(options->ledger.path, "/srv/ledger.db");
  EXPECT_EQ(options->ledger.ack, LedgerOptions::Ack::kQueued);
  EXPECT_EQ(options->ledger.queue_capacity_rows, 5u);
  EXPECT_EQ(options->ledger.max_group_rows, 7u);
  EXPECT_FALSE(options->ledger.durable_commits);
  EXPECT_EQ(options->ledger.retention_age, absl::Hours(1));
  EXPECT_EQ(options->ledger.retention_rows, 1000);
  EXPECT_EQ(options->windows.labelled_count, 10u);
  EXPECT_EQ(options->windows.scored_count, 20u);
  EXPECT_EQ(options->windows.time, absl::Seconds(60));
  EXPECT_EQ(options->windows.buckets, 4u);
  ASSERT_EQ(options->drift_policy.thresholds.size(), 1u);
  EXPECT_EQ(options->drift_policy.thresholds[0].metric(), "auc");
  EXPECT_EQ(options->drift_policy.thresholds[0].direction(),
            v1::MetricThreshold::BELOW);
  EXPECT_EQ(options->drift_policy.thresholds[0].drifting(), 0.6);
  EXPECT_EQ(options->drift_policy.min_labelled, 30u);
  EXPECT_EQ(options->drift_policy.min_scored, 40u);
  EXPECT_EQ(options->drift_policy.tick, absl::Seconds(2));
}

TEST(DaemonOptionsTest, FileValuesOverrideDefaults) {
  TempDir dir;
  const std::string path = dir.File("plumbd.json");
  ASSERT_TRUE(WriteTextFile(path, R"({"listen": "127.0.0.1:9000",
      "sets_dir": "/srv/sets", "maxBatchRecords": 50, "max_reasons": 3})")
                  .ok());
  absl::StatusOr<DaemonOptions> options = LoadDaemonOptions(path);
  ASSERT_TRUE(options.ok()) << options.status();
  EXPECT_EQ(options->listen, "127.0.0.1:9000");
  EXPECT_EQ(options->sets_dir, "/srv/sets");
  EXPECT_EQ(options->max_batch_records, 50u);
  EXPECT_EQ(options->max_reasons, 3u);
  // Not in the file: defaults.
  EXPECT_EQ(options->metrics_listen, "127.0.0.1:7391");
  EXPECT_EQ(options->max_message_bytes, 64u * 1024u * 1024u);
}

TEST(DaemonOptionsTest, UnknownFieldIsRejectedNamingTheFile) {
  TempDir dir;
  const std::string path = dir.File("plumbd.json");
  ASSERT_TRUE(WriteTextFile(path, R"({"listen_addr": "127.0.0.1:9000"})").ok());
  absl::StatusOr<DaemonOptions> options = LoadDaemonOptions(path);
  ASSERT_FALSE(options.ok());
  EXPECT_EQ(options.status().code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(options.status().message(), HasSubstr(path));
  EXPECT_THAT(options.status().message(), HasSubstr("listen_addr"));
}

TEST(DaemonOptionsTest, MalformedJsonNamesTheFile) {
  TempDir dir;
  const std::string path = dir.File("plumbd.json");
  ASSERT_TRUE(WriteTextFile(path, R"({"listen": )").ok());
  absl::StatusOr<DaemonOptions> options = LoadDaemonOptions(path);
  ASSERT_FALSE(options.ok());
  EXPECT_EQ(options.status().code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(options.status().message(), HasSubstr(path));
}

TEST(DaemonOptionsTest, MissingFileIsNotFoundNamingTheFile) {
  TempDir dir;
  const std::string path = dir.File("absent.json");
  absl::StatusOr<DaemonOptions> options = LoadDaemonOptions(path);
  ASSERT_FALSE(options.ok());
  EXPECT_EQ(options.status().code(), absl::StatusCode::kNotFound);
  EXPECT_THAT(options.status().message(), HasSubstr(path));
}

// The drift policy's alarm settings: defaults, the file over them, and the
// checks health_options applies (INVALID_ARGUMENT naming the field).
TEST(DaemonOptionsTest, AlarmSettingsHaveDefaultsAndOverride) {
  const DaemonOptions defaults = OptionsFromConfig({});
  const DriftPolicyOptions& d = defaults.drift_policy;
  EXPECT_EQ(d.alpha, 0.01);
  EXPECT_EQ(d.release_evaluations, 3u);
  EXPECT_EQ(d.release_ratio, 0.8);
  EXPECT_EQ(d.cusum_upper_odds_ratio, 1.5);
  EXPECT_EQ(d.cusum_lower_odds_ratio, 1.0 / 1.5);
  EXPECT_EQ(d.cusum_slope_alternative, 0.75);
  EXPECT_EQ(d.cusum_in_control_arl, 100000);
  EXPECT_FALSE(d.cusum_disabled);
  EXPECT_EQ(d.record_store_max_records, 1'000'000u);
  EXPECT_EQ(d.outcome_horizon, absl::ZeroDuration());
  EXPECT_EQ(d.max_immature_records, 1'000'000u);

  TempDir dir;
  const std::string path = dir.File("plumbd.json");
  ASSERT_TRUE(WriteTextFile(path, R"({"drift_policy": {
      "alpha": 0.05, "release_evaluations": 5, "release_ratio": 0.5,
      "cusum": {"upper_odds_ratio": 2, "lower_odds_ratio": 0.5,
                "slope_alternative": 0, "in_control_arl_records": 5000},
      "record_store_max_records": 2000, "outcome_horizon_seconds": 86400,
      "max_immature_records": 300}})")
                  .ok());
  absl::StatusOr<DaemonOptions> options = LoadDaemonOptions(path);
  ASSERT_TRUE(options.ok()) << options.status();
  absl::StatusOr<HealthMonitorOptions> health =
      HealthMonitorOptionsFrom(options->windows, options->drift_policy);
  ASSERT_TRUE(health.ok()) << health.status();
  EXPECT_EQ(health->policy.alpha(), 0.05);
  EXPECT_EQ(health->policy.release_evaluations(), 5);
  EXPECT_EQ(health->policy.release_ratio(), 0.5);
  EXPECT_EQ(health->windows.cusum.upper_odds_ratio, 2);
  EXPECT_EQ(health->windows.cusum.lower_odds_ratio, 0.5);
  EXPECT_EQ(health->windows.cusum.slope_alternative, 0);  // no slope chart
  EXPECT_EQ(health->windows.cusum.in_control_arl, 5000);
  EXPECT_EQ(health->windows.record_store_max_records, 2000);
  EXPECT_EQ(health->windows.outcome_horizon, absl::Hours(24));
  EXPECT_EQ(health->windows.max_immature_records, 300);
}

TEST(HealthOptionsTest, BadAlarmSettingsNameTheField) {
  struct Case {
    const char* json;
    const char* message;
  } cases[] = {
      {R"({"alpha": 1.5})", "drift_policy.alpha: must lie in (0, 1)"},
      {R"({"release_ratio": 1.5})", "drift_policy.release_ratio"},
      {R"({"cusum": {"upper_odds_ratio": 0.9}})",
       "drift_policy.cusum.upper_odds_ratio: must be finite and > 1"},
      {R"({"cusum": {"lower_odds_ratio": 2}})",
       "drift_policy.cusum.lower_odds_ratio: must lie in (0, 1)"},
      {R"({"cusum": {"slope_alternative": 1}})",
       "drift_policy.cusum.slope_alternative"},
      {R"({"cusum": {"in_control_arl_records": 1e13}})",
       "drift_policy.cusum.in_control_arl_records"},
      {R"({"record_store_max_records": 5})",
       "drift_policy.record_store_max_records: 5 is fewer than one record "
       "per bucket"},
      {R"({"record_store_max_records": 60000000})",
       "drift_policy.record_store_max_records: 60000000 is more than"},
      {R"({"thresholds": [{"metric": "calibration_in_the_large",
                           "watch": 0.05, "drifting": 0.1}]})",
       "drift_policy.thresholds[0].metric: 'calibration_in_the_large'"},
  };
  for (const Case& c : cases) {
    TempDir dir;
    const std::string path = dir.File("plumbd.json");
    ASSERT_TRUE(
        WriteTextFile(path, absl::StrCat(R"({"drift_policy": )", c.json, "}"))
            .ok());
    absl::StatusOr<DaemonOptions> options = LoadDaemonOptions(path);
    ASSERT_TRUE(options.ok()) << options.status();
    absl::StatusOr<HealthMonitorOptions> health =
        HealthMonitorOptionsFrom(options->windows, options->drift_policy);
    ASSERT_FALSE(health.ok()) << c.json;
    EXPECT_EQ(health.status().code(), absl::StatusCode::kInvalidArgument);
    EXPECT_THAT(health.status().message(), HasSubstr(c.message)) << c.json;
  }
}

TEST(CheckDaemonOptionsTest, TheDefaultsPass) {
  EXPECT_TRUE(CheckDaemonOptions(DaemonOptions()).ok());
}

TEST(CheckDaemonOptionsTest, MessageLimitHasAFloor) {
  DaemonOptions options;
  options.max_message_bytes = 10;
  const absl::Status s = CheckDaemonOptions(options);
  EXPECT_EQ(s.code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(std::string(s.message()),
              HasSubstr("max_message_bytes: 10 is below the floor"));
  options.max_message_bytes = kMinMessageBytes;
  EXPECT_TRUE(CheckDaemonOptions(options).ok());
}

TEST(CheckDaemonOptionsTest, SubjectsNeedMutualTls) {
  DaemonOptions options;
  options.security.mutable_access()->add_subjects()->set_common_name("r-1");
  EXPECT_THAT(std::string(CheckDaemonOptions(options).message()),
              HasSubstr("security.access.subjects: 1 certificate subject"));
  // TLS without a client CA still cannot see a client certificate.
  options.security.mutable_tls()->set_cert_file("s.crt");
  options.security.mutable_tls()->set_key_file("s.key");
  EXPECT_FALSE(CheckDaemonOptions(options).ok());
  options.security.mutable_tls()->set_client_ca_file("ca.crt");
  EXPECT_TRUE(CheckDaemonOptions(options).ok());
}

TEST(CheckDaemonOptionsTest, OpenMetricsOffLoopbackNeedTheFlag) {
  DaemonOptions options;
  for (const char* loopback : {"127.0.0.1:0", "[::1]:9", "localhost:7391"}) {
    options.metrics_listen = loopback;
    EXPECT_TRUE(CheckDaemonOptions(options).ok()) << loopback;
  }
  for (const char* open : {"0.0.0.0:7391", "[::]:7391", "10.1.2.3:7391"}) {
    options.metrics_listen = open;
    const absl::Status s = CheckDaemonOptions(options);
    EXPECT_EQ(s.code(), absl::StatusCode::kInvalidArgument) << open;
    EXPECT_THAT(std::string(s.message()), HasSubstr("metrics_listen:"));
  }
  options.security.set_allow_unauthenticated_metrics_non_loopback(true);
  EXPECT_TRUE(CheckDaemonOptions(options).ok());
  options.security.set_allow_unauthenticated_metrics_non_loopback(false);
  options.security.mutable_metrics_auth()->set_username("scraper");
  EXPECT_TRUE(CheckDaemonOptions(options).ok());
}

}  // namespace
}  // namespace plumbline::daemon
