// File: tests/daemon/server/plumbd_integration_test.cc
//
// Runs the real plumbd on an ephemeral port and talks to it over gRPC:
// Score, ScoreBatch (named and dense), ListSets, the standard health service,
// reload on SIGHUP (new version, invalid file, removed file), a clean exit
// on SIGTERM, and a drain (NOT_SERVING, GET /serving 503, calls answered).
//
// Expected log-odds are hand computations from the set's coefficients (listed
// in tests/daemon/test_sets.h), not the scorer's output.
#include <grpcpp/client_context.h>
#include <signal.h>

#include <cmath>
#include <filesystem>

#include "absl/strings/str_cat.h"
#include "gmock/gmock.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"
#include "tests/testing/http.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::grpc::health::v1::HealthCheckRequest;
using ::grpc::health::v1::HealthCheckResponse;
using testing::CourierSetJson;
using testing::DepotSetJson;
using ::testing::ElementsAre;
using ::testing::HasSubstr;
using testing::HttpAnswer;
using testing::HttpFetch;
using testing::InvalidSetJson;
using testing::PlumbdProcess;
using testing::PollUntil;
using testing::TempDir;
using testing::WriteTextFile;

// Hand computation: probability = 1 / (1 + exp(-log_odds)).
double HandLogistic(double log_odds) {
  return 1.0 / (1.0 + std::exp(-log_odds));
}

// Hand computations from the set's coefficients (test_sets.h), intercept -1.5.
// Record A: distance 9, parcel_kg absent (IMPUTE 3), region rural, service
// "overnight" (unseen → missing → IMPUTE standard), hour 18 (bin [17, inf)).
const double kLogOddsA =
    -1.5 + 0.8 * (9.0 - 5.0) / 2.5 + 0.3 * (3.0 - 2.0) / 1.0 + 0.9 + 0.0 + 0.5;
// Record B: distance 50 (clipped to 40), parcel 1.5, region null (INDICATOR
// 0.25), service express, hour null (INDICATOR 0.4).
const double kLogOddsB = -1.5 + 0.8 * (40.0 - 5.0) / 2.5 +
                         0.3 * (1.5 - 2.0) / 1.0 + 0.25 - 0.3 + 0.4;
// Record C: distance 2, parcel 2, region urban, service standard, hour 9
// (bin [9, 12), an edge belongs to the bin above it).
const double kLogOddsC =
    -1.5 + 0.8 * (2.0 - 5.0) / 2.5 + 0.3 * (2.0 - 2.0) / 1.0 - 0.4 + 0.0 - 0.1;

// Tolerance for a sum of a few terms in a different order than the scorer's.
constexpr double kTol = 1e-12;

google::protobuf::Struct Features(const std::string& json) {
  google::protobuf::Struct out;
  EXPECT_TRUE(google::protobuf::util::JsonStringToMessage(json, &out).ok());
  return out;
}

class PlumbdIntegrationTest : public ::testing::Test {
 protected:
  void SetUp() override {
    sets_dir_ = dir_.File("sets");
    std::filesystem::create_directory(sets_dir_);
    ASSERT_TRUE(
        WriteTextFile(courier_file(), CourierSetJson("courier", "2026-11"))
            .ok());
    ASSERT_TRUE(WriteTextFile(depot_file(), DepotSetJson("depot", "d1")).ok());
    std::vector<std::string> args = {"--sets", sets_dir_, "--ledger",
                                     dir_.File("var/ledger.db")};
    for (const std::string& a : ExtraArgs()) args.push_back(a);
    absl::StatusOr<std::unique_ptr<PlumbdProcess>> plumbd =
        PlumbdProcess::Start(dir_.path(), args);
    ASSERT_TRUE(plumbd.ok()) << plumbd.status();
    plumbd_ = *std::move(plumbd);
    stub_ = testing::NewScoringStub(plumbd_->addr());
    health_ = testing::NewHealthStub(plumbd_->addr());
  }
  void TearDown() override { plumbd_.reset(); }  // kills it if still running
  // More plumbd arguments for a fixture that needs them.
  virtual std::vector<std::string> ExtraArgs() { return {}; }

