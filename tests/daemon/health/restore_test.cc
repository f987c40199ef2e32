// File: tests/daemon/health/restore_test.cc
//
// A restart from snapshots (daemon/health/snapshot_store.h,
// HealthMonitor::Restore): a monitor fed by a real ledger's commits saves
// its windows; more rows arrive; a new monitor restored from the snapshot
// and the ledger rows after its marks gives exactly the figures of the
// monitor that saw everything live (every field of SetHealth, doubles bit
// for bit). A snapshot that does not fit (other window options, rows at its
// marks gone, a ledger behind it) is not used: the version is rebuilt from
// the ledger and the reason logged.
#include <cmath>
#include <filesystem>
#include <random>
#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "daemon/health/monitor.h"
#include "daemon/health/snapshot_store.h"
#include "daemon/ledger/env.h"
#include "daemon/ledger/sqlite_ledger.h"
#include "daemon/scoring/packed_row.h"
#include "gmock/gmock.h"
#include "google/protobuf/util/message_differencer.h"
#include "gtest/gtest.h"
#include "tests/testing/health_test_sets.h"
#include "tests/testing/process.h"

namespace plumbline::daemon {
namespace {

using scorer::RawValue;
using testing::BaselineSetJson;
using testing::CompilePlan;

class HealthRestoreTest : public ::testing::Test {
 protected:
  void SetUp() override {
    plan_ = CompilePlan(BaselineSetJson("courier", "v1"));
    ASSERT_NE(plan_, nullptr);
    layout_ = std::make_shared<v1::RowLayout>(LayoutOf(*plan_));
    path_ = (std::filesystem::path(temp_.path()) / "ledger.db").string();
    LedgerOptions options;
    options.path = path_;
    options.durable_commits = false;
    auto ledger = SqliteLedger::Open(options);
    ASSERT_TRUE(ledger.ok()) << ledger.status();
    ledger_ = *std::move(ledger);
    auto store = SnapshotStore::Open(path_);
    ASSERT_TRUE(store.ok()) << store.status();
    store_ = *std::move(store);
    options_.windows.labelled_count = 40;
    options_.windows.scored_count = 40;
    options_.windows.buckets = 4;
    options_.windows.time_span = absl::Hours(1);
    options_.rebuild_in_background = false;  // but see the last test
  }

  std::unique_ptr<HealthMonitor> Make(HealthMonitorOptions options) {
    options.now = [this] { return now_; };
    auto monitor = HealthMonitor::Create(std::move(options));
    EXPECT_TRUE(monitor.ok()) << monitor.status();
    if (!monitor.ok()) return nullptr;
    (*monitor)->SyncPlans({plan_});
    return *std::move(monitor);
  }

  // `n` records scored at 10 s steps from `first`, packed as plumbd packs
  // them; about 70 % of them labelled a minute after their score.
  void Traffic(int from, int n, absl::Time first) {
    std::vector<ScoreEntry> scores;
    std::vector<OutcomeEntry> outcomes;
    const char* regions[] = {"urban", "rural", "suburb", nullptr};
    for (int i = from; i < from + n; ++i) {
      std::uniform_real_distribution<double> u(0, 1);
      const std::vector<RawValue> row = {
          RawValue::Number(20 * u(rng_)),
          regions[i % 4] == nullptr ? RawValue::Missing()
                                    : RawValue::Text(regions[i % 4]),
          RawValue::Number(std::floor(24 * u(rng_)))};
      const std::vector<uint8_t> sent = {1, regions[i % 4] != nullptr, 1};
      ScoreEntry e;
      e.record_id = absl::StrCat("parcel-", i);
      e.set_name = "courier";
      e.set_version = "v1";
      e.role = ScoreRole::kActive;
      e.scored_at = first + absl::Seconds(10 * (i - from));
      e.log_odds = -2 + 4 * u(rng_);
      e.probability = 1 / (1 + std::exp(-e.log_odds));
      PackFeatures(*plan_, row, sent, &e.features);
      e.layout = layout_;
      if (u(rng_) < 0.7) {
        outcomes.push_back({e.record_id, u(rng_) < e.probability ? 1 : 0,
                            e.scored_at + absl::Minutes(1)});
      }
      scores.push_back(std::move(e));
      if (scores.size() == 10) {
        ASSERT_TRUE(ledger_->AppendScores(std::move(scores)).ok());
        scores.clear();
      }
    }
    if (!scores.empty()) ASSERT_TRUE(ledger_->AppendScores(scores).ok());
    auto results = ledger_->ReportOutcomes(outcomes);
    ASSERT_TRUE(results.ok()) << results.status();
    labelled_ += static_cast<int64_t>(outcomes.size());
  }

