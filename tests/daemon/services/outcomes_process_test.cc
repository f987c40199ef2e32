// File: tests/daemon/services/outcomes_process_test.cc
//
// The ledger through the real plumbd over gRPC: scores and outcomes are
// reported with Score/ScoreBatch and ReportOutcome/ReportOutcomes, then the
// ledger file is opened with SQLite directly and its rows are checked: the
// features JSON as sent (named and dense form), outcomes joined to their
// scores, nothing written for a refused call, and everything still there
// after a restart.
#include <grpcpp/client_context.h>
#include <signal.h>

#include <cmath>
#include <filesystem>
#include <memory>
#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "daemon/ledger/sqlite_db.h"
#include "daemon/scoring/packed_row.h"
#include "gmock/gmock.h"
#include "google/protobuf/util/json_util.h"
#include "google/protobuf/util/message_differencer.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;
using ::testing::MatchesRegex;
using testing::PlumbdProcess;
using testing::TempDir;
using testing::WriteTextFile;

// Python 3: datetime(2026, 12, 1, 8, 30, tzinfo=timezone.utc).timestamp()
constexpr int64_t kDecember1At0830Utc = 1796113800;

// A stored row's features as JSON: packed under the layout stored with its
// version (daemon/scoring/packed_row.h), read back through the layout.
std::string StoredJson(const std::string& features, const std::string& layout) {
  v1::RowLayout parsed;
  EXPECT_TRUE(google::protobuf::util::JsonStringToMessage(layout, &parsed).ok())
      << layout;
  absl::StatusOr<std::string> json = StoredFeaturesJson(&parsed, features);
  EXPECT_TRUE(json.ok()) << json.status();
  return json.ok() ? *json : "";
}

google::protobuf::Struct Features(const std::string& json) {
  google::protobuf::Struct out;
  EXPECT_TRUE(google::protobuf::util::JsonStringToMessage(json, &out).ok())
      << json;
  return out;
}

v1::Outcome Outcome(const std::string& id, int label) {
  v1::Outcome o;
  o.set_record_id(id);
  o.set_label(label);
  return o;
}

class OutcomesTest : public ::testing::Test {
 protected:
  void SetUp() override {
    std::filesystem::create_directory(dir_.File("sets"));
    ASSERT_TRUE(WriteTextFile(dir_.File("sets/courier.json"),
                              testing::CourierSetJson("courier", "2026-11"))
                    .ok());
    Start();
  }
  void TearDown() override { plumbd_.reset(); }

  void Start(std::vector<std::string> extra = {}) {
    std::vector<std::string> args = {"--sets", dir_.File("sets"), "--ledger",
                                     LedgerPath()};
    args.insert(args.end(), extra.begin(), extra.end());
    plumbd_.reset();
    absl::StatusOr<std::unique_ptr<PlumbdProcess>> plumbd =
        PlumbdProcess::Start(dir_.path(), args);
    ASSERT_TRUE(plumbd.ok()) << plumbd.status();
    plumbd_ = *std::move(plumbd);
    scoring_ = testing::NewScoringStub(plumbd_->addr());
    outcomes_ = testing::NewOutcomesStub(plumbd_->addr());
  }
  std::string LedgerPath() const { return dir_.File("var/ledger.db"); }

  grpc::Status ScoreBatch(const v1::ScoreBatchRequest& request,
                          v1::ScoreBatchReply* reply) {
    grpc::ClientContext context;
    return scoring_->ScoreBatch(&context, request, reply);
  }
  grpc::Status ReportOne(const v1::Outcome& outcome,
                         v1::ReportOutcomeReply* reply) {
    v1::ReportOutcomeRequest request;
    *request.mutable_outcome() = outcome;
    grpc::ClientContext context;
    return outcomes_->ReportOutcome(&context, request, reply);
  }
  grpc::Status ReportMany(const std::vector<v1::Outcome>& outcomes,
                          v1::ReportOutcomesReply* reply) {
    v1::ReportOutcomesRequest request;
    for (const v1::Outcome& o : outcomes) *request.add_outcomes() = o;
    grpc::ClientContext context;
    return outcomes_->ReportOutcomes(&context, request, reply);
  }

