// File: tests/daemon/server/hostile_input_test.cc
//
// What a hostile or careless caller can send that the generated stubs would
// never produce, sent to the real plumbd: thousands of invented method
// names, caller strings of 9,000 characters, google.protobuf.Struct values
// nested 60 deep, strings that are not UTF-8, a refit of a set that does not
// exist and versions with control characters. Each must get its documented
// code with a short message, leave no raw library line in the JSON-lines
// log, never count as a server error, and never make plumbd keep state per
// invented name (series, memory).
//
// The daemon runs with access control on (a score and an admin token) and
// JSON-lines logs, like a production config.
#include <grpcpp/client_context.h>
#include <grpcpp/create_channel.h>
#include <grpcpp/generic/generic_stub.h>
#include <grpcpp/security/credentials.h>
#include <grpcpp/support/byte_buffer.h>

#include <filesystem>
#include <iostream>
#include <memory>
#include <string>
#include <vector>

#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_split.h"
#include "absl/time/clock.h"
#include "absl/time/time.h"
#include "gmock/gmock.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"
#include "plumbline/v1/outcomes.grpc.pb.h"
#include "plumbline/v1/registry.grpc.pb.h"
#include "plumbline/v1/scoring.grpc.pb.h"
#include "tests/testing/http.h"
#include "tests/testing/process.h"
#include "tests/testing/security_testing.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::AllOf;
using ::testing::HasSubstr;
using ::testing::Not;
using testing::PlumbdProcess;
using testing::TempDir;
using testing::WriteTextFile;

// Longest message a refusal may carry here: a few lines of text, whatever
// the caller sent.
constexpr size_t kShortMessage = 600;

// One unary call of `method` with `payload` as the serialized request.
grpc::Status RawCall(const std::shared_ptr<grpc::Channel>& channel,
                     const std::string& method, const std::string& payload,
                     const std::string& token) {
  grpc::GenericStub stub(channel);
  grpc::ClientContext context;
  context.set_deadline(std::chrono::system_clock::now() +
                       std::chrono::seconds(30));
  if (!token.empty()) {
    context.AddMetadata("authorization", absl::StrCat("Bearer ", token));
  }
  grpc::Slice slice(payload);
  grpc::ByteBuffer request(&slice, 1);
  grpc::CompletionQueue cq;
  std::unique_ptr<grpc::GenericClientAsyncResponseReader> call =
      stub.PrepareUnaryCall(&context, method, request, &cq);
  call->StartCall();
  grpc::ByteBuffer reply;
  grpc::Status status;
  call->Finish(&reply, &status, reinterpret_cast<void*>(1));
  void* tag = nullptr;
  bool ok = false;
  EXPECT_TRUE(cq.Next(&tag, &ok));
  cq.Shutdown();
  while (cq.Next(&tag, &ok)) {
  }
  return status;
}

// Lines of `log` that are not one JSON event object.
std::vector<std::string> ForeignLogLines(const std::string& log) {
  std::vector<std::string> foreign;
  for (absl::string_view line : absl::StrSplit(log, '\n', absl::SkipEmpty())) {
    if (!absl::StartsWith(line, "{\"level\":") || !absl::EndsWith(line, "}")) {
      foreign.emplace_back(line);
    }
  }
  return foreign;
}

// ScoreRequest for courier whose one feature value is a Struct nested
// `depth` levels deep.
v1::ScoreRequest NestedRequest(int depth) {
  v1::ScoreRequest request;
  request.set_set("courier");
  google::protobuf::Value* value =
      &(*request.mutable_record()->mutable_features()->mutable_fields())["x"];
  for (int i = 0; i < depth; ++i) {
    value = &(*value->mutable_struct_value()->mutable_fields())["x"];
  }
  value->set_number_value(1);
  return request;
}

