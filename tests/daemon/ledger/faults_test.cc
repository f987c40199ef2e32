// File: tests/daemon/ledger/faults_test.cc
//
// A failing disk under a real ledger file, through the I/O seam
// (daemon/ledger/env.h, tests/testing/faulty_env.h): for each fault, what
// the caller gets (code and message), that nothing acknowledged is lost
// (the file is reopened and counted), and how the ledger recovers when the
// fault clears. Also the file-level refusals: a ledger deleted or replaced
// while plumbd runs, an empty file, a file that cannot be written.
#include <sys/stat.h>
#include <unistd.h>

#include <atomic>
#include <cerrno>
#include <cstdlib>
#include <filesystem>
#include <memory>
#include <string>
#include <thread>
#include <vector>

#include "absl/strings/str_cat.h"
#include "daemon/ledger/sqlite_ledger.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/testing/faulty_env.h"
#include "tests/testing/process.h"
#include "tests/testing/status_matchers.h"

namespace plumbline::daemon {
namespace {

using ::plumbline::testing::StatusIs;
using testing::FaultyEnv;
using ::testing::HasSubstr;

class LedgerFaultsTest : public ::testing::Test {
 protected:
  void SetUp() override {
    options_.path = dir_.File("ledger.db");
    options_.env = &env_;
  }

  std::unique_ptr<Ledger> Open() {
    auto ledger = SqliteLedger::Open(options_);
    EXPECT_TRUE(ledger.ok()) << ledger.status();
    return ledger.ok() ? *std::move(ledger) : nullptr;
  }

  static std::vector<ScoreEntry> Scores(const std::string& prefix, int n) {
    std::vector<ScoreEntry> out;
    for (int i = 0; i < n; ++i) {
      out.push_back(ScoreEntry{absl::StrCat(prefix, "-", i), "courier", "v1",
                               ScoreRole::kActive, absl::FromUnixSeconds(1000),
                               0.5, 0.6, R"({"distance_km":3})"});
    }
    return out;
  }

  // Rows whose record id starts with `prefix`, read from the file by a
  // fresh connection (the default env: no faults).
  int64_t Count(const std::string& prefix) {
    auto db = SqliteDb::Open(options_.path);
    EXPECT_TRUE(db.ok()) << db.status();
    if (!db.ok()) return -1;
    auto n = (*db)->QueryInt64(absl::StrCat(
        "SELECT COUNT(*) FROM scores WHERE record_id LIKE '", prefix, "-%'"));
    EXPECT_TRUE(n.ok()) << n.status();
    return n.ok() ? *n : -1;
  }

