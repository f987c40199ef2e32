#include <unistd.h>

#include <atomic>
#include <filesystem>
#include <string>
#include <thread>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/time/clock.h"
#include "daemon/ledger/sqlite_ledger.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"
#include "tests/testing/status_matchers.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;

class LedgerTest : public ::testing::Test {
 protected:
  void SetUp() override {
    // A directory of its own (mkdtemp): tests of other checkouts may run
    // at the same time, and a ledger takes a lock.
    dir_ = std::filesystem::path(temp_.path());
    options_.path = (dir_ / "sub" / "ledger.db").string();
  }

  std::unique_ptr<Ledger> OpenLedger() {
    auto ledger = SqliteLedger::Open(options_);
    EXPECT_TRUE(ledger.ok()) << ledger.status();
    return ledger.ok() ? *std::move(ledger) : nullptr;
  }

  static ScoreEntry Score(const std::string& id, double log_odds = 0.5) {
    return ScoreEntry{id,
                      "courier",
                      "v1",
                      ScoreRole::kActive,
                      absl::FromUnixSeconds(1000),
                      log_odds,
                      0.6,
                      R"({"distance_km":3})"};
  }

  // `n` scores with ids "<prefix>-0" .. "<prefix>-<n-1>".
  static std::vector<ScoreEntry> Scores(const std::string& prefix, int n) {
    std::vector<ScoreEntry> out;
    for (int i = 0; i < n; ++i)
      out.push_back(Score(absl::StrCat(prefix, "-", i)));
    return out;
  }

  // Another connection holding the write lock: the writer waits on SQLite's
  // busy timeout and what is queued stays queued until "COMMIT" on it.
  std::unique_ptr<SqliteDb> HoldWriteLock() {
    auto blocker = SqliteDb::Open(options_.path);
    EXPECT_TRUE(blocker.ok()) << blocker.status();
    if (!blocker.ok()) return nullptr;
    EXPECT_TRUE((*blocker)->Exec("BEGIN IMMEDIATE").ok());
    return *std::move(blocker);
  }

  // Reports `outcomes` from another thread while `blocker` holds the write
  // lock; releases it once `queued` rows wait (the outcomes' job among
  // them), and returns what ReportOutcomes answered.
  static absl::StatusOr<std::vector<OutcomeResult>> ReportBehindLock(
      Ledger& ledger, SqliteDb& blocker, std::vector<OutcomeEntry> outcomes,
      int64_t queued) {
    absl::StatusOr<std::vector<OutcomeResult>> results;
    std::thread reporter([&] { results = ledger.ReportOutcomes(outcomes); });
    EXPECT_TRUE(testing::PollUntil([&] {
      return ledger.stats().queued_rows >= queued;
    })) << "the rows never queued behind the lock";
    EXPECT_TRUE(blocker.Exec("COMMIT").ok());
    reporter.join();
    return results;
  }

  int64_t Count(const std::string& table) {
    auto db = SqliteDb::Open(options_.path);
    EXPECT_TRUE(db.ok());
    auto n = (*db)->QueryInt64(absl::StrCat("SELECT COUNT(*) FROM ", table));
    EXPECT_TRUE(n.ok()) << n.status();
    return n.ok() ? *n : -1;
  }

  testing::TempDir temp_;
  std::filesystem::path dir_;
  LedgerOptions options_;
};

TEST_F(LedgerTest, CreatesAWalLedgerWithTheCurrentSchema) {
  auto ledger = OpenLedger();
  ASSERT_NE(ledger, nullptr);
  auto db = SqliteDb::Open(options_.path);
  ASSERT_TRUE(db.ok());
  auto st = (*db)->Prepare("PRAGMA journal_mode");
  ASSERT_TRUE(st.ok());
  ASSERT_TRUE(*(*st)->Step());
  EXPECT_EQ((*st)->ColumnText(0), "wal");
  EXPECT_EQ(*(*db)->QueryInt64("PRAGMA user_version"),
            SqliteLedger::SchemaVersion());
}

