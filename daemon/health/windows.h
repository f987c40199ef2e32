// File: daemon/health/windows.h
//
// The windows of one set version: a count window over the last N labelled
// records and a time window over the last T seconds of them (outcome
// figures), and the same pair over scored records (stability figures). Each
// window is a ring of buckets from monitor/window.h; HealthMonitor keeps one
// HealthWindows per loaded set version, feeds it from the request path and
// asks it for figures on every tick. Beside the windows: the version's CUSUM
// charts (daemon/health/cusum_charts.h), fed with every mature labelled
// record, and its outcome coverage by age (daemon/health/coverage.h).
//
//   auto w = HealthWindows::Create(plan, HealthWindowOptions{});
//   (*w)->AddScored(log_odds, row, scored_at, now);
//   (*w)->AddLabelled(log_odds, label, scored_at, observed_at, now);
//   v1::SetHealth figures = (*w)->Figures(now);
//
// Exact outcome figures: each labelled bucket keeps its records in a
// bounded store (daemon/health/labelled.h). A count window's buckets hold
// exactly labelled_count / buckets records each, so its store is the whole
// window (labelled_count records, 9 bytes each). A time window's buckets
// keep at most record_store_max_records / buckets records each (default
// 1,000,000 per window: about 9 MB, up to twice that with vector growth);
// past a bucket's share a record still counts in log-loss, Brier score,
// ECE and mean predicted minus observed, but the exact figures are then
// over the records kept, with a note, and WindowHealth.unstored_labelled
// counts the others.
//
// Outcome horizon H (the set's outcome_horizon_seconds, else the options'):
// with H = 0 a labelled record enters the windows and the charts when its
// outcome arrives, and the labelled time window is by outcome time. With
// H > 0 a labelled record waits (at most max_immature_records per version;
// past it the record is counted in immature_refused and left out) until its
// score is H old; then it enters the count window, the charts and the
// labelled time window, which is then by score time and spans the cohorts
// scored in the T before now - H. So every outcome figure is over mature
// cohorts only.
//
// Record times later than `now` are taken as `now` (a caller's clock may run
// ahead), so a future time cannot push the time window's ring past the
// present. A record the time window refuses (older than its oldest bucket)
// or that no window accepts (a non-finite log-odds) is counted, never
// silently dropped; the counts are part of the figures.
//
// Saved state (issue 15: restart in a second): Capture() returns everything
// the windows hold as a v1::HealthWindowsState (proto/plumbline/v1/
// health_state.proto; the mapping is daemon/health/window_state.h), and
// Restore() puts it into a freshly created HealthWindows, which then gives
// the same Figures, bit for bit, and goes on exactly as the captured one
// would. The state's fingerprint (Fingerprint()) names what shaped it: the
// state format, set name, version, outcome horizon, every
// HealthWindowOptions field and a hash of the stability layout; a state is
// only restored into windows with the same fingerprint.
//
// Thread-safe: the labelled side (windows, waiting records, charts), the
// scored windows and the coverage each have their own mutex; Add* hold them
// for one record, Figures() for the merge of the buckets. Capture() takes
// each mutex in turn, so its state is consistent within each part (labelled
// side, scored windows, coverage; the refused counts are read last); a
// caller that needs one consistent whole stops feeding the windows during
// Capture().
#ifndef PLUMBLINE_DAEMON_HEALTH_WINDOWS_H_
#define PLUMBLINE_DAEMON_HEALTH_WINDOWS_H_

#include <atomic>
#include <cstdint>
#include <map>
#include <memory>
#include <string>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/status/statusor.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/time.h"
#include "absl/types/span.h"
#include "daemon/health/coverage.h"
#include "daemon/health/cusum_charts.h"
#include "daemon/health/labelled.h"
#include "daemon/health/stability.h"
#include "monitor/window.h"
#include "plumbline/v1/config.pb.h"
#include "plumbline/v1/health_state.pb.h"
#include "plumbline/v1/monitor.pb.h"
#include "scorer/scoring_plan.h"

