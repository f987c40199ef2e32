// File: daemon/health/windows.h
//
// The windows of one set version: a count window over the last N labelled
// records and a time window over the last T seconds of them (outcome
// figures), and the same pair over scored records (stability figures). Each
// window is a ring of buckets from monitor/window.h; HealthMonitor keeps one
// HealthWindows per loaded set version, feeds it from the request path and
// asks it for figures on every tick.
//
//   auto w = HealthWindows::Create(plan, HealthWindowOptions{});
//   (*w)->AddScored(log_odds, row, scored_at, now);
//   (*w)->AddLabelled(log_odds, label, observed_at, now);
//   v1::SetHealth figures = (*w)->Figures(now);
//
// Record times later than `now` are taken as `now` (a caller's clock may run
// ahead), so a future time cannot push the time window's ring past the
// present. A record the time window refuses (older than its oldest bucket)
// or that no window accepts (a non-finite log-odds) is counted, never
// silently dropped; the counts are part of the figures.
//
// Thread-safe: the labelled and the scored windows each have their own
// mutex; Add* hold it for one record, Figures() for the merge of the buckets.
#ifndef PLUMBLINE_DAEMON_HEALTH_WINDOWS_H_
#define PLUMBLINE_DAEMON_HEALTH_WINDOWS_H_

#include <atomic>
#include <cstdint>
#include <memory>
#include <string>

#include "absl/base/thread_annotations.h"
#include "absl/status/statusor.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/time.h"
#include "absl/types/span.h"
#include "daemon/health/stability.h"
#include "monitor/outcome_accumulators.h"
#include "monitor/window.h"
#include "plumbline/v1/config.pb.h"
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

  // From a config file's windows (zeros mean the defaults). INVALID_ARGUMENT
  // naming the field when buckets does not divide a count.
  static absl::StatusOr<HealthWindowOptions> FromConfig(
      const v1::WindowConfig& config);
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
  // One labelled score into both labelled windows, stamped with the time its
  // outcome was observed.
  void AddLabelled(double log_odds, int label, absl::Time observed_at,
                   absl::Time now);

  // The same into one window only (rebuilding from the ledger).
  void AddScoredTo(WindowKind window, double log_odds,
                   absl::Span<const scorer::RawValue> values, absl::Time at,
                   absl::Time now);
  void AddLabelledTo(WindowKind window, double log_odds, int label,
                     absl::Time at, absl::Time now);

  // The figures of both windows at `now`: set, version and windows
  // ("count", then "time"); state, reasons and notes are left to the drift
  // policy.
  v1::SetHealth Figures(absl::Time now) const;

  // Start of the oldest time-window bucket at `now`: records older than
  // this are refused.
  absl::Time TimeWindowStart(absl::Time now) const;

  const HealthWindowOptions& options() const { return options_; }

 private:
  using OutcomeCount = monitor::CountWindow<monitor::OutcomeAccumulator>;
  using OutcomeTime = monitor::TimeWindow<monitor::OutcomeAccumulator>;
  using ScoredCount = monitor::CountWindow<ScoredAccumulator>;
  using ScoredTime = monitor::TimeWindow<ScoredAccumulator>;

  HealthWindows(std::shared_ptr<const scorer::ScoringPlan> plan,
                HealthWindowOptions options, OutcomeCount labelled_count,
                OutcomeTime labelled_time, ScoredCount scored_count,
                ScoredTime scored_time);

  // Constant after construction.
  const std::shared_ptr<const scorer::ScoringPlan> plan_;
  const HealthWindowOptions options_;

  mutable absl::Mutex labelled_mu_;
  OutcomeCount labelled_count_ ABSL_GUARDED_BY(labelled_mu_);
  OutcomeTime labelled_time_ ABSL_GUARDED_BY(labelled_mu_);

  mutable absl::Mutex scored_mu_;
  ScoredCount scored_count_ ABSL_GUARDED_BY(scored_mu_);
  ScoredTime scored_time_ ABSL_GUARDED_BY(scored_mu_);

  // AddLabelled calls so far (SetHealth.labelled_since_start).
  int64_t labelled_since_start_ ABSL_GUARDED_BY(labelled_mu_) = 0;

  // Refused records, per [labelled 0 / scored 1][count 0 / time 1].
  std::atomic<int64_t> refused_[2][2] = {{0, 0}, {0, 0}};
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_HEALTH_WINDOWS_H_