  std::string courier_file() const { return sets_dir_ + "/courier.json"; }
  std::string depot_file() const { return sets_dir_ + "/depot.json"; }

  v1::ListSetsReply ListSets() {
    grpc::ClientContext context;
    const v1::ListSetsRequest request;
    v1::ListSetsReply reply;
    grpc::Status status = stub_->ListSets(&context, request, &reply);
    EXPECT_TRUE(status.ok()) << status.error_message();
    return reply;
  }
  std::string VersionOf(const std::string& name) {
    const v1::ListSetsReply reply = ListSets();
    for (const v1::SetSummary& set : reply.sets()) {
      if (set.name() == name) return set.version();
    }
    return "<not loaded>";
  }
  // Health status of `service`, or SERVICE_UNKNOWN when the server says
  // NOT_FOUND.
  HealthCheckResponse::ServingStatus Health(const std::string& service) {
    grpc::ClientContext context;
    HealthCheckRequest request;
    request.set_service(service);
    HealthCheckResponse response;
    grpc::Status status = health_->Check(&context, request, &response);
    if (status.error_code() == grpc::StatusCode::NOT_FOUND) {
      return HealthCheckResponse::SERVICE_UNKNOWN;
    }
    EXPECT_TRUE(status.ok()) << status.error_message();
    return response.status();
  }
  grpc::Status Score(const std::string& json, v1::ScoreReply* reply,
                     uint32_t reasons = 0) {
    v1::ScoreRequest request;
    request.set_set("courier");
    request.mutable_record()->set_record_id("rec-1");
    *request.mutable_record()->mutable_features() = Features(json);
    request.mutable_reasons()->set_top(reasons);
    grpc::ClientContext context;
    return stub_->Score(&context, request, reply);
  }

  TempDir dir_;
  std::string sets_dir_;
  std::unique_ptr<PlumbdProcess> plumbd_;
  std::unique_ptr<v1::Scoring::Stub> stub_;
  std::unique_ptr<grpc::health::v1::Health::Stub> health_;
};

TEST_F(PlumbdIntegrationTest, PrintsOneReadinessLineWithTheBoundAddress) {
  EXPECT_EQ(plumbd_->CountLogLines("level=info event=listening addr=" +
                                   plumbd_->addr() + " sets=2"),
            1);
  EXPECT_THAT(plumbd_->addr(), HasSubstr("127.0.0.1:"));
  EXPECT_NE(plumbd_->addr(), "127.0.0.1:0");
}

TEST_F(PlumbdIntegrationTest, ScoreMatchesHandComputation) {
  v1::ScoreReply reply;
  grpc::Status status = Score(
      R"({"distance_km": 9, "region": "rural", "service": "overnight",
          "hour": 18})",
      &reply, 3);
  ASSERT_TRUE(status.ok()) << status.error_message();
  EXPECT_EQ(reply.set(), "courier");
  EXPECT_EQ(reply.version(), "2026-11");
  EXPECT_EQ(reply.score().record_id(), "rec-1");
  EXPECT_NEAR(reply.score().log_odds(), kLogOddsA, kTol);
  EXPECT_NEAR(reply.score().probability(), HandLogistic(kLogOddsA), kTol);
  // Reasons (raises log-odds): contribution minus the reference point's.
  // distance 1.28 - 0; region rural 0.9 - suburban 0.1; hour 0.5 - bin of 13
  // (0.0); then parcel_kg 0.3 is fourth and cut by top = 3.
  ASSERT_EQ(reply.score().reasons_size(), 3);
  EXPECT_EQ(reply.score().reasons(0).feature(), "distance_km");
  EXPECT_NEAR(reply.score().reasons(0).contribution(), 0.8 * 4.0 / 2.5, kTol);
  EXPECT_EQ(reply.score().reasons(1).feature(), "region");
  EXPECT_NEAR(reply.score().reasons(1).contribution(), 0.9 - 0.1, kTol);
  EXPECT_EQ(reply.score().reasons(2).feature(), "hour");
  EXPECT_NEAR(reply.score().reasons(2).contribution(), 0.5, kTol);
}