  // The ledger file, opened with SQLite directly (read while plumbd runs:
  // WAL mode lets a reader see every committed row).
  std::unique_ptr<SqliteDb> OpenLedgerFile() {
    absl::StatusOr<std::unique_ptr<SqliteDb>> db = SqliteDb::Open(LedgerPath());
    EXPECT_TRUE(db.ok()) << db.status();
    return db.ok() ? *std::move(db) : nullptr;
  }
  int64_t Count(const std::string& sql) {
    auto db = OpenLedgerFile();
    absl::StatusOr<int64_t> n = db->QueryInt64(sql);
    EXPECT_TRUE(n.ok()) << n.status();
    return n.ok() ? *n : -1;
  }

  TempDir dir_;
  std::unique_ptr<PlumbdProcess> plumbd_;
  std::unique_ptr<v1::Scoring::Stub> scoring_;
  std::unique_ptr<v1::Outcomes::Stub> outcomes_;
};

TEST_F(OutcomesTest, ScoresAndOutcomesLandInTheLedgerAsSent) {
  // Named records: an unseen service level (UNSEEN_AS_MISSING) carries a
  // quote, a backslash and a line feed through to the ledger's JSON; the
  // last record has no id and gets one from the server.
  const std::vector<std::pair<std::string, std::string>> sent = {
      {"p-1", R"({"distance_km": 9, "region": "rural",
                 "service": "night \"owl\" \\ run\n", "hour": 18})"},
      {"p-2", R"({"distance_km": 50, "parcel_kg": 1.5, "region": null,
                 "service": "express", "hour": null})"},
      {"p-3", R"({"distance_km": 0.1, "parcel_kg": 2, "region": "urban"})"},
      {"", R"({"distance_km": 1e-7})"}};
  v1::ScoreBatchRequest request;
  request.set_set("courier");
  for (const auto& [id, json] : sent) {
    v1::Record* record = request.add_records();
    record->set_record_id(id);
    *record->mutable_features() = Features(json);
  }
  const absl::Time before = absl::Now();
  v1::ScoreBatchReply scored;
  grpc::Status status = ScoreBatch(request, &scored);
  ASSERT_TRUE(status.ok()) << status.error_message();
  ASSERT_EQ(scored.scores_size(), 4);
  const std::string generated = scored.scores(3).record_id();
  EXPECT_THAT(generated, MatchesRegex("courier-[0-9]+-[0-9a-f]{8}-[0-9]+"));

  // ReportOutcome: new, same label again, different label, unknown id,
  // label 2, empty id.
  v1::ReportOutcomeReply one;
  status = ReportOne(Outcome("p-1", 1), &one);
  ASSERT_TRUE(status.ok()) << status.error_message();
  EXPECT_EQ(one.result().record_id(), "p-1");
  EXPECT_FALSE(one.result().repeat());
  status = ReportOne(Outcome("p-1", 1), &one);
  ASSERT_TRUE(status.ok()) << status.error_message();
  EXPECT_TRUE(one.result().repeat());
  status = ReportOne(Outcome("p-1", 0), &one);
  EXPECT_EQ(status.error_code(), grpc::StatusCode::FAILED_PRECONDITION);
  EXPECT_THAT(status.error_message(),
              HasSubstr("record 'p-1' already has outcome 1"));
  status = ReportOne(Outcome("p-404", 1), &one);
  EXPECT_EQ(status.error_code(), grpc::StatusCode::NOT_FOUND);
  EXPECT_THAT(status.error_message(), HasSubstr("record_id 'p-404'"));
  status = ReportOne(Outcome("p-2", 2), &one);
  EXPECT_EQ(status.error_code(), grpc::StatusCode::INVALID_ARGUMENT);
  EXPECT_THAT(status.error_message(),
              HasSubstr("record 'p-2': must be 0 or 1, got 2"));
  status = ReportOne(Outcome("", 1), &one);
  EXPECT_EQ(status.error_code(), grpc::StatusCode::INVALID_ARGUMENT);
  EXPECT_THAT(status.error_message(), HasSubstr("record_id: empty"));

  // ReportOutcomes: each outcome answered in order; the second p-2 meets
  // the first one, written earlier in the same call.
  v1::Outcome dated = Outcome("p-2", 0);
  dated.mutable_observed_at()->set_seconds(kDecember1At0830Utc);
  v1::ReportOutcomesReply many;
  status = ReportMany({dated, Outcome("p-2", 1), Outcome("p-3", 1),
                       Outcome("p-405", 0), Outcome("", 1), Outcome("p-3", 5),
                       Outcome(generated, 0), Outcome("p-1", 1)},
                      &many);
  ASSERT_TRUE(status.ok()) << status.error_message();
  ASSERT_EQ(many.results_size(), 8);
  const grpc::StatusCode expected[] = {grpc::StatusCode::OK,
                                       grpc::StatusCode::FAILED_PRECONDITION,
                                       grpc::StatusCode::OK,
                                       grpc::StatusCode::NOT_FOUND,
                                       grpc::StatusCode::INVALID_ARGUMENT,
                                       grpc::StatusCode::INVALID_ARGUMENT,
                                       grpc::StatusCode::OK,
                                       grpc::StatusCode::OK};
  for (int i = 0; i < 8; ++i) {
    EXPECT_EQ(many.results(i).code(), static_cast<int>(expected[i]))
        << i << ": " << many.results(i).message();
  }
  EXPECT_THAT(many.results(1).message(), HasSubstr("'p-2'"));
  EXPECT_THAT(many.results(3).message(), HasSubstr("'p-405'"));
  EXPECT_THAT(many.results(4).message(), HasSubstr("outcomes[4].record_id"));
  EXPECT_THAT(many.results(5).message(), HasSubstr("record 'p-3'"));
  EXPECT_TRUE(many.results(7).repeat());
  EXPECT_EQ(many.accepted(), 4);
  EXPECT_EQ(many.refused(), 4);
  const absl::Time after = absl::Now();

  // The ledger, read with SQLite.
  auto db = OpenLedgerFile();
  auto scores = db->Prepare(
      "SELECT record_id, set_name, set_version, role, scored_at_us, log_odds,"
      " probability, features, layout FROM ledger_scores ORDER BY id");
  ASSERT_TRUE(scores.ok()) << scores.status();
  for (int i = 0; i < 4; ++i) {
    SCOPED_TRACE(i);
    absl::StatusOr<bool> row = (*scores)->Step();
    ASSERT_TRUE(row.ok() && *row);
    const SqliteStatement& s = **scores;
    EXPECT_EQ(s.ColumnText(0), scored.scores(i).record_id());
    EXPECT_EQ(s.ColumnText(1), "courier");
    EXPECT_EQ(s.ColumnText(2), "2026-11");
    EXPECT_EQ(s.ColumnText(3), "active");
    EXPECT_GE(s.ColumnInt64(4), absl::ToUnixMicros(before));
    EXPECT_LE(s.ColumnInt64(4), absl::ToUnixMicros(after));
    EXPECT_EQ(s.ColumnDouble(5), scored.scores(i).log_odds());
    EXPECT_EQ(s.ColumnDouble(6), scored.scores(i).probability());
    // The stored JSON, read back by protobuf's parser, is the Struct sent.
    EXPECT_TRUE(google::protobuf::util::MessageDifferencer::Equals(
        Features(StoredJson(s.ColumnText(7), s.ColumnText(8))),
        request.records(i).features()))
        << StoredJson(s.ColumnText(7), s.ColumnText(8));
  }
  EXPECT_FALSE(*(*scores)->Step());

  auto outcomes = db->Prepare(
      "SELECT o.record_id, o.label, o.observed_at_us, s.log_odds"
      " FROM outcomes o JOIN scores s USING (record_id) ORDER BY s.id");
  ASSERT_TRUE(outcomes.ok()) << outcomes.status();
  struct Joined {
    std::string id;
    int64_t label;
  };
  std::vector<Joined> joined;
  std::vector<int64_t> observed;
  while (*(*outcomes)->Step()) {
    joined.push_back({(*outcomes)->ColumnText(0), (*outcomes)->ColumnInt64(1)});
    observed.push_back((*outcomes)->ColumnInt64(2));
  }
  ASSERT_EQ(joined.size(), 4u);
  EXPECT_EQ(joined[0].id, "p-1");
  EXPECT_EQ(joined[0].label, 1);
  EXPECT_EQ(joined[1].id, "p-2");
  EXPECT_EQ(joined[1].label, 0);
  EXPECT_EQ(observed[1], kDecember1At0830Utc * 1000000);
  EXPECT_EQ(joined[2].id, "p-3");
  EXPECT_EQ(joined[2].label, 1);
  EXPECT_EQ(joined[3].id, generated);
  EXPECT_EQ(joined[3].label, 0);
  // Without observed_at, the time it was reported.
  EXPECT_GE(observed[0], absl::ToUnixMicros(before));
  EXPECT_LE(observed[0], absl::ToUnixMicros(after));
  EXPECT_EQ(Count("SELECT COUNT(*) FROM outcomes"), 4);
}

