// File: monitor/auc.h
//
// Area under the ROC curve of a window of labelled records, computed as the
// Mann–Whitney statistic: the share of (positive, negative) pairs in which
// the positive has the higher score, a tied pair counting 1/2. O(n log n)
// (one sort). The streaming version is ScoreGridAccumulator::Auc
// (monitor/score_grid.h), which runs AucFromGroups on its grid cells.
// Thread-safe (pure functions).
//
//   absl::StatusOr<double> auc = monitor::Auc(log_odds, labels);
//
// Errors: INVALID_ARGUMENT for empty or mismatched arrays, labels other than
// 0/1 and NaN scores; FAILED_PRECONDITION when every record has the same
// label (the AUC is undefined: there is no pair to compare).
#ifndef PLUMBLINE_MONITOR_AUC_H_
#define PLUMBLINE_MONITOR_AUC_H_

#include <cstdint>

#include "absl/status/statusor.h"
#include "absl/types/span.h"

namespace plumbline::monitor {

// AUC of `scores` (log-odds, probabilities or any score where higher means
// "more likely positive"; only the order matters) against 0/1 `labels`.
absl::StatusOr<double> Auc(absl::Span<const double> scores,
                           absl::Span<const int> labels);

// AUC from groups of tied scores: positives[i] and negatives[i] count the
// records of the i-th distinct score, groups in increasing score order. The
// pair counts are summed in 128-bit integers, so the result is the exact
// ratio rounded once; two callers with the same counts get the same double.
// REQUIRES: positives.size() == negatives.size(); counts >= 0.
// FAILED_PRECONDITION when all positives or all negatives are zero.
absl::StatusOr<double> AucFromGroups(absl::Span<const int64_t> positives,
                                     absl::Span<const int64_t> negatives);

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_AUC_H_