class HostileInputTest : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new TempDir();
    std::filesystem::create_directory(dir_->File("sets"));
    ASSERT_TRUE(WriteTextFile(dir_->File("sets/courier.json"),
                              testing::CourierSetJson("courier", "v1"))
                    .ok());
    // A valid set whose tiny scale turns a large finite value into +inf
    // (and then, times the coefficient 0, into NaN).
    ASSERT_TRUE(WriteTextFile(dir_->File("sets/extreme.json"),
                              R"({"name": "extreme", "version": "1",
                                  "features": [{"name": "tiny", "numeric":
                                  {"center": 0, "scale": 1e-300,
                                   "coefficient": 0}}]})")
                    .ok());
    score_ = new testing::TestToken(testing::MakeTestToken("router", "SCORE"));
    admin_ = new testing::TestToken(testing::MakeTestToken("ops", "ADMIN"));
    ASSERT_TRUE(
        WriteTextFile(
            dir_->File("plumbd.json"),
            absl::StrCat(R"({"sets_dir": ")", dir_->File("sets"),
                         R"(", "ledger_path": ")", dir_->File("ledger.db"),
                         R"(", "log": {"format": "JSON_LINES"},
                         "security": {"access": {"tokens": [)",
                         score_->entry_json, ",", admin_->entry_json, "]}}}"))
            .ok());
    absl::StatusOr<std::unique_ptr<PlumbdProcess>> plumbd =
        PlumbdProcess::Start(dir_->path(),
                             {"--config", dir_->File("plumbd.json")});
    ASSERT_TRUE(plumbd.ok()) << plumbd.status();
    plumbd_ = plumbd->release();
    channel_ = new std::shared_ptr<grpc::Channel>(grpc::CreateChannel(
        plumbd_->addr(), grpc::InsecureChannelCredentials()));
  }
  static void TearDownTestSuite() {
    delete channel_;
    delete plumbd_;  // kills it
    delete score_;
    delete admin_;
    delete dir_;
  }

  void SetUp() override { ASSERT_NE(plumbd_, nullptr); }

  static std::string MetricsAddress() {
    // JSON-lines log: {"...","event":"metrics_listening","addr":"H:P"}
    for (absl::string_view line : absl::StrSplit(plumbd_->Log(), '\n')) {
      if (!absl::StrContains(line, "\"event\":\"metrics_listening\"")) {
        continue;
      }
      const size_t at = line.find("\"addr\":\"");
      if (at == absl::string_view::npos) continue;
      absl::string_view addr = line.substr(at + 8);
      return std::string(addr.substr(0, addr.find('"')));
    }
    return "";
  }
  static std::string Scrape() {
    absl::StatusOr<std::string> body =
        testing::HttpGet(MetricsAddress(), "/metrics");
    EXPECT_TRUE(body.ok()) << body.status();
    return body.ok() ? *body : "";
  }
  static int CountLines(const std::string& text, absl::string_view prefix) {
    int n = 0;
    for (absl::string_view line : absl::StrSplit(text, '\n')) {
      if (absl::StartsWith(line, prefix)) ++n;
    }
    return n;
  }
  static void WithToken(grpc::ClientContext* context,
                        const testing::TestToken& token) {
    context->AddMetadata("authorization", absl::StrCat("Bearer ", token.token));
  }

  static TempDir* dir_;
  static PlumbdProcess* plumbd_;
  static testing::TestToken* score_;
  static testing::TestToken* admin_;
  static std::shared_ptr<grpc::Channel>* channel_;
};

TempDir* HostileInputTest::dir_ = nullptr;
PlumbdProcess* HostileInputTest::plumbd_ = nullptr;
testing::TestToken* HostileInputTest::score_ = nullptr;
testing::TestToken* HostileInputTest::admin_ = nullptr;
std::shared_ptr<grpc::Channel>* HostileInputTest::channel_ = nullptr;

