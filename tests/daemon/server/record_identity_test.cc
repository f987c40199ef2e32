// File: tests/daemon/server/record_identity_test.cc
//
// The ledger's word through the real plumbd: a record id names one record
// of a set (a retry returns the stored score and writes nothing; other
// features under the same id are ALREADY_EXISTS; two records of a batch may
// not share an id; a ScoreBatch retried after its first attempt ran out of
// deadline gets the stored scores), made-up ids are unique across daemons,
// and a second plumbd on the same ledger refuses to start naming the first.
#include <grpcpp/client_context.h>
#include <signal.h>

#include <filesystem>
#include <memory>
#include <set>
#include <string>

#include "absl/strings/str_cat.h"
#include "absl/time/clock.h"
#include "absl/time/time.h"
#include "daemon/ledger/sqlite_db.h"
#include "gmock/gmock.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"
#include "tests/testing/status_matchers.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using testing::CourierSetJson;
using ::testing::HasSubstr;
using ::testing::MatchesRegex;
using testing::PlumbdProcess;
using testing::TempDir;
using testing::WriteTextFile;

google::protobuf::Struct Features(const std::string& json) {
  google::protobuf::Struct out;
  EXPECT_TRUE(google::protobuf::util::JsonStringToMessage(json, &out).ok());
  return out;
}

class RecordIdentityTest : public ::testing::Test {
 protected:
  void SetUp() override {
    std::filesystem::create_directory(dir_.File("sets"));
    ASSERT_OK(WriteTextFile(dir_.File("sets/courier.json"),
                            CourierSetJson("courier", "2026-11")));
    ASSERT_OK_AND_ASSIGN(plumbd_, Start(dir_.path()));
    stub_ = testing::NewScoringStub(plumbd_->addr());
  }

  absl::StatusOr<std::unique_ptr<PlumbdProcess>> Start(
      const std::string& work_dir) {
    return PlumbdProcess::Start(
        work_dir, {"--sets", dir_.File("sets"), "--ledger", ledger()});
  }
  std::string ledger() const { return dir_.File("var/ledger.db"); }

  grpc::Status Score(const std::string& id, const std::string& json,
                     v1::ScoreReply* reply) {
    v1::ScoreRequest request;
    request.set_set("courier");
    request.mutable_record()->set_record_id(id);
    *request.mutable_record()->mutable_features() = Features(json);
    request.mutable_reasons()->set_top(2);
    grpc::ClientContext context;
    return stub_->Score(&context, request, reply);
  }

  int64_t Rows(const std::string& where) {
    auto db = SqliteDb::Open(ledger());
    EXPECT_TRUE(db.ok());
    auto n = (*db)->QueryInt64(
        absl::StrCat("SELECT COUNT(*) FROM ledger_scores WHERE ", where));
    EXPECT_TRUE(n.ok()) << n.status();
    return n.ok() ? *n : -1;
  }

  TempDir dir_;
  std::unique_ptr<PlumbdProcess> plumbd_;
  std::unique_ptr<v1::Scoring::Stub> stub_;
};

constexpr char kRecord[] = R"({"distance_km": 9, "region": "rural"})";

TEST_F(RecordIdentityTest, ARetryReturnsTheStoredScoreAndWritesNothing) {
  v1::ScoreReply first, second;
  ASSERT_TRUE(Score("parcel-1", kRecord, &first).ok());
  EXPECT_FALSE(first.score().repeat());
  grpc::Status s = Score("parcel-1", kRecord, &second);
  ASSERT_TRUE(s.ok()) << s.error_message();
  EXPECT_TRUE(second.score().repeat());
  EXPECT_EQ(second.score().probability(), first.score().probability());
  EXPECT_EQ(second.score().log_odds(), first.score().log_odds());
  EXPECT_EQ(second.score().reasons_size(), first.score().reasons_size());
  EXPECT_EQ(Rows("record_id = 'parcel-1'"), 1);
}

TEST_F(RecordIdentityTest, TheSameIdWithOtherFeaturesIsAlreadyExists) {
  v1::ScoreReply reply;
  ASSERT_TRUE(Score("parcel-2", kRecord, &reply).ok());
  grpc::Status s =
      Score("parcel-2", R"({"distance_km": 2, "region": "urban"})", &reply);
  EXPECT_EQ(s.error_code(), grpc::StatusCode::ALREADY_EXISTS);
  EXPECT_THAT(s.error_message(), HasSubstr("record id 'parcel-2'"));
  EXPECT_EQ(Rows("record_id = 'parcel-2'"), 1);
}

TEST_F(RecordIdentityTest, TwoRecordsOfABatchMayNotShareAnId) {
  v1::ScoreBatchRequest request;
  request.set_set("courier");
  for (const char* id : {"b-1", "b-2", "b-1"}) {
    v1::Record* r = request.add_records();
    r->set_record_id(id);
    *r->mutable_features() = Features(kRecord);
  }
  v1::ScoreBatchReply reply;
  grpc::ClientContext context;
  grpc::Status s = stub_->ScoreBatch(&context, request, &reply);
  EXPECT_EQ(s.error_code(), grpc::StatusCode::INVALID_ARGUMENT);
  EXPECT_THAT(s.error_message(),
              HasSubstr("records 0 and 2 of the batch share record id 'b-1'"));
  EXPECT_EQ(Rows("record_id LIKE 'b-%'"), 0);
}