TEST_F(OutcomesTest, DenseRowsLandWithLevelNamesAndNullForMissing) {
  // Columns in the set's order: distance_km, parcel_kg, region (urban 0,
  // suburban 1, rural 2), service (standard 0, express 1), hour.
  v1::ScoreBatchRequest request;
  request.set_set("courier");
  v1::DenseRows* dense = request.mutable_dense();
  dense->set_nan_is_missing(true);
  const double nan = std::nan("");
  const std::vector<std::vector<double>> rows = {{9, nan, 2, nan, 18},
                                                 {0.25, 7, 0, 1, 17}};
  for (size_t r = 0; r < rows.size(); ++r) {
    v1::DenseRows::Row* row = dense->add_rows();
    row->set_record_id(absl::StrCat("d-", r));
    for (double x : rows[r]) row->add_values(x);
  }
  // A column subset: features without a column are left out of the JSON.
  v1::ScoreBatchRequest subset;
  subset.set_set("courier");
  subset.mutable_dense()->add_columns("hour");
  subset.mutable_dense()->add_columns("region");
  subset.mutable_dense()->add_columns("distance_km");
  v1::DenseRows::Row* row = subset.mutable_dense()->add_rows();
  row->set_record_id("d-subset");
  for (double x : {9.0, 1.0, 3.5}) row->add_values(x);

  v1::ScoreBatchReply reply;
  grpc::Status status = ScoreBatch(request, &reply);
  ASSERT_TRUE(status.ok()) << status.error_message();
  status = ScoreBatch(subset, &reply);
  ASSERT_TRUE(status.ok()) << status.error_message();

  auto db = OpenLedgerFile();
  auto q = db->Prepare(
      "SELECT record_id, features, layout FROM ledger_scores ORDER BY id");
  ASSERT_TRUE(q.ok());
  std::vector<std::pair<std::string, std::string>> stored;
  while (*(*q)->Step()) {
    stored.emplace_back((*q)->ColumnText(0),
                        StoredJson((*q)->ColumnText(1), (*q)->ColumnText(2)));
  }
  ASSERT_EQ(stored.size(), 3u);
  EXPECT_EQ(stored[0].first, "d-0");
  EXPECT_EQ(stored[0].second,
            R"({"distance_km":9,"parcel_kg":null,"region":"rural",)"
            R"("service":null,"hour":18})");
  EXPECT_EQ(stored[1].second,
            R"({"distance_km":0.25,"parcel_kg":7,"region":"urban",)"
            R"("service":"express","hour":17})");
  EXPECT_EQ(stored[2].first, "d-subset");
  EXPECT_EQ(stored[2].second,
            R"({"distance_km":3.5,"region":"suburban","hour":9})");
}