TEST_F(HostileInputTest, InventedMethodNamesAddNoSeriesAndNoMemory) {
  // Warm-up on the same path (gRPC's own buffers, the "unknown" series),
  // then the measurement: 10,000 calls, each to a name never seen before,
  // with no credential at all.
  for (int i = 0; i < 500; ++i) {
    ASSERT_EQ(RawCall(*channel_, "/warmup.Service/Method", "", "").error_code(),
              grpc::StatusCode::UNIMPLEMENTED);
  }
  const std::string before = Scrape();
  const int64_t rss_before = testing::RssKib(plumbd_->pid());
  ASSERT_GT(rss_before, 0);
  constexpr int kNames = 10000;
  for (int i = 0; i < kNames; ++i) {
    const grpc::Status status =
        RawCall(*channel_, absl::StrCat("/attacker.v", i, ".Service/Method", i),
                "", "");
    ASSERT_EQ(status.error_code(), grpc::StatusCode::UNIMPLEMENTED) << i;
  }
  const int64_t rss_after = testing::RssKib(plumbd_->pid());
  const std::string after = Scrape();
  std::cout << kNames << " invented names: VmRSS " << rss_before << " -> "
            << rss_after << " KiB, /metrics " << before.size() << " -> "
            << after.size() << " bytes\n";

  // Series: none new (the warm-up made the one "unknown" series).
  EXPECT_EQ(CountLines(after, "plumbline_requests_total{"),
            CountLines(before, "plumbline_requests_total{"));
  EXPECT_EQ(CountLines(after, "plumbline_request_duration_seconds_count{"),
            CountLines(before, "plumbline_request_duration_seconds_count{"));
  EXPECT_THAT(after, Not(HasSubstr("attacker.v")));
  EXPECT_THAT(after, HasSubstr(R"(code="UNIMPLEMENTED",method="unknown"} )"));
  // Exposition size: the same series with bigger numbers (a few bytes per
  // changed value), never a series per name (~2 KiB each before the fix).
  EXPECT_LT(after.size(), before.size() + 1024)
      << "before " << before.size() << " bytes, after " << after.size();
  // Memory: measured, not timed. Before the fix 5,000 names cost 6.9 MiB
  // (about 1.4 KiB of series per name); allow gRPC's own noise.
  // Not under ASan: its quarantine keeps every freed block resident.
  if (!testing::kBuiltWithAddressSanitizer) {
    EXPECT_LT(rss_after - rss_before, 4 * 1024)
        << "VmRSS " << rss_before << " KiB -> " << rss_after << " KiB";
  }
}

TEST_F(HostileInputTest, LongCallerStringsGetShortMessagesWithTheRightCode) {
  const std::string huge(9000, 'q');
  auto scoring = v1::Scoring::NewStub(*channel_);
  {
    // A 9,000-character feature name.
    v1::ScoreRequest request;
    request.set_set("courier");
    (*request.mutable_record()->mutable_features()->mutable_fields())[huge]
        .set_number_value(1);
    grpc::ClientContext context;
    WithToken(&context, *score_);
    v1::ScoreReply reply;
    const grpc::Status status = scoring->Score(&context, request, &reply);
    EXPECT_EQ(status.error_code(), grpc::StatusCode::INVALID_ARGUMENT)
        << status.error_message().substr(0, 200);
    EXPECT_THAT(status.error_message(),
                AllOf(HasSubstr("qqqq...(9000 bytes)' is not a feature of set "
                                "'courier'"),
                      Not(HasSubstr(std::string(200, 'q')))));
    EXPECT_LT(status.error_message().size(), kShortMessage);
  }
  {
    // A 9,000-character set name.
    v1::ScoreRequest request;
    request.set_set(huge);
    grpc::ClientContext context;
    WithToken(&context, *score_);
    v1::ScoreReply reply;
    const grpc::Status status = scoring->Score(&context, request, &reply);
    EXPECT_EQ(status.error_code(), grpc::StatusCode::NOT_FOUND);
    EXPECT_LT(status.error_message().size(), kShortMessage);
  }
  {
    // A 9,000-character record id on a record that fails, in a batch.
    v1::ScoreBatchRequest request;
    request.set_set("courier");
    v1::Record* record = request.add_records();
    record->set_record_id(huge);
    (*record->mutable_features()->mutable_fields())["distance_km"]
        .set_string_value("far");
    grpc::ClientContext context;
    WithToken(&context, *score_);
    v1::ScoreBatchReply reply;
    const grpc::Status status = scoring->ScoreBatch(&context, request, &reply);
    EXPECT_EQ(status.error_code(), grpc::StatusCode::INVALID_ARGUMENT);
    EXPECT_THAT(status.error_message(), HasSubstr("records[0] (id 'qqq"));
    EXPECT_LT(status.error_message().size(), kShortMessage);
  }
  {
    // A 9,000-character unseen level: the scorer quotes it.
    v1::ScoreRequest request;
    request.set_set("courier");
    auto& fields =
        *request.mutable_record()->mutable_features()->mutable_fields();
    fields["distance_km"].set_number_value(3);
    fields["region"].set_string_value(huge);
    grpc::ClientContext context;
    WithToken(&context, *score_);
    v1::ScoreReply reply;
    const grpc::Status status = scoring->Score(&context, request, &reply);
    EXPECT_EQ(status.error_code(), grpc::StatusCode::INVALID_ARGUMENT);
    EXPECT_THAT(status.error_message(), HasSubstr("is not one of the set's"));
    EXPECT_LT(status.error_message().size(), kShortMessage);
  }
  {
    // An outcome with a 9,000-character id and a bad label.
    auto outcomes = v1::Outcomes::NewStub(*channel_);
    v1::ReportOutcomeRequest request;
    request.mutable_outcome()->set_record_id(huge);
    request.mutable_outcome()->set_label(7);
    grpc::ClientContext context;
    WithToken(&context, *score_);
    v1::ReportOutcomeReply reply;
    const grpc::Status status =
        outcomes->ReportOutcome(&context, request, &reply);
    EXPECT_EQ(status.error_code(), grpc::StatusCode::INVALID_ARGUMENT);
    EXPECT_THAT(status.error_message(), HasSubstr("must be 0 or 1"));
    EXPECT_LT(status.error_message().size(), kShortMessage);
  }
}

