// File: tests/daemon/access/admit_test.cc
//
// Admit through an in-process DaemonServer. The deadline check: a test
// interceptor holds a marked call until its deadline has passed, so the
// handler starts with an expired deadline; the call must then leave no row
// in the ledger (Score) and record no outcome (ReportOutcome). The
// installed access control reading real calls' metadata. And the metrics
// endpoint's basic auth, in process.
#include <grpcpp/client_context.h>
#include <grpcpp/support/server_interceptor.h>

#include <chrono>
#include <filesystem>
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/synchronization/mutex.h"
#include "daemon/access/access_control.h"
#include "daemon/ledger/sqlite_db.h"
#include "daemon/ledger/sqlite_ledger.h"
#include "daemon/metrics/exporter.h"
#include "daemon/scoring/set_registry.h"
#include "daemon/security/token_hash.h"
#include "daemon/server/grpc_server.h"
#include "gmock/gmock.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"
#include "tests/testing/http.h"
#include "tests/testing/process.h"
#include "tests/testing/security_testing.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;
namespace exp = grpc::experimental;

constexpr char kHoldKey[] = "x-plumbline-test-hold";

// What the handlers of held calls returned.
struct HeldStatuses {
  absl::Mutex mu;
  std::vector<grpc::Status> sent ABSL_GUARDED_BY(mu);
  size_t size() {
    absl::MutexLock lock(&mu);
    return sent.size();
  }
  grpc::Status back() {
    absl::MutexLock lock(&mu);
    return sent.back();
  }
};

// Holds a call carrying kHoldKey metadata, after its request arrived and
// before the handler runs, until the call's deadline has passed; records
// the status the handler sends.
class HoldInterceptor : public exp::Interceptor {
 public:
  HoldInterceptor(exp::ServerRpcInfo* info, HeldStatuses* statuses)
      : info_(info), statuses_(statuses) {}

  void Intercept(exp::InterceptorBatchMethods* methods) override {
    using Hook = exp::InterceptionHookPoints;
    if (methods->QueryInterceptionHookPoint(Hook::POST_RECV_INITIAL_METADATA)) {
      const auto* metadata = methods->GetRecvInitialMetadata();
      held_ = metadata->find(kHoldKey) != metadata->end();
    }
    if (held_ && methods->QueryInterceptionHookPoint(Hook::POST_RECV_MESSAGE)) {
      const auto deadline = info_->server_context()->deadline();
      testing::PollUntil(
          [&] { return std::chrono::system_clock::now() > deadline; });
    }
    if (held_ && methods->QueryInterceptionHookPoint(Hook::PRE_SEND_STATUS)) {
      absl::MutexLock lock(&statuses_->mu);
      statuses_->sent.push_back(methods->GetSendStatus());
    }
    methods->Proceed();
  }

 private:
  exp::ServerRpcInfo* info_;
  HeldStatuses* statuses_;
  bool held_ = false;
};

class HoldFactory : public exp::ServerInterceptorFactoryInterface {
 public:
  explicit HoldFactory(HeldStatuses* statuses) : statuses_(statuses) {}
  exp::Interceptor* CreateServerInterceptor(exp::ServerRpcInfo* info) override {
    return new HoldInterceptor(info, statuses_);
  }

 private:
  HeldStatuses* statuses_;
};

class InProcessServerTest : public ::testing::Test {
 protected:
  void SetUp() override {
    InstallAccessControl(nullptr);
    std::filesystem::create_directory(dir_.File("sets"));
    ASSERT_TRUE(testing::WriteTextFile(dir_.File("sets/courier.json"),
                                       testing::CourierSetJson("courier", "v1"))
                    .ok());
    registry_ = std::make_unique<SetRegistry>(dir_.File("sets"));
    ASSERT_TRUE(registry_->Reload().ok());
    DaemonOptions options;
    options.listen = "127.0.0.1:0";
    options.ledger.path = dir_.File("ledger.db");
    auto ledger = SqliteLedger::Open(options.ledger);
    ASSERT_TRUE(ledger.ok()) << ledger.status();
    ledger_ = *std::move(ledger);
    ServerAttachments attachments;
    attachments.interceptors.push_back(std::make_unique<HoldFactory>(&held_));
    auto server = DaemonServer::Start(options, registry_.get(), ledger_.get(),
                                      std::move(attachments));
    ASSERT_TRUE(server.ok()) << server.status();
    server_ = *std::move(server);
    auto channel = testing::PlainChannel(server_->bound_address());
    scoring_ = v1::Scoring::NewStub(channel);
    outcomes_ = v1::Outcomes::NewStub(channel);
  }
  void TearDown() override {
    InstallAccessControl(nullptr);
    if (server_ != nullptr) {
      server_->Shutdown(absl::ZeroDuration());
      server_->Wait();
    }
  }

