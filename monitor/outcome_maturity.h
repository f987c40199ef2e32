// File: monitor/outcome_maturity.h
//
// Outcomes arrive hours to months after the score; a window that mixes
// mature and immature records understates the event rate. With a set's
// outcome horizon H (how long after a score its outcome may still arrive),
// a record scored at t is mature at `now` when now - t >= H. The daemon
// computes outcome figures only over mature cohorts (records scored at or
// before MaturityCutoff) and exports the outcome coverage by age: for each
// age bucket, the share of scored records that have an outcome.
//
//   absl::Time cutoff = MaturityCutoff(now, absl::Hours(24 * 30));
//   absl::StatusOr<std::vector<AgeCoverage>> c = OutcomeCoverageByAge(
//       records, now, {absl::Hours(24), absl::Hours(24 * 7),
//                      absl::Hours(24 * 30)}, absl::Hours(24 * 30));
//
// The clock is never read here. Thread-safe (pure functions).
#ifndef PLUMBLINE_MONITOR_OUTCOME_MATURITY_H_
#define PLUMBLINE_MONITOR_OUTCOME_MATURITY_H_

#include <cstdint>
#include <limits>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/time/time.h"
#include "absl/types/span.h"

namespace plumbline::monitor {

// Records scored at or before this time are mature at `now`.
// REQUIRES: horizon >= 0.
inline absl::Time MaturityCutoff(absl::Time now, absl::Duration horizon) {
  return now - horizon;
}
inline bool IsMature(absl::Time scored_at, absl::Time now,
                     absl::Duration horizon) {
  return scored_at <= MaturityCutoff(now, horizon);
}

struct ScoredRecord {
  absl::Time scored_at;
  bool has_outcome = false;
};

// Records whose age now - scored_at lies in [min_age, max_age).
struct AgeCoverage {
  absl::Duration min_age;
  absl::Duration max_age;  // absl::InfiniteDuration() for the last bucket
  int64_t scored = 0;
  int64_t with_outcome = 0;
  // with_outcome / scored; NaN when scored == 0.
  double coverage = std::numeric_limits<double>::quiet_NaN();
  bool mature = false;  // min_age >= horizon: every record in it is mature
};

// Coverage in the buckets [0, e0), [e0, e1), ..., [e_last, inf) of record
// age at `now`. A record stamped after `now` (clock skew between replicas)
// counts as age 0. INVALID_ARGUMENT unless the edges are finite, > 0 and
// strictly increasing, the horizon is finite and >= 0, and each record's
// time is finite (naming the index).
absl::StatusOr<std::vector<AgeCoverage>> OutcomeCoverageByAge(
    absl::Span<const ScoredRecord> records, absl::Time now,
    absl::Span<const absl::Duration> age_edges, absl::Duration horizon);

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_OUTCOME_MATURITY_H_
