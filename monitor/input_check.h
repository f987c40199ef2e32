// File: monitor/input_check.h
//
// Argument checks shared by the pure functions and the accumulators of
// monitor/: lengths, 0/1 labels, probabilities in [0, 1], log-odds that are
// numbers. Each returns INVALID_ARGUMENT with a message that names the figure
// being computed, the array and the offending index, e.g.
//
//   "Brier score: probabilities[12] is 1.5; probabilities must lie in [0, 1]"
//
// Internal to monitor/ (namespace internal); thread-safe (pure functions).
#ifndef PLUMBLINE_MONITOR_INPUT_CHECK_H_
#define PLUMBLINE_MONITOR_INPUT_CHECK_H_

#include <cstddef>
#include <cstdint>

#include "absl/status/status.h"
#include "absl/strings/string_view.h"
#include "absl/types/span.h"

namespace plumbline::monitor::internal {

// What a score array holds; decides which values are refused.
enum class ScoreKind {
  kProbability,    // must lie in [0, 1]
  kLogOdds,        // must not be NaN (infinities allowed)
  kFiniteLogOdds,  // must be finite
  kOrderable,      // any score compared only by order: must not be NaN
};

// Checks a labelled score array: same length as `labels`, not empty, labels
// 0 or 1, scores valid for `kind`. `figure` starts every message ("AUC").
absl::Status CheckLabelledScores(absl::string_view figure,
                                 absl::Span<const double> scores,
                                 absl::Span<const int> labels, ScoreKind kind);

// One record, for accumulators: the label is 0 or 1 and the log-odds finite.
absl::Status CheckRecord(absl::string_view figure, double log_odds, int label);

// Checks a bin count option (`what` names it: "reliability bins").
absl::Status CheckBinCount(absl::string_view figure, absl::string_view what,
                           int bins, int minimum);

// Restoring saved state (the Restore methods of the accumulators): the most
// records one saved count may hold, 2^40 (about 1.1e12), so that the sum
// over a window's buckets (at most 100,000) cannot overflow int64.
inline constexpr int64_t kMaxStateCount = int64_t{1} << 40;

// INVALID_ARGUMENT "<what>: <field> is N; a saved count must lie in
// [0, 2^40]" unless 0 <= n <= kMaxStateCount.
absl::Status CheckStateCount(absl::string_view what, absl::string_view field,
                             int64_t n);
// INVALID_ARGUMENT naming the field unless both parts of a saved sum are
// finite.
absl::Status CheckStateSum(absl::string_view what, absl::string_view field,
                           double sum, double compensation);

}  // namespace plumbline::monitor::internal

#endif  // PLUMBLINE_MONITOR_INPUT_CHECK_H_