  // A context that is held until expired (held) or an ordinary one.
  static void Prepare(grpc::ClientContext* context, bool held) {
    if (!held) return;
    context->AddMetadata(kHoldKey, "1");
    context->set_deadline(std::chrono::system_clock::now() +
                          std::chrono::seconds(1));
  }
  grpc::Status Score(const std::string& record_id, bool held) {
    v1::ScoreRequest request;
    request.set_set("courier");
    request.mutable_record()->set_record_id(record_id);
    (*request.mutable_record()
          ->mutable_features()
          ->mutable_fields())["distance_km"]
        .set_number_value(9);
    grpc::ClientContext context;
    Prepare(&context, held);
    v1::ScoreReply reply;
    return scoring_->Score(&context, request, &reply);
  }
  grpc::Status Report(const std::string& record_id, bool held,
                      v1::ReportOutcomeReply* reply) {
    v1::ReportOutcomeRequest request;
    request.mutable_outcome()->set_record_id(record_id);
    request.mutable_outcome()->set_label(1);
    grpc::ClientContext context;
    Prepare(&context, held);
    return outcomes_->ReportOutcome(&context, request, reply);
  }
  int64_t Count(const std::string& sql) {
    auto db = SqliteDb::Open(dir_.File("ledger.db"));
    EXPECT_TRUE(db.ok()) << db.status();
    auto n = (*db)->QueryInt64(sql);
    return n.ok() ? *n : -1;
  }
  // The status the handler of the `n`-th held call sent.
  grpc::Status HandlerStatus(size_t n) {
    EXPECT_TRUE(testing::PollUntil([&] { return held_.size() >= n; }))
        << "the handler of held call " << n << " never answered";
    return held_.size() >= n ? held_.back() : grpc::Status::OK;
  }

  testing::TempDir dir_;
  HeldStatuses held_;
  std::unique_ptr<SetRegistry> registry_;
  std::unique_ptr<Ledger> ledger_;
  std::unique_ptr<DaemonServer> server_;
  std::unique_ptr<v1::Scoring::Stub> scoring_;
  std::unique_ptr<v1::Outcomes::Stub> outcomes_;
};

TEST_F(InProcessServerTest, AnExpiredScoreLeavesNoLedgerRow) {
  EXPECT_EQ(Score("late-1", /*held=*/true).error_code(),
            grpc::StatusCode::DEADLINE_EXCEEDED);
  const grpc::Status handler = HandlerStatus(1);
  EXPECT_EQ(handler.error_code(), grpc::StatusCode::DEADLINE_EXCEEDED);
  EXPECT_THAT(handler.error_message(), HasSubstr("deadline passed"));
  // The same call in time is scored: the held one was refused for its
  // deadline alone.
  ASSERT_TRUE(Score("on-time-1", /*held=*/false).ok());
  EXPECT_EQ(Count("SELECT COUNT(*) FROM scores WHERE record_id = 'late-1'"), 0);
  EXPECT_EQ(Count("SELECT COUNT(*) FROM scores"), 1);
}

TEST_F(InProcessServerTest, AnExpiredOutcomeIsNotRecorded) {
  ASSERT_TRUE(Score("p-1", /*held=*/false).ok());
  v1::ReportOutcomeReply reply;
  EXPECT_EQ(Report("p-1", /*held=*/true, &reply).error_code(),
            grpc::StatusCode::DEADLINE_EXCEEDED);
  EXPECT_EQ(HandlerStatus(1).error_code(), grpc::StatusCode::DEADLINE_EXCEEDED);
  EXPECT_EQ(Count("SELECT COUNT(*) FROM outcomes"), 0);
  // Reported in time, it is the first report of that record, not a repeat.
  ASSERT_TRUE(Report("p-1", /*held=*/false, &reply).ok());
  EXPECT_FALSE(reply.result().repeat());
}

TEST_F(InProcessServerTest, TheInstalledAccessControlGuardsTheHandlers) {
  const testing::TestToken score = testing::MakeTestToken("router", "SCORE");
  v1::AccessConfig config;
  ASSERT_TRUE(google::protobuf::util::JsonStringToMessage(score.entry_json,
                                                          config.add_tokens())
                  .ok());
  ASSERT_TRUE(InstallAccessControl(config, nullptr).ok());
  const auto with_token = [&](const std::string& token) {
    return [token](grpc::ClientContext* context) {
      if (!token.empty()) {
        context->AddMetadata("authorization", "Bearer " + token);
      }
    };
  };
  const auto score_call =
      [&](const std::function<void(grpc::ClientContext*)>& prepare) {
        v1::ScoreRequest request;
        request.set_set("courier");
        (*request.mutable_record()
              ->mutable_features()
              ->mutable_fields())["distance_km"]
            .set_number_value(9);
        grpc::ClientContext context;
        prepare(&context);
        v1::ScoreReply reply;
        return scoring_->Score(&context, request, &reply).error_code();
      };
  const auto outcome_call =
      [&](const std::function<void(grpc::ClientContext*)>& prepare) {
        v1::ReportOutcomeRequest request;
        request.mutable_outcome()->set_record_id("no-such-record");
        grpc::ClientContext context;
        prepare(&context);
        v1::ReportOutcomeReply reply;
        return outcomes_->ReportOutcome(&context, request, &reply).error_code();
      };
  absl::StatusOr<NewToken> unknown = MakeToken();
  ASSERT_TRUE(unknown.ok());
  EXPECT_EQ(score_call(with_token("")), grpc::StatusCode::UNAUTHENTICATED);
  EXPECT_EQ(score_call(with_token(unknown->token)),
            grpc::StatusCode::UNAUTHENTICATED);
  EXPECT_EQ(score_call(with_token(score.token)), grpc::StatusCode::OK);
  EXPECT_EQ(outcome_call(with_token("")), grpc::StatusCode::UNAUTHENTICATED);
  EXPECT_EQ(outcome_call(with_token(score.token)), grpc::StatusCode::NOT_FOUND);
  InstallAccessControl(nullptr);
  EXPECT_EQ(score_call(with_token("")), grpc::StatusCode::OK);
}