TEST_F(PlumbdIntegrationTest, ScoreBatchNamedMatchesHandComputation) {
  v1::ScoreBatchRequest request;
  request.set_set("courier");
  const std::pair<const char*, const char*> records[] = {
      {"a", R"({"distance_km": 9, "region": "rural", "service": "overnight",
                "hour": 18})"},
      {"b", R"({"distance_km": 50, "parcel_kg": 1.5, "region": null,
                "service": "express", "hour": null})"},
      {"c", R"({"distance_km": 2, "parcel_kg": 2, "region": "urban",
                "service": "standard", "hour": 9})"}};
  for (const auto& [id, json] : records) {
    v1::Record* record = request.add_records();
    record->set_record_id(id);
    *record->mutable_features() = Features(json);
  }
  grpc::ClientContext context;
  v1::ScoreBatchReply reply;
  grpc::Status status = stub_->ScoreBatch(&context, request, &reply);
  ASSERT_TRUE(status.ok()) << status.error_message();
  EXPECT_EQ(reply.version(), "2026-11");
  ASSERT_EQ(reply.scores_size(), 3);
  const double expected[] = {kLogOddsA, kLogOddsB, kLogOddsC};
  const char* ids[] = {"a", "b", "c"};
  for (int i = 0; i < 3; ++i) {
    EXPECT_EQ(reply.scores(i).record_id(), ids[i]);
    EXPECT_NEAR(reply.scores(i).log_odds(), expected[i], kTol) << ids[i];
    EXPECT_NEAR(reply.scores(i).probability(), HandLogistic(expected[i]), kTol);
  }
}

TEST_F(PlumbdIntegrationTest, ScoreBatchDenseMatchesHandComputation) {
  // All columns in the set's order; categorical cells are level indexes
  // (region: urban 0, suburban 1, rural 2; service: standard 0, express 1)
  // and NaN means missing.
  v1::ScoreBatchRequest request;
  request.set_set("courier");
  request.mutable_reasons()->set_top(1);
  v1::DenseRows* dense = request.mutable_dense();
  dense->set_nan_is_missing(true);
  const double nan = std::nan("");
  const std::vector<std::vector<double>> rows = {
      {9, nan, 2, nan, 18}, {50, 1.5, nan, 1, nan}, {2, 2, 0, 0, 9}};
  for (size_t r = 0; r < rows.size(); ++r) {
    v1::DenseRows::Row* row = dense->add_rows();
    row->set_record_id(absl::StrCat("d", r));
    for (double x : rows[r]) row->add_values(x);
  }
  grpc::ClientContext context;
  v1::ScoreBatchReply reply;
  grpc::Status status = stub_->ScoreBatch(&context, request, &reply);
  ASSERT_TRUE(status.ok()) << status.error_message();
  ASSERT_EQ(reply.scores_size(), 3);
  const double expected[] = {kLogOddsA, kLogOddsB, kLogOddsC};
  for (int i = 0; i < 3; ++i) {
    EXPECT_EQ(reply.scores(i).record_id(), absl::StrCat("d", i));
    EXPECT_NEAR(reply.scores(i).log_odds(), expected[i], kTol);
    EXPECT_NEAR(reply.scores(i).probability(), HandLogistic(expected[i]), kTol);
  }
  // Record B's top reason: distance clipped to 40 gives 0.8 * 35 / 2.5.
  ASSERT_EQ(reply.scores(1).reasons_size(), 1);
  EXPECT_EQ(reply.scores(1).reasons(0).feature(), "distance_km");
  EXPECT_NEAR(reply.scores(1).reasons(0).contribution(), 0.8 * 35.0 / 2.5,
              kTol);
}