TEST_F(HostileInputTest, UnparsableRequestsAreInvalidArgumentAndLoggedCleanly) {
  std::string nested;
  ASSERT_TRUE(NestedRequest(60).SerializeToString(&nested));
  // A record id that is not UTF-8: written as "AAAA", then the bytes are
  // replaced (a proto3 string must be UTF-8; protobuf refuses to parse it).
  v1::ScoreRequest with_id;
  with_id.set_set("courier");
  with_id.mutable_record()->set_record_id("AAAA");
  (*with_id.mutable_record()
        ->mutable_features()
        ->mutable_fields())["distance_km"]
      .set_number_value(3);
  std::string bad_utf8;
  ASSERT_TRUE(with_id.SerializeToString(&bad_utf8));
  const size_t at = bad_utf8.find("AAAA");
  ASSERT_NE(at, std::string::npos);
  bad_utf8.replace(at, 4, "\xff\xfe\xc0\x80");

  const double invalid_before =
      testing::FindSample(testing::ParseExposition(Scrape()),
                          "plumbline_requests_total",
                          {{"method", "plumbline.v1.Scoring/Score"},
                           {"code", "INVALID_ARGUMENT"}})
          .value_or(0);
  for (const std::string* payload : {&nested, &bad_utf8}) {
    const grpc::Status status = RawCall(
        *channel_, "/plumbline.v1.Scoring/Score", *payload, score_->token);
    EXPECT_EQ(status.error_code(), grpc::StatusCode::INVALID_ARGUMENT)
        << status.error_message();
    EXPECT_THAT(status.error_message(),
                HasSubstr("plumbline.v1.Scoring/Score: the request is not a "
                          "valid protobuf message"));
  }
  // Not counted as server errors.
  const std::vector<testing::Sample> after = testing::ParseExposition(Scrape());
  EXPECT_FALSE(testing::FindSample(after, "plumbline_requests_total",
                                   {{"method", "plumbline.v1.Scoring/Score"},
                                    {"code", "INTERNAL"}})
                   .has_value());
  EXPECT_EQ(testing::FindSample(after, "plumbline_requests_total",
                                {{"method", "plumbline.v1.Scoring/Score"},
                                 {"code", "INVALID_ARGUMENT"}})
                .value_or(0),
            invalid_before + 2);
  // protobuf's complaint reaches the log only as a JSON event.
  const std::string log = plumbd_->Log();
  EXPECT_THAT(ForeignLogLines(log), ::testing::IsEmpty()) << log;
  EXPECT_THAT(log, HasSubstr("\"event\":\"library_log\""));
  EXPECT_THAT(log, HasSubstr("invalid UTF-8"));
}

TEST_F(HostileInputTest, RefitOfAnUnknownSetIsNotFoundAndQueuesNothing) {
  auto registry = v1::Registry::NewStub(*channel_);
  v1::RefitRequest request;
  request.set_set("no_such_set");
  grpc::ClientContext context;
  WithToken(&context, *admin_);
  v1::RefitReply reply;
  const grpc::Status status = registry->Refit(&context, request, &reply);
  EXPECT_EQ(status.error_code(), grpc::StatusCode::NOT_FOUND)
      << status.error_message();
  EXPECT_THAT(status.error_message(),
              HasSubstr("no version of a set named 'no_such_set' is known"));
  // No job ran: the worker counts every finished job by set.
  EXPECT_THAT(Scrape(), Not(HasSubstr("no_such_set")));
  EXPECT_EQ(plumbd_->CountLogLines("no_such_set"), 0);
}

