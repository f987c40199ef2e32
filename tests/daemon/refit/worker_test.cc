// File: tests/daemon/refit/worker_test.cc
//
// When the refit worker (daemon/refit_worker.h) starts a job: drift of the
// active version (not of a shadow), the cool-down after a job, the schedule,
// mode OFF, and no new job while a refit candidate waits. Runs in process
// on a real ledger in a temp directory with a fake clock; the set has no
// labelled records, so every job ends quickly as "failed: too few labelled
// records", which is enough to see which trigger started it (the audit
// actor names it).
#include "daemon/refit/worker.h"

#include <filesystem>
#include <memory>
#include <string>
#include <vector>

#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/synchronization/mutex.h"
#include "daemon/ledger/sqlite_ledger.h"
#include "daemon/refit/job.h"
#include "daemon/registry/lifecycle.h"
#include "daemon/registry/sqlite_version_store.h"
#include "daemon/registry/version_store.h"
#include "daemon/scoring/set_registry.h"
#include "gtest/gtest.h"
#include "scorer/coefficient_set.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using testing::PollUntil;
using testing::TempDir;

class RefitWorkerTest : public ::testing::Test {
 protected:
  void Start(v1::RefitPolicy::Mode mode, absl::Duration schedule,
             int64_t min_new_labelled = 0) {
    std::filesystem::create_directories(dir_.File("sets"));
    ASSERT_TRUE(testing::WriteTextFile(dir_.File("sets/courier.json"),
                                       testing::CourierSetJson("courier", "v1"))
                    .ok());
    LedgerOptions options;
    options.path = dir_.File("ledger.db");
    ledger_ = *SqliteLedger::Open(options);
    store_ = *SqliteVersionStore::Open(options.path);
    lifecycle_ = std::make_unique<Lifecycle>(store_.get());
    registry_ =
        std::make_unique<SetRegistry>(dir_.File("sets"), lifecycle_.get());
    lifecycle_->Attach(registry_.get(), [](const ReloadReport&) {});
    ASSERT_TRUE(registry_->Reload().ok());
    RefitSettings settings;
    settings.mode = mode;
    settings.schedule = schedule;
    settings.cooldown = absl::Minutes(10);
    settings.min_new_labelled = min_new_labelled;
    auto now = [this] {
      absl::MutexLock lock(&clock_mu_);
      return now_;
    };
    runner_ = std::make_unique<RefitRunner>(ledger_.get(), lifecycle_.get(),
                                            registry_.get(), settings, now);
    worker_ = std::make_unique<RefitWorker>(runner_.get(), nullptr, now);
  }

  void Advance(absl::Duration d) {
    absl::MutexLock lock(&clock_mu_);
    now_ += d;
  }

  static v1::SetHealth Health(const std::string& version, v1::DriftState state,
                              int64_t labelled_since_start = 0) {
    v1::SetHealth h;
    h.set_set("courier");
    h.set_version(version);
    h.set_state(state);
    h.set_labelled_since_start(labelled_since_start);
    return h;
  }

  // Evaluates once with the active version in `state` and waits until the
  // worker has finished every job it started; returns how many it started.
  int64_t Evaluate(v1::DriftState state,
                   const std::vector<v1::SetHealth>& extra = {},
                   int64_t labelled_since_start = 0) {
    const int64_t before = worker_->finished();
    std::vector<v1::SetHealth> health = {
        Health("v1", state, labelled_since_start)};
    health.insert(health.end(), extra.begin(), extra.end());
    const int queued =
        worker_->OnEvaluated(health, {SetVersion{"courier", "v1"}});
    EXPECT_TRUE(
        PollUntil([&] { return worker_->finished() - before >= queued; }));
    return queued;
  }

  // Audit actors of the failed jobs, oldest first.
  std::vector<std::string> FailedJobActors() {
    std::vector<std::string> actors;
    const std::vector<AuditRecord> audit = *lifecycle_->Audit("courier");
    for (const AuditRecord& r : audit) {
      if (r.action == "fit_failed") actors.push_back(r.actor);
    }
    return actors;
  }

  TempDir dir_;
  absl::Mutex clock_mu_;
  absl::Time now_ = absl::FromUnixSeconds(1796170000);
  std::unique_ptr<Ledger> ledger_;
  std::unique_ptr<VersionStore> store_;
  std::unique_ptr<Lifecycle> lifecycle_;
  std::unique_ptr<SetRegistry> registry_;
  std::unique_ptr<RefitRunner> runner_;
  std::unique_ptr<RefitWorker> worker_;
};

TEST_F(RefitWorkerTest, DriftStartsAJobThenWaitsForTheCooldown) {
  Start(v1::RefitPolicy::PROPOSE, absl::ZeroDuration());
  EXPECT_EQ(Evaluate(v1::STEADY), 0);
  EXPECT_EQ(Evaluate(v1::DRIFTING), 1);
  ASSERT_EQ(FailedJobActors().size(), 1u);
  EXPECT_TRUE(absl::StrContains(FailedJobActors()[0], "(drift)"));
  Advance(absl::Minutes(5));
  EXPECT_EQ(Evaluate(v1::DRIFTING), 0) << "within the 10 minute cool-down";
  Advance(absl::Minutes(6));
  EXPECT_EQ(Evaluate(v1::DRIFTING), 1);
  // The audit names the reason for the failure.
  const std::vector<AuditRecord> audit = *lifecycle_->Audit("courier");
  for (const AuditRecord& r : audit) {
    if (r.action == "fit_failed") {
      EXPECT_TRUE(absl::StrContains(r.detail, "too few labelled records"))
          << r.detail;
    }
  }
}

