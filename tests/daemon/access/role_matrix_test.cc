// File: tests/daemon/access/role_matrix_test.cc
//
// The role matrix through a real plumbd with a score and an admin token in
// its config: every RPC of Scoring, Outcomes, Monitor and Registry with no
// credential, the score token, the admin token and an unknown token; the
// refusals counted in plumbline_auth_failures_total and logged without the
// tokens; plumbctl with PLUMBLINE_TOKEN; health checking open to all; and
// basic auth on plumbd's metrics endpoint.
#include <grpcpp/client_context.h>

#include <chrono>
#include <filesystem>
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "daemon/access/access_control.h"
#include "daemon/security/token_hash.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "plumbline/v1/monitor.grpc.pb.h"
#include "plumbline/v1/outcomes.grpc.pb.h"
#include "plumbline/v1/registry.grpc.pb.h"
#include "plumbline/v1/scoring.grpc.pb.h"
#include "tests/testing/http.h"
#include "tests/testing/process.h"
#include "tests/testing/security_testing.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;
using ::testing::Not;
using testing::TestToken;

enum class Credential { kNone, kScore, kAdmin, kWrong };

struct Rpc {
  std::string name;
  Role role;
  std::function<grpc::Status(grpc::ClientContext*)> call;
};

class RoleMatrixTest : public ::testing::Test {
 protected:
  void SetUp() override {
    score_ = testing::MakeTestToken("router", "SCORE");
    admin_ = testing::MakeTestToken("ops", "ADMIN");
    absl::StatusOr<NewToken> wrong = MakeToken();
    ASSERT_TRUE(wrong.ok());
    wrong_ = wrong->token;
    std::filesystem::create_directory(dir_.File("sets"));
    ASSERT_TRUE(testing::WriteTextFile(dir_.File("sets/courier.json"),
                                       testing::CourierSetJson("courier", "v1"))
                    .ok());
    const std::string config = absl::StrCat(
        R"({"metrics_listen": "127.0.0.1:0", "security": {"access": {)",
        R"("tokens": [)", score_.entry_json, ",", admin_.entry_json, "]}}}");
    ASSERT_TRUE(testing::WriteTextFile(dir_.File("plumbd.json"), config).ok());
    absl::StatusOr<std::unique_ptr<testing::PlumbdProcess>> plumbd =
        testing::PlumbdProcess::Start(
            dir_.path(),
            {"--config", dir_.File("plumbd.json"), "--sets", dir_.File("sets"),
             "--ledger", dir_.File("ledger.db")});
    ASSERT_TRUE(plumbd.ok()) << plumbd.status();
    plumbd_ = *std::move(plumbd);
    auto channel = testing::PlainChannel(plumbd_->addr());
    scoring_ = v1::Scoring::NewStub(channel);
    outcomes_ = v1::Outcomes::NewStub(channel);
    monitor_ = v1::Monitor::NewStub(channel);
    registry_ = v1::Registry::NewStub(channel);
  }

  std::vector<Rpc> AllRpcs();

  grpc::Status Call(const Rpc& rpc, Credential credential) {
    grpc::ClientContext context;
    context.set_deadline(std::chrono::system_clock::now() +
                         std::chrono::seconds(60));  // safety net only
    const std::string* token = credential == Credential::kScore ? &score_.token
                               : credential == Credential::kAdmin
                                   ? &admin_.token
                               : credential == Credential::kWrong ? &wrong_
                                                                  : nullptr;
    if (token != nullptr) {
      context.AddMetadata("authorization", absl::StrCat("Bearer ", *token));
    }
    return rpc.call(&context);
  }

  testing::TempDir dir_;
  TestToken score_, admin_;
  std::string wrong_;
  std::unique_ptr<testing::PlumbdProcess> plumbd_;
  std::unique_ptr<v1::Scoring::Stub> scoring_;
  std::unique_ptr<v1::Outcomes::Stub> outcomes_;
  std::unique_ptr<v1::Monitor::Stub> monitor_;
  std::unique_ptr<v1::Registry::Stub> registry_;
};

