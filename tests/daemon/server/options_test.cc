// File: tests/daemon/server/options_test.cc
#include "daemon/server/options.h"

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