TEST_F(PlumbdIntegrationTest, ScoreBatchDenseWithNamedColumnSubset) {
  // parcel_kg and service have no column: missing, so imputed.
  v1::ScoreBatchRequest request;
  request.set_set("courier");
  v1::DenseRows* dense = request.mutable_dense();
  dense->add_columns("hour");
  dense->add_columns("distance_km");
  dense->add_columns("region");
  v1::DenseRows::Row* row = dense->add_rows();
  for (double x : {18.0, 9.0, 2.0}) row->add_values(x);
  grpc::ClientContext context;
  v1::ScoreBatchReply reply;
  grpc::Status status = stub_->ScoreBatch(&context, request, &reply);
  ASSERT_TRUE(status.ok()) << status.error_message();
  ASSERT_EQ(reply.scores_size(), 1);
  EXPECT_NEAR(reply.scores(0).log_odds(), kLogOddsA, kTol);
}

TEST_F(PlumbdIntegrationTest, ListSetsDescribesTheSchemas) {
  const v1::ListSetsReply reply = ListSets();
  ASSERT_EQ(reply.sets_size(), 2);
  const v1::SetSummary& courier = reply.sets(0);
  EXPECT_EQ(courier.name(), "courier");
  EXPECT_EQ(courier.version(), "2026-11");
  EXPECT_EQ(courier.description(), "first delivery attempt fails");
  EXPECT_EQ(courier.source(), courier_file());
  ASSERT_EQ(courier.features_size(), 5);
  EXPECT_EQ(courier.features(0).name(), "distance_km");
  EXPECT_EQ(courier.features(0).kind(), v1::FeatureSummary::NUMERIC);
  EXPECT_EQ(courier.features(0).missing(), "REJECT");
  EXPECT_EQ(courier.features(2).kind(), v1::FeatureSummary::CATEGORICAL);
  EXPECT_THAT(courier.features(2).levels(),
              ElementsAre("urban", "suburban", "rural"));
  EXPECT_EQ(courier.features(2).missing(), "INDICATOR");
  EXPECT_EQ(courier.features(4).kind(), v1::FeatureSummary::BINNED);
  EXPECT_EQ(courier.features(3).missing(), "IMPUTE");
  EXPECT_EQ(reply.sets(1).name(), "depot");
}

TEST_F(PlumbdIntegrationTest, HealthServesOverallServiceAndEverySet) {
  EXPECT_EQ(Health(""), HealthCheckResponse::SERVING);
  EXPECT_EQ(Health("plumbline.v1.Scoring"), HealthCheckResponse::SERVING);
  EXPECT_EQ(Health("plumbline.v1.Outcomes"), HealthCheckResponse::SERVING);
  EXPECT_EQ(Health("courier"), HealthCheckResponse::SERVING);
  EXPECT_EQ(Health("depot"), HealthCheckResponse::SERVING);
  EXPECT_EQ(Health("no-such-set"), HealthCheckResponse::SERVICE_UNKNOWN);
}