namespace plumbline::daemon {

struct HealthWindowOptions {
  // Count window over the most recent labelled records.
  int64_t labelled_count = 5000;
  // Count window over the most recent scored records.
  int64_t scored_count = 10000;
  // Time window over both.
  absl::Duration time_span = absl::Hours(24);
  // Buckets per window; must divide both counts.
  int buckets = 20;
  // Labelled records the exact figures keep per time window (spread evenly
  // over its buckets).
  int64_t record_store_max_records = 1'000'000;
  // Outcome horizon of a set whose file names none.
  absl::Duration outcome_horizon = absl::ZeroDuration();
  // Labelled records waiting to mature, per version.
  int64_t max_immature_records = 1'000'000;
  // Level of one PSI test, given by HealthMonitor from the drift policy's
  // alpha and the version's number of tests; this is the policy's alpha.
  double alpha = 0.01;
  // The CUSUM charts.
  CusumOptions cusum;

  // From a config file's windows and drift policy (zeros mean the
  // defaults). INVALID_ARGUMENT naming the field when buckets does not
  // divide a count, or for a store bound, horizon or chart setting out of
  // range.
  static absl::StatusOr<HealthWindowOptions> FromConfig(
      const v1::WindowConfig& config, const v1::DriftPolicy& policy = {});
};

// Which of a kind's two windows.
enum class WindowKind { kCount, kTime };

class HealthWindows {
 public:
  // INVALID_ARGUMENT for options the windows refuse.
  static absl::StatusOr<std::unique_ptr<HealthWindows>> Create(
      std::shared_ptr<const scorer::ScoringPlan> plan,
      const HealthWindowOptions& options);

  HealthWindows(const HealthWindows&) = delete;
  HealthWindows& operator=(const HealthWindows&) = delete;

  const std::shared_ptr<const scorer::ScoringPlan>& plan() const {
    return plan_;
  }

  // One scored record into both scored windows. REQUIRES: values in the
  // plan's feature order.
  void AddScored(double log_odds, absl::Span<const scorer::RawValue> values,
                 absl::Time scored_at, absl::Time now);
  // One labelled score: into both labelled windows and the charts (or, with
  // an outcome horizon, into the waiting records until its score is old
  // enough), and into the coverage.
  void AddLabelled(double log_odds, int label, absl::Time scored_at,
                   absl::Time observed_at, absl::Time now);

  // The same into one window only (rebuilding from the ledger). A labelled
  // record for the count window also goes to the charts (the count pass
  // feeds records oldest first); with an outcome horizon an immature one is
  // left to the time pass, which puts it among the waiting records.
  void AddScoredTo(WindowKind window, double log_odds,
                   absl::Span<const scorer::RawValue> values, absl::Time at,
                   absl::Time now);
  void AddLabelledTo(WindowKind window, double log_odds, int label,
                     absl::Time scored_at, absl::Time observed_at,
                     absl::Time now);
  // Coverage only (rebuilding from the ledger).
  void AddCoverage(absl::Time scored_at, bool labelled, absl::Time now);

  // The figures at `now`: set, version, windows ("count", then "time"),
  // charts, coverage and horizon; state, reasons and notes are left to the
  // drift policy. Moves waiting records whose score is now mature into the
  // windows first.
  v1::SetHealth Figures(absl::Time now);

  // True while the charts wait for their control limits.
  bool NeedsCusumLimits() const;
  // Installs them (ChooseCusumLimits on plan()->set()).
  void SetCusumLimits(std::vector<CusumLimit> limits);

  // Start of the oldest time-window bucket at `now`: records older than
  // this are refused.
  absl::Time TimeWindowStart(absl::Time now) const;
  // The oldest outcome time a rebuild must read for the labelled time
  // window and the waiting records at `now`.
  absl::Time LabelledReadStart(absl::Time now) const;
  // Oldest score time the coverage counts at `now`.
  absl::Time CoverageStart(absl::Time now) const;

