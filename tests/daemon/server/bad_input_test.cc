// File: tests/daemon/server/bad_input_test.cc
//
// Every way a caller can get a request wrong, sent to the real plumbd over
// gRPC, with the code and the part of the message that must name the
// problem. The daemon runs with a config file that lowers the limits
// (max_batch_records 3, max_reasons 2) and names the ledger, and no --sets
// flag, so it also proves that the config is read and that ./sets is the
// default sets directory. No refused request may leave a row in the ledger.
#include <grpcpp/client_context.h>

#include <cmath>
#include <filesystem>
#include <functional>
#include <limits>

#include "absl/strings/str_cat.h"
#include "daemon/ledger/sqlite_db.h"
#include "gmock/gmock.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;
using testing::PlumbdProcess;
using testing::TempDir;
using testing::WriteTextFile;

enum class Rpc { kScore, kScoreBatch };

struct BadInputCase {
  std::string description;
  Rpc rpc;
  // The request in protobuf JSON (ScoreRequest or ScoreBatchRequest).
  std::string request_json;
  grpc::StatusCode code;
  std::string message_part;
  // Optional change after parsing, for values JSON cannot carry (NaN, ±inf
  // inside a Struct, out-of-range enum numbers).
  std::function<void(google::protobuf::Message*)> tweak = nullptr;
};

void SetFeatureNumber(google::protobuf::Message* message, double x) {
  auto* request = static_cast<v1::ScoreRequest*>(message);
  (*request->mutable_record()
        ->mutable_features()
        ->mutable_fields())["distance_km"]
      .set_number_value(x);
}

constexpr double kInf = std::numeric_limits<double>::infinity();

// A valid dense row in the set's column order.
constexpr char kDenseRow[] =
    R"({"recordId": "d0", "values": [9, 3, 2, 0, 18]})";