TEST_F(PlumbdIntegrationTest, ReloadOnSighupSwapsVersionsKeepsOldOnBadFile) {
  // New version with intercept 0.5: record A's log-odds rise by 2.
  ASSERT_TRUE(
      WriteTextFile(courier_file(), CourierSetJson("courier", "2026-12", 0.5))
          .ok());
  plumbd_->Signal(SIGHUP);
  ASSERT_TRUE(PollUntil([&] { return VersionOf("courier") == "2026-12"; }))
      << plumbd_->Log();
  v1::ScoreReply reply;
  const std::string record_a =
      R"({"distance_km": 9, "region": "rural", "service": "overnight",
          "hour": 18})";
  ASSERT_TRUE(Score(record_a, &reply).ok());
  EXPECT_EQ(reply.version(), "2026-12");
  EXPECT_NEAR(reply.score().log_odds(), kLogOddsA + 2.0, kTol);

  // An invalid file is rejected; 2026-12 keeps serving.
  const int rejected_before = plumbd_->CountLogLines("event=set_rejected");
  ASSERT_TRUE(
      WriteTextFile(courier_file(), InvalidSetJson("courier", "2027-01")).ok());
  plumbd_->Signal(SIGHUP);
  ASSERT_TRUE(PollUntil([&] {
    return plumbd_->CountLogLines("event=reload_done") >= 2;
  })) << plumbd_->Log();
  EXPECT_EQ(plumbd_->CountLogLines("event=set_rejected file=" + courier_file()),
            rejected_before + 1);
  EXPECT_EQ(VersionOf("courier"), "2026-12");
  ASSERT_TRUE(Score(record_a, &reply).ok());
  EXPECT_EQ(reply.version(), "2026-12");
  EXPECT_EQ(Health("courier"), HealthCheckResponse::SERVING);

  // A removed file unloads its set; its health name goes NOT_SERVING.
  std::filesystem::remove(depot_file());
  plumbd_->Signal(SIGHUP);
  ASSERT_TRUE(PollUntil([&] { return VersionOf("depot") == "<not loaded>"; }));
  EXPECT_EQ(Health("depot"), HealthCheckResponse::NOT_SERVING);
  EXPECT_EQ(Health("courier"), HealthCheckResponse::SERVING);

  plumbd_->Signal(SIGTERM);
  absl::StatusOr<int> exit_status = plumbd_->WaitForExit();
  ASSERT_TRUE(exit_status.ok());
  EXPECT_EQ(*exit_status, 0) << plumbd_->Log();
  EXPECT_EQ(plumbd_->CountLogLines("event=stopped"), 1);
}

// A replica behind a balancer: with grpc.drain_seconds, SIGTERM turns
// health checking NOT_SERVING while calls are still answered, and only then
// does the server stop taking them.
class PlumbdDrainTest : public PlumbdIntegrationTest {
 protected:
  std::vector<std::string> ExtraArgs() override {
    const std::string config = dir_.File("plumbd.json");
    EXPECT_TRUE(
        WriteTextFile(config, R"({"grpc": {"drain_seconds": 2}})").ok());
    return {"--config", config};
  }
  grpc::Status ScoreParcel(const std::string& id) {
    v1::ScoreRequest request;
    request.set_set("courier");
    request.mutable_record()->set_record_id(id);
    *request.mutable_record()->mutable_features() = Features(
        R"({"distance_km": 4, "region": "urban", "service": "standard",
            "hour": 9})");
    v1::ScoreReply reply;
    grpc::ClientContext context;
    return stub_->Score(&context, request, &reply);
  }
};

TEST_F(PlumbdDrainTest, SaysNotServingThenStillAnswersThenStops) {
  ASSERT_TRUE(ScoreParcel("parcel-drain-1").ok());
  EXPECT_EQ(Health(""), HealthCheckResponse::SERVING);
  // The readiness probe a proxy checks, on the metrics listener.
  const std::string metrics = plumbd_->MetricsAddress();
  ASSERT_FALSE(metrics.empty()) << plumbd_->Log();
  absl::StatusOr<HttpAnswer> probe = HttpFetch(metrics, "/serving");
  ASSERT_TRUE(probe.ok()) << probe.status();
  EXPECT_EQ(probe->status, 200);
  EXPECT_EQ(probe->body, "serving\n");
  plumbd_->Signal(SIGTERM);
  ASSERT_TRUE(PollUntil([&] {
    return plumbd_->CountLogLines("event=draining") == 1;
  })) << plumbd_->Log();
  // During the drain: every name NOT_SERVING, calls still answered.
  EXPECT_EQ(Health(""), HealthCheckResponse::NOT_SERVING);
  EXPECT_EQ(Health("courier"), HealthCheckResponse::NOT_SERVING);
  probe = HttpFetch(metrics, "/serving");
  ASSERT_TRUE(probe.ok()) << probe.status();
  EXPECT_EQ(probe->status, 503);
  EXPECT_EQ(probe->body, "draining\n");
  grpc::Status during = ScoreParcel("parcel-drain-2");
  EXPECT_TRUE(during.ok()) << during.error_message();
  EXPECT_EQ(plumbd_->CountLogLines("event=stopped"), 0);
  absl::StatusOr<int> exit_status = plumbd_->WaitForExit();
  ASSERT_TRUE(exit_status.ok());
  EXPECT_EQ(*exit_status, 0) << plumbd_->Log();
  EXPECT_EQ(plumbd_->CountLogLines("event=stopped"), 1);
}

