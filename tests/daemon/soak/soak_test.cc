// File: tests/daemon/soak/soak_test.cc
//
// The soak: the real plumbd under a bounded mixed load (soak_load.h:
// Score, ScoreBatch named and dense, ReportOutcomes, set files + SIGHUP,
// Activate, Rollback, Refit) is killed with SIGKILL at random moments and
// restarted on the same ledger, again and again, for PLUMBLINE_SOAK_SECONDS
// (ctest: 75; `ops/soak 600` for ten minutes). At the end plumbd is stopped
// with SIGTERM and the ledger is read with SQLite: every score and outcome
// a call acknowledged is there (a score by record id and set, with the
// probability the caller got; an outcome with its label),
// `PRAGMA integrity_check` says ok, plumbd's resident memory stayed under
// kMaxRssMib (sampled from /proc/PID/status every 100 ms), and no call got
// a code outside SoakCodeAllowed. The figures are printed as a table.
//
// PLUMBLINE_SOAK_SEED fixes the load's and the kills' random choices (the
// seed is printed; timing still differs from run to run). No timing is
// asserted.
#include <signal.h>

#include <algorithm>
#include <cstdlib>
#include <filesystem>
#include <iostream>
#include <memory>
#include <random>
#include <string>

#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/time/clock.h"
#include "absl/time/time.h"
#include "daemon/ledger/sqlite_db.h"
#include "gtest/gtest.h"
#include "tests/daemon/soak/soak_load.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using testing::PlumbdProcess;
using testing::SoakCall;
using testing::TempDir;

// Resident memory plumbd must stay under, in MiB (README, "Reliability",
// has the largest measured). An ASan-built plumbd (this test built in the
// sanitizer tree runs that tree's plumbd) keeps shadow memory and a
// quarantine of freed blocks, hence its own bound.
// PLUMBLINE_SOAK_MAX_RSS_MIB overrides either.
constexpr int64_t kMaxRssMib = testing::kBuiltWithAddressSanitizer ? 1024 : 256;
// plumbd lives between these many seconds from one kill to the next.
constexpr int kMinLifeMs = 4000;
constexpr int kMaxLifeMs = 14000;

int64_t EnvInt(const char* name, int64_t fallback) {
  const char* text = std::getenv(name);
  int64_t value = 0;
  return text != nullptr && absl::SimpleAtoi(text, &value) ? value : fallback;
}

std::string ConfigJson(const std::string& sets, const std::string& ledger) {
  // Refits take the last 5000 labelled records once 300 are there, so a
  // Refit call finishes in well under its deadline. A restart refills the
  // time windows with every row of their span (daemon/health/rebuild.h):
  // with the default day, a ten-minute soak's restarts would read the whole
  // ledger and, late in the run, take longer than PlumbdProcess waits
  // (README, "Reliability", has the measured restart times).
  return absl::StrCat(R"({"sets_dir": ")", sets, R"(", "ledger_path": ")",
                      ledger, R"(",
      "windows": {"time_seconds": 120},
      "refit": {"min_labelled": 300, "window_labelled": 5000}})");
}

struct LedgerContents {
  absl::flat_hash_map<std::string, double> scores;  // active-role, by id
  absl::flat_hash_map<std::string, int> outcomes;
  int64_t score_rows = 0;  // every role
  std::string integrity;
};

LedgerContents ReadLedger(const std::string& path) {
  LedgerContents out;
  absl::StatusOr<std::unique_ptr<SqliteDb>> db = SqliteDb::Open(path);
  EXPECT_TRUE(db.ok()) << db.status();
  if (!db.ok()) return out;
  // A score the caller got back is the set's primary score of its id.
  auto q = (*db)->Prepare(absl::StrCat(
      "SELECT s.record_id, s.probability FROM scores s JOIN set_names n"
      " ON n.id = s.primary_set WHERE n.name = '",
      testing::kSoakSet, "'"));
  EXPECT_TRUE(q.ok()) << q.status();
  while (q.ok() && *(*q)->Step()) {
    out.scores[(*q)->ColumnText(0)] = (*q)->ColumnDouble(1);
  }
  q = (*db)->Prepare("SELECT record_id, label FROM outcomes");
  while (q.ok() && *(*q)->Step()) {
    out.outcomes[(*q)->ColumnText(0)] = static_cast<int>((*q)->ColumnInt64(1));
  }
  absl::StatusOr<int64_t> rows =
      (*db)->QueryInt64("SELECT COUNT(*) FROM scores");
  out.score_rows = rows.ok() ? *rows : -1;
  q = (*db)->Prepare("PRAGMA integrity_check");
  if (q.ok() && *(*q)->Step()) out.integrity = (*q)->ColumnText(0);
  return out;
}

