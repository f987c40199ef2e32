// File: tests/daemon/ledger/durability_test.cc
//
// Nothing acknowledged is lost: plumbd is killed with SIGKILL while two
// clients keep calls in flight (one reporting outcomes, one scoring new
// records), then restarted on the same ledger. Every outcome and every score
// whose call returned OK before the kill must be in the ledger, and SQLite's
// integrity check must pass. Three rounds in one test, each on the ledger
// the previous kill left behind.
//
// The kill comes after each client has had a few calls acknowledged; when
// exactly is left to the scheduler (no timing is asserted).
#include <grpcpp/client_context.h>
#include <signal.h>

#include <atomic>
#include <filesystem>
#include <map>
#include <memory>
#include <string>
#include <thread>
#include <vector>

#include "absl/container/flat_hash_map.h"
#include "absl/container/flat_hash_set.h"
#include "absl/strings/str_cat.h"
#include "absl/time/clock.h"
#include "daemon/ledger/sqlite_db.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using testing::PlumbdProcess;
using testing::PollUntil;
using testing::TempDir;
using testing::WriteTextFile;

constexpr int kRounds = 3;
constexpr int kRecordsPerRound = 1000;
constexpr int kOutcomesPerCall = 25;
constexpr int kScoresPerCall = 50;
// Acknowledged calls each client must have before the kill.
constexpr int kAckedCallsBeforeKill = 20;

void WithDeadline(grpc::ClientContext* context) {
  context->set_deadline(absl::ToChronoTime(absl::Now() + absl::Seconds(20)));
}

v1::ScoreBatchRequest Batch(const std::string& prefix, int first, int count) {
  v1::ScoreBatchRequest request;
  request.set_set("courier");
  for (int i = first; i < first + count; ++i) {
    v1::Record* record = request.add_records();
    record->set_record_id(absl::StrCat(prefix, i));
    auto& fields = *record->mutable_features()->mutable_fields();
    fields["distance_km"].set_number_value(i % 40);
    fields["region"].set_string_value(i % 3 == 0 ? "rural" : "urban");
  }
  return request;
}

// What the ledger holds, read with SQLite directly.
struct LedgerContents {
  absl::flat_hash_set<std::string> scores;
  absl::flat_hash_map<std::string, int> outcomes;
  std::string integrity;
};

LedgerContents ReadLedger(const std::string& path) {
  LedgerContents out;
  absl::StatusOr<std::unique_ptr<SqliteDb>> db = SqliteDb::Open(path);
  EXPECT_TRUE(db.ok()) << db.status();
  if (!db.ok()) return out;
  auto q = (*db)->Prepare("SELECT record_id FROM scores");
  while (q.ok() && *(*q)->Step()) out.scores.insert((*q)->ColumnText(0));
  q = (*db)->Prepare("SELECT record_id, label FROM outcomes");
  while (q.ok() && *(*q)->Step()) {
    out.outcomes[(*q)->ColumnText(0)] = static_cast<int>((*q)->ColumnInt64(1));
  }
  q = (*db)->Prepare("PRAGMA integrity_check");
  if (q.ok() && *(*q)->Step()) out.integrity = (*q)->ColumnText(0);
  return out;
}

