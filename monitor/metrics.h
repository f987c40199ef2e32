// File: monitor/metrics.h
//
// Scoring-rule figures of a window of labelled records: log-loss, Brier score
// and calibration-in-the-large. Pure functions over plain arrays of log-odds
// (or probabilities) and 0/1 outcomes, no state; the daemon's windows use the
// streaming LossAccumulator (monitor/outcome_accumulators.h), which gives the
// same numbers. Thread-safe.
//
//   absl::StatusOr<double> ll = monitor::LogLoss(log_odds, labels);
//   absl::StatusOr<double> bs = monitor::BrierScore(probabilities, labels);
//
// The other families live beside this file: auc.h, reliability.h,
// calibration_fit.h, hosmer_lemeshow.h, stability.h.
//
// Errors: INVALID_ARGUMENT when the arrays are empty or differ in length, a
// label is not 0 or 1, a probability is outside [0, 1] or NaN, or a log-odds
// is NaN; the message names the array and index.
#ifndef PLUMBLINE_MONITOR_METRICS_H_
#define PLUMBLINE_MONITOR_METRICS_H_

#include "absl/status/statusor.h"
#include "absl/types/span.h"

namespace plumbline::monitor {

// Mean negative log-likelihood of 0/1 `labels` under probabilities
// Logistic(log_odds), computed from the log-odds so it stays finite and
// accurate where a probability rounds to 0 or 1 (an infinite log-odds on the
// wrong side gives an infinite loss).
absl::StatusOr<double> LogLoss(absl::Span<const double> log_odds,
                               absl::Span<const int> labels);

// Mean of (probability - label)^2.
absl::StatusOr<double> BrierScore(absl::Span<const double> probabilities,
                                  absl::Span<const int> labels);

// Mean predicted probability minus observed rate of positives: > 0 when the
// model over-predicts on average.
absl::StatusOr<double> CalibrationInTheLarge(
    absl::Span<const double> probabilities, absl::Span<const int> labels);

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_METRICS_H_
