// File: tests/daemon/ledger/marks_test.cc
//
// The ledger's marks and its committed-rows observer, which feed the
// model-health monitor and its snapshots (daemon/health/snapshot_store.h):
// the observer hears of exactly the rows a group wrote (not repeats, not a
// refused job's, not an outcome that labels nothing), in commit order, with
// the marks of that commit; the reads after a mark give the same rows in
// the same order; marks survive a reopen, and a mark's record id is there
// to check.
#include <filesystem>
#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/synchronization/mutex.h"
#include "daemon/ledger/sqlite_ledger.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"

namespace plumbline::daemon {
namespace {

ScoreEntry Score(const std::string& id, const std::string& features,
                 ScoreRole role = ScoreRole::kActive,
                 const std::string& version = "v1") {
  return ScoreEntry{id,  "courier", version, role, absl::FromUnixSeconds(1000),
                    0.5, 0.6,       features};
}

// What the observer heard, copied.
struct Heard {
  std::vector<std::string> scores;    // "record/version"
  std::vector<std::string> labelled;  // "record/version/label"
  std::vector<LedgerMarks> marks;
};

class LedgerMarksTest : public ::testing::Test {
 protected:
  void SetUp() override {
    options_.path =
        (std::filesystem::path(temp_.path()) / "ledger.db").string();
  }
  std::unique_ptr<Ledger> Open() {
    auto ledger = SqliteLedger::Open(options_);
    EXPECT_TRUE(ledger.ok()) << ledger.status();
    if (!ledger.ok()) return nullptr;
    (*ledger)->set_rows_observer([this](const CommittedRows& rows) {
      absl::MutexLock lock(&mu_);
      for (const ScoreEntry* e : rows.scores) {
        heard_.scores.push_back(
            absl::StrCat(e->record_id, "/", e->set_version));
      }
      for (const LabelledScore* l : rows.labelled) {
        heard_.labelled.push_back(
            absl::StrCat(l->record_id, "/", l->set_version, "/", l->label));
      }
      heard_.marks.push_back(rows.marks);
    });
    return *std::move(ledger);
  }
  Heard heard() {
    absl::MutexLock lock(&mu_);
    return heard_;
  }