// A caller whose ScoreBatch ran out of deadline does not know whether
// plumbd recorded it; it sends the same batch again. Batches of 2000 records
// go out with deadlines from 1 ms up, each failed one is left to finish (up
// to 5 s for its rows to appear in the ledger) and then retried with the
// same ids and features: the retry is OK, every record has exactly one
// score in the ledger, and a record the first attempt recorded comes back
// as a repeat with the stored probability. At least one attempt must have
// been recorded after its caller's deadline, the case this is about.
TEST_F(RecordIdentityTest, ABatchRetriedAfterItsDeadlineGetsTheStoredScores) {
  constexpr int kRecords = 2000;
  int recorded_after_deadline = 0;
  for (int attempt = 0; attempt < 40 && recorded_after_deadline < 2;
       ++attempt) {
    const std::string prefix = absl::StrCat("late-", attempt, "-");
    v1::ScoreBatchRequest request;
    request.set_set("courier");
    for (int i = 0; i < kRecords; ++i) {
      v1::Record* r = request.add_records();
      r->set_record_id(absl::StrCat(prefix, i));
      *r->mutable_features() = Features(
          absl::StrCat(R"({"distance_km": )", i % 40,
                       R"(, "region": "urban", "hour": )", i % 24, "}"));
    }
    v1::ScoreBatchReply first;
    grpc::ClientContext context;
    context.set_deadline(absl::ToChronoTime(
        absl::Now() + absl::Milliseconds(1 + attempt * attempt)));
    grpc::Status s = stub_->ScoreBatch(&context, request, &first);
    if (s.ok()) break;  // the deadlines have become long enough
    ASSERT_EQ(s.error_code(), grpc::StatusCode::DEADLINE_EXCEEDED)
        << s.error_message();
    const std::string mine = absl::StrCat("record_id LIKE '", prefix, "%'");
    const absl::Time give_up = absl::Now() + absl::Seconds(5);
    while (Rows(mine) < kRecords && absl::Now() < give_up) {
      absl::SleepFor(absl::Milliseconds(20));
    }
    const bool recorded = Rows(mine) == kRecords;

    v1::ScoreBatchReply retry;
    grpc::ClientContext retry_context;
    s = stub_->ScoreBatch(&retry_context, request, &retry);
    ASSERT_TRUE(s.ok()) << s.error_message();
    ASSERT_EQ(retry.scores_size(), kRecords);
    EXPECT_EQ(Rows(mine), kRecords);
    auto db = SqliteDb::Open(ledger());
    ASSERT_TRUE(db.ok()) << db.status();
    auto stored = (*db)->Prepare(absl::StrCat(
        "SELECT probability FROM ledger_scores WHERE record_id = ?1"));
    ASSERT_TRUE(stored.ok()) << stored.status();
    for (const v1::Scored& scored : retry.scores()) {
      EXPECT_EQ(scored.repeat(), recorded) << scored.record_id();
      (*stored)->Reset();
      (*stored)->BindText(1, scored.record_id());
      ASSERT_TRUE(*(*stored)->Step()) << scored.record_id();
      EXPECT_EQ(scored.probability(), (*stored)->ColumnDouble(0))
          << scored.record_id();
    }
    if (recorded) ++recorded_after_deadline;
  }
  EXPECT_GE(recorded_after_deadline, 1)
      << "no batch was recorded after its caller's deadline";
}

TEST_F(RecordIdentityTest, MadeUpIdsDifferAcrossDaemonsAndCalls) {
  // A second daemon on its own ledger in the same second: none of the ids
  // the two make up is the same.
  TempDir other;
  std::filesystem::create_directory(other.File("sets"));
  ASSERT_OK(WriteTextFile(other.File("sets/courier.json"),
                          CourierSetJson("courier", "2026-11")));
  ASSERT_OK_AND_ASSIGN(
      auto second,
      PlumbdProcess::Start(other.path(), {"--sets", other.File("sets"),
                                          "--ledger", other.File("l.db")}));
  auto other_stub = testing::NewScoringStub(second->addr());
  std::set<std::string> ids;
  for (int i = 0; i < 20; ++i) {
    for (v1::Scoring::Stub* stub : {stub_.get(), other_stub.get()}) {
      v1::ScoreRequest request;
      request.set_set("courier");
      *request.mutable_record()->mutable_features() = Features(kRecord);
      v1::ScoreReply reply;
      grpc::ClientContext context;
      ASSERT_TRUE(stub->Score(&context, request, &reply).ok());
      EXPECT_THAT(reply.score().record_id(),
                  MatchesRegex("courier-[0-9]+-[0-9a-f]{8}-[0-9]+"));
      EXPECT_TRUE(ids.insert(reply.score().record_id()).second)
          << reply.score().record_id();
    }
  }
}

TEST_F(RecordIdentityTest, ASecondDaemonOnTheSameLedgerRefusesToStart) {
  TempDir other;
  ASSERT_OK_AND_ASSIGN(
      testing::ProcessResult result,
      testing::RunProcess({PLUMBD_PATH, "--listen", "127.0.0.1:0", "--sets",
                           dir_.File("sets"), "--ledger", ledger()},
                          other.path()));
  EXPECT_EQ(result.exit_code, 1);
  EXPECT_THAT(result.err, HasSubstr("event=startup_failed"));
  EXPECT_THAT(result.err, HasSubstr("is in use by another plumbd"));
  EXPECT_THAT(result.err, HasSubstr("listen 127.0.0.1:0"));
  // The first one still serves.
  v1::ScoreReply reply;
  EXPECT_TRUE(Score("after-refusal", kRecord, &reply).ok());
}

TEST_F(RecordIdentityTest, TheLockGoesWithAKilledDaemon) {
  plumbd_->Signal(SIGKILL);
  ASSERT_TRUE(plumbd_->WaitForExit().ok());
  TempDir other;
  ASSERT_OK_AND_ASSIGN(auto again, Start(other.path()));
  EXPECT_FALSE(again->addr().empty());
}

}  // namespace
}  // namespace plumbline::daemon
