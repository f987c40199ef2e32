// File: daemon/health/monitor.h
//
// plumbd's model-health monitor. The ledger hands it the rows of every
// commit, in commit order (OnCommitted, through daemon/health/
// committed_feed.h): every scored record and every newly labelled score,
// which go into the windows of their set version (daemon/health/windows.h).
// So the windows hold exactly the ledger's rows up to a pair of marks, and
// Snapshots() can save them with those marks (daemon/health/
// snapshot_store.h): a restart restores them and reads only the rows after
// the marks (Restore), instead of every row of the windows' span. On each tick
// the daemon calls SyncPlans (the loaded versions) and Evaluate, which computes
// every version's figures, applies the drift policy and keeps the result; the
// Monitor RPC, the Prometheus exposition and the event log all read that one
// result, so they always show the same numbers.
//
// Drift state: one DriftTracker per version (daemon/policy/drift_policy.h:
// hysteresis and dwell); every change of state is logged (event
// drift_state, with the test that fired and its p-value or chart value) and
// counted by (from, to, trigger) in Transitions(). The CUSUM charts' control
// limits are chosen by Evaluate, on the monitor's own thread, the first
// time it sees a version (event cusum_limits); records labelled before
// then wait in the charts' buffer.
//
//   auto monitor = HealthMonitor::Create(options);
//   (*monitor)->SyncPlans(registry.All());
//   (*monitor)->Restore(*ledger, store);  // at startup, before serving
//   ledger->set_rows_observer(
//       [&](const CommittedRows& r) { (*monitor)->OnCommitted(r); });
//   ... server runs ...
//   (*monitor)->Evaluate();              // every tick
//   store->Save((*monitor)->Snapshots());  // every tick, and at the end
//   absl::StatusOr<v1::SetHealth> h = (*monitor)->Health("courier");
//
// Versions: windows belong to a set *version*. A version that appears on the
// request path before SyncPlans has seen it (right after a reload) gets its
// windows at once; SyncPlans drops the windows of versions no longer loaded.
// Records of a version without windows (an outcome for a score of a replaced
// version) are counted as unmonitored, not silently dropped.
//
// Thread-safe: every method may be called from any thread. OnScored and
// OnLabelled take a shared lock on the version map and the mutex of one
// window pair for one record; OnCommitted holds feed_mu_ for one commit's
// rows, and Snapshots holds it while it copies the windows, so a snapshot
// is one consistent whole at one pair of marks. One Evaluate runs at a
// time (evaluate_mu_, taken before mu_).
#ifndef PLUMBLINE_DAEMON_HEALTH_MONITOR_H_
#define PLUMBLINE_DAEMON_HEALTH_MONITOR_H_

#include <atomic>
#include <cstdint>
#include <functional>
#include <memory>
#include <string>
#include <thread>
#include <tuple>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/container/flat_hash_map.h"
#include "absl/container/flat_hash_set.h"
#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/time.h"
#include "daemon/health/committed_feed.h"
#include "daemon/health/sink.h"
#include "daemon/health/snapshot_store.h"
#include "daemon/health/windows.h"
#include "daemon/ledger/ledger.h"
#include "daemon/policy/drift_policy.h"
#include "daemon/util/set_version.h"
#include "plumbline/v1/monitor.pb.h"
#include "scorer/scoring_plan.h"

namespace plumbline::daemon {

struct HealthMonitorOptions {
  HealthWindowOptions windows;
  DriftPolicy policy;
  // The clock; tests pass a fake one.
  std::function<absl::Time()> now = [] { return absl::Now(); };
  // The loaded plan of a (set, version), for ledger rows of a version the
  // monitor has no windows for yet (right after a reload); null, or a null
  // answer: such rows are counted as unmonitored.
  CommittedFeed::FindPlan find_plan;
  // Restore rebuilds the versions without a usable snapshot on a thread of
  // its own while plumbd serves (their windows marked incomplete, their
  // drift not judged until it ends); false: before it returns.
  bool rebuild_in_background = true;
};

// What HealthMonitor::Restore did.
struct RestoreReport {
  // Versions restored from their snapshot, rebuilt from the ledger before
  // Restore returned, and being rebuilt in the background.
  int restored = 0;
  int rebuilt = 0;
  int background = 0;
  // Rows after the snapshots' marks fed to the restored versions.
  int64_t tail_scores = 0;
  int64_t tail_labelled = 0;
};

// Changes of drift state of one version by kind, since it was first
// monitored.
struct TransitionCount {
  std::string set;
  std::string version;
  std::string from;  // "steady", "watch", "drifting"
  std::string to;
  std::string trigger;  // the metric that entered the state, or "released"
  int64_t transitions = 0;
};

// Records that reached the monitor for a set version it has no windows for.
struct UnmonitoredCount {
  std::string set;
  std::string version;
  std::string kind;  // "scored" or "labelled"
  int64_t records = 0;
};

class HealthMonitor final : public HealthSink {
 public:
  // INVALID_ARGUMENT for window options the windows refuse.
  static absl::StatusOr<std::unique_ptr<HealthMonitor>> Create(
      HealthMonitorOptions options);