TEST_F(OutcomesTest, FullLedgerQueueRefusesTheBatchAndWritesNothing) {
  ASSERT_TRUE(WriteTextFile(dir_.File("small-queue.json"),
                            R"({"ledger": {"queue_capacity_rows": 5}})")
                  .ok());
  Start({"--config", dir_.File("small-queue.json")});
  EXPECT_EQ(plumbd_->CountLogLines("event=ledger_queue_small"), 1);
  auto batch = [](const std::string& prefix, int n) {
    v1::ScoreBatchRequest request;
    request.set_set("courier");
    for (int i = 0; i < n; ++i) {
      v1::Record* record = request.add_records();
      record->set_record_id(absl::StrCat(prefix, i));
      *record->mutable_features() = Features(R"({"distance_km": 4})");
    }
    return request;
  };
  v1::ScoreBatchReply reply;
  grpc::Status status = ScoreBatch(batch("six-", 6), &reply);
  EXPECT_EQ(status.error_code(), grpc::StatusCode::RESOURCE_EXHAUSTED);
  EXPECT_THAT(status.error_message(), HasSubstr("queue capacity of 5 rows"));
  EXPECT_EQ(reply.scores_size(), 0);
  status = ScoreBatch(batch("five-", 5), &reply);
  ASSERT_TRUE(status.ok()) << status.error_message();
  EXPECT_EQ(Count("SELECT COUNT(*) FROM scores WHERE record_id LIKE 'six-%'"),
            0);
  EXPECT_EQ(Count("SELECT COUNT(*) FROM scores WHERE record_id LIKE 'five-%'"),
            5);
}

