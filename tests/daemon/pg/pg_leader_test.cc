// PgLeader against the real cluster of the ctest fixture pg_cluster: of
// two replicas exactly one leads, each names the holder, and when the
// leader goes (its session ends) the other takes over.
#include "daemon/pg/pg_leader.h"

#include <memory>
#include <string>

#include "daemon/pg/pg_connection.h"
#include "gtest/gtest.h"
#include "tests/testing/pg_cluster.h"
#include "tests/testing/process.h"
#include "tests/testing/status_matchers.h"

namespace plumbline::daemon {
namespace {

using ::plumbline::daemon::testing::FreshPgDatabase;
using ::plumbline::daemon::testing::PollUntil;

TEST(PgLeaderTest, OneReplicaLeadsAndAnotherTakesOverWhenItGoes) {
  ASSERT_OK_AND_ASSIGN(std::string uri, FreshPgDatabase("courier_leader"));
  const absl::Duration retry = absl::Milliseconds(100);
  ASSERT_OK_AND_ASSIGN(
      std::unique_ptr<PgLeader> a,
      PgLeader::Start(uri, kPgRefitLeaderLockKey, "plumbd depot-a", retry));
  ASSERT_TRUE(PollUntil([&] { return a->is_leader(); }));
  ASSERT_OK_AND_ASSIGN(
      std::unique_ptr<PgLeader> b,
      PgLeader::Start(uri, kPgRefitLeaderLockKey, "plumbd depot-b", retry));
  ASSERT_TRUE(PollUntil([&] { return b->Holder() == "plumbd depot-a"; }));
  EXPECT_TRUE(a->is_leader());
  EXPECT_FALSE(b->is_leader());
  a.reset();
  ASSERT_TRUE(PollUntil([&] { return b->is_leader(); }));
  ASSERT_TRUE(PollUntil([&] { return b->Holder() == "plumbd depot-b"; }));
}

TEST(PgLeaderTest, ALeaderWhoseSessionIsEndedStepsDown) {
  ASSERT_OK_AND_ASSIGN(std::string uri, FreshPgDatabase("courier_leader"));
  const absl::Duration retry = absl::Milliseconds(100);
  ASSERT_OK_AND_ASSIGN(
      std::unique_ptr<PgLeader> a,
      PgLeader::Start(uri, kPgRefitLeaderLockKey, "plumbd depot-a", retry));
  ASSERT_TRUE(PollUntil([&] { return a->is_leader(); }));
  ASSERT_OK_AND_ASSIGN(std::unique_ptr<PgConnection> admin,
                       PgConnection::Connect(uri));
  // Another session takes the lock the moment the server ends a's.
  ASSERT_OK(admin
                ->Query("SELECT pg_terminate_backend(pid) FROM"
                        " pg_stat_activity WHERE application_name ="
                        " 'plumbd depot-a'")
                .status());
  ASSERT_TRUE(PollUntil([&] {
    auto taken = admin->TryAdvisoryLock(kPgRefitLeaderLockKey);
    return taken.ok() && *taken;
  }));
  ASSERT_TRUE(PollUntil([&] { return !a->is_leader(); }));
  // And a cannot take it back while admin holds it.
  absl::SleepFor(absl::Milliseconds(400));
  EXPECT_FALSE(a->is_leader());
}

}  // namespace
}  // namespace plumbline::daemon