  HealthMonitor(const HealthMonitor&) = delete;
  HealthMonitor& operator=(const HealthMonitor&) = delete;

  // Makes the monitored versions exactly those of `plans`: new versions get
  // empty windows, versions not among them are dropped with their windows
  // and their last evaluation. Per set name the first plan listed is the
  // serving (active) version; the others are its shadows
  // (SetRegistry::AllMonitored lists them so).
  void SyncPlans(
      const std::vector<std::shared_ptr<const scorer::ScoringPlan>>& plans);

  // Refills the windows of every monitored version from the ledger
  // (daemon/health/rebuild.h). Call before serving.
  absl::Status Rebuild(Ledger& ledger);

  // At startup, before the ledger takes writes: each monitored version
  // whose snapshot in `store` fits (same fingerprint, the ledger still
  // holding the rows at its marks, daemon/health/snapshot_store.h) is
  // restored and fed the ledger's rows after its marks; every other
  // version is rebuilt from the ledger (daemon/health/rebuild.h), in the
  // background unless options say otherwise: the rows up to the ledger's
  // marks at this call, then the rows committed since in passes, the last
  // one holding the feed, after which the live feed takes it over; until
  // then its figures carry a note and its drift is not judged. Each
  // snapshot not used is logged (event health_snapshot_unused) with why.
  // From then on the monitor's marks are the ledger's. `store` may be null
  // (rebuild all). `ledger` must outlive the monitor. The ledger's read
  // errors are returned.
  absl::StatusOr<RestoreReport> Restore(Ledger& ledger, SnapshotStore* store);
  // Whether a background rebuild is still going; WaitForRebuild waits for
  // it to end.
  bool Rebuilding() const;
  void WaitForRebuild();

  ~HealthMonitor() override;

  // The ledger's rows observer (Ledger::set_rows_observer): one commit's
  // rows into the windows, and its marks noted.
  void OnCommitted(const CommittedRows& rows);

  // Every monitored version's window state with the marks it is whole up
  // to; empty until Restore has given the monitor its marks. With
  // `if_changed`, also empty when neither the marks nor the whole versions
  // (set, version, fingerprint) changed since the last call that returned
  // snapshots: an idle daemon copies and saves nothing at its ticks. The
  // windows' time-based eviction is not a change (a restore evicts again).
  // After a save that failed, call it without `if_changed`.
  std::vector<WindowSnapshot> Snapshots(bool if_changed = false);

  // HealthSink (OnCommitted's feed; tests call these directly).
  void OnScored(const scorer::ScoringPlan& plan,
                absl::Span<const scorer::RawValue> values, double log_odds,
                absl::Time scored_at) override;
  void OnLabelled(const LabelledScore& labelled) override;
  void OnUnknownVersion(const std::string& set,
                        const std::string& version) override;

  // Computes and judges the figures of every monitored version at now(),
  // keeps them for Health/AllHealth and logs each change of drift state.
  void Evaluate();

  // The last evaluation of set `name` (its active version: the first
  // SyncPlans listed).
  // NOT_FOUND when no version of it is monitored.
  absl::StatusOr<v1::SetHealth> Health(absl::string_view name) const;
  // The last evaluation of every monitored version, by set name.
  std::vector<v1::SetHealth> AllHealth() const;
  std::vector<UnmonitoredCount> Unmonitored() const;
  // Drift state transitions of every monitored version.
  std::vector<TransitionCount> Transitions() const;

  const HealthMonitorOptions& options() const { return options_; }

 private:
  using PlanPtr = std::shared_ptr<const scorer::ScoringPlan>;
  struct Version {
    std::unique_ptr<HealthWindows> windows;
    // Last evaluation; unset evaluated_at before the first.
    v1::SetHealth health;  // guarded by HealthMonitor::mu_
  };