TEST(DurabilityTest, AcknowledgedScoresAndOutcomesSurviveSigkill) {
  TempDir dir;
  std::filesystem::create_directory(dir.File("sets"));
  ASSERT_TRUE(WriteTextFile(dir.File("sets/courier.json"),
                            testing::CourierSetJson("courier", "v1"))
                  .ok());
  const std::string ledger = dir.File("var/ledger.db");
  const std::vector<std::string> args = {"--sets", dir.File("sets"), "--ledger",
                                         ledger};
  // Everything acknowledged so far, over all rounds.
  absl::flat_hash_set<std::string> acked_scores;
  std::map<std::string, int> acked_outcomes;

  for (int round = 0; round < kRounds; ++round) {
    SCOPED_TRACE(absl::StrCat("round ", round));
    absl::StatusOr<std::unique_ptr<PlumbdProcess>> plumbd =
        PlumbdProcess::Start(dir.path(), args);
    ASSERT_TRUE(plumbd.ok()) << plumbd.status();
    auto scoring = testing::NewScoringStub((*plumbd)->addr());
    auto outcomes = testing::NewOutcomesStub((*plumbd)->addr());

    // The records this round's outcomes are about.
    const std::string prefix = absl::StrCat("r", round, "-");
    for (int first = 0; first < kRecordsPerRound; first += 200) {
      grpc::ClientContext context;
      WithDeadline(&context);
      v1::ScoreBatchReply reply;
      grpc::Status status =
          scoring->ScoreBatch(&context, Batch(prefix, first, 200), &reply);
      ASSERT_TRUE(status.ok()) << status.error_message();
      for (const v1::Scored& s : reply.scores())
        acked_scores.insert(s.record_id());
    }

    std::atomic<bool> stop{false};
    std::atomic<int> outcome_calls{0};
    std::atomic<int> score_calls{0};
    std::vector<std::pair<std::string, int>> outcomes_acked_now;
    std::vector<std::string> scores_acked_now;
    // Reports label i % 2 for record i, batch after batch, around and around
    // (after the first pass the same outcomes come back as repeats).
    std::thread reporter([&] {
      for (int first = 0; !stop;
           first = (first + kOutcomesPerCall) % kRecordsPerRound) {
        v1::ReportOutcomesRequest request;
        for (int i = first; i < first + kOutcomesPerCall; ++i) {
          v1::Outcome* o = request.add_outcomes();
          o->set_record_id(absl::StrCat(prefix, i));
          o->set_label(i % 2);
        }
        grpc::ClientContext context;
        WithDeadline(&context);
        v1::ReportOutcomesReply reply;
        if (!outcomes->ReportOutcomes(&context, request, &reply).ok()) return;
        for (int k = 0; k < reply.results_size(); ++k) {
          if (reply.results(k).code() == 0) {
            outcomes_acked_now.emplace_back(request.outcomes(k).record_id(),
                                            request.outcomes(k).label());
          }
        }
        ++outcome_calls;
      }
    });
    // Scores new records, batch after batch.
    std::thread scorer([&] {
      const std::string fresh = absl::StrCat("k", round, "-");
      for (int first = 0; !stop; first += kScoresPerCall) {
        grpc::ClientContext context;
        WithDeadline(&context);
        v1::ScoreBatchReply reply;
        if (!scoring
                 ->ScoreBatch(&context, Batch(fresh, first, kScoresPerCall),
                              &reply)
                 .ok()) {
          return;
        }
        for (const v1::Scored& s : reply.scores()) {
          scores_acked_now.push_back(s.record_id());
        }
        ++score_calls;
      }
    });
    const bool warmed_up = PollUntil([&] {
      return outcome_calls >= kAckedCallsBeforeKill &&
             score_calls >= kAckedCallsBeforeKill;
    });
    (*plumbd)->Signal(SIGKILL);
    absl::StatusOr<int> exit_status = (*plumbd)->WaitForExit();
    stop = true;
    reporter.join();
    scorer.join();
    ASSERT_TRUE(warmed_up) << (*plumbd)->Log();
    ASSERT_TRUE(exit_status.ok());
    EXPECT_EQ(*exit_status, -SIGKILL);
    for (const auto& [id, label] : outcomes_acked_now)
      acked_outcomes[id] = label;
    acked_scores.insert(scores_acked_now.begin(), scores_acked_now.end());
  }

  // Restart on what the last kill left; the daemon must open it and serve.
  absl::StatusOr<std::unique_ptr<PlumbdProcess>> plumbd =
      PlumbdProcess::Start(dir.path(), args);
  ASSERT_TRUE(plumbd.ok()) << plumbd.status();
  const LedgerContents contents = ReadLedger(ledger);
  EXPECT_EQ(contents.integrity, "ok");
  int missing_scores = 0;
  for (const std::string& id : acked_scores) {
    if (!contents.scores.contains(id)) {
      if (++missing_scores <= 5)
        ADD_FAILURE() << "acknowledged score lost: " << id;
    }
  }
  int missing_outcomes = 0;
  for (const auto& [id, label] : acked_outcomes) {
    auto it = contents.outcomes.find(id);
    if (it == contents.outcomes.end() || it->second != label) {
      if (++missing_outcomes <= 5) {
        ADD_FAILURE() << "acknowledged outcome lost or changed: " << id;
      }
    }
  }
  EXPECT_EQ(missing_scores, 0) << "of " << acked_scores.size();
  EXPECT_EQ(missing_outcomes, 0) << "of " << acked_outcomes.size();
  EXPECT_GE(acked_outcomes.size(), static_cast<size_t>(kRounds));
  // Every outcome in the ledger is one of the labels that was sent.
  for (const auto& [id, label] : contents.outcomes) {
    const int i = std::stoi(id.substr(id.find('-') + 1));
    EXPECT_EQ(label, i % 2) << id;
  }
}

}  // namespace
}  // namespace plumbline::daemon