  // Everything the windows hold. Buckets are copied out under their
  // mutex; see the class comment for what is consistent with what.
  // Capture and Restore are defined in window_state.cc.
  v1::HealthWindowsState Capture() const;
  // Puts a captured state into these windows. REQUIRES: nothing was fed
  // since Create (Restore replaces the windows; it does not merge).
  // FAILED_PRECONDITION naming the fingerprint keys that differ when the
  // state was captured from windows of another shape; INVALID_ARGUMENT
  // naming the field for a malformed state (wrong bucket counts, sizes that
  // do not match, negative counts, a store larger than its bound, a
  // non-finite value where none can be). The state is checked whole before
  // anything is replaced: on any error the windows are unchanged.
  absl::Status Restore(const v1::HealthWindowsState& state);
  // This instance's fingerprint: Fingerprint(*plan(), options()).
  const std::string& fingerprint() const { return fingerprint_; }
  // What shapes the state of windows made by Create(plan, options): one
  // `key=value` per line — state (the format, 1), set, version (C-escaped),
  // horizon_ns, labelled_count, scored_count, time_span_ns, buckets,
  // record_store_max_records, default_horizon_ns, max_immature_records,
  // alpha (%a, exact), cusum (enabled, odds ratios, slope, ARL, lattice),
  // features (count) and layout (LayoutHash of the stability layout).
  // Change it (bump `state`) whenever the state's meaning changes.
  static std::string Fingerprint(const scorer::ScoringPlan& plan,
                                 const HealthWindowOptions& options);

  const HealthWindowOptions& options() const { return options_; }
  absl::Duration outcome_horizon() const { return horizon_; }
  // PSI tests per evaluation of this version (both windows).
  int stability_tests() const { return 2 * layout_tests_; }

 private:
  using OutcomeCount = monitor::CountWindow<LabelledAccumulator>;
  using OutcomeTime = monitor::TimeWindow<LabelledAccumulator>;
  using ScoredCount = monitor::CountWindow<ScoredAccumulator>;
  using ScoredTime = monitor::TimeWindow<ScoredAccumulator>;

  // A labelled record whose score is not yet mature.
  struct Waiting {
    double log_odds;
    int label;
  };

  HealthWindows(std::shared_ptr<const scorer::ScoringPlan> plan,
                HealthWindowOptions options, absl::Duration horizon,
                int layout_tests, OutcomeCount labelled_count,
                OutcomeTime labelled_time, ScoredCount scored_count,
                ScoredTime scored_time, OutcomeCoverage coverage);

  // A mature record into the count window and the charts / the time window.
  void AddMatureToCount(double log_odds, int label)
      ABSL_EXCLUSIVE_LOCKS_REQUIRED(labelled_mu_);
  void AddMatureToTime(double log_odds, int label, absl::Time scored_at,
                       absl::Time observed_at, absl::Time now)
      ABSL_EXCLUSIVE_LOCKS_REQUIRED(labelled_mu_);
  void Wait(double log_odds, int label, absl::Time scored_at)
      ABSL_EXCLUSIVE_LOCKS_REQUIRED(labelled_mu_);
  // Moves the waiting records mature at `now` into the windows and charts.
  void Mature(absl::Time now) ABSL_EXCLUSIVE_LOCKS_REQUIRED(labelled_mu_);
  bool IsMature(absl::Time scored_at, absl::Time now) const {
    return scored_at <= now - horizon_;
  }

  // Constant after construction.
  const std::shared_ptr<const scorer::ScoringPlan> plan_;
  const HealthWindowOptions options_;
  const absl::Duration horizon_;
  const int layout_tests_;
  const std::string fingerprint_;

  mutable absl::Mutex labelled_mu_;
  OutcomeCount labelled_count_ ABSL_GUARDED_BY(labelled_mu_);
  OutcomeTime labelled_time_ ABSL_GUARDED_BY(labelled_mu_);
  CusumCharts charts_ ABSL_GUARDED_BY(labelled_mu_);
  // By score time, oldest first.
  std::multimap<absl::Time, Waiting> waiting_ ABSL_GUARDED_BY(labelled_mu_);
  int64_t waiting_refused_ ABSL_GUARDED_BY(labelled_mu_) = 0;

  mutable absl::Mutex scored_mu_;
  ScoredCount scored_count_ ABSL_GUARDED_BY(scored_mu_);
  ScoredTime scored_time_ ABSL_GUARDED_BY(scored_mu_);

  mutable absl::Mutex coverage_mu_;
  OutcomeCoverage coverage_ ABSL_GUARDED_BY(coverage_mu_);

  // AddLabelled calls so far (SetHealth.labelled_since_start).
  int64_t labelled_since_start_ ABSL_GUARDED_BY(labelled_mu_) = 0;

  // Refused records, per [labelled 0 / scored 1][count 0 / time 1].
  static constexpr int kLabelledSide = 0, kScoredSide = 1;
  std::atomic<int64_t> refused_[2][2] = {{0, 0}, {0, 0}};
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_HEALTH_WINDOWS_H_