  testing::TempDir temp_;
  LedgerOptions options_;
  absl::Mutex mu_;
  Heard heard_ ABSL_GUARDED_BY(mu_);
};

TEST_F(LedgerMarksTest, TheObserverHearsWhatWasWrittenWithTheMarks) {
  auto ledger = Open();
  ASSERT_NE(ledger, nullptr);
  EXPECT_EQ(ledger->Marks(), (LedgerMarks{0, 0}));
  // Two records, each with a shadow score.
  ASSERT_TRUE(
      ledger
          ->AppendScores({Score("a", R"({"x":1})"), Score("b", R"({"x":2})"),
                          Score("a", R"({"x":1})", ScoreRole::kShadow, "v2"),
                          Score("b", R"({"x":2})", ScoreRole::kShadow, "v2")})
          .ok());
  // A retry (repeat): nothing new written, nothing heard.
  ASSERT_TRUE(ledger->AppendScores({Score("a", R"({"x":1})")}).ok());
  // A conflict: refused, nothing heard.
  EXPECT_FALSE(ledger->AppendScores({Score("a", R"({"x":9})")}).ok());
  // Outcomes: a new one (labels a and its shadow), a repeat, one for an
  // unknown record, a conflicting label.
  auto results =
      ledger->ReportOutcomes({{"a", 1, absl::FromUnixSeconds(2000)},
                              {"a", 1, absl::FromUnixSeconds(2000)},
                              {"zz", 1, absl::FromUnixSeconds(2000)},
                              {"b", 0, absl::FromUnixSeconds(2000)}});
  ASSERT_TRUE(results.ok());
  ASSERT_TRUE(ledger->ReportOutcomes({{"b", 1, absl::FromUnixSeconds(2001)}})
                  .ok());  // refused: b has label 0
  const Heard h = heard();
  EXPECT_EQ(h.scores,
            (std::vector<std::string>{"a/v1", "b/v1", "a/v2", "b/v2"}));
  EXPECT_EQ(h.labelled,
            (std::vector<std::string>{"a/v1/1", "a/v2/1", "b/v1/0", "b/v2/0"}));
  ASSERT_FALSE(h.marks.empty());
  const LedgerMarks last = h.marks.back();
  EXPECT_EQ(last.score_id, 4);
  EXPECT_GE(last.outcome_seq, 2);
  EXPECT_EQ(ledger->Marks(), last);

  // The reads after a mark give the same rows in the same order.
  std::vector<std::string> scores, labelled;
  ASSERT_TRUE(ledger
                  ->ForEachScoreAfter(0,
                                      [&](const ScoreEntry& e) {
                                        scores.push_back(absl::StrCat(
                                            e.record_id, "/", e.set_version));
                                      })
                  .ok());
  ASSERT_TRUE(ledger
                  ->ForEachLabelledAfter(0,
                                         [&](const LabelledScore& l) {
                                           labelled.push_back(absl::StrCat(
                                               l.record_id, "/", l.set_version,
                                               "/", l.label));
                                         })
                  .ok());
  EXPECT_EQ(scores, h.scores);
  EXPECT_EQ(labelled, h.labelled);
  scores.clear();
  ASSERT_TRUE(
      ledger
          ->ForEachScoreAfter(
              2, [&](const ScoreEntry& e) { scores.push_back(e.record_id); })
          .ok());
  EXPECT_EQ(scores, (std::vector<std::string>{"a", "b"}));  // the shadows
  labelled.clear();
  ASSERT_TRUE(ledger
                  ->ForEachLabelledAfter(last.outcome_seq,
                                         [&](const LabelledScore& l) {
                                           labelled.push_back(l.record_id);
                                         })
                  .ok());
  EXPECT_TRUE(labelled.empty());

  auto records = ledger->RecordsAt(last);
  ASSERT_TRUE(records.ok()) << records.status();
  EXPECT_EQ(records->score_record, "b");
  EXPECT_EQ(records->outcome_record, "b");
  records = ledger->RecordsAt(LedgerMarks{99, 99});
  ASSERT_TRUE(records.ok());
  EXPECT_EQ(records->score_record, "");
  EXPECT_EQ(records->outcome_record, "");

  // Reopened, the ledger goes on from its marks.
  ledger.reset();
  ledger = Open();
  ASSERT_NE(ledger, nullptr);
  EXPECT_EQ(ledger->Marks(), last);
  ASSERT_TRUE(ledger->AppendScores({Score("c", R"({"x":3})")}).ok());
  ASSERT_TRUE(
      ledger->ReportOutcomes({{"c", 0, absl::FromUnixSeconds(2002)}}).ok());
  EXPECT_EQ(ledger->Marks().score_id, 5);
  EXPECT_GT(ledger->Marks().outcome_seq, last.outcome_seq);
  labelled.clear();
  ASSERT_TRUE(ledger
                  ->ForEachLabelledAfter(last.outcome_seq,
                                         [&](const LabelledScore& l) {
                                           labelled.push_back(l.record_id);
                                         })
                  .ok());
  EXPECT_EQ(labelled, (std::vector<std::string>{"c"}));
}

TEST_F(LedgerMarksTest, AFailedGroupMovesNoMarkAndIsNotHeard) {
  auto ledger = Open();
  ASSERT_NE(ledger, nullptr);
  ASSERT_TRUE(ledger->AppendScores({Score("a", R"({"x":1})")}).ok());
  const LedgerMarks before = ledger->Marks();
  // Another connection holds the write lock past the busy timeout? Too
  // slow for a unit test; an empty record id is refused before queueing
  // instead, and an outcome for nothing commits no row.
  EXPECT_FALSE(ledger->AppendScores({Score("", R"({"x":1})")}).ok());
  ASSERT_TRUE(
      ledger->ReportOutcomes({{"nothing", 1, absl::FromUnixSeconds(1)}}).ok());
  EXPECT_EQ(ledger->Marks(), before);
  EXPECT_EQ(heard().scores, (std::vector<std::string>{"a/v1"}));
  EXPECT_TRUE(heard().labelled.empty());
}

}  // namespace
}  // namespace plumbline::daemon