TEST(AdmitTest, DirectCallsWithoutAContextAreAdmitted) {
  EXPECT_TRUE(Admit(nullptr, Role::kAdmin).ok());
}

// ---- Basic auth on the metrics endpoint ----

TEST(MetricsBasicAuthTest, OnlyTheRightUserAndPasswordScrape) {
  absl::StatusOr<std::string> hash =
      HashSecret("s3cret-pw", kMinHashIterations);
  ASSERT_TRUE(hash.ok());
  v1::MetricsAuthConfig auth;
  auth.set_username("scraper");
  auth.set_password_hash(*hash);
  auto exporter = MetricsExporter::Start("127.0.0.1:0", auth);
  ASSERT_TRUE(exporter.ok()) << exporter.status();
  const std::string addr = (*exporter)->bound_address();

  ::testing::internal::CaptureStderr();
  auto none = testing::HttpGetWithAuth(addr, "/metrics", "");
  auto wrong = testing::HttpGetWithAuth(addr, "/metrics", "scraper:guess");
  auto wrong_user =
      testing::HttpGetWithAuth(addr, "/metrics", "root:s3cret-pw");
  auto right = testing::HttpGetWithAuth(addr, "/metrics", "scraper:s3cret-pw");
  const std::string log = ::testing::internal::GetCapturedStderr();
  ASSERT_TRUE(none.ok() && wrong.ok() && wrong_user.ok() && right.ok());
  EXPECT_EQ(none->status, 401);
  EXPECT_EQ(wrong->status, 401);
  EXPECT_EQ(wrong_user->status, 401);
  ASSERT_EQ(right->status, 200);
  // Two wrong attempts reached the check (a request without credentials is
  // answered 401 by the HTTP server before it).
  EXPECT_EQ(testing::FindSample(testing::ParseExposition(right->body),
                                "plumbline_auth_failures_total",
                                {{"reason", "metrics_password"}}),
            2);
  EXPECT_THAT(log, HasSubstr("event=auth_refused reason=metrics_password"));
  EXPECT_THAT(log, ::testing::Not(HasSubstr("guess")));
  EXPECT_THAT(log, ::testing::Not(HasSubstr("s3cret-pw")));
}

TEST(MetricsBasicAuthTest, PlumbctlMakesAWorkingPassword) {
  testing::TempDir dir;
  absl::StatusOr<testing::TokenCommandOutput> made =
      testing::RunTokenNew(PLUMBCTL_PATH, "metrics", "scraper", dir.path());
  ASSERT_TRUE(made.ok()) << made.status();
  v1::MetricsAuthConfig auth;
  ASSERT_TRUE(
      google::protobuf::util::JsonStringToMessage(made->entry_json, &auth).ok())
      << made->entry_json;
  EXPECT_EQ(auth.username(), "scraper");
  EXPECT_THAT(made->entry_json, ::testing::Not(HasSubstr(made->secret)));
  auto exporter = MetricsExporter::Start("127.0.0.1:0", auth);
  ASSERT_TRUE(exporter.ok()) << exporter.status();
  auto scrape = testing::HttpGetWithAuth((*exporter)->bound_address(),
                                         "/metrics", "scraper:" + made->secret);
  ASSERT_TRUE(scrape.ok()) << scrape.status();
  EXPECT_EQ(scrape->status, 200);
}

TEST(MetricsBasicAuthTest, ABadHashIsAConfigError) {
  v1::MetricsAuthConfig auth;
  auth.set_username("scraper");
  auth.set_password_hash("plain-password");
  auto exporter = MetricsExporter::Start("127.0.0.1:0", auth);
  ASSERT_FALSE(exporter.ok());
  EXPECT_THAT(std::string(exporter.status().message()),
              HasSubstr("security.metrics_auth.password_hash"));
  auth.clear_username();
  EXPECT_FALSE(MetricsExporter::Start("127.0.0.1:0", auth).ok());
}

}  // namespace
}  // namespace plumbline::daemon