TEST_F(LedgerTest, OutcomesJoinToScoresWithTheDocumentedCodes) {
  auto ledger = OpenLedger();
  ASSERT_TRUE(ledger->AppendScores({Score("a", 0.25), Score("b")}).ok());
  auto results = ledger->ReportOutcomes({
      {"a", 1, absl::FromUnixSeconds(2000)},
      {"a", 1, absl::FromUnixSeconds(2001)},  // same label again: idempotent
      {"a", 0, absl::FromUnixSeconds(2002)},  // different label: refused
      {"zzz", 1, absl::FromUnixSeconds(2003)},
      {"b", 2, absl::FromUnixSeconds(2004)},
      {"", 1, absl::FromUnixSeconds(2005)},
  });
  ASSERT_TRUE(results.ok()) << results.status();
  ASSERT_EQ(results->size(), 6u);
  const auto& r = *results;
  EXPECT_TRUE(r[0].status.ok());
  EXPECT_FALSE(r[0].repeat);
  ASSERT_EQ(r[0].labelled.size(), 1u);
  EXPECT_EQ(r[0].labelled[0].log_odds, 0.25);
  EXPECT_EQ(r[0].labelled[0].label, 1);
  EXPECT_EQ(r[0].labelled[0].set_name, "courier");
  EXPECT_EQ(r[0].labelled[0].set_version, "v1");
  EXPECT_EQ(r[0].labelled[0].role, ScoreRole::kActive);
  EXPECT_EQ(r[0].labelled[0].scored_at, absl::FromUnixSeconds(1000));
  // Not read for the monitor (ledger.h); ForEachLabelled gives them.
  EXPECT_EQ(r[0].labelled[0].features, "");
  EXPECT_TRUE(r[1].status.ok());
  EXPECT_TRUE(r[1].repeat);
  EXPECT_TRUE(r[1].labelled.empty());
  EXPECT_EQ(r[2].status.code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_THAT(r[2].status.message(), HasSubstr("already has outcome 1"));
  EXPECT_EQ(r[3].status.code(), absl::StatusCode::kNotFound);
  EXPECT_THAT(r[3].status.message(), HasSubstr("'zzz'"));
  EXPECT_EQ(r[4].status.code(), absl::StatusCode::kInvalidArgument);
  EXPECT_EQ(r[5].status.code(), absl::StatusCode::kInvalidArgument);
  EXPECT_EQ(Count("outcomes"), 1);
}

TEST_F(LedgerTest, SurvivesReopenAndReadsLabelledNewestFirst) {
  {
    auto ledger = OpenLedger();
    std::vector<ScoreEntry> scores;
    for (int i = 0; i < 20; ++i)
      scores.push_back(Score(absl::StrCat("r", i), i));
    ASSERT_TRUE(ledger->AppendScores(scores).ok());
    std::vector<OutcomeEntry> outcomes;
    for (int i = 0; i < 10; ++i) {
      outcomes.push_back(
          {absl::StrCat("r", i), i % 2, absl::FromUnixSeconds(5000 + i)});
    }
    ASSERT_TRUE(ledger->ReportOutcomes(outcomes).ok());
  }
  auto ledger = OpenLedger();
  std::vector<double> seen;
  ASSERT_TRUE(ledger
                  ->ForEachLabelled("courier", 3, absl::InfinitePast(),
                                    [&](const LabelledScore& s) {
                                      seen.push_back(s.log_odds);
                                    })
                  .ok());
  EXPECT_EQ(seen, (std::vector<double>{9, 8, 7}));
  std::string features;
  ASSERT_TRUE(ledger
                  ->ForEachLabelled(
                      "courier", 1, absl::InfinitePast(),
                      [&](const LabelledScore& s) { features = s.features; })
                  .ok());
  EXPECT_EQ(features, R"({"distance_km":3})");
  int scores = 0;
  ASSERT_TRUE(ledger
                  ->ForEachScore("courier", 100, absl::InfinitePast(),
                                 [&](const ScoreEntry&) { ++scores; })
                  .ok());
  EXPECT_EQ(scores, 20);
}

TEST_F(LedgerTest, FullQueueIsResourceExhaustedNotADrop) {
  options_.queue_capacity_rows = 10;
  auto ledger = OpenLedger();
  absl::Status st = ledger->AppendScores(Scores("x", 11)).status();
  EXPECT_EQ(st.code(), absl::StatusCode::kResourceExhausted);
  EXPECT_THAT(st.message(), HasSubstr("queue capacity of 10 rows"));
  EXPECT_TRUE(ledger->AppendScores(Scores("y", 10)).ok());
  EXPECT_EQ(Count("scores"), 10);
}

TEST_F(LedgerTest, QueueHoldingRowsNotYetCommittedRefusesMore) {
  options_.queue_capacity_rows = 10;
  options_.ack = LedgerOptions::Ack::kQueued;
  auto ledger = OpenLedger();
  ASSERT_NE(ledger, nullptr);
  // The writer cannot commit the first 3 rows, so they stay counted
  // against the capacity.
  auto blocker = HoldWriteLock();
  ASSERT_NE(blocker, nullptr);
  ASSERT_TRUE(ledger->AppendScores(Scores("q", 3)).ok());
  absl::Status st = ledger->AppendScores(Scores("r", 8)).status();
  EXPECT_EQ(st.code(), absl::StatusCode::kResourceExhausted);
  EXPECT_THAT(st.message(),
              HasSubstr("queue is full (3 rows waiting, capacity 10)"));
  ASSERT_TRUE(blocker->Exec("COMMIT").ok());
}

TEST_F(LedgerTest, MigratesAVersion1LedgerKeepingItsRows) {
  // A ledger as the first release wrote it (schema version 1).
  std::filesystem::create_directories(
      std::filesystem::path(options_.path).parent_path());
  {
    auto db = SqliteDb::Open(options_.path);
    ASSERT_TRUE(db.ok());
    ASSERT_TRUE(
        (*db)
            ->Exec("CREATE TABLE scores(id INTEGER PRIMARY KEY, record_id TEXT "
                   "NOT NULL,"
                   " set_name TEXT NOT NULL, set_version TEXT NOT NULL, role "
                   "TEXT NOT NULL,"
                   " scored_at_us INTEGER NOT NULL, log_odds REAL NOT NULL,"
                   " probability REAL NOT NULL, features TEXT NOT NULL);"
                   "CREATE INDEX scores_by_record ON scores(record_id);"
                   "CREATE INDEX scores_by_set_time ON scores(set_name, "
                   "scored_at_us);"
                   "CREATE TABLE outcomes(record_id TEXT PRIMARY KEY,"
                   " label INTEGER NOT NULL CHECK (label IN (0, 1)),"
                   " observed_at_us INTEGER NOT NULL, reported_at_us INTEGER "
                   "NOT NULL);"
                   "CREATE INDEX outcomes_by_time ON outcomes(observed_at_us);"
                   "INSERT INTO scores VALUES (1, 'old', 'courier', 'v0', "
                   "'active', 5, 0.1,"
                   " 0.52, '{}');"
                   "INSERT INTO outcomes VALUES ('old', 1, 7, 8);"
                   "PRAGMA user_version = 1;")
            .ok());
  }
  auto ledger = OpenLedger();
  ASSERT_NE(ledger, nullptr);
  auto db = SqliteDb::Open(options_.path);
  EXPECT_EQ(*(*db)->QueryInt64("PRAGMA user_version"),
            SqliteLedger::SchemaVersion());
  EXPECT_EQ(*(*db)->QueryInt64(
                "SELECT COUNT(*) FROM sqlite_schema WHERE name = 'outcomes'"
                " AND sql LIKE '%WITHOUT ROWID%'"),
            1);
  EXPECT_EQ(
      *(*db)->QueryInt64(
          "SELECT COUNT(*) FROM sqlite_schema WHERE name = 'outcomes_by_time'"),
      1);
  // The old score, as the view shows it and as ForEachScore reads it.
  EXPECT_EQ(*(*db)->QueryInt64(
                "SELECT COUNT(*) FROM ledger_scores WHERE record_id = 'old'"
                " AND set_name = 'courier' AND set_version = 'v0'"
                " AND role = 'active' AND features = '{}'"),
            1);
  std::vector<ScoreEntry> read;
  ASSERT_TRUE(
      ledger
          ->ForEachScore("courier", 10, absl::InfinitePast(),
                         [&](const ScoreEntry& e) { read.push_back(e); })
          .ok());
  ASSERT_EQ(read.size(), 1u);
  EXPECT_EQ(read[0].set_version, "v0");
  EXPECT_EQ(read[0].log_odds, 0.1);
  // The old outcome is still there: the same label is a repeat.
  auto results = ledger->ReportOutcomes({{"old", 1, absl::FromUnixSeconds(9)}});
  ASSERT_TRUE(results.ok());
  EXPECT_TRUE((*results)[0].repeat);
  EXPECT_EQ(*(*db)->QueryInt64("SELECT observed_at_us FROM outcomes"), 7);
}

TEST_F(LedgerTest, MigratesAVersion3LedgerDroppingTheSetTimeIndex) {
  // A version 3 ledger: today's tables plus the index scores_by_set_time
  // that version 4 drops.
  {
    auto ledger = OpenLedger();
    ASSERT_NE(ledger, nullptr);
    ASSERT_TRUE(
        ledger->AppendScores({Score("kept-1"), Score("kept-2", 0.7)}).ok());
  }
  {
    auto db = SqliteDb::Open(options_.path);
    ASSERT_TRUE(db.ok());
    ASSERT_TRUE((*db)
                    ->Exec("CREATE INDEX scores_by_set_time ON scores(set_id, "
                           "scored_at_us);"
                           // Nor what schema 5 adds.
                           "DROP INDEX scores_by_record; DROP TABLE set_names;"
                           "ALTER TABLE scores DROP COLUMN primary_set;"
                           "CREATE INDEX scores_by_record ON scores(record_id);"
                           // Nor what schema 7 adds.
                           "DROP VIEW ledger_scores;"
                           "ALTER TABLE score_sets DROP COLUMN layout;"
                           "CREATE VIEW ledger_scores AS SELECT s.id"
                           " FROM scores s;"
                           // Nor what schema 8 adds.
                           "DROP INDEX outcomes_by_seq;"
                           "ALTER TABLE outcomes DROP COLUMN seq;"
                           "DROP TABLE health_snapshots;"
                           "PRAGMA user_version = 3;")
                    .ok());
  }
  auto ledger = OpenLedger();
  ASSERT_NE(ledger, nullptr);
  auto db = SqliteDb::Open(options_.path);
  EXPECT_EQ(*(*db)->QueryInt64("PRAGMA user_version"),
            SqliteLedger::SchemaVersion());
  EXPECT_EQ(*(*db)->QueryInt64("SELECT COUNT(*) FROM sqlite_schema"
                               " WHERE name = 'scores_by_set_time'"),
            0);
  // The rows are still there and read newest first.
  std::vector<ScoreEntry> read;
  ASSERT_TRUE(
      ledger
          ->ForEachScore("courier", 10, absl::InfinitePast(),
                         [&](const ScoreEntry& e) { read.push_back(e); })
          .ok());
  ASSERT_EQ(read.size(), 2u);
  EXPECT_EQ(read[0].record_id, "kept-2");
  EXPECT_EQ(read[1].record_id, "kept-1");
}

TEST_F(LedgerTest, ForEachScoreKeepsToItsSetTimeAndLimit) {
  auto ledger = OpenLedger();
  ASSERT_NE(ledger, nullptr);
  std::vector<ScoreEntry> scores;
  for (int i = 0; i < 6; ++i) {
    ScoreEntry e = Score(absl::StrCat("r", i));
    e.scored_at = absl::FromUnixSeconds(1000 + i);
    if (i % 2 == 1) e.set_name = "other";
    scores.push_back(e);
  }
  ASSERT_TRUE(ledger->AppendScores(scores).ok());
  std::vector<std::string> ids;
  auto collect = [&](const ScoreEntry& e) { ids.push_back(e.record_id); };
  ASSERT_TRUE(
      ledger->ForEachScore("courier", 2, absl::InfinitePast(), collect).ok());
  EXPECT_EQ(ids, (std::vector<std::string>{"r4", "r2"}));
  ids.clear();
  ASSERT_TRUE(
      ledger->ForEachScore("courier", 10, absl::FromUnixSeconds(1002), collect)
          .ok());
  EXPECT_EQ(ids, (std::vector<std::string>{"r4", "r2"}));
}

TEST_F(LedgerTest, RelaxedCommitsAreCommittedToo) {
  options_.durable_commits = false;
  {
    auto ledger = OpenLedger();
    ASSERT_NE(ledger, nullptr);
    ASSERT_TRUE(ledger->AppendScores({Score("a"), Score("b")}).ok());
    EXPECT_EQ(ledger->stats().committed_rows, 2);
  }
  EXPECT_EQ(Count("scores"), 2);
}

TEST_F(LedgerTest, RefusesANewerSchema) {
  { OpenLedger(); }
  {
    auto db = SqliteDb::Open(options_.path);
    ASSERT_TRUE((*db)->Exec("PRAGMA user_version = 99").ok());
  }
  auto ledger = SqliteLedger::Open(options_);
  ASSERT_FALSE(ledger.ok());
  EXPECT_EQ(ledger.status().code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_THAT(ledger.status().message(), HasSubstr("schema version 99"));
}

TEST_F(LedgerTest, RetentionByRowsAndByAge) {
  absl::Time now = absl::FromUnixSeconds(100000);
  options_.now = [&now] { return now; };
  options_.retention_interval = absl::ZeroDuration();
  options_.retention_rows = 5;
  {
    auto ledger = OpenLedger();
    for (int i = 0; i < 10; ++i) {
      ASSERT_TRUE(ledger->AppendScores({Score(absl::StrCat("k", i))}).ok());
    }
    ASSERT_TRUE(ledger->AppendScores({Score("last")}).ok());
  }  // the destructor drains the queue; retention ran after each commit
  EXPECT_EQ(Count("scores"), 5);

  options_.retention_rows = 0;
  options_.retention_age = absl::Hours(1);
  auto ledger = OpenLedger();
  ScoreEntry recent = Score("recent");
  recent.scored_at = now - absl::Minutes(5);
  ASSERT_TRUE(ledger->AppendScores({recent}).ok());
  ledger.reset();
  EXPECT_EQ(Count("scores"), 1);  // the five from 1970 are older than an hour
}

TEST_F(LedgerTest, ConcurrentWritersAreAllCommitted) {
  auto ledger = OpenLedger();
  std::vector<std::thread> threads;
  std::atomic<int> failures{0};
  for (int t = 0; t < 4; ++t) {
    threads.emplace_back([&, t] {
      for (int i = 0; i < 250; ++i) {
        if (!ledger->AppendScores({Score(absl::StrCat("t", t, "-", i))}).ok())
          ++failures;
      }
    });
  }
  for (auto& th : threads) th.join();
  EXPECT_EQ(failures.load(), 0);
  EXPECT_EQ(Count("scores"), 1000);
  EXPECT_GE(ledger->stats().committed_rows, 1000);
}

// Callers look up the scores of their outcomes on their own read
// connections (daemon/ledger_lookup.h); what they miss, the writer looks up.
// An outcome queued right behind its uncommitted score is found that way.
TEST_F(LedgerTest, OutcomeQueuedBehindItsUncommittedScoreIsFound) {
  options_.ack = LedgerOptions::Ack::kQueued;
  auto ledger = OpenLedger();
  ASSERT_NE(ledger, nullptr);
  auto blocker = HoldWriteLock();
  ASSERT_NE(blocker, nullptr);
  ASSERT_TRUE(ledger->AppendScores({Score("late", 1.5)}).ok());  // queued only
  auto results = ReportBehindLock(*ledger, *blocker, {{"late", 1}}, 2);
  ASSERT_TRUE(results.ok()) << results.status();
  ASSERT_TRUE((*results)[0].status.ok()) << (*results)[0].status;
  ASSERT_EQ((*results)[0].labelled.size(), 1u);
  EXPECT_EQ((*results)[0].labelled[0].log_odds, 1.5);
  EXPECT_EQ(Count("outcomes"), 1);
}

// A caller found the score, then a retention pass deleted it before the
// writer stored the outcome: the writer notices and looks again, so no
// outcome is stored without its score.
//
// The usual order: the writer takes "new" alone into a group and waits for
// the lock; the outcome's job is queued behind it; "new" commits, the pass
// deletes "old", the writer looks again: NOT_FOUND. On a loaded machine the
// writer may wake only after both jobs are queued and take them in one
// group: the outcome then goes in before the pass, which deletes it with
// its score. Either way no outcome is left without its score. (With the
// writer's check removed, the usual order leaves one: checked.)
TEST_F(LedgerTest, RetentionBetweenLookupAndWriteIsNoticed) {
  options_.retention_interval = absl::ZeroDuration();
  options_.retention_rows = 1;
  options_.ack = LedgerOptions::Ack::kQueued;
  auto ledger = OpenLedger();
  ASSERT_NE(ledger, nullptr);
  ASSERT_TRUE(ledger->AppendScores({Score("old")}).ok());
  ASSERT_TRUE(testing::PollUntil([&] {
    return ledger->stats().committed_rows >= 1;
  })) << "the first score was never committed";
  auto blocker = HoldWriteLock();
  ASSERT_NE(blocker, nullptr);
  // Committed after the lock is released, then retention keeps only it.
  ASSERT_TRUE(ledger->AppendScores({Score("new")}).ok());
  auto results = ReportBehindLock(*ledger, *blocker, {{"old", 1}}, 2);
  ASSERT_TRUE(results.ok()) << results.status();
  const OutcomeResult& r = (*results)[0];
  if (r.status.ok()) {
    EXPECT_EQ(r.labelled.size(), 1u);  // stored with its score, in one group
  } else {
    EXPECT_EQ(r.status.code(), absl::StatusCode::kNotFound) << r.status;
    EXPECT_TRUE(r.labelled.empty());
  }
  ledger.reset();  // every retention pass has run
  EXPECT_EQ(
      Count("outcomes WHERE record_id NOT IN (SELECT record_id FROM scores)"),
      0)
      << "an outcome without its score";
  EXPECT_EQ(Count("outcomes"), 0);
  EXPECT_EQ(Count("scores"), 1);
}

// Outcomes go in 128 rows per statement; a statement holding a repeat, a
// conflicting label or one record twice is redone row by row, so every
// outcome still gets its own answer.
TEST_F(LedgerTest, LargeBatchesAnswerRepeatsAndConflictsOneByOne) {
  auto ledger = OpenLedger();
  ASSERT_NE(ledger, nullptr);
  std::vector<ScoreEntry> scores;
  for (int i = 0; i < 400; ++i)
    scores.push_back(Score(absl::StrCat("p", i), i));
  ASSERT_TRUE(ledger->AppendScores(scores).ok());
  std::vector<OutcomeEntry> first;
  for (int i = 0; i < 10; ++i) first.push_back({absl::StrCat("p", i), 1});
  ASSERT_TRUE(ledger->ReportOutcomes(first).ok());

  // p0..p4 repeat their label, p5..p9 contradict it; after p199 come p100
  // again with the same label, p101 with another and an unknown id, inside
  // the second statement's rows.
  std::vector<OutcomeEntry> batch;
  std::vector<int> record;  // batch[k] is about p<record[k]> (-1: unknown)
  for (int i = 0; i < 400; ++i) {
    batch.push_back({absl::StrCat("p", i), i < 5 ? 1 : i < 10 ? 0 : i % 2});
    record.push_back(i);
    if (i == 199) {
      batch.push_back({"p100", 0});
      batch.push_back({"p101", 0});
      batch.push_back({"nobody", 1});
      record.insert(record.end(), {-100, -101, -1});
    }
  }
  auto results = ledger->ReportOutcomes(batch);
  ASSERT_TRUE(results.ok()) << results.status();
  const auto& r = *results;
  ASSERT_EQ(r.size(), 403u);
  int fresh = 0;
  for (size_t k = 0; k < r.size(); ++k) {
    SCOPED_TRACE(k);
    const int i = record[k];
    if (i == -100) {  // p100 is 0 from earlier in this batch
      EXPECT_TRUE(r[k].status.ok()) << r[k].status;
      EXPECT_TRUE(r[k].repeat);
    } else if (i == -101) {  // p101 went in as 1 earlier in this batch
      EXPECT_EQ(r[k].status.code(), absl::StatusCode::kFailedPrecondition);
      EXPECT_THAT(r[k].status.message(), HasSubstr("already has outcome 1"));
    } else if (i == -1) {
      EXPECT_EQ(r[k].status.code(), absl::StatusCode::kNotFound);
    } else if (i < 5) {
      EXPECT_TRUE(r[k].status.ok());
      EXPECT_TRUE(r[k].repeat);
      EXPECT_TRUE(r[k].labelled.empty());
    } else if (i < 10) {
      EXPECT_EQ(r[k].status.code(), absl::StatusCode::kFailedPrecondition);
      EXPECT_TRUE(r[k].labelled.empty());
    } else {
      ASSERT_TRUE(r[k].status.ok()) << r[k].status;
      EXPECT_FALSE(r[k].repeat);
      ASSERT_EQ(r[k].labelled.size(), 1u);
      EXPECT_EQ(r[k].labelled[0].record_id, absl::StrCat("p", i));
      EXPECT_EQ(r[k].labelled[0].log_odds, i);
      EXPECT_EQ(r[k].labelled[0].label, i % 2);
      ++fresh;
    }
  }
  EXPECT_EQ(fresh, 390);
  EXPECT_EQ(Count("outcomes"), 400);
  auto db = SqliteDb::Open(options_.path);
  ASSERT_TRUE(db.ok());
  EXPECT_EQ(
      *(*db)->QueryInt64("SELECT label FROM outcomes WHERE record_id = 'p7'"),
      1);
  EXPECT_EQ(
      *(*db)->QueryInt64("SELECT label FROM outcomes WHERE record_id = 'p101'"),
      1);
}

// The lookup names sets from a cache of score_sets; a set first seen after
// the cache was filled is read in, and a record scored by two versions
// (active and shadow) labels both, in the order they were stored.
TEST_F(LedgerTest, OutcomesLabelEveryScoreOfTheirRecordWithItsSet) {
  auto ledger = OpenLedger();
  ASSERT_NE(ledger, nullptr);
  ASSERT_TRUE(ledger->AppendScores({Score("a", 0.1)}).ok());
  ASSERT_TRUE(ledger->ReportOutcomes({{"a", 1}}).ok());
  ScoreEntry shadow = Score("b", 0.3);
  shadow.set_version = "v2";
  shadow.role = ScoreRole::kShadow;
  ASSERT_TRUE(ledger->AppendScores({Score("b", 0.2), shadow}).ok());
  auto results = ledger->ReportOutcomes({{"b", 0}});
  ASSERT_TRUE(results.ok()) << results.status();
  const auto& l = (*results)[0].labelled;
  ASSERT_EQ(l.size(), 2u);
  EXPECT_EQ(l[0].set_version, "v1");
  EXPECT_EQ(l[0].role, ScoreRole::kActive);
  EXPECT_EQ(l[0].log_odds, 0.2);
  EXPECT_EQ(l[1].set_version, "v2");
  EXPECT_EQ(l[1].role, ScoreRole::kShadow);
  EXPECT_EQ(l[1].log_odds, 0.3);
}

// ---- Record identity: one record id, one score per set ----

TEST_F(LedgerTest, ARetryWithTheSameFeaturesReturnsTheStoredScore) {
  auto ledger = OpenLedger();
  ASSERT_NE(ledger, nullptr);
  ScoreEntry shadow = Score("r1", 0.9);
  shadow.set_version = "v2";
  shadow.role = ScoreRole::kShadow;
  ASSERT_OK_AND_ASSIGN(auto first,
                       ledger->AppendScores({Score("r1", 0.5), shadow}));
  EXPECT_FALSE(first[0].repeat);
  // The retry: scored again (by a later version, say) with the same
  // features. Nothing is written; the first score comes back.
  ScoreEntry again = Score("r1", 0.7);
  again.set_version = "v3";
  ASSERT_OK_AND_ASSIGN(auto second, ledger->AppendScores({again, shadow}));
  ASSERT_EQ(second.size(), 2u);
  EXPECT_TRUE(second[0].repeat);
  EXPECT_EQ(second[0].stored.set_version, "v1");
  EXPECT_EQ(second[0].stored.log_odds, 0.5);
  EXPECT_EQ(second[0].stored.probability, 0.6);
  EXPECT_TRUE(second[1].repeat);  // its shadow score came with it
  EXPECT_EQ(Count("scores"), 2);
  EXPECT_EQ(ledger->stats().repeated_records, 2);
  // The outcome labels the one score and its shadow.
  ASSERT_OK_AND_ASSIGN(auto labelled, ledger->ReportOutcomes({{"r1", 1}}));
  EXPECT_EQ(labelled[0].labelled.size(), 2u);
}

TEST_F(LedgerTest, TheSameIdWithOtherFeaturesIsRefusedAndWritesNothing) {
  auto ledger = OpenLedger();
  ASSERT_NE(ledger, nullptr);
  ASSERT_OK(ledger->AppendScores({Score("r1")}));
  ScoreEntry other = Score("r1");
  other.features = R"({"distance_km":4})";
  // The whole call is refused: the new record in it is not written either.
  EXPECT_THAT(ledger->AppendScores({Score("r2"), other}),
              plumbline::testing::StatusIs(
                  absl::StatusCode::kAlreadyExists,
                  ::testing::AllOf(HasSubstr("record id 'r1'"),
                                   HasSubstr("set 'courier' (version v1"))));
  EXPECT_EQ(Count("scores"), 1);
  EXPECT_EQ(ledger->stats().conflicting_records, 1);
  // Other calls of the same group are unaffected.
  ASSERT_OK(ledger->AppendScores({Score("r2")}));
  EXPECT_EQ(Count("scores"), 2);
}

TEST_F(LedgerTest, AnotherSetMayUseTheSameIdAndTheOutcomeLabelsBoth) {
  auto ledger = OpenLedger();
  ASSERT_NE(ledger, nullptr);
  ScoreEntry depot = Score("r1", 0.3);
  depot.set_name = "depot";
  ASSERT_OK_AND_ASSIGN(auto a, ledger->AppendScores({Score("r1", 0.2)}));
  ASSERT_OK_AND_ASSIGN(auto b, ledger->AppendScores({depot}));
  EXPECT_FALSE(b[0].repeat);
  ASSERT_OK_AND_ASSIGN(auto results, ledger->ReportOutcomes({{"r1", 0}}));
  ASSERT_EQ(results[0].labelled.size(), 2u);
  EXPECT_EQ(results[0].labelled[0].set_name, "courier");
  EXPECT_EQ(results[0].labelled[1].set_name, "depot");
}

TEST_F(LedgerTest, ConcurrentCallsWithOneIdStoreOneScore) {
  auto ledger = OpenLedger();
  ASSERT_NE(ledger, nullptr);
  // Eight callers race with the same record (a client retrying in
  // parallel): one score is stored, every caller gets it back.
  std::vector<std::thread> callers;
  std::atomic<int> ok{0}, repeats{0};
  for (int t = 0; t < 8; ++t) {
    callers.emplace_back([&] {
      auto written = ledger->AppendScores({Score("same")});
      if (!written.ok()) return;
      ++ok;
      if ((*written)[0].repeat) ++repeats;
    });
  }
  for (std::thread& c : callers) c.join();
  EXPECT_EQ(ok.load(), 8);
  EXPECT_EQ(repeats.load(), 7);
  EXPECT_EQ(Count("scores"), 1);
}

TEST_F(LedgerTest, LargeBatchesWithARepeatGoRowByRow) {
  auto ledger = OpenLedger();
  ASSERT_NE(ledger, nullptr);
  ASSERT_OK(ledger->AppendScores({Score("x-200")}));
  // 300 rows: two 128-row statements and 44 single rows; one is a repeat.
  std::vector<ScoreEntry> batch;
  for (int i = 0; i < 300; ++i) batch.push_back(Score(absl::StrCat("x-", i)));
  ASSERT_OK_AND_ASSIGN(auto written, ledger->AppendScores(batch));
  for (int i = 0; i < 300; ++i) EXPECT_EQ(written[i].repeat, i == 200) << i;
  EXPECT_EQ(Count("scores"), 300);
}

TEST_F(LedgerTest, MigratesAVersion4LedgerKeepingRepeatsButLabellingTheFirst) {
  // A version 4 ledger holding the same record id twice for one set (as
  // versions before 5 allowed) and once for another.
  {
    auto ledger = OpenLedger();
    ASSERT_NE(ledger, nullptr);
    ScoreEntry depot = Score("dup", 0.4);
    depot.set_name = "depot";
    ASSERT_OK(ledger->AppendScores({Score("dup", 0.1), depot}));
  }
  {
    auto db = SqliteDb::Open(options_.path);
    ASSERT_TRUE(db.ok());
    // Back to schema 4: no set_names, no primary_set, a plain index.
    ASSERT_OK((*db)->Exec(
        "DROP INDEX scores_by_record; DROP TABLE set_names;"
        "ALTER TABLE scores DROP COLUMN primary_set;"
        "CREATE INDEX scores_by_record ON scores(record_id);"
        "INSERT INTO scores(record_id, set_id, scored_at_us, log_odds,"
        " probability, features) SELECT record_id, set_id, scored_at_us + 1,"
        " 0.9, 0.7, features FROM scores WHERE log_odds = 0.1;"
        "DROP VIEW ledger_scores;"
        "ALTER TABLE score_sets DROP COLUMN layout;"
        "CREATE VIEW ledger_scores AS SELECT s.id FROM scores s;"
        "DROP INDEX outcomes_by_seq; ALTER TABLE outcomes DROP COLUMN seq;"
        "DROP TABLE health_snapshots;"
        "PRAGMA user_version = 4;"));
  }
  auto ledger = OpenLedger();
  ASSERT_NE(ledger, nullptr);
  EXPECT_EQ(Count("scores"), 3);  // the repeat is kept
  ASSERT_OK_AND_ASSIGN(auto results, ledger->ReportOutcomes({{"dup", 1}}));
  // The first courier score and the depot score: not the later repeat.
  ASSERT_EQ(results[0].labelled.size(), 2u);
  EXPECT_EQ(results[0].labelled[0].log_odds, 0.1);
  EXPECT_EQ(results[0].labelled[1].set_name, "depot");
  // And from now on the id is taken for courier.
  ScoreEntry other = Score("dup");
  other.features = "{}";
  EXPECT_THAT(ledger->AppendScores({other}),
              plumbline::testing::StatusIs(absl::StatusCode::kAlreadyExists));
}

TEST_F(LedgerTest, ASecondWriterOnTheSameLedgerIsRefusedNamingTheFirst) {
  options_.holder_note = "listen 127.0.0.1:7390";
  auto first = OpenLedger();
  ASSERT_NE(first, nullptr);
  EXPECT_THAT(SqliteLedger::Open(options_),
              plumbline::testing::StatusIs(
                  absl::StatusCode::kFailedPrecondition,
                  ::testing::AllOf(HasSubstr("is in use by another plumbd"),
                                   HasSubstr(absl::StrCat("pid ", getpid())),
                                   HasSubstr("listen 127.0.0.1:7390"))));
  first.reset();
  // Released with the ledger.
  EXPECT_NE(OpenLedger(), nullptr);
}

}  // namespace
}  // namespace plumbline::daemon
