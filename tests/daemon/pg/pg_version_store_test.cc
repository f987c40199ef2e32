// File: tests/daemon/pg/pg_version_store_test.cc
//
// The PostgreSQL version store (daemon/pg/pg_version_store.h) against the
// fixture's cluster (pg_cluster, as pg_schema_test.cc), each test on a
// fresh database: the version store contract (tests/daemon/registry/
// version_store_contract.h, the same bodies the SQLite store passes), then
// two lifecycles on one database as two plumbd replicas would run them:
// a change through one serves on the other, and approvals at the same time
// leave one active version and an audit that tells one story.
#include "daemon/pg/pg_version_store.h"

#include <atomic>
#include <filesystem>
#include <iostream>
#include <memory>
#include <string>
#include <thread>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/time/clock.h"
#include "daemon/pg/pg_connection.h"
#include "daemon/registry/lifecycle.h"
#include "daemon/scoring/set_registry.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "scorer/coefficient_set.h"
#include "tests/daemon/registry/version_store_contract.h"
#include "tests/testing/pg_cluster.h"
#include "tests/testing/process.h"
#include "tests/testing/status_matchers.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::plumbline::testing::StatusIs;

absl::StatusOr<std::unique_ptr<VersionStore>> OpenPgStore(
    std::shared_ptr<void>& /*keep*/) {
  absl::StatusOr<std::string> uri =
      plumbline::daemon::testing::FreshPgDatabase("plumb_versions");
  if (!uri.ok()) return uri.status();
  absl::StatusOr<std::unique_ptr<PgVersionStore>> store =
      PgVersionStore::Open(*uri);
  if (!store.ok()) return store.status();
  return std::unique_ptr<VersionStore>(*std::move(store));
}

INSTANTIATE_TEST_SUITE_P(Pg, VersionStoreContractTest,
                         ::testing::Values(VersionStoreBackend{"Pg",
                                                               OpenPgStore}),
                         VersionStoreBackendName);

// One plumbd replica's registry: its store connection, lifecycle and set
// registry over the shared sets directory, refreshed by the store's watch.
class Replica {
 public:
  Replica(const std::string& uri, const std::string& sets_dir) {
    absl::StatusOr<std::unique_ptr<PgVersionStore>> store =
        PgVersionStore::Open(uri);
    EXPECT_OK(store.status());
    if (!store.ok()) return;
    store_ = *std::move(store);
    lifecycle_ = std::make_unique<Lifecycle>(store_.get());
    registry_ = std::make_unique<SetRegistry>(sets_dir, lifecycle_.get());
    lifecycle_->Attach(registry_.get(),
                       [this](const ReloadReport&) { ++changes_; });
  }
  ~Replica() {
    if (store_ != nullptr) store_->StopWatch();
    if (lifecycle_ != nullptr) lifecycle_->Detach();
  }

  absl::Status Start() {
    if (absl::StatusOr<ReloadReport> r = registry_->Reload(); !r.ok()) {
      return r.status();
    }
    return store_->Watch([this] { lifecycle_->Refresh(); });
  }
  std::string Active(const std::string& set) const {
    PlanPtr plan = registry_->Find(set);
    return plan == nullptr ? "" : plan->version();
  }
  Lifecycle& lifecycle() { return *lifecycle_; }
  int changes() const { return changes_.load(); }

 private:
  std::unique_ptr<PgVersionStore> store_;
  std::unique_ptr<Lifecycle> lifecycle_;
  std::unique_ptr<SetRegistry> registry_;
  std::atomic<int> changes_{0};
};