std::vector<BadInputCase> Cases() {
  using grpc::StatusCode;
  const std::string dense_prefix = R"({"set": "courier", "dense": {"rows": [)";
  return {
      {"empty set name", Rpc::kScore,
       R"({"record": {"features": {"distance_km": 9}}})",
       StatusCode::INVALID_ARGUMENT, "set: empty"},
      {"unknown set", Rpc::kScore,
       R"({"set": "parcels", "record": {"features": {"distance_km": 9}}})",
       StatusCode::NOT_FOUND,
       "no coefficient set named 'parcels' is loaded; loaded: courier"},
      {"unknown feature name (typo)", Rpc::kScore,
       R"({"set": "courier", "record": {"features": {"distance_km": 9,
           "regoin": "rural"}}})",
       StatusCode::INVALID_ARGUMENT,
       "feature 'regoin' is not a feature of set 'courier'"},
      {"boolean value", Rpc::kScore,
       R"({"set": "courier", "record": {"features": {"distance_km": true}}})",
       StatusCode::INVALID_ARGUMENT,
       "feature 'distance_km': expected a number or a string, got a boolean"},
      {"list value", Rpc::kScore,
       R"({"set": "courier", "record": {"features": {"distance_km": [1, 2]}}})",
       StatusCode::INVALID_ARGUMENT,
       "feature 'distance_km': expected a number "
       "or a string, got a list"},
      {"object value", Rpc::kScore,
       R"({"set": "courier", "record": {"features": {"distance_km": {"a": 1}}}})",
       StatusCode::INVALID_ARGUMENT,
       "feature 'distance_km': expected a number "
       "or a string, got an object"},
      {"missing feature under REJECT (absent)", Rpc::kScore,
       R"({"set": "courier", "record": {"features": {"hour": 10}}})",
       StatusCode::INVALID_ARGUMENT, "feature 'distance_km': value is missing"},
      {"missing feature under REJECT (null)", Rpc::kScore,
       R"({"set": "courier", "record": {"features": {"distance_km": null}}})",
       StatusCode::INVALID_ARGUMENT, "feature 'distance_km': value is missing"},
      {"text for a numeric feature", Rpc::kScore,
       R"({"set": "courier", "record": {"features": {"distance_km": "far"}}})",
       StatusCode::INVALID_ARGUMENT,
       "feature 'distance_km': expected a number, got the string \"far\""},
      {"text for a binned feature", Rpc::kScore,
       R"({"set": "courier", "record": {"features": {"distance_km": 9,
           "hour": "noon"}}})",
       StatusCode::INVALID_ARGUMENT, "feature 'hour': expected a number"},
      {"number for a categorical feature", Rpc::kScore,
       R"({"set": "courier", "record": {"features": {"distance_km": 9,
           "region": 2}}})",
       StatusCode::INVALID_ARGUMENT, "feature 'region': expected a level name"},
      {"NaN", Rpc::kScore,
       R"({"set": "courier", "record": {"features": {"distance_km": 0}}})",
       StatusCode::INVALID_ARGUMENT, "feature 'distance_km': value is NaN",
       [](google::protobuf::Message* m) { SetFeatureNumber(m, std::nan("")); }},
      {"+inf", Rpc::kScore,
       R"({"set": "courier", "record": {"features": {"distance_km": 0}}})",
       StatusCode::INVALID_ARGUMENT, "feature 'distance_km': value is infinite",
       [](google::protobuf::Message* m) { SetFeatureNumber(m, kInf); }},
      {"-inf", Rpc::kScore,
       R"({"set": "courier", "record": {"features": {"distance_km": 0}}})",
       StatusCode::INVALID_ARGUMENT, "feature 'distance_km': value is infinite",
       [](google::protobuf::Message* m) { SetFeatureNumber(m, -kInf); }},
      {"unseen level under UNSEEN_REJECT", Rpc::kScore,
       R"({"set": "courier", "record": {"features": {"distance_km": 9,
           "region": "lunar"}}})",
       StatusCode::INVALID_ARGUMENT,
       "feature 'region': level \"lunar\" is not one of the set's levels"},
      {"reasons.top over max_reasons", Rpc::kScore,
       R"({"set": "courier", "record": {"features": {"distance_km": 9}},
           "reasons": {"top": 3}})",
       StatusCode::INVALID_ARGUMENT,
       "reasons.top: 3 is over the limit of 2 (max_reasons)"},
      {"unknown reason order", Rpc::kScore,
       R"({"set": "courier", "record": {"features": {"distance_km": 9}},
           "reasons": {"top": 1}})",
       StatusCode::INVALID_ARGUMENT, "reasons.order: unknown value 9",
       [](google::protobuf::Message* m) {
         static_cast<v1::ScoreRequest*>(m)->mutable_reasons()->set_order(
             static_cast<v1::ReasonOrder>(9));
       }},
      {"batch: empty set name", Rpc::kScoreBatch,
       R"({"records": [{"features": {"distance_km": 9}}]})",
       StatusCode::INVALID_ARGUMENT, "set: empty"},
      {"batch: unknown set", Rpc::kScoreBatch,
       R"({"set": "parcels", "records": [{"features": {"distance_km": 9}}]})",
       StatusCode::NOT_FOUND, "no coefficient set named 'parcels' is loaded"},
      {"batch: empty", Rpc::kScoreBatch, R"({"set": "courier"})",
       StatusCode::INVALID_ARGUMENT,
       "empty batch: neither records nor dense.rows holds a row"},
      {"batch: over max_batch_records", Rpc::kScoreBatch,
       R"({"set": "courier", "records": [{"features": {"distance_km": 1}},
           {"features": {"distance_km": 2}}, {"features": {"distance_km": 3}},
           {"features": {"distance_km": 4}}]})",
       StatusCode::INVALID_ARGUMENT,
       "batch has 4 records, over the limit of 3 (max_batch_records)"},
      {"batch: dense over max_batch_records", Rpc::kScoreBatch,
       dense_prefix + kDenseRow + "," + kDenseRow + "," + kDenseRow + "," +
           kDenseRow + "]}}",
       StatusCode::INVALID_ARGUMENT,
       "batch has 4 records, over the limit of 3"},
      {"batch: records and dense rows both given", Rpc::kScoreBatch,
       R"({"set": "courier", "records": [{"features": {"distance_km": 9}}],
           "dense": {"rows": [)" +
           std::string(kDenseRow) + "]}}",
       StatusCode::INVALID_ARGUMENT,
       "records (1) and dense.rows (1) are both given"},
      {"batch: reasons.top over max_reasons", Rpc::kScoreBatch,
       R"({"set": "courier", "records": [{"features": {"distance_km": 9}}],
           "reasons": {"top": 5}})",
       StatusCode::INVALID_ARGUMENT, "reasons.top: 5 is over the limit of 2"},
      {"batch: bad record is named by index and id", Rpc::kScoreBatch,
       R"({"set": "courier", "records": [
           {"recordId": "ok-1", "features": {"distance_km": 9}},
           {"recordId": "abc", "features": {"distance_km": "far"}}]})",
       StatusCode::INVALID_ARGUMENT,
       "records[1] (id 'abc'): feature 'distance_km': expected a number"},
      {"batch: unknown feature in a record", Rpc::kScoreBatch,
       R"({"set": "courier", "records": [
           {"recordId": "x7", "features": {"distance_km": 9, "weight": 2}}]})",
       StatusCode::INVALID_ARGUMENT,
       "records[0] (id 'x7'): feature 'weight' is not a feature of set"},
      {"batch: unseen level in a record", Rpc::kScoreBatch,
       R"({"set": "courier", "records": [
           {"recordId": "u1", "features": {"distance_km": 9,
            "region": "lunar"}}]})",
       StatusCode::INVALID_ARGUMENT,
       "records[0] (id 'u1'): feature 'region': level \"lunar\""},
      {"dense: row of the wrong width", Rpc::kScoreBatch,
       dense_prefix + kDenseRow + R"(, {"values": [9, 3, 2, 0]}]}})",
       StatusCode::INVALID_ARGUMENT, "dense.rows[1]: 4 values, but 5 columns"},
      {"dense: row of the wrong width with named columns", Rpc::kScoreBatch,
       R"({"set": "courier", "dense": {"columns": ["distance_km", "hour"],
           "rows": [{"values": [9, 18, 1]}]}})",
       StatusCode::INVALID_ARGUMENT, "dense.rows[0]: 3 values, but 2 columns"},
      {"dense: unknown column", Rpc::kScoreBatch,
       R"({"set": "courier", "dense": {"columns": ["distance_km", "weight"],
           "rows": [{"values": [9, 2]}]}})",
       StatusCode::INVALID_ARGUMENT,
       "dense.columns[1]: 'weight' is not a feature of set 'courier'"},
      {"dense: duplicate column", Rpc::kScoreBatch,
       R"({"set": "courier", "dense": {"columns": ["hour", "distance_km",
           "hour"], "rows": [{"values": [9, 2, 9]}]}})",
       StatusCode::INVALID_ARGUMENT,
       "dense.columns[2]: 'hour' appears twice (also dense.columns[0])"},
      {"dense: level index out of range", Rpc::kScoreBatch,
       dense_prefix + R"({"values": [9, 3, 3, 0, 18]}]}})",
       StatusCode::INVALID_ARGUMENT,
       "dense.rows[0]: feature 'region': level index 3 is out of range; the "
       "set has 3 levels"},
      {"dense: negative level index", Rpc::kScoreBatch,
       dense_prefix + R"({"values": [9, 3, 2, -1, 18]}]}})",
       StatusCode::INVALID_ARGUMENT,
       "dense.rows[0]: feature 'service': level index -1 is out of range"},
      {"dense: level index not an integer", Rpc::kScoreBatch,
       dense_prefix + kDenseRow + R"(, {"values": [9, 3, 1.5, 0, 18]}]}})",
       StatusCode::INVALID_ARGUMENT,
       "dense.rows[1]: feature 'region': level index 1.5 is not an integer"},
      {"dense: NaN without nan_is_missing", Rpc::kScoreBatch,
       dense_prefix + R"({"values": ["NaN", 3, 2, 0, 18]}]}})",
       StatusCode::INVALID_ARGUMENT,
       "dense.rows[0]: feature 'distance_km': value is NaN"},
      {"dense: infinite value", Rpc::kScoreBatch,
       dense_prefix + R"({"values": [9, "Infinity", 2, 0, 18]}]}})",
       StatusCode::INVALID_ARGUMENT,
       "dense.rows[0]: feature 'parcel_kg': value is infinite"},
      {"dense: REJECT feature without a column", Rpc::kScoreBatch,
       R"({"set": "courier", "dense": {"columns": ["hour"],
           "rows": [{"values": [9]}]}})",
       StatusCode::INVALID_ARGUMENT,
       "dense.rows[0]: feature 'distance_km': value is missing"},
      {"dense: NaN as missing under REJECT", Rpc::kScoreBatch,
       R"({"set": "courier", "dense": {"nanIsMissing": true,
           "rows": [{"values": ["NaN", 3, 2, 0, 18]}]}})",
       StatusCode::INVALID_ARGUMENT,
       "dense.rows[0]: feature 'distance_km': value is missing"},
  };
}