  testing::TempDir dir_;
  FaultyEnv env_;
  LedgerOptions options_;
};

TEST_F(LedgerFaultsTest, AFailedFsyncStopsAcknowledgementForGood) {
  auto ledger = Open();
  ASSERT_NE(ledger, nullptr);
  ASSERT_OK(ledger->AppendScores(Scores("before", 5)));
  env_.FailSyncs(EIO);
  // The commit's fsync fails: not acknowledged, and the ledger stops.
  EXPECT_THAT(
      ledger->AppendScores(Scores("during", 5)),
      StatusIs(absl::StatusCode::kUnavailable, HasSubstr("fdatasync failed")));
  EXPECT_TRUE(ledger->stats().failed);
  EXPECT_EQ(ledger->stats().write_failures.at("unavailable"), 1);
  // The fault clears, but a page the kernel failed to write may be gone
  // for good: nothing more is acknowledged in this process.
  env_.Clear();
  EXPECT_THAT(ledger->AppendScores(Scores("after", 5)),
              StatusIs(absl::StatusCode::kUnavailable,
                       HasSubstr("restarted on a healthy ledger")));
  ledger.reset();
  // The restart: what was acknowledged is there, what was refused after
  // the failure is not, and the ledger takes writes again.
  ledger = Open();
  ASSERT_NE(ledger, nullptr);
  EXPECT_EQ(Count("before"), 5);
  EXPECT_EQ(Count("after"), 0);
  ASSERT_OK(ledger->AppendScores(Scores("restarted", 5)));
  EXPECT_EQ(Count("restarted"), 5);
}

TEST_F(LedgerFaultsTest, ADiskFullIsResourceExhaustedAndClears) {
  auto ledger = Open();
  ASSERT_NE(ledger, nullptr);
  ASSERT_OK(ledger->AppendScores(Scores("before", 5)));
  env_.FailWritesAfter(0, ENOSPC);
  EXPECT_THAT(
      ledger->AppendScores(Scores("full", 300)),
      StatusIs(absl::StatusCode::kResourceExhausted, HasSubstr("full")));
  EXPECT_EQ(ledger->stats().write_failures.at("disk_full"), 1);
  EXPECT_FALSE(ledger->stats().failed) << "a full disk is not fatal";
  // Space comes back: the same call succeeds (nothing of it was written).
  env_.Clear();
  ASSERT_OK_AND_ASSIGN(auto written, ledger->AppendScores(Scores("full", 300)));
  EXPECT_FALSE(written[0].repeat);
  ledger.reset();
  EXPECT_EQ(Count("before"), 5);
  EXPECT_EQ(Count("full"), 300);
}

TEST_F(LedgerFaultsTest, AnIoErrorOnWriteIsUnavailableAndClears) {
  auto ledger = Open();
  ASSERT_NE(ledger, nullptr);
  env_.FailWritesAfter(0, EIO);
  EXPECT_THAT(
      ledger->AppendScores(Scores("io", 10)),
      StatusIs(absl::StatusCode::kUnavailable, HasSubstr("disk I/O error")));
  env_.Clear();
  ASSERT_OK(ledger->AppendScores(Scores("io", 10)));
  ledger.reset();
  EXPECT_EQ(Count("io"), 10);
}

TEST_F(LedgerFaultsTest, AReadErrorIsUnavailableNamingTheCauseAndClears) {
  {
    auto ledger = Open();
    ASSERT_NE(ledger, nullptr);
    ASSERT_OK(ledger->AppendScores(Scores("r", 200)));
  }
  // A fresh process: no page of the file is cached yet.
  auto ledger = Open();
  ASSERT_NE(ledger, nullptr);
  env_.FailReads(EIO);
  absl::Status read = ledger->ForEachScore(
      "courier", 1000, absl::InfinitePast(), [](const ScoreEntry&) {});
  EXPECT_THAT(read, StatusIs(absl::StatusCode::kUnavailable,
                             HasSubstr("Input/output error")));
  // An outcome cannot be joined to its score: the call says why.
  EXPECT_THAT(ledger->ReportOutcomes({{"r-7", 1}}),
              StatusIs(absl::StatusCode::kUnavailable));
  env_.Clear();
  int64_t seen = 0;
  ASSERT_OK(ledger->ForEachScore("courier", 1000, absl::InfinitePast(),
                                 [&](const ScoreEntry&) { ++seen; }));
  EXPECT_EQ(seen, 200);
  ASSERT_OK_AND_ASSIGN(auto results, ledger->ReportOutcomes({{"r-7", 1}}));
  EXPECT_OK(results[0].status);
}

TEST_F(LedgerFaultsTest, ASlowDiskPushesBackAndLosesNothing) {
  options_.queue_capacity_rows = 200;
  auto ledger = Open();
  ASSERT_NE(ledger, nullptr);
  env_.SlowWrites(absl::Milliseconds(2));
  // Eight callers, each 40 calls of 20 rows, against a queue of 200 rows:
  // some calls are refused (back-pressure), none is lost.
  std::atomic<int> acknowledged{0}, refused{0}, other{0};
  std::vector<std::thread> callers;
  for (int t = 0; t < 8; ++t) {
    callers.emplace_back([&, t] {
      for (int c = 0; c < 40; ++c) {
        auto written =
            ledger->AppendScores(Scores(absl::StrCat("slow", t, "x", c), 20));
        if (written.ok()) {
          ++acknowledged;
        } else if (written.status().code() ==
                   absl::StatusCode::kResourceExhausted) {
          ++refused;
        } else {
          ++other;
        }
      }
    });
  }
  for (std::thread& c : callers) c.join();
  EXPECT_EQ(other.load(), 0);
  EXPECT_EQ(acknowledged.load() + refused.load(), 8 * 40);
  ledger.reset();
  env_.Clear();
  auto db = SqliteDb::Open(options_.path);
  ASSERT_TRUE(db.ok());
  EXPECT_EQ(*(*db)->QueryInt64("SELECT COUNT(*) FROM scores"),
            acknowledged.load() * 20);
}

TEST_F(LedgerFaultsTest, ALedgerDeletedWhileRunningStopsAcknowledgement) {
  auto ledger = Open();
  ASSERT_NE(ledger, nullptr);
  ASSERT_OK(ledger->AppendScores(Scores("before", 5)));
  ASSERT_EQ(::unlink(options_.path.c_str()), 0);
  EXPECT_THAT(ledger->AppendScores(Scores("after", 5)),
              StatusIs(absl::StatusCode::kUnavailable, HasSubstr("is gone")));
  EXPECT_TRUE(ledger->stats().failed);
  EXPECT_THAT(ledger->ReportOutcomes({{"before-1", 1}}),
              StatusIs(absl::StatusCode::kUnavailable));
}

TEST_F(LedgerFaultsTest, ALedgerReplacedWhileRunningStopsAcknowledgement) {
  auto ledger = Open();
  ASSERT_NE(ledger, nullptr);
  ASSERT_OK(ledger->AppendScores(Scores("before", 5)));
  // Another file moved over the path (a restore gone wrong, say).
  ASSERT_OK(testing::WriteTextFile(dir_.File("other.db"), "x"));
  ASSERT_EQ(::rename(dir_.File("other.db").c_str(), options_.path.c_str()), 0);
  EXPECT_THAT(ledger->AppendScores(Scores("after", 5)),
              StatusIs(absl::StatusCode::kUnavailable,
                       HasSubstr("was replaced by another file")));
}

TEST_F(LedgerFaultsTest, AnEmptyLedgerFileIsRefusedNotTakenAsNew) {
  ASSERT_OK(testing::WriteTextFile(options_.path, ""));
  EXPECT_THAT(SqliteLedger::Open(options_),
              StatusIs(absl::StatusCode::kFailedPrecondition,
                       HasSubstr("exists but is empty (0 bytes)")));
}

TEST_F(LedgerFaultsTest, ALedgerThatCannotBeWrittenIsRefusedAtStartup) {
  {
    auto ledger = Open();
    ASSERT_NE(ledger, nullptr);
    ASSERT_OK(ledger->AppendScores(Scores("kept", 2)));
  }
  // As root a mode bit does not stop a write: the immutable attribute does
  // (the case seen: chattr +i). As anyone else, mode 0444 does.
  const bool root = ::geteuid() == 0;
  const std::string path = options_.path;
  if (root) {
    ASSERT_EQ(std::system(absl::StrCat("chattr +i '", path, "'").c_str()), 0)
        << "chattr is needed for this test (Debian e2fsprogs, ext4)";
  } else {
    ASSERT_EQ(::chmod(path.c_str(), 0444), 0);
  }
  absl::StatusOr<std::unique_ptr<Ledger>> ledger = SqliteLedger::Open(options_);
  if (root) std::system(absl::StrCat("chattr -i '", path, "'").c_str());
  EXPECT_THAT(ledger, StatusIs(absl::StatusCode::kFailedPrecondition,
                               HasSubstr("cannot be written")));
}

}  // namespace
}  // namespace plumbline::daemon