TEST(SoakTest, AcknowledgedCallsSurviveKillsReloadsAndRegistryChanges) {
  const absl::Duration run =
      absl::Seconds(EnvInt("PLUMBLINE_SOAK_SECONDS", 75));
  const uint64_t seed = static_cast<uint64_t>(
      EnvInt("PLUMBLINE_SOAK_SEED", absl::ToUnixMicros(absl::Now()) % 100000));
  const int64_t max_rss_mib = EnvInt("PLUMBLINE_SOAK_MAX_RSS_MIB", kMaxRssMib);
  std::cout << "soak: " << absl::ToInt64Seconds(run) << " s, seed " << seed
            << " (PLUMBLINE_SOAK_SEED)\n";

  TempDir dir;
  std::filesystem::create_directory(dir.File("sets"));
  ASSERT_TRUE(
      testing::WriteTextFile(dir.File("sets/courier.json"),
                             testing::CourierSetJson(testing::kSoakSet, "f0"))
          .ok());
  const std::string ledger = dir.File("var/ledger.db");
  ASSERT_TRUE(testing::WriteTextFile(dir.File("plumbd.json"),
                                     ConfigJson(dir.File("sets"), ledger))
                  .ok());
  const std::vector<std::string> args = {"--config", dir.File("plumbd.json")};

  int generation = 0;
  absl::Duration slowest_start;
  // Each daemon in its own directory, so every log is kept for a failure.
  auto start = [&]() {
    const std::string work = dir.File(absl::StrCat("run-", ++generation));
    std::filesystem::create_directory(work);
    const absl::Time begin = absl::Now();
    auto started = PlumbdProcess::Start(work, args);
    slowest_start = std::max(slowest_start, absl::Now() - begin);
    return started;
  };
  absl::StatusOr<std::unique_ptr<PlumbdProcess>> plumbd = start();
  ASSERT_TRUE(plumbd.ok()) << plumbd.status();

  testing::SoakEndpoint endpoint;
  testing::SoakTally tally;
  endpoint.Set((*plumbd)->addr(), (*plumbd)->pid());
  testing::SoakLoad load(&endpoint, &tally,
                         {.sets_dir = dir.File("sets"), .seed = seed});
  load.Start();

  std::mt19937_64 random(seed);
  int kills = 0;
  int64_t max_rss_kib = 0;
  const absl::Time end = absl::Now() + run;
  while (absl::Now() < end) {
    const absl::Time kill_at = std::min(
        end,
        absl::Now() + absl::Milliseconds(kMinLifeMs +
                                         random() % (kMaxLifeMs - kMinLifeMs)));
    while (absl::Now() < kill_at) {
      max_rss_kib = std::max(max_rss_kib, testing::RssKib((*plumbd)->pid()));
      absl::SleepFor(absl::Milliseconds(100));
    }
    if (absl::Now() >= end) break;
    endpoint.Clear();
    (*plumbd)->Signal(SIGKILL);
    absl::StatusOr<int> exit_status = (*plumbd)->WaitForExit();
    ASSERT_TRUE(exit_status.ok()) << exit_status.status();
    ASSERT_EQ(*exit_status, -SIGKILL) << (*plumbd)->Log();
    ++kills;
    plumbd = start();
    ASSERT_TRUE(plumbd.ok()) << "restart " << kills << ": " << plumbd.status();
    endpoint.Set((*plumbd)->addr(), (*plumbd)->pid());
  }
  load.Stop();
  endpoint.Clear();
  (*plumbd)->Signal(SIGTERM);
  absl::StatusOr<int> exit_status = (*plumbd)->WaitForExit();
  ASSERT_TRUE(exit_status.ok()) << exit_status.status();
  EXPECT_EQ(*exit_status, 0) << (*plumbd)->Log();

  // The calls, by kind and code.
  const auto codes = tally.Codes();
  std::cout << absl::StrFormat("%-20s %10s  %s\n", "call", "OK", "other codes");
  for (const auto& [kind, by_code] : codes) {
    std::string others;
    int64_t ok = 0;
    for (const auto& [code, n] : by_code) {
      if (code == 0) {
        ok = n;
      } else {
        absl::StrAppend(&others, " code ", code, ": ", n, ";");
      }
      EXPECT_TRUE(
          testing::SoakCodeAllowed(kind, static_cast<grpc::StatusCode>(code)))
          << testing::SoakCallName(kind) << " got code " << code << " " << n
          << " times";
    }
    std::cout << absl::StrFormat("%-20s %10d %s\n", testing::SoakCallName(kind),
                                 ok, others);
  }
  for (SoakCall kind : {SoakCall::kScore, SoakCall::kBatchNamed,
                        SoakCall::kBatchDense, SoakCall::kOutcomes}) {
    EXPECT_GT(codes.count(kind) ? codes.at(kind).count(0) : 0, 0u)
        << testing::SoakCallName(kind) << " never acknowledged";
  }

  // Everything acknowledged is in the ledger.
  const auto scores = tally.Scores();
  const auto outcomes = tally.Outcomes();
  const LedgerContents contents = ReadLedger(ledger);
  EXPECT_EQ(contents.integrity, "ok");
  int64_t lost_scores = 0;
  for (const auto& [id, probability] : scores) {
    auto it = contents.scores.find(id);
    if (it == contents.scores.end() || it->second != probability) {
      if (++lost_scores <= 5) {
        ADD_FAILURE() << "acknowledged score lost or changed: " << id;
      }
    }
  }
  int64_t lost_outcomes = 0;
  for (const auto& [id, label] : outcomes) {
    auto it = contents.outcomes.find(id);
    if (it == contents.outcomes.end() || it->second != label) {
      if (++lost_outcomes <= 5) {
        ADD_FAILURE() << "acknowledged outcome lost or changed: " << id;
      }
    }
  }
  EXPECT_EQ(lost_scores, 0) << "of " << scores.size();
  EXPECT_EQ(lost_outcomes, 0) << "of " << outcomes.size();
  EXPECT_GE(kills, 2);
  EXPECT_LT(max_rss_kib, max_rss_mib * 1024);
  std::cout << absl::StrFormat(
      "kills survived %d; acknowledged scores %d and outcomes %d, all in the "
      "ledger (%d score rows, every role); retries answered as repeats %d; "
      "integrity_check %s; max VmRSS %.1f MiB (bound %d MiB); slowest "
      "start to ready %s\n",
      kills, scores.size(), outcomes.size(), contents.score_rows,
      tally.repeats(), contents.integrity,
      static_cast<double>(max_rss_kib) / 1024.0, max_rss_mib,
      absl::FormatDuration(absl::Trunc(slowest_start, absl::Milliseconds(1))));
}

}  // namespace
}  // namespace plumbline::daemon