class BadInputTest : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new TempDir();
    std::filesystem::create_directory(dir_->File("sets"));
    ASSERT_TRUE(WriteTextFile(dir_->File("sets/courier.json"),
                              testing::CourierSetJson("courier", "v1"))
                    .ok());
    ASSERT_TRUE(WriteTextFile(dir_->File("plumbd.json"),
                              absl::StrCat(R"({"max_batch_records": 3,
                                  "max_reasons": 2, "ledger_path": ")",
                                           LedgerPath(), R"("})"))
                    .ok());
    absl::StatusOr<std::unique_ptr<PlumbdProcess>> plumbd =
        PlumbdProcess::Start(dir_->path(),
                             {"--config", dir_->File("plumbd.json")});
    ASSERT_TRUE(plumbd.ok()) << plumbd.status();
    plumbd_ = plumbd->release();
  }
  static void TearDownTestSuite() {
    delete plumbd_;  // kills it
    plumbd_ = nullptr;
    delete dir_;
    dir_ = nullptr;
  }

  static std::string LedgerPath() { return dir_->File("ledger/bad_input.db"); }

  static TempDir* dir_;
  static PlumbdProcess* plumbd_;
};

TempDir* BadInputTest::dir_ = nullptr;
PlumbdProcess* BadInputTest::plumbd_ = nullptr;

