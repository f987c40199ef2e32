// File: tests/daemon/services/scoring_test.cc
//
// ScoringService called in-process (no network) with a real set registry
// and ledger in a temporary directory, the ledger's commits fed to a fake
// health sink as plumbd feeds its monitor (daemon/health/committed_feed.h):
// every scored record lands in the ledger before the reply, records without
// an id get one, and the sink hears of a record, with the values the scorer
// saw, only once the ledger committed it.
#include "daemon/services/scoring.h"

#include <cmath>
#include <filesystem>
#include <memory>
#include <string>

#include "absl/strings/str_cat.h"
#include "daemon/health/committed_feed.h"
#include "daemon/ledger/sqlite_db.h"
#include "daemon/ledger/sqlite_ledger.h"
#include "daemon/scoring/packed_row.h"
#include "gmock/gmock.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"
#include "tests/testing/fake_health_sink.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::ElementsAre;
using ::testing::HasSubstr;
using ::testing::MatchesRegex;

class ScoringServiceTest : public ::testing::Test {
 protected:
  void SetUp() override {
    std::filesystem::create_directory(dir_.File("sets"));
    ASSERT_TRUE(testing::WriteTextFile(dir_.File("sets/courier.json"),
                                       testing::CourierSetJson("courier", "v7"))
                    .ok());
    registry_ = std::make_unique<SetRegistry>(dir_.File("sets"));
    ASSERT_TRUE(registry_->Reload().ok());
  }
  void StartService(size_t queue_capacity_rows = 200000) {
    LedgerOptions options;
    options.path = dir_.File("ledger.db");
    options.queue_capacity_rows = queue_capacity_rows;
    auto ledger = SqliteLedger::Open(options);
    ASSERT_TRUE(ledger.ok()) << ledger.status();
    ledger_ = *std::move(ledger);
    feed_ = std::make_unique<CommittedFeed>(
        &sink_, [this](const std::string& set, const std::string& version) {
          return registry_->FindVersion(set, version);
        });
    ledger_->set_rows_observer(
        [this](const CommittedRows& rows) { feed_->Feed(rows); });
    service_ = std::make_unique<ScoringService>(registry_.get(),
                                                ScoringLimits{}, ledger_.get());
  }
  int64_t LedgerRows() {
    auto db = SqliteDb::Open(dir_.File("ledger.db"));
    auto n = (*db)->QueryInt64("SELECT COUNT(*) FROM scores");
    return n.ok() ? *n : -1;
  }
  // The stored features of `record_id` as JSON (the packed row read
  // through the layout stored with its version), "<not packed>" unless the
  // row is a BLOB in the packed form.
  std::string FeaturesOf(const std::string& record_id) {
    auto db = SqliteDb::Open(dir_.File("ledger.db"));
    auto q = (*db)->Prepare(
        "SELECT s.features, ss.layout, typeof(s.features) FROM scores s"
        " JOIN score_sets ss ON ss.id = s.set_id WHERE s.record_id = ?1");
    (*q)->BindText(1, record_id);
    auto row = (*q)->Step();
    if (!row.ok() || !*row) return "<no row>";
    const std::string features = (*q)->ColumnText(0);
    if ((*q)->ColumnText(2) != "blob" || !IsPackedRow(features)) {
      return "<not packed>";
    }
    v1::RowLayout layout;
    if (!google::protobuf::util::JsonStringToMessage((*q)->ColumnText(1),
                                                     &layout)
             .ok()) {
      return "<no layout>";
    }
    absl::StatusOr<std::string> json = StoredFeaturesJson(&layout, features);
    return json.ok() ? *json : std::string(json.status().message());
  }

  testing::TempDir dir_;
  testing::FakeHealthSink sink_;
  std::unique_ptr<CommittedFeed> feed_;
  std::unique_ptr<SetRegistry> registry_;
  std::unique_ptr<Ledger> ledger_;
  std::unique_ptr<ScoringService> service_;
};

