// File: monitor/metrics.h
//
// Model-health figures computed from plain arrays of log-odds (or
// probabilities) and 0/1 outcomes. Pure functions, no state; the daemon feeds
// them from its windows. Thread-safe.
//
//   absl::StatusOr<double> ll = monitor::LogLoss(log_odds, labels);
#ifndef PLUMBLINE_MONITOR_METRICS_H_
#define PLUMBLINE_MONITOR_METRICS_H_

#include "absl/status/statusor.h"
#include "absl/types/span.h"

namespace plumbline::monitor {

// Mean negative log-likelihood of 0/1 `labels` under probabilities
// Logistic(log_odds), computed from the log-odds so it stays finite and
// accurate where a probability rounds to 0 or 1. INVALID_ARGUMENT if the
// arrays differ in length, are empty, or a label is not 0 or 1.
absl::StatusOr<double> LogLoss(absl::Span<const double> log_odds,
                               absl::Span<const int> labels);

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_METRICS_H_