template <typename Request>
bool ParseRequest(const BadInputCase& c, Request* request) {
  google::protobuf::util::JsonParseOptions options;
  options.ignore_unknown_fields = false;
  const auto status = google::protobuf::util::JsonStringToMessage(
      c.request_json, request, options);
  EXPECT_TRUE(status.ok()) << c.description << ": " << status.ToString();
  if (c.tweak) c.tweak(request);
  return status.ok();
}

TEST_F(BadInputTest, EveryBadRequestGetsItsCodeAndNamesTheProblem) {
  ASSERT_NE(plumbd_, nullptr);
  auto stub = testing::NewScoringStub(plumbd_->addr());
  int checked = 0;
  for (const BadInputCase& c : Cases()) {
    SCOPED_TRACE(c.description);
    grpc::ClientContext context;
    grpc::Status status;
    if (c.rpc == Rpc::kScore) {
      v1::ScoreRequest request;
      if (!ParseRequest(c, &request)) continue;
      v1::ScoreReply reply;
      status = stub->Score(&context, request, &reply);
    } else {
      v1::ScoreBatchRequest request;
      if (!ParseRequest(c, &request)) continue;
      v1::ScoreBatchReply reply;
      status = stub->ScoreBatch(&context, request, &reply);
    }
    EXPECT_EQ(status.error_code(), c.code) << status.error_message();
    EXPECT_THAT(status.error_message(), HasSubstr(c.message_part));
    ++checked;
  }
  EXPECT_EQ(checked, static_cast<int>(Cases().size()));
  // Every request above was refused: the ledger (at the config's
  // ledger_path) holds no score.
  absl::StatusOr<std::unique_ptr<SqliteDb>> db = SqliteDb::Open(LedgerPath());
  ASSERT_TRUE(db.ok()) << db.status();
  absl::StatusOr<int64_t> scores =
      (*db)->QueryInt64("SELECT COUNT(*) FROM scores");
  ASSERT_TRUE(scores.ok()) << scores.status();
  EXPECT_EQ(*scores, 0);
}

TEST_F(BadInputTest, ValidRequestsOfTheSameShapesSucceed) {
  // The table's requests are one change away from these, which must pass:
  // proves a failure above comes from the change, not from the fixture.
  ASSERT_NE(plumbd_, nullptr);
  auto stub = testing::NewScoringStub(plumbd_->addr());
  v1::ScoreBatchRequest request;
  ASSERT_TRUE(google::protobuf::util::JsonStringToMessage(
                  std::string(R"({"set": "courier", "reasons": {"top": 2},
                      "dense": {"rows": [)") +
                      kDenseRow + "]}}",
                  &request)
                  .ok());
  grpc::ClientContext context;
  v1::ScoreBatchReply reply;
  grpc::Status status = stub->ScoreBatch(&context, request, &reply);
  ASSERT_TRUE(status.ok()) << status.error_message();
  EXPECT_EQ(reply.scores_size(), 1);
  EXPECT_EQ(reply.scores(0).reasons_size(), 2);
}

}  // namespace
}  // namespace plumbline::daemon
