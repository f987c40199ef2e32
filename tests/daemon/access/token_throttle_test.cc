// File: tests/daemon/access/token_throttle_test.cc
//
// A flood of fresh wrong secrets for a known (public) token id, sent to the
// real plumbd: the PBKDF2 runs it costs are counted by the daemon itself
// (plumbline_auth_secret_hashes_total) and must stay within the throttle's
// bound, the surplus gets RESOURCE_EXHAUSTED with a message saying why, and
// tokens already verified keep working throughout.
#include <grpcpp/client_context.h>

#include <filesystem>
#include <memory>
#include <string>

#include "absl/strings/str_cat.h"
#include "absl/time/clock.h"
#include "absl/time/time.h"
#include "daemon/security/token_hash.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "plumbline/v1/scoring.grpc.pb.h"
#include "tests/testing/http.h"
#include "tests/testing/process.h"
#include "tests/testing/security_testing.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;

TEST(TokenThrottleTest, WrongSecretsForAKnownIdCostABoundedNumberOfHashes) {
  testing::TempDir dir;
  const testing::TestToken score = testing::MakeTestToken("router", "SCORE");
  const testing::TestToken other = testing::MakeTestToken("batch", "SCORE");
  std::filesystem::create_directory(dir.File("sets"));
  ASSERT_TRUE(testing::WriteTextFile(dir.File("sets/courier.json"),
                                     testing::CourierSetJson("courier", "v1"))
                  .ok());
  ASSERT_TRUE(testing::WriteTextFile(
                  dir.File("plumbd.json"),
                  absl::StrCat(R"({"security": {"access": {"tokens": [)",
                               score.entry_json, ",", other.entry_json, "]}}}"))
                  .ok());
  absl::StatusOr<std::unique_ptr<testing::PlumbdProcess>> plumbd =
      testing::PlumbdProcess::Start(
          dir.path(), {"--config", dir.File("plumbd.json"), "--sets",
                       dir.File("sets"), "--ledger", dir.File("ledger.db")});
  ASSERT_TRUE(plumbd.ok()) << plumbd.status();
  auto stub = testing::NewScoringStub((*plumbd)->addr());
  const auto list_sets = [&](const std::string& token) {
    grpc::ClientContext context;
    context.AddMetadata("authorization", absl::StrCat("Bearer ", token));
    v1::ListSetsReply reply;
    return stub->ListSets(&context, v1::ListSetsRequest(), &reply);
  };
  // The score token is verified once before the flood.
  ASSERT_TRUE(list_sets(score.token).ok());

  const absl::Time start = absl::Now();
  constexpr int kAttempts = 60;
  int unauthenticated = 0;
  int throttled = 0;
  std::string message;
  for (int i = 0; i < kAttempts; ++i) {
    absl::StatusOr<NewToken> fresh = MakeToken();
    ASSERT_TRUE(fresh.ok());
    // The score token's public id with a fresh random secret.
    const std::string forged =
        absl::StrCat(score.token.substr(0, 17), fresh->token.substr(17));
    const grpc::Status status = list_sets(forged);
    if (status.error_code() == grpc::StatusCode::UNAUTHENTICATED) {
      ++unauthenticated;
    } else {
      ASSERT_EQ(status.error_code(), grpc::StatusCode::RESOURCE_EXHAUSTED)
          << status.error_message();
      ++throttled;
      message = status.error_message();
    }
    // The verified token and the other id are never throttled.
    if (i % 10 == 0) {
      ASSERT_TRUE(list_sets(score.token).ok()) << "during attempt " << i;
    }
  }
  const absl::Duration elapsed = absl::Now() - start;
  ASSERT_TRUE(list_sets(other.token).ok());

  // SecretCheckOptions' defaults: a burst of 5, then one run per 5 s of the
  // flood's measured length; plus the two right tokens' first checks.
  const int64_t bound =
      5 + static_cast<int64_t>(absl::FDivDuration(elapsed, absl::Seconds(5))) +
      2;
  EXPECT_LE(unauthenticated, bound)
      << "wrong secrets checked by PBKDF2 (answered UNAUTHENTICATED)";
  EXPECT_EQ(unauthenticated + throttled, kAttempts);
  absl::StatusOr<std::string> metrics =
      testing::HttpGet((*plumbd)->MetricsAddress(), "/metrics");
  ASSERT_TRUE(metrics.ok()) << metrics.status();
  const std::vector<testing::Sample> samples =
      testing::ParseExposition(*metrics);
  const std::optional<double> hashes =
      testing::FindSample(samples, "plumbline_auth_secret_hashes_total", {});
  ASSERT_TRUE(hashes.has_value());
  EXPECT_LE(*hashes, static_cast<double>(bound))
      << kAttempts << " wrong secrets in " << elapsed;
  EXPECT_THAT(message, HasSubstr("too many wrong secrets for this token id"));
  EXPECT_THAT(message, HasSubstr("retry in"));
  EXPECT_EQ(testing::FindSample(samples, "plumbline_auth_failures_total",
                                {{"reason", "throttled"}}),
            throttled);
}

}  // namespace
}  // namespace plumbline::daemon
