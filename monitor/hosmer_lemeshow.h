// File: monitor/hosmer_lemeshow.h
//
// The Hosmer–Lemeshow goodness-of-fit test of a window of labelled records:
// records are grouped by predicted probability, and for each non-empty group
// with n records, O observed positives and E = sum of predicted
// probabilities,
//
//   HL = sum over groups of (O - E)^2 / (E (1 - E / n)),
//
// compared with a chi-square distribution on g - 2 degrees of freedom, g the
// number of non-empty groups. A small p-value says the predicted
// probabilities do not match the outcomes.
//
//   absl::StatusOr<HosmerLemeshowResult> hl =
//       monitor::HosmerLemeshow(probabilities, labels);  // deciles
//   if (hl.ok() && hl->p_value < 0.01) { ... }
//
// Two groupings by equal count are offered. HosmerLemeshowDecilesOfRisk is
// the textbook one (Hosmer, Lemeshow & Sturdivant, Applied Logistic
// Regression, 3rd ed., "deciles of risk"): records sorted by predicted
// probability, group k (0-based) holding sorted ranks floor(k n / g) to
// floor((k + 1) n / g) - 1, so group sizes differ by at most one. Tie rule:
// tied probabilities are never split; a run of equal probabilities goes
// whole to the group of its first (lowest-ranked) record, so a group can
// grow or become empty when ties straddle a cut. Empty groups are dropped
// and the degrees of freedom are (non-empty groups) - 2. The exact window
// figures (monitor/labelled_record_store.h) use it.
//
// HosmerLemeshow's groups "of equal count" are the equal-count reliability
// bins
// (monitor/reliability.h): edges at the sample deciles, so tied
// probabilities share a group and counts are equal up to ties. The streaming
// versions are ScoreGridAccumulator::HosmerLemeshow (deciles from the score
// grid) and ReliabilityAccumulator (fixed equal-width bins, exact); both end
// in HosmerLemeshowFromTable. Thread-safe (pure functions).
//
// A group whose variance term E (1 - E/n) is 0 (all its probabilities exactly
// 0 or exactly 1) adds 0 when O == E and makes the statistic +inf (p-value
// 0) otherwise.
#ifndef PLUMBLINE_MONITOR_HOSMER_LEMESHOW_H_
#define PLUMBLINE_MONITOR_HOSMER_LEMESHOW_H_

#include "absl/status/statusor.h"
#include "absl/types/span.h"
#include "monitor/reliability.h"

namespace plumbline::monitor {

struct HosmerLemeshowResult {
  double statistic = 0;
  int groups = 0;              // non-empty groups used
  int degrees_of_freedom = 0;  // groups - 2
  double p_value = 1;          // chi-square upper tail at `statistic`
};

// Over `groups` groups of equal count (deciles by default). INVALID_ARGUMENT
// for bad input (see monitor/metrics.h) or groups < 3; FAILED_PRECONDITION
// when ties leave fewer than 3 non-empty groups.
absl::StatusOr<HosmerLemeshowResult> HosmerLemeshow(
    absl::Span<const double> probabilities, absl::Span<const int> labels,
    int groups = 10);

// Over g groups formed by deciles of risk (see above), for g = `groups` >= 3
// (10 by default). INVALID_ARGUMENT for bad input or groups < 3;
// FAILED_PRECONDITION when ties or few records leave fewer than 3 non-empty
// groups. O(n log n).
absl::StatusOr<HosmerLemeshowResult> HosmerLemeshowDecilesOfRisk(
    absl::Span<const double> probabilities, absl::Span<const int> labels,
    int groups = 10);

// Over the bins of a reliability table, whatever their edges.
// FAILED_PRECONDITION when fewer than 3 bins hold records.
absl::StatusOr<HosmerLemeshowResult> HosmerLemeshowFromTable(
    const ReliabilityTable& table);

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_HOSMER_LEMESHOW_H_