std::vector<Rpc> RoleMatrixTest::AllRpcs() {
  // Requests the admin may send without changing anything: unknown sets,
  // an empty candidate.
  v1::ScoreRequest score;
  score.set_set("courier");
  (*score.mutable_record()->mutable_features()->mutable_fields())["distance_km"]
      .set_number_value(9);
  v1::ScoreBatchRequest batch;
  batch.set_set("courier");
  *batch.add_records() = score.record();
  v1::ReportOutcomeRequest outcome;
  outcome.mutable_outcome()->set_record_id("no-such-record");
  v1::ReportOutcomesRequest outcomes;
  *outcomes.add_outcomes() = outcome.outcome();
  v1::GetSetHealthRequest health;
  health.set_set("courier");
  v1::VersionRequest version;
  version.set_set("no-such-set");
  version.set_version("v9");
  v1::RollbackRequest rollback;
  rollback.set_set("no-such-set");
  v1::RefitRequest refit;
  refit.set_set("no-such-set");
  v1::AuditRequest audit;
  audit.set_set("no-such-set");
  v1::ListVersionsRequest versions;
  versions.set_set("no-such-set");
  v1::ShowVersionRequest show;
  show.set_set("no-such-set");
  v1::DiffVersionsRequest diff;
  diff.set_set("no-such-set");
  v1::GetDossierRequest dossier;
  dossier.set_set("no-such-set");
  // Each reply lives in the lambda; only the status matters here.
  return {
      {"Scoring.Score", Role::kScore,
       [this, score](grpc::ClientContext* c) {
         v1::ScoreReply r;
         return scoring_->Score(c, score, &r);
       }},
      {"Scoring.ScoreBatch", Role::kScore,
       [this, batch](grpc::ClientContext* c) {
         v1::ScoreBatchReply r;
         return scoring_->ScoreBatch(c, batch, &r);
       }},
      {"Scoring.ListSets", Role::kScore,
       [this](grpc::ClientContext* c) {
         v1::ListSetsReply r;
         return scoring_->ListSets(c, v1::ListSetsRequest(), &r);
       }},
      {"Outcomes.ReportOutcome", Role::kScore,
       [this, outcome](grpc::ClientContext* c) {
         v1::ReportOutcomeReply r;
         return outcomes_->ReportOutcome(c, outcome, &r);
       }},
      {"Outcomes.ReportOutcomes", Role::kScore,
       [this, outcomes](grpc::ClientContext* c) {
         v1::ReportOutcomesReply r;
         return outcomes_->ReportOutcomes(c, outcomes, &r);
       }},
      {"Monitor.GetSetHealth", Role::kScore,
       [this, health](grpc::ClientContext* c) {
         v1::SetHealth r;
         return monitor_->GetSetHealth(c, health, &r);
       }},
      {"Registry.ListVersions", Role::kAdmin,
       [this, versions](grpc::ClientContext* c) {
         v1::ListVersionsReply r;
         return registry_->ListVersions(c, versions, &r);
       }},
      {"Registry.LoadCandidate", Role::kAdmin,
       [this](grpc::ClientContext* c) {
         v1::VersionInfo r;
         return registry_->LoadCandidate(c, v1::LoadCandidateRequest(), &r);
       }},
      {"Registry.Activate", Role::kAdmin,
       [this, version](grpc::ClientContext* c) {
         v1::VersionInfo r;
         return registry_->Activate(c, version, &r);
       }},
      {"Registry.Approve", Role::kAdmin,
       [this, version](grpc::ClientContext* c) {
         v1::VersionInfo r;
         return registry_->Approve(c, version, &r);
       }},
      {"Registry.Shadow", Role::kAdmin,
       [this, version](grpc::ClientContext* c) {
         v1::VersionInfo r;
         return registry_->Shadow(c, version, &r);
       }},
      {"Registry.Rollback", Role::kAdmin,
       [this, rollback](grpc::ClientContext* c) {
         v1::VersionInfo r;
         return registry_->Rollback(c, rollback, &r);
       }},
      {"Registry.Refit", Role::kAdmin,
       [this, refit](grpc::ClientContext* c) {
         v1::RefitReply r;
         return registry_->Refit(c, refit, &r);
       }},
      {"Registry.Audit", Role::kAdmin,
       [this, audit](grpc::ClientContext* c) {
         v1::AuditReply r;
         return registry_->Audit(c, audit, &r);
       }},
      {"Registry.ShowVersion", Role::kAdmin,
       [this, show](grpc::ClientContext* c) {
         v1::VersionDetail r;
         return registry_->ShowVersion(c, show, &r);
       }},
      {"Registry.DiffVersions", Role::kAdmin,
       [this, diff](grpc::ClientContext* c) {
         v1::VersionDiff r;
         return registry_->DiffVersions(c, diff, &r);
       }},
      {"Registry.GetDossier", Role::kAdmin,
       [this, dossier](grpc::ClientContext* c) {
         v1::DossierReply r;
         return registry_->GetDossier(c, dossier, &r);
       }},
  };
}