  // A monitor fed by the ledger from its first row, as plumbd feeds it.
  std::unique_ptr<HealthMonitor> Live() {
    std::unique_ptr<HealthMonitor> live = Make(options_);
    auto report = live->Restore(*ledger_, store_.get());
    EXPECT_TRUE(report.ok()) << report.status();
    ledger_->set_rows_observer(
        [m = live.get()](const CommittedRows& rows) { m->OnCommitted(rows); });
    return live;
  }

  static v1::SetHealth Figures(HealthMonitor& monitor) {
    monitor.Evaluate();
    absl::StatusOr<v1::SetHealth> h = monitor.Health("courier");
    EXPECT_TRUE(h.ok()) << h.status();
    return h.ok() ? *h : v1::SetHealth();
  }

  testing::TempDir temp_;
  std::string path_;
  std::shared_ptr<const scorer::ScoringPlan> plan_;
  std::shared_ptr<const v1::RowLayout> layout_;
  std::unique_ptr<Ledger> ledger_;
  std::unique_ptr<SnapshotStore> store_;
  HealthMonitorOptions options_;
  std::mt19937_64 rng_{20261203};
  int64_t labelled_ = 0;
  absl::Time now_ = absl::FromUnixSeconds(1'800'000'000);
};

TEST_F(HealthRestoreTest, RestoredWindowsEqualLiveOnes) {
  std::unique_ptr<HealthMonitor> live = Live();
  EXPECT_FALSE(live->Snapshots().empty());
  Traffic(0, 130, now_ - absl::Minutes(50));
  const int64_t labelled_before = labelled_;
  absl::StatusOr<int64_t> bytes = store_->Save(live->Snapshots());
  ASSERT_TRUE(bytes.ok()) << bytes.status();
  EXPECT_GT(*bytes, 0);
  // After the snapshot: more records, labelled and not.
  Traffic(130, 45, now_ - absl::Minutes(25));
  ledger_->set_rows_observer(nullptr);

  std::unique_ptr<HealthMonitor> restored = Make(options_);
  absl::StatusOr<RestoreReport> report =
      restored->Restore(*ledger_, store_.get());
  ASSERT_TRUE(report.ok()) << report.status();
  EXPECT_EQ(report->restored, 1);
  EXPECT_EQ(report->rebuilt, 0);
  EXPECT_EQ(report->tail_scores, 45);
  EXPECT_EQ(report->tail_labelled, labelled_ - labelled_before);

  const v1::SetHealth want = Figures(*live);
  const v1::SetHealth got = Figures(*restored);
  ASSERT_EQ(want.windows_size(), 2);
  // The count window wrapped: it holds 31 to 40 of the ~120 labelled.
  EXPECT_GT(want.windows(0).labelled(), 30);
  EXPECT_GT(want.windows(0).scored(), 30);
  std::string diff;
  google::protobuf::util::MessageDifferencer d;
  d.ReportDifferencesToString(&diff);
  EXPECT_TRUE(d.Compare(want, got)) << diff;
  // And the restored monitor's own snapshot goes on from the ledger's
  // marks.
  ASSERT_FALSE(restored->Snapshots().empty());
  EXPECT_EQ(restored->Snapshots()[0].marks, ledger_->Marks());
}

TEST_F(HealthRestoreTest, ASnapshotThatDoesNotFitIsNotUsed) {
  std::unique_ptr<HealthMonitor> live = Live();
  Traffic(0, 60, now_ - absl::Minutes(40));
  ASSERT_TRUE(store_->Save(live->Snapshots()).ok());
  ledger_->set_rows_observer(nullptr);
  const v1::SetHealth want = Figures(*live);

  // Other window options: another fingerprint.
  HealthMonitorOptions other = options_;
  other.windows.labelled_count = 80;
  std::unique_ptr<HealthMonitor> wider = Make(other);
  absl::StatusOr<RestoreReport> report = wider->Restore(*ledger_, store_.get());
  ASSERT_TRUE(report.ok()) << report.status();
  EXPECT_EQ(report->restored, 0);
  EXPECT_EQ(report->rebuilt, 1);

  // The row at the score mark deleted: the snapshot's marks no longer
  // mean what they meant.
  {
    auto db = SqliteDb::Open(path_);
    ASSERT_TRUE(db.ok());
    ASSERT_TRUE((*db)
                    ->Exec(absl::StrCat("DELETE FROM scores WHERE id = ",
                                        ledger_->Marks().score_id))
                    .ok());
  }
  std::unique_ptr<HealthMonitor> after_delete = Make(options_);
  report = after_delete->Restore(*ledger_, store_.get());
  ASSERT_TRUE(report.ok()) << report.status();
  EXPECT_EQ(report->restored, 0);
  EXPECT_EQ(report->rebuilt, 1);
  // Rebuilt from the ledger: the one deleted score is missing.
  EXPECT_EQ(Figures(*after_delete).windows(1).scored(),
            want.windows(1).scored() - 1);
}

TEST_F(HealthRestoreTest, ABackgroundRebuildMissesNoRowAndCountsNoneTwice) {
  Traffic(0, 150, now_ - absl::Minutes(55));  // before the start, no snapshot
  HealthMonitorOptions background = options_;
  background.rebuild_in_background = true;
  std::unique_ptr<HealthMonitor> m = Make(background);
  absl::StatusOr<RestoreReport> report = m->Restore(*ledger_, store_.get());
  ASSERT_TRUE(report.ok()) << report.status();
  EXPECT_EQ(report->background, 1);
  EXPECT_EQ(report->rebuilt, 0);
  ledger_->set_rows_observer(
      [m = m.get()](const CommittedRows& rows) { m->OnCommitted(rows); });
  // Rows while the rebuild may still run (the catch-up passes or the live
  // feed take them, never both), and after it.
  Traffic(150, 60, now_ - absl::Minutes(30));
  m->WaitForRebuild();
  EXPECT_FALSE(m->Rebuilding());
  Traffic(210, 40, now_ - absl::Minutes(10));
  ledger_->set_rows_observer(nullptr);
  // A version rebuilt whole before serving reads every row of the span:
  // the time window's counts and figures are the same.
  std::unique_ptr<HealthMonitor> whole = Make(options_);
  ASSERT_TRUE(whole->Restore(*ledger_, nullptr).ok());
  const v1::SetHealth got = Figures(*m);
  const v1::SetHealth want = Figures(*whole);
  // Nothing was counted as unmonitored (the live feed passed the version
  // by while it was rebuilt, it did not drop rows).
  EXPECT_TRUE(m->Unmonitored().empty());
  EXPECT_GT(got.windows(1).scored(), 150);
  EXPECT_EQ(got.windows(1).scored(), want.windows(1).scored());
  EXPECT_EQ(got.windows(1).labelled(), want.windows(1).labelled());
  // Sums in another order: equal to rounding (compensated sums).
  EXPECT_NEAR(got.windows(1).log_loss().value(),
              want.windows(1).log_loss().value(), 1e-12);
  for (const std::string& note : got.notes()) {
    EXPECT_EQ(note.find("incomplete"), std::string::npos) << note;
  }
}

// Holds every read of the ledger file while `hold` is set (a slow disk).
class HeldReads : public LedgerEnv {
 public:
  int Before(Op op, absl::string_view, int64_t, int64_t) override {
    if (op != Op::kRead) return 0;
    absl::MutexLock lock(&mu_);
    mu_.Await(absl::Condition(
        +[](bool* held) { return !*held; }, &hold_));
    return 0;
  }
  void Hold(bool hold) {
    absl::MutexLock lock(&mu_);
    hold_ = hold;
  }

