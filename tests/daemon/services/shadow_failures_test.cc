// File: tests/daemon/services/shadow_failures_test.cc
//
// A shadow that cannot score its set's calls, through the real plumbd: the
// calls never fail, every failure is counted by reason (metrics and
// `ListVersions`), and after shadow_failure_limit failures in a row the
// shadow is retired with an audit entry saying why.
#include <grpcpp/client_context.h>
#include <grpcpp/create_channel.h>

#include <filesystem>
#include <memory>
#include <string>

#include "gmock/gmock.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"
#include "plumbline/v1/registry.grpc.pb.h"
#include "scorer/coefficient_set.h"
#include "tests/testing/http.h"
#include "tests/testing/process.h"
#include "tests/testing/status_matchers.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;
using testing::PlumbdProcess;
using testing::TempDir;
using testing::WriteTextFile;

// The test courier set without 'region': calls that send region are
// refused by it.
v1::CoefficientSet WithoutRegion(const std::string& version) {
  v1::CoefficientSet set = *scorer::ParseCoefficientSet(
      testing::CourierSetJson("courier", version, -0.5), "test");
  auto* features = set.mutable_features();
  for (int i = 0; i < features->size(); ++i) {
    if (features->Get(i).name() == "region") features->DeleteSubrange(i, 1);
  }
  return set;
}

TEST(ShadowFailuresTest, AFailingShadowIsCountedShownAndStopped) {
  TempDir dir;
  std::filesystem::create_directory(dir.File("sets"));
  ASSERT_OK(WriteTextFile(dir.File("sets/courier.json"),
                          testing::CourierSetJson("courier", "v1")));
  ASSERT_OK(
      WriteTextFile(dir.File("plumbd.json"), R"({"shadow_failure_limit": 5})"));
  ASSERT_OK_AND_ASSIGN(
      auto plumbd,
      PlumbdProcess::Start(dir.path(),
                           {"--config", dir.File("plumbd.json"), "--sets",
                            dir.File("sets"), "--ledger", dir.File("l.db")}));
  auto registry = v1::Registry::NewStub(
      grpc::CreateChannel(plumbd->addr(), grpc::InsecureChannelCredentials()));
  // Loading and shadowing it needs the explicit allowance.
  {
    v1::LoadCandidateRequest load;
    *load.mutable_set() = WithoutRegion("c1");
    v1::VersionInfo info;
    grpc::ClientContext context;
    grpc::Status s = registry->LoadCandidate(&context, load, &info);
    EXPECT_EQ(s.error_code(), grpc::StatusCode::FAILED_PRECONDITION);
    EXPECT_THAT(s.error_message(), HasSubstr("feature 'region' is gone"));
  }
  for (const char* rpc : {"load", "shadow"}) {
    grpc::ClientContext context;
    v1::VersionInfo info;
    grpc::Status s;
    if (std::string(rpc) == "load") {
      v1::LoadCandidateRequest load;
      *load.mutable_set() = WithoutRegion("c1");
      load.set_allow_schema_change(true);
      s = registry->LoadCandidate(&context, load, &info);
    } else {
      v1::VersionRequest shadow;
      shadow.set_set("courier");
      shadow.set_version("c1");
      shadow.set_allow_schema_change(true);
      s = registry->Shadow(&context, shadow, &info);
    }
    ASSERT_TRUE(s.ok()) << rpc << ": " << s.error_message();
  }
  // Calls that send region: each is answered by v1; the shadow fails them.
  auto scoring = testing::NewScoringStub(plumbd->addr());
  for (int i = 0; i < 7; ++i) {
    v1::ScoreRequest request;
    request.set_set("courier");
    ASSERT_TRUE(google::protobuf::util::JsonStringToMessage(
                    R"({"distance_km": 3, "region": "urban"})",
                    request.mutable_record()->mutable_features())
                    .ok());
    v1::ScoreReply reply;
    grpc::ClientContext context;
    grpc::Status s = scoring->Score(&context, request, &reply);
    ASSERT_TRUE(s.ok()) << s.error_message();
    EXPECT_EQ(reply.version(), "v1");
  }
  // Counted: 5 failures, then the shadow was retired and not scored again.
  ASSERT_OK_AND_ASSIGN(std::string metrics,
                       testing::HttpGet(plumbd->MetricsAddress(), "/metrics"));
  const auto samples = testing::ParseExposition(metrics);
  EXPECT_EQ(testing::FindSample(samples, "plumbline_shadow_failed_calls_total",
                                {{"set", "courier"},
                                 {"version", "c1"},
                                 {"reason", "invalid_argument"}}),
            5.0);
  EXPECT_EQ(testing::FindSample(samples, "plumbline_shadow_stopped",
                                {{"set", "courier"}, {"version", "c1"}}),
            1.0);
  EXPECT_EQ(plumbd->CountLogLines("event=shadow_stopped"), 1);
  // ListVersions: retired, with its report.
  v1::ListVersionsRequest list;
  list.set_set("courier");
  v1::ListVersionsReply versions;
  grpc::ClientContext context;
  ASSERT_TRUE(registry->ListVersions(&context, list, &versions).ok());
  bool seen = false;
  for (const v1::VersionInfo& v : versions.versions()) {
    if (v.version() != "c1") continue;
    seen = true;
    EXPECT_EQ(v.state(), v1::RETIRED);
    EXPECT_TRUE(v.shadow().stopped());
    EXPECT_EQ(v.shadow().failures().at("invalid_argument"), 5);
    EXPECT_THAT(v.shadow().last_error(), HasSubstr("region"));
  }
  EXPECT_TRUE(seen);
  v1::AuditRequest audit_request;
  audit_request.set_set("courier");
  v1::AuditReply audit;
  grpc::ClientContext audit_context;
  ASSERT_TRUE(registry->Audit(&audit_context, audit_request, &audit).ok());
  bool stopped = false;
  for (const v1::AuditEntry& e : audit.entries()) {
    if (e.action() != "shadow_stopped") continue;
    stopped = true;
    EXPECT_EQ(e.version(), "c1");
    EXPECT_THAT(e.detail(), HasSubstr("5 consecutive calls"));
  }
  EXPECT_TRUE(stopped);
}

}  // namespace
}  // namespace plumbline::daemon