bool IsAuthError(grpc::StatusCode code) {
  return code == grpc::StatusCode::UNAUTHENTICATED ||
         code == grpc::StatusCode::PERMISSION_DENIED;
}

TEST_F(RoleMatrixTest, EveryRpcAnswersEachCredentialAsItsRoleSays) {
  const std::vector<Rpc> rpcs = AllRpcs();
  ASSERT_EQ(rpcs.size(), 17u);
  int admin_rpcs = 0;
  for (const Rpc& rpc : rpcs) {
    SCOPED_TRACE(rpc.name);
    if (rpc.role == Role::kAdmin) ++admin_rpcs;
    EXPECT_EQ(Call(rpc, Credential::kNone).error_code(),
              grpc::StatusCode::UNAUTHENTICATED);
    EXPECT_EQ(Call(rpc, Credential::kWrong).error_code(),
              grpc::StatusCode::UNAUTHENTICATED);
    const grpc::Status as_score = Call(rpc, Credential::kScore);
    const grpc::Status as_admin = Call(rpc, Credential::kAdmin);
    // UNIMPLEMENTED would mean the RPC is not served: wiring missing.
    EXPECT_NE(as_admin.error_code(), grpc::StatusCode::UNIMPLEMENTED)
        << "not served by plumbd";
    EXPECT_FALSE(IsAuthError(as_admin.error_code()))
        << as_admin.error_code() << " " << as_admin.error_message();
    if (rpc.role == Role::kScore) {
      EXPECT_FALSE(IsAuthError(as_score.error_code()))
          << as_score.error_code() << " " << as_score.error_message();
    } else {
      EXPECT_EQ(as_score.error_code(), grpc::StatusCode::PERMISSION_DENIED)
          << as_score.error_message();
    }
  }
  // The score token really scores.
  grpc::ClientContext context;
  context.AddMetadata("authorization", absl::StrCat("Bearer ", score_.token));
  v1::ListSetsReply sets;
  ASSERT_TRUE(scoring_->ListSets(&context, v1::ListSetsRequest(), &sets).ok());
  ASSERT_EQ(sets.sets_size(), 1);

  // Counted: 17 calls without credentials, 17 with the unknown token, the
  // admin RPCs with the score token.
  const std::string metrics_addr =
      testing::MetricsAddressFromLog(plumbd_->Log());
  ASSERT_FALSE(metrics_addr.empty()) << plumbd_->Log();
  absl::StatusOr<std::string> scrape =
      testing::HttpGet(metrics_addr, "/metrics");
  ASSERT_TRUE(scrape.ok()) << scrape.status();
  const auto samples = testing::ParseExposition(*scrape);
  const auto counted = [&](const std::string& reason) {
    return testing::FindSample(samples, "plumbline_auth_failures_total",
                               {{"reason", reason}});
  };
  EXPECT_EQ(counted("missing_credentials"), 17);
  EXPECT_EQ(counted("unknown_token"), 17);
  EXPECT_EQ(counted("wrong_role"), admin_rpcs);
  EXPECT_EQ(counted("malformed_credentials"), 0);

  // Logged, without any token's secret.
  const std::string log = plumbd_->Log();
  EXPECT_THAT(log, HasSubstr("event=access_control_on tokens=2 subjects=0"));
  EXPECT_EQ(plumbd_->CountLogLines("event=auth_refused"), 34 + admin_rpcs);
  for (const std::string* token : {&score_.token, &admin_.token, &wrong_}) {
    EXPECT_THAT(log, Not(HasSubstr(token->substr(17))));
  }
}