class ReplicasTest : public ::testing::Test {
 protected:
  void SetUp() override {
    absl::StatusOr<std::string> uri =
        plumbline::daemon::testing::FreshPgDatabase("plumb_replicas");
    ASSERT_OK(uri.status());
    uri_ = *uri;
    std::filesystem::create_directories(dir_.File("sets"));
    ASSERT_OK(
        testing::WriteTextFile(dir_.File("sets/courier.json"),
                               testing::CourierSetJson("courier", "v1", -1.5)));
  }
  NewVersion Candidate(const std::string& version, double intercept) {
    return NewVersion{
        *scorer::ParseCoefficientSet(
            testing::CourierSetJson("courier", version, intercept), "test"),
        "refit job 4 (drift)",
        "depot 7 first-attempt rate moved",
        "",
        {}};
  }
  // Checks the audit of `set` tells one story: every activation follows the
  // retirement of the version active before it, and `active` is the last.
  void ExpectConsistentAudit(Lifecycle& lifecycle, const std::string& set,
                             const std::string& active) {
    ASSERT_OK_AND_ASSIGN(std::vector<AuditRecord> audit, lifecycle.Audit(set));
    std::string current;
    for (const AuditRecord& e : audit) {
      if (e.action == "retired") {
        EXPECT_EQ(e.version, current) << "retired a version not active";
        current.clear();
      } else if (e.action == "activated") {
        EXPECT_EQ(current, "") << "activated " << e.version << " while "
                               << current << " was active";
        current = e.version;
      }
    }
    EXPECT_EQ(current, active);
  }

  testing::TempDir dir_;
  std::string uri_;
};

TEST_F(ReplicasTest, ApprovalThroughOneReplicaServesOnTheOther) {
  Replica a(uri_, dir_.File("sets"));
  Replica b(uri_, dir_.File("sets"));
  ASSERT_OK(a.Start());
  ASSERT_OK(b.Start());
  EXPECT_EQ(a.Active("courier"), "v1");
  EXPECT_EQ(b.Active("courier"), "v1");
  const int b_changes = b.changes();

  ASSERT_OK(a.lifecycle().AddCandidate(Candidate("c1", -0.5)).status());
  const absl::Time approved = absl::Now();
  ASSERT_OK(a.lifecycle().Approve({"courier", "c1", "alice", "reviewed"}));
  EXPECT_EQ(a.Active("courier"), "c1");
  ASSERT_TRUE(testing::PollUntil([&] { return b.Active("courier") == "c1"; }));
  std::cout << "propagated in " << absl::Now() - approved << "\n";
  EXPECT_GT(b.changes(), b_changes) << "b's on_change hook was not called";
  // b serves the document a stored, not its own file's.
  EXPECT_EQ(b.Active("courier"), "c1");
  ASSERT_OK_AND_ASSIGN(std::vector<VersionRecord> versions,
                       b.lifecycle().List("courier"));
  ASSERT_EQ(versions.size(), 2u);

  // And back: a rollback through b reaches a.
  ASSERT_OK(b.lifecycle().Rollback({"courier", "", "bob", "late vans"}));
  ASSERT_TRUE(testing::PollUntil([&] { return a.Active("courier") == "v1"; }));
  ExpectConsistentAudit(a.lifecycle(), "courier", "v1");
}