// With min_new_labelled, a drift-started job waits for that many outcomes
// after the drift was first seen, and counts again after each job and after
// a return to steady.
TEST_F(RefitWorkerTest, DriftWaitsForNewLabelsWhenAsked) {
  Start(v1::RefitPolicy::PROPOSE, absl::ZeroDuration(),
        /*min_new_labelled=*/100);
  EXPECT_EQ(Evaluate(v1::DRIFTING, {}, 1000), 0) << "counting starts at 1000";
  EXPECT_EQ(Evaluate(v1::DRIFTING, {}, 1099), 0);
  EXPECT_EQ(Evaluate(v1::DRIFTING, {}, 1100), 1);
  const std::vector<AuditRecord> audit = *lifecycle_->Audit("courier");
  bool named = false;
  for (const AuditRecord& r : audit) {
    named = named || absl::StrContains(
                         r.detail, "100 new outcomes since the drift was seen");
  }
  EXPECT_TRUE(named) << "the job's reason says how many new outcomes it had";

  Advance(absl::Minutes(11));  // past the cool-down
  EXPECT_EQ(Evaluate(v1::DRIFTING, {}, 1150), 0) << "counting again from 1150";
  EXPECT_EQ(Evaluate(v1::DRIFTING, {}, 1249), 0);
  EXPECT_EQ(Evaluate(v1::DRIFTING, {}, 1250), 1);

  Advance(absl::Minutes(11));
  EXPECT_EQ(Evaluate(v1::DRIFTING, {}, 1300), 0);
  EXPECT_EQ(Evaluate(v1::STEADY, {}, 1350), 0);
  EXPECT_EQ(Evaluate(v1::DRIFTING, {}, 1390), 0)
      << "steady in between: from 1390";
  EXPECT_EQ(Evaluate(v1::DRIFTING, {}, 1489), 0);
  EXPECT_EQ(Evaluate(v1::DRIFTING, {}, 1490), 1);
}

// Job ids go on from the audit after a restart, so "refit job N" names one
// job in the whole history of the ledger.
TEST_F(RefitWorkerTest, JobIdsGoOnAcrossRestarts) {
  Start(v1::RefitPolicy::OFF, absl::ZeroDuration());
  worker_->RunNow({"courier", RefitTriggerKind::kManual, "alice", "first", {}});
  worker_->RunNow(
      {"courier", RefitTriggerKind::kManual, "alice", "second", {}});
  worker_.reset();  // plumbd stops; the ledger keeps the audit
  worker_ = std::make_unique<RefitWorker>(runner_.get(), nullptr,
                                          [] { return absl::Now(); });
  worker_->RunNow(
      {"courier", RefitTriggerKind::kManual, "alice", "after restart", {}});
  EXPECT_EQ(FailedJobActors(),
            (std::vector<std::string>{"refit job 1 (manual, alice)",
                                      "refit job 2 (manual, alice)",
                                      "refit job 3 (manual, alice)"}));
}

TEST_F(RefitWorkerTest, AShadowsDriftStartsNothing) {
  Start(v1::RefitPolicy::PROPOSE, absl::ZeroDuration());
  EXPECT_EQ(Evaluate(v1::STEADY, {Health("shadow-1", v1::DRIFTING)}), 0);
}

TEST_F(RefitWorkerTest, ModeOffStartsNothingButManualJobsRun) {
  Start(v1::RefitPolicy::OFF, absl::Minutes(1));
  Advance(absl::Hours(2));
  EXPECT_EQ(Evaluate(v1::DRIFTING), 0);
  RefitOutcome manual = worker_->RunNow(
      {"courier", RefitTriggerKind::kManual, "alice", "test", {}});
  EXPECT_EQ(manual.result, RefitOutcome::Result::kFailed);
  EXPECT_TRUE(absl::StrContains(manual.summary, "too few labelled records"))
      << manual.summary;
}

TEST_F(RefitWorkerTest, ScheduleStartsAJobEveryPeriod) {
  Start(v1::RefitPolicy::PROPOSE, absl::Hours(1));
  EXPECT_EQ(Evaluate(v1::STEADY), 0) << "the first period has not passed";
  Advance(absl::Minutes(61));
  EXPECT_EQ(Evaluate(v1::STEADY), 1);
  EXPECT_TRUE(absl::StrContains(FailedJobActors().back(), "(schedule)"));
  Advance(absl::Minutes(30));
  EXPECT_EQ(Evaluate(v1::STEADY), 0);
  Advance(absl::Minutes(31));
  EXPECT_EQ(Evaluate(v1::STEADY), 1);
}

TEST_F(RefitWorkerTest, AWaitingRefitCandidateHoldsBackDriftJobs) {
  Start(v1::RefitPolicy::PROPOSE, absl::ZeroDuration());
  v1::CoefficientSet candidate = *scorer::ParseCoefficientSet(
      testing::CourierSetJson("courier", "refit-x", -0.5), "test");
  ASSERT_TRUE(
      lifecycle_
          ->AddCandidate({candidate, "refit job 9 (drift)", "drifting", "", {}})
          .ok());
  EXPECT_EQ(Evaluate(v1::DRIFTING), 0);
  ASSERT_TRUE(lifecycle_->Approve({"courier", "refit-x", "alice", ""}).ok());
  // refit-x is active now; its drift may start a job.
  EXPECT_EQ(worker_->OnEvaluated({Health("refit-x", v1::DRIFTING)},
                                 {SetVersion{"courier", "refit-x"}}),
            1);
}

}  // namespace
}  // namespace plumbline::daemon
