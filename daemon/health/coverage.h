// File: daemon/health/coverage.h
//
// Outcome coverage by age of one set version: of the records scored some
// time ago, what share has an outcome by now. Outcomes arrive hours to
// months after the score, so young cohorts are always partly labelled; the
// coverage of cohorts past the outcome horizon says whether outcomes are
// still missing that should have arrived. HealthWindows keeps one and the
// monitor exports it (SetHealth.outcome_coverage).
//
//   auto c = OutcomeCoverage::Create(/*horizon=*/absl::Hours(24 * 30),
//                                    /*span_without_horizon=*/absl::Hours(24));
//   c->AddScored(scored_at, now);                // per scored record
//   c->AddLabelled(scored_at, now);              // per new outcome
//   c->Fill(now, &set_health);                   // per tick
//
// Counts are kept per cohort bucket of score time: buckets of w = span / 20
// aligned on the Unix epoch, span = 2 x horizon (or span_without_horizon
// when there is no horizon), 21 of them, so memory is constant. Fill
// reports 4 bands of nominal age [0, span/4), [span/4, span/2),
// [span/2, 3 span/4), [3 span/4, span): band 0 holds the current bucket and
// the 5 before it, band j >= 1 the 5 whole buckets before those, so a
// band's true ages are its nominal ones moved up by the time since the
// current bucket began (less than w). A band is mature when every bucket
// in it ended at least a horizon ago: with a horizon, bands 2 and 3 (ages
// from the horizon to twice it); without one, every band. Records scored before
// the oldest bucket (or, for an outcome, whose score is there) are not counted.
//
// Not thread-safe; a value type (HealthWindows guards it).
#ifndef PLUMBLINE_DAEMON_HEALTH_COVERAGE_H_
#define PLUMBLINE_DAEMON_HEALTH_COVERAGE_H_

#include <array>
#include <cstdint>

#include "absl/status/statusor.h"
#include "absl/time/time.h"
#include "plumbline/v1/monitor.pb.h"

namespace plumbline::daemon {

class OutcomeCoverage {
 public:
  static constexpr int kBuckets = 20;  // per span
  static constexpr int kSlots = kBuckets + 1;
  static constexpr int kBands = 4;

  // INVALID_ARGUMENT unless the horizon is finite and >= 0 and the span
  // (2 x horizon, or span_without_horizon) is at least kBuckets
  // microseconds and finite.
  static absl::StatusOr<OutcomeCoverage> Create(
      absl::Duration horizon, absl::Duration span_without_horizon);

  void AddScored(absl::Time scored_at, absl::Time now);
  void AddLabelled(absl::Time scored_at, absl::Time now);

  // Appends kBands AgeCoverage entries to out->outcome_coverage.
  void Fill(absl::Time now, v1::SetHealth* out) const;

  absl::Duration span() const { return bucket_ * kBuckets; }
  // Oldest score time still counted at `now`.
  absl::Time Start(absl::Time now) const;

  // One cohort: the bucket number of its score times (floor((t - epoch) /
  // span * kBuckets)) and its counts.
  struct Cohort {
    int64_t bucket = INT64_MIN;  // bucket number held, INT64_MIN: none
    int64_t scored = 0;
    int64_t labelled = 0;
  };
  // The ring, for saving (daemon/health/window_state.h): slot s holds the
  // cohort whose bucket number is s mod kSlots.
  const std::array<Cohort, kSlots>& cohorts() const { return ring_; }
  // Replaces the ring. INVALID_ARGUMENT naming the slot, coverage
  // unchanged, unless each used slot holds a bucket number of its own slot
  // in [-2^53, 2^53] and counts in [0, 2^40], not both 0, and each unused
  // slot counts nothing.
  absl::Status Restore(const std::array<Cohort, kSlots>& ring);

 private:
  OutcomeCoverage(absl::Duration horizon, absl::Duration bucket)
      : horizon_(horizon), bucket_(bucket) {}
  int64_t BucketOf(absl::Time t) const;
  // The slot of `t`'s bucket at `now`, or -1 when it is outside the ring.
  int Slot(absl::Time t, absl::Time now);

  absl::Duration horizon_;
  absl::Duration bucket_;
  std::array<Cohort, kSlots> ring_{};
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_HEALTH_COVERAGE_H_