  explicit HealthMonitor(HealthMonitorOptions options);

  // A catch-up pass of a background rebuild holds the feed when at most
  // this many rows are left, or after kCatchUpPasses passes.
  static constexpr int64_t kCatchUpUnderLock = 20'000;
  static constexpr int kCatchUpPasses = 5;
  struct FedRows {
    int64_t scores = 0, labelled = 0, undecodable = 0;
  };
  // The ledger's rows in (after, upto] of the versions in `targets`, into
  // their windows.
  absl::StatusOr<FedRows> FeedRows(
      Ledger& ledger, const LedgerMarks& after, const LedgerMarks& upto,
      const absl::flat_hash_map<SetVersion, HealthWindows*>& targets);
  void RebuildInBackground(
      Ledger& ledger, const std::vector<std::shared_ptr<Version>>& versions,
      const LedgerMarks& upto);

  // The plan of a monitored version, else options_.find_plan's answer.
  PlanPtr PlanFor(const std::string& set, const std::string& version);
  // Creates windows for `plan`'s version unless it has them. False for a
  // retired version (one SyncPlans dropped) or if they cannot be created.
  bool EnsureWindows(const scorer::ScoringPlan& plan);
  // REQUIRES: mu_ held (shared is enough).
  HealthWindows* Find(absl::string_view set, absl::string_view version) const
      ABSL_SHARED_LOCKS_REQUIRED(mu_);
  HealthWindows* Find(const scorer::ScoringPlan& plan) const
      ABSL_SHARED_LOCKS_REQUIRED(mu_);
  void CountUnmonitored(absl::string_view set, absl::string_view version,
                        absl::string_view kind);

  // The drift state of one version's windows.
  struct Tracked {
    const HealthWindows* windows = nullptr;  // whose version it judges
    DriftTracker tracker;
  };
  using TransitionKey = std::tuple<std::string, std::string, std::string,
                                   std::string, std::string>;

  // Constant after construction.
  const HealthMonitorOptions options_;

  // Held while one commit's rows are fed, and while Snapshots copies the
  // windows; taken before mu_.
  absl::Mutex feed_mu_ ABSL_ACQUIRED_BEFORE(mu_);
  CommittedFeed feed_ ABSL_GUARDED_BY(feed_mu_);
  // The ledger's marks of the last commit fed; known once Restore ran.
  LedgerMarks fed_marks_ ABSL_GUARDED_BY(feed_mu_);
  bool marks_known_ ABSL_GUARDED_BY(feed_mu_) = false;
  // What the last non-empty Snapshots() held: its marks and its versions'
  // "set\nversion\nfingerprint", in order.
  LedgerMarks snapshot_marks_ ABSL_GUARDED_BY(feed_mu_);
  std::vector<std::string> snapshot_versions_ ABSL_GUARDED_BY(feed_mu_);

  // Held for a whole Evaluate; taken before mu_.
  absl::Mutex evaluate_mu_ ABSL_ACQUIRED_BEFORE(mu_);
  absl::flat_hash_map<SetVersion, Tracked> trackers_
      ABSL_GUARDED_BY(evaluate_mu_);

  mutable absl::Mutex transitions_mu_;
  absl::flat_hash_map<TransitionKey, int64_t> transitions_
      ABSL_GUARDED_BY(transitions_mu_);

  mutable absl::Mutex mu_;
  // Set name -> its monitored versions, oldest first.
  absl::flat_hash_map<std::string, std::vector<std::shared_ptr<Version>>>
      versions_ ABSL_GUARDED_BY(mu_);
  // Versions SyncPlans dropped: not revived by a late record.
  absl::flat_hash_set<SetVersion> retired_ ABSL_GUARDED_BY(mu_);
  // Windows a background rebuild fills: the live feed passes them by.
  absl::flat_hash_set<const HealthWindows*> rebuilding_ ABSL_GUARDED_BY(mu_);

  absl::Mutex rebuild_mu_;
  std::thread rebuild_thread_ ABSL_GUARDED_BY(rebuild_mu_);
  std::atomic<bool> stop_rebuild_{false};

  mutable absl::Mutex unmonitored_mu_;
  // By version and kind.
  absl::flat_hash_map<std::pair<SetVersion, std::string>, UnmonitoredCount>
      unmonitored_ ABSL_GUARDED_BY(unmonitored_mu_);
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_HEALTH_MONITOR_H_