TEST_F(HostileInputTest, VersionsWithControlCharactersAreRefused) {
  auto registry = v1::Registry::NewStub(*channel_);
  {
    // A new version whose name holds a newline and an escape sequence.
    v1::LoadCandidateRequest request;
    ASSERT_TRUE(
        google::protobuf::util::JsonStringToMessage(
            testing::CourierSetJson("courier", "v2"), request.mutable_set())
            .ok());
    request.mutable_set()->set_version("v2\n\x1b[2Jforged line");
    grpc::ClientContext context;
    WithToken(&context, *admin_);
    v1::VersionInfo reply;
    const grpc::Status status =
        registry->LoadCandidate(&context, request, &reply);
    EXPECT_EQ(status.error_code(), grpc::StatusCode::INVALID_ARGUMENT)
        << status.error_message();
    EXPECT_THAT(status.error_message(), HasSubstr("control character"));
    EXPECT_THAT(status.error_message(), Not(HasSubstr("\n")));
    EXPECT_THAT(status.error_message(), Not(HasSubstr("\x1b")));
  }
  {
    // Naming a version with a carriage return.
    v1::VersionRequest request;
    request.set_set("courier");
    request.set_version("v1\r\nlevel=error event=forged");
    grpc::ClientContext context;
    WithToken(&context, *admin_);
    v1::VersionInfo reply;
    const grpc::Status status = registry->Activate(&context, request, &reply);
    EXPECT_EQ(status.error_code(), grpc::StatusCode::INVALID_ARGUMENT)
        << status.error_message();
    EXPECT_THAT(status.error_message(), HasSubstr("v1\\x0d\\x0alevel"));
  }
  // Nothing reached the version store, and the log carries no raw control
  // character (every line is one JSON event).
  v1::ListVersionsRequest list;
  list.set_set("courier");
  grpc::ClientContext context;
  WithToken(&context, *admin_);
  v1::ListVersionsReply versions;
  ASSERT_TRUE(registry->ListVersions(&context, list, &versions).ok());
  ASSERT_EQ(versions.versions_size(), 1);
  EXPECT_EQ(versions.versions(0).version(), "v1");
  EXPECT_THAT(ForeignLogLines(plumbd_->Log()), ::testing::IsEmpty());
}

// Found by tests/fuzz/fuzz_coefficient_set: finite values could score to a
// NaN probability. Named and dense requests are refused, naming the
// feature, and nothing reaches the ledger.
TEST_F(HostileInputTest, ValuesThatOverflowTheEncodingAreRefused) {
  auto scoring = v1::Scoring::NewStub(*channel_);
  v1::ScoreRequest request;
  request.set_set("extreme");
  (*request.mutable_record()->mutable_features()->mutable_fields())["tiny"]
      .set_number_value(1e10);
  grpc::ClientContext context;
  WithToken(&context, *score_);
  v1::ScoreReply reply;
  const grpc::Status status = scoring->Score(&context, request, &reply);
  EXPECT_EQ(status.error_code(), grpc::StatusCode::INVALID_ARGUMENT)
      << "probability " << reply.score().probability();
  EXPECT_THAT(status.error_message(),
              HasSubstr("feature 'tiny': value 1e+10 is too far from the "
                        "centre"));

  v1::ScoreBatchRequest batch;
  batch.set_set("extreme");
  batch.mutable_dense()->add_rows()->add_values(1);
  batch.mutable_dense()->add_rows()->add_values(-1e10);
  grpc::ClientContext batch_context;
  WithToken(&batch_context, *score_);
  v1::ScoreBatchReply batch_reply;
  const grpc::Status batch_status =
      scoring->ScoreBatch(&batch_context, batch, &batch_reply);
  EXPECT_EQ(batch_status.error_code(), grpc::StatusCode::INVALID_ARGUMENT);
  EXPECT_THAT(batch_status.error_message(),
              HasSubstr("dense.rows[1]: feature 'tiny'"));
}

}  // namespace
}  // namespace plumbline::daemon