 private:
  absl::Mutex mu_;
  bool hold_ ABSL_GUARDED_BY(mu_) = false;
};

TEST_F(HealthRestoreTest,
       WhileRebuildingTheFiguresSayIncompleteAndAreNotSaved) {
  Traffic(0, 50, now_ - absl::Minutes(30));
  ledger_.reset();
  HeldReads env;
  LedgerOptions options;
  options.path = path_;
  options.env = &env;
  auto ledger = SqliteLedger::Open(options);
  ASSERT_TRUE(ledger.ok()) << ledger.status();
  ledger_ = *std::move(ledger);
  HealthMonitorOptions background = options_;
  background.rebuild_in_background = true;
  std::unique_ptr<HealthMonitor> m = Make(background);
  env.Hold(true);  // the rebuild's first read waits
  absl::StatusOr<RestoreReport> report = m->Restore(*ledger_, nullptr);
  ASSERT_TRUE(report.ok()) << report.status();
  EXPECT_EQ(report->background, 1);
  EXPECT_TRUE(m->Rebuilding());
  const v1::SetHealth during = Figures(*m);
  EXPECT_THAT(during.notes(),
              ::testing::Contains(::testing::HasSubstr("windows incomplete")));
  EXPECT_EQ(during.state(), v1::STEADY);  // not judged
  EXPECT_TRUE(m->Snapshots().empty());    // not whole: not saved
  env.Hold(false);
  m->WaitForRebuild();
  EXPECT_FALSE(m->Rebuilding());
  const v1::SetHealth after = Figures(*m);
  EXPECT_THAT(after.notes(), ::testing::Not(::testing::Contains(
                                 ::testing::HasSubstr("windows incomplete"))));
  EXPECT_EQ(after.windows(1).scored(), 50);
  EXPECT_EQ(m->Snapshots().size(), 1u);
  ledger_.reset();  // before `env`
}

TEST_F(HealthRestoreTest, NoSnapshotsBeforeTheMarksAreKnown) {
  std::unique_ptr<HealthMonitor> monitor = Make(options_);
  EXPECT_TRUE(monitor->Snapshots().empty());
}

TEST_F(HealthRestoreTest, AnIdleMonitorHasNothingNewToSave) {
  Traffic(0, 30, now_ - absl::Minutes(20));
  std::unique_ptr<HealthMonitor> live = Live();
  ASSERT_EQ(live->Snapshots(/*if_changed=*/true).size(), 1u);  // the first
  // No commit since, the same version: nothing to copy or save...
  EXPECT_TRUE(live->Snapshots(/*if_changed=*/true).empty());
  now_ += absl::Minutes(5);  // ...not even when time passes
  EXPECT_TRUE(live->Snapshots(/*if_changed=*/true).empty());
  // ...but always when asked (a failed save, the shutdown).
  EXPECT_EQ(live->Snapshots().size(), 1u);
  // A commit moves the marks: the next call holds it.
  Traffic(30, 5, now_ - absl::Minutes(1));
  std::vector<WindowSnapshot> after = live->Snapshots(/*if_changed=*/true);
  ASSERT_EQ(after.size(), 1u);
  EXPECT_EQ(after[0].marks, ledger_->Marks());
  EXPECT_TRUE(live->Snapshots(/*if_changed=*/true).empty());
  // A version that joins the monitor changes what there is to save.
  live->SyncPlans({plan_, CompilePlan(BaselineSetJson("courier", "v2"))});
  EXPECT_EQ(live->Snapshots(/*if_changed=*/true).size(), 2u);
  EXPECT_TRUE(live->Snapshots(/*if_changed=*/true).empty());
  ledger_->set_rows_observer(nullptr);
}

}  // namespace
}  // namespace plumbline::daemon