TEST_F(OutcomesTest, LedgerSurvivesARestart) {
  v1::ScoreBatchRequest request;
  request.set_set("courier");
  for (const char* id : {"keep-1", "keep-2"}) {
    v1::Record* record = request.add_records();
    record->set_record_id(id);
    *record->mutable_features() = Features(R"({"distance_km": 4})");
  }
  v1::ScoreBatchReply reply;
  ASSERT_TRUE(ScoreBatch(request, &reply).ok());
  v1::ReportOutcomeReply one;
  ASSERT_TRUE(ReportOne(Outcome("keep-1", 1), &one).ok());

  // Close the clients' connections first: plumbd waits for idle ones up to
  // its shutdown grace period.
  scoring_.reset();
  outcomes_.reset();
  plumbd_->Signal(SIGTERM);
  absl::StatusOr<int> exit_status = plumbd_->WaitForExit();
  ASSERT_TRUE(exit_status.ok());
  EXPECT_EQ(*exit_status, 0) << plumbd_->Log();
  Start();

  // The new process knows the old outcome (a repeat) and the old score
  // (a new outcome joins it).
  grpc::Status status = ReportOne(Outcome("keep-1", 1), &one);
  ASSERT_TRUE(status.ok()) << status.error_message();
  EXPECT_TRUE(one.result().repeat());
  status = ReportOne(Outcome("keep-1", 0), &one);
  EXPECT_EQ(status.error_code(), grpc::StatusCode::FAILED_PRECONDITION);
  status = ReportOne(Outcome("keep-2", 0), &one);
  ASSERT_TRUE(status.ok()) << status.error_message();
  EXPECT_FALSE(one.result().repeat());
  EXPECT_EQ(Count("SELECT COUNT(*) FROM scores"), 2);
  EXPECT_EQ(Count("SELECT COUNT(*) FROM outcomes"), 2);
}

}  // namespace
}  // namespace plumbline::daemon
