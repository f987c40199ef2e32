// File: monitor/paired_comparison.h
//
// Compares two models on the same held-out records: the per-record log-loss
// difference d_i = loss_candidate_i - loss_active_i, its mean (the
// difference of the two mean log-losses) and a 95% interval for that mean
// from the normal approximation of a paired comparison:
//   mean(d) -/+ z_0.975 * sd(d) / sqrt(n),  sd with n - 1 degrees of freedom.
// Pairing removes the record-to-record variation both models share, so the
// interval is far narrower than one from two independent means. With the
// thousands of holdout records a refit uses, the t and normal quantiles
// agree to the third digit; the normal one is used.
//
// Used by plumbd's refit jobs to decide whether a candidate beats the active
// version. Thread-safe: pure function.
#ifndef PLUMBLINE_MONITOR_PAIRED_COMPARISON_H_
#define PLUMBLINE_MONITOR_PAIRED_COMPARISON_H_

#include <cstdint>

#include "absl/status/statusor.h"
#include "absl/types/span.h"

namespace plumbline::monitor {

struct PairedLogLoss {
  int64_t records = 0;
  double active_log_loss = 0;
  double candidate_log_loss = 0;
  // candidate - active: negative when the candidate predicts better.
  double mean_difference = 0;
  double standard_error = 0;
  double lower_95 = 0;
  double upper_95 = 0;
};

// Log-losses of 0/1 `labels` under two models' log-odds of the same records.
// INVALID_ARGUMENT (naming the array and index) for arrays of different
// length, fewer than 2 records, a label not 0/1 or a NaN log-odds.
absl::StatusOr<PairedLogLoss> ComparePairedLogLoss(
    absl::Span<const double> active_log_odds,
    absl::Span<const double> candidate_log_odds, absl::Span<const int> labels);

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_PAIRED_COMPARISON_H_