TEST(PlumbdConfigTest, ADrainOverFiveMinutesIsRefused) {
  TempDir dir;
  ASSERT_TRUE(WriteTextFile(dir.File("plumbd.json"),
                            R"({"grpc": {"drain_seconds": 301}})")
                  .ok());
  std::filesystem::create_directory(dir.File("sets"));
  absl::StatusOr<testing::ProcessResult> result =
      testing::RunProcess({PLUMBD_PATH, "--listen", "127.0.0.1:0", "--config",
                           dir.File("plumbd.json"), "--sets", dir.File("sets"),
                           "--ledger", dir.File("ledger.db")},
                          dir.path());
  ASSERT_TRUE(result.ok());
  EXPECT_EQ(result->exit_code, 1);
  EXPECT_THAT(result->err, HasSubstr("grpc.drain_seconds: 301"));
}

TEST_F(PlumbdIntegrationTest, SigintAlsoStopsCleanly) {
  plumbd_->Signal(SIGINT);
  absl::StatusOr<int> exit_status = plumbd_->WaitForExit();
  ASSERT_TRUE(exit_status.ok());
  EXPECT_EQ(*exit_status, 0) << plumbd_->Log();
}

TEST(PlumbdStartupTest, MissingSetsDirectoryExitsWithStatus1) {
  TempDir dir;
  absl::StatusOr<testing::ProcessResult> result = testing::RunProcess(
      {PLUMBD_PATH, "--listen", "127.0.0.1:0", "--sets", dir.File("absent"),
       "--ledger", dir.File("ledger.db")},
      dir.path());
  ASSERT_TRUE(result.ok());
  EXPECT_EQ(result->exit_code, 1);
  EXPECT_THAT(result->err, HasSubstr("level=error event=startup_failed"));
  EXPECT_THAT(result->err, HasSubstr(dir.File("absent")));
}

TEST(PlumbdStartupTest, LedgerThatCannotBeOpenedExitsWithStatus1) {
  // The ledger's directory would have to be created under a regular file.
  TempDir dir;
  std::filesystem::create_directory(dir.File("sets"));
  ASSERT_TRUE(WriteTextFile(dir.File("not-a-dir"), "x").ok());
  const std::string ledger = dir.File("not-a-dir/ledger.db");
  absl::StatusOr<testing::ProcessResult> result =
      testing::RunProcess({PLUMBD_PATH, "--listen", "127.0.0.1:0", "--sets",
                           dir.File("sets"), "--ledger", ledger},
                          dir.path());
  ASSERT_TRUE(result.ok());
  EXPECT_EQ(result->exit_code, 1);
  EXPECT_THAT(result->err, HasSubstr("level=error event=startup_failed"));
  EXPECT_THAT(result->err, HasSubstr(ledger));
}

TEST(PlumbdStartupTest, BadConfigOrFlagIsRefused) {
  TempDir dir;
  ASSERT_TRUE(WriteTextFile(dir.File("plumbd.json"), R"({"sets": "x"})").ok());
  absl::StatusOr<testing::ProcessResult> result = testing::RunProcess(
      {PLUMBD_PATH, "--config", dir.File("plumbd.json")}, dir.path());
  ASSERT_TRUE(result.ok());
  EXPECT_EQ(result->exit_code, 1);
  EXPECT_THAT(result->err, HasSubstr(dir.File("plumbd.json")));

  result = testing::RunProcess({PLUMBD_PATH, "--no_such_flag"}, dir.path());
  ASSERT_TRUE(result.ok());
  EXPECT_EQ(result->exit_code, 2);
  EXPECT_THAT(result->err, HasSubstr("unknown flag --no_such_flag"));
}

}  // namespace
}  // namespace plumbline::daemon