TEST_F(ScoringServiceTest, ScoreIsInTheLedgerAndTheSinkWhenItReturns) {
  StartService();
  v1::ScoreRequest request;
  request.set_set("courier");
  request.mutable_record()->set_record_id("r-1");
  ASSERT_TRUE(google::protobuf::util::JsonStringToMessage(
                  R"({"hour": 18, "region": "rural", "distance_km": 9,
                      "service": null})",
                  request.mutable_record()->mutable_features())
                  .ok());
  v1::ScoreReply reply;
  grpc::Status status = service_->Score(nullptr, &request, &reply);
  ASSERT_TRUE(status.ok()) << status.error_message();
  EXPECT_EQ(reply.score().record_id(), "r-1");
  // Returned means committed (ACK_COMMITTED): the row is readable now.
  // Keys in the set's feature order; parcel_kg was not sent.
  EXPECT_EQ(FeaturesOf("r-1"),
            R"({"distance_km":9,"region":"rural","service":null,"hour":18})");
  const auto scored = sink_.scored();
  ASSERT_EQ(scored.size(), 1u);
  EXPECT_EQ(scored[0].set_version, "v7");
  EXPECT_EQ(scored[0].log_odds, reply.score().log_odds());
  // The values as the scorer saw them, in the set's order.
  EXPECT_THAT(scored[0].values,
              ElementsAre("9", "missing", "'rural'", "missing", "18"));
}

TEST_F(ScoringServiceTest, RecordsWithoutIdGetOneFromTheServer) {
  StartService();
  v1::ScoreBatchRequest request;
  request.set_set("courier");
  for (int i = 0; i < 3; ++i) {
    v1::Record* record = request.add_records();
    if (i == 1) record->set_record_id("given");
    (*record->mutable_features()->mutable_fields())["distance_km"]
        .set_number_value(i);
  }
  v1::ScoreBatchReply reply;
  ASSERT_TRUE(service_->ScoreBatch(nullptr, &request, &reply).ok());
  ASSERT_EQ(reply.scores_size(), 3);
  EXPECT_THAT(reply.scores(0).record_id(),
              MatchesRegex("courier-[0-9]+-[0-9a-f]{8}-[0-9]+"));
  EXPECT_EQ(reply.scores(1).record_id(), "given");
  EXPECT_THAT(reply.scores(2).record_id(),
              MatchesRegex("courier-[0-9]+-[0-9a-f]{8}-[0-9]+"));
  EXPECT_NE(reply.scores(0).record_id(), reply.scores(2).record_id());
  EXPECT_EQ(FeaturesOf(reply.scores(2).record_id()), R"({"distance_km":2})");
}

TEST_F(ScoringServiceTest, DenseRowsGoToTheSinkWithLevelNames) {
  StartService();
  v1::ScoreBatchRequest request;
  request.set_set("courier");
  v1::DenseRows* dense = request.mutable_dense();
  dense->set_nan_is_missing(true);
  for (const char* column : {"region", "distance_km", "service"}) {
    dense->add_columns(column);
  }
  v1::DenseRows::Row* row = dense->add_rows();
  row->set_record_id("d-1");
  for (double x : {2.0, 9.5, std::nan("")}) row->add_values(x);
  v1::ScoreBatchReply reply;
  grpc::Status status = service_->ScoreBatch(nullptr, &request, &reply);
  ASSERT_TRUE(status.ok()) << status.error_message();
  EXPECT_EQ(FeaturesOf("d-1"),
            R"({"distance_km":9.5,"region":"rural","service":null})");
  const auto scored = sink_.scored();
  ASSERT_EQ(scored.size(), 1u);
  EXPECT_THAT(scored[0].values,
              ElementsAre("9.5", "missing", "'rural'", "missing", "missing"));
}

TEST_F(ScoringServiceTest, RefusedByTheLedgerMeansNoScoreAndNoSink) {
  StartService(/*queue_capacity_rows=*/2);
  v1::ScoreBatchRequest request;
  request.set_set("courier");
  for (int i = 0; i < 3; ++i) {
    (*request.add_records()
          ->mutable_features()
          ->mutable_fields())["distance_km"]
        .set_number_value(i);
  }
  v1::ScoreBatchReply reply;
  grpc::Status status = service_->ScoreBatch(nullptr, &request, &reply);
  EXPECT_EQ(status.error_code(), grpc::StatusCode::RESOURCE_EXHAUSTED);
  EXPECT_THAT(status.error_message(), HasSubstr("capacity of 2"));
  EXPECT_EQ(reply.scores_size(), 0);
  EXPECT_TRUE(sink_.scored().empty());
  EXPECT_EQ(LedgerRows(), 0);
}

TEST_F(ScoringServiceTest, InvalidRecordWritesNothing) {
  StartService();
  v1::ScoreRequest request;
  request.set_set("courier");
  (*request.mutable_record()->mutable_features()->mutable_fields())["hour"]
      .set_number_value(3);  // distance_km missing under REJECT
  v1::ScoreReply reply;
  EXPECT_EQ(service_->Score(nullptr, &request, &reply).error_code(),
            grpc::StatusCode::INVALID_ARGUMENT);
  EXPECT_TRUE(sink_.scored().empty());
  EXPECT_EQ(LedgerRows(), 0);
}

}  // namespace
}  // namespace plumbline::daemon