TEST_F(RoleMatrixTest, HealthCheckingStaysOpen) {
  auto health = testing::NewHealthStub(plumbd_->addr());
  grpc::ClientContext context;
  grpc::health::v1::HealthCheckRequest request;
  request.set_service("plumbline.v1.Scoring");
  grpc::health::v1::HealthCheckResponse response;
  ASSERT_TRUE(health->Check(&context, request, &response).ok());
  EXPECT_EQ(response.status(), grpc::health::v1::HealthCheckResponse::SERVING);
}

TEST_F(RoleMatrixTest, PlumbctlSendsItsToken) {
  const auto plumbctl = [&](const std::vector<std::string>& env) {
    std::vector<std::string> argv = {"/usr/bin/env"};
    argv.insert(argv.end(), env.begin(), env.end());
    for (const char* arg : {PLUMBCTL_PATH, "--addr"}) argv.push_back(arg);
    argv.push_back(plumbd_->addr());
    argv.push_back("sets");
    absl::StatusOr<testing::ProcessResult> run =
        testing::RunProcess(argv, dir_.path());
    EXPECT_TRUE(run.ok()) << run.status();
    return run.ok() ? *run : testing::ProcessResult();
  };
  const testing::ProcessResult without = plumbctl({"-u", "PLUMBLINE_TOKEN"});
  EXPECT_EQ(without.exit_code, 1) << without.err;
  EXPECT_THAT(without.err, HasSubstr("UNAUTHENTICATED"));
  EXPECT_THAT(without.err, HasSubstr("PLUMBLINE_TOKEN"));
  const testing::ProcessResult with =
      plumbctl({absl::StrCat("PLUMBLINE_TOKEN=", score_.token)});
  EXPECT_EQ(with.exit_code, 0) << with.err;
  EXPECT_THAT(with.out, HasSubstr("courier"));
}

TEST(MetricsAuthEndToEndTest, PlumbdAsksScrapersForThePassword) {
  testing::TempDir dir;
  std::filesystem::create_directory(dir.File("sets"));
  ASSERT_TRUE(testing::WriteTextFile(dir.File("sets/courier.json"),
                                     testing::CourierSetJson("courier", "v1"))
                  .ok());
  absl::StatusOr<std::string> hash =
      HashSecret("scrape-pw", kMinHashIterations);
  ASSERT_TRUE(hash.ok());
  ASSERT_TRUE(
      testing::WriteTextFile(dir.File("plumbd.json"),
                             absl::StrCat(R"({"metrics_listen": "127.0.0.1:0",
                                   "security": {"metrics_auth": {
                                     "username": "scraper",
                                     "password_hash": ")",
                                          *hash, R"("}}})"))
          .ok());
  auto plumbd = testing::PlumbdProcess::Start(
      dir.path(), {"--config", dir.File("plumbd.json"), "--sets",
                   dir.File("sets"), "--ledger", dir.File("ledger.db")});
  ASSERT_TRUE(plumbd.ok()) << plumbd.status();
  const std::string addr = testing::MetricsAddressFromLog((*plumbd)->Log());
  ASSERT_FALSE(addr.empty()) << (*plumbd)->Log();
  auto anonymous = testing::HttpGetWithAuth(addr, "/metrics", "");
  auto wrong = testing::HttpGetWithAuth(addr, "/metrics", "scraper:nope");
  auto right = testing::HttpGetWithAuth(addr, "/metrics", "scraper:scrape-pw");
  ASSERT_TRUE(anonymous.ok() && wrong.ok() && right.ok());
  EXPECT_EQ(anonymous->status, 401);
  EXPECT_EQ(wrong->status, 401);
  ASSERT_EQ(right->status, 200);
  EXPECT_EQ(testing::FindSample(testing::ParseExposition(right->body),
                                "plumbline_auth_failures_total",
                                {{"reason", "metrics_password"}}),
            1);
  EXPECT_THAT((*plumbd)->Log(), Not(HasSubstr("scrape-pw")));
}

}  // namespace
}  // namespace plumbline::daemon
