// File: tests/daemon/daemon_options_test.cc
#include "daemon/daemon_options.h"

#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/daemon/process.h"

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
  EXPECT_EQ(options.ledger_path, "./var/ledger.db");
  EXPECT_EQ(options.max_batch_records, 10000u);
  EXPECT_EQ(options.max_reasons, 20u);
  EXPECT_EQ(options.max_message_bytes, 64u * 1024u * 1024u);
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

}  // namespace
}  // namespace plumbline::daemon