TEST_F(ReplicasTest, ApprovalsAtOnceLeaveOneActiveVersion) {
  Replica a(uri_, dir_.File("sets"));
  Replica b(uri_, dir_.File("sets"));
  ASSERT_OK(a.Start());
  ASSERT_OK(b.Start());
  ASSERT_OK(a.lifecycle().AddCandidate(Candidate("c1", -0.5)).status());
  ASSERT_OK(b.lifecycle().AddCandidate(Candidate("c2", -0.7)).status());

  for (int round = 0; round < 5; ++round) {
    absl::StatusOr<VersionRecord> by_a, by_b;
    const std::string va = round % 2 == 0 ? "c1" : "c2";
    const std::string vb = round % 2 == 0 ? "c2" : "c1";
    // Each round starts with both candidates not active.
    if (round > 0) {
      ASSERT_OK(a.lifecycle().Activate({"courier", "v1", "ops", "reset"}));
    }
    // The first round approves the two candidates; later ones activate
    // the retired versions again.
    auto change = [round](Lifecycle& l, const StateChange& c) {
      return round == 0 ? l.Approve(c) : l.Activate(c);
    };
    std::thread ta([&] {
      by_a = change(a.lifecycle(), {"courier", va, "alice", "ok"});
    });
    std::thread tb([&] {
      by_b = change(b.lifecycle(), {"courier", vb, "bob", "ok"});
    });
    ta.join();
    tb.join();
    // Different versions: both changes apply, one after the other.
    ASSERT_OK(by_a.status());
    ASSERT_OK(by_b.status());

    ASSERT_OK_AND_ASSIGN(std::vector<VersionRecord> versions,
                         a.lifecycle().List("courier"));
    int active = 0;
    std::string which;
    for (const VersionRecord& v : versions) {
      if (v.state == VersionState::kActive) {
        ++active;
        which = v.version;
      }
    }
    ASSERT_EQ(active, 1) << "round " << round;
    ExpectConsistentAudit(a.lifecycle(), "courier", which);
    ASSERT_TRUE(testing::PollUntil([&] {
      return a.Active("courier") == which && b.Active("courier") == which;
    })) << "round "
        << round;
  }
}

TEST_F(ReplicasTest, TheSameCandidateIsApprovedOnce) {
  Replica a(uri_, dir_.File("sets"));
  Replica b(uri_, dir_.File("sets"));
  ASSERT_OK(a.Start());
  ASSERT_OK(b.Start());
  ASSERT_OK(a.lifecycle().AddCandidate(Candidate("c1", -0.5)).status());
  // b hears of c1 before it approves it.
  absl::StatusOr<VersionRecord> by_a, by_b;
  std::thread ta([&] {
    by_a = a.lifecycle().Approve({"courier", "c1", "alice", "reviewed"});
  });
  std::thread tb([&] {
    by_b = b.lifecycle().Approve({"courier", "c1", "bob", "reviewed"});
  });
  ta.join();
  tb.join();
  EXPECT_NE(by_a.ok(), by_b.ok()) << "exactly one approval applies";
  const absl::Status& refused = by_a.ok() ? by_b.status() : by_a.status();
  EXPECT_THAT(refused, StatusIs(absl::StatusCode::kFailedPrecondition));
  ASSERT_OK_AND_ASSIGN(std::vector<AuditRecord> audit,
                       a.lifecycle().Audit("courier"));
  int approved = 0;
  for (const AuditRecord& e : audit) approved += e.action == "approved";
  EXPECT_EQ(approved, 1);
  ExpectConsistentAudit(a.lifecycle(), "courier", "c1");
  ASSERT_TRUE(testing::PollUntil([&] {
    return a.Active("courier") == "c1" && b.Active("courier") == "c1";
  }));
}

TEST_F(ReplicasTest, ChangesPropagateAfterTheConnectionsDrop) {
  Replica a(uri_, dir_.File("sets"));
  Replica b(uri_, dir_.File("sets"));
  ASSERT_OK(a.Start());
  ASSERT_OK(b.Start());
  // Every connection of both replicas, stores and watches, goes.
  ASSERT_OK_AND_ASSIGN(std::unique_ptr<PgConnection> admin,
                       PgConnection::Connect(uri_));
  ASSERT_OK(admin
                ->Query("SELECT pg_terminate_backend(pid) FROM"
                        " pg_stat_activity WHERE datname = current_database()"
                        " AND pid <> pg_backend_pid()")
                .status());

  // An idle store connection that was lost is replaced at the next call.
  ASSERT_OK(a.lifecycle().AddCandidate(Candidate("c1", -0.5)).status());
  ASSERT_OK(a.lifecycle().Approve({"courier", "c1", "alice", "reviewed"}));
  // b's watch reconnects and looks.
  ASSERT_TRUE(testing::PollUntil([&] { return b.Active("courier") == "c1"; }));
}

}  // namespace
}  // namespace plumbline::daemon
