#include "monitor/metrics.h"

#include <cstddef>
#include <cstdint>

#include "absl/status/status.h"
#include "monitor/compensated_sum.h"
#include "monitor/input_check.h"
#include "scorer/logistic.h"

namespace plumbline::monitor {

using internal::CheckLabelledScores;
using internal::ScoreKind;

absl::StatusOr<double> LogLoss(absl::Span<const double> log_odds,
                               absl::Span<const int> labels) {
  if (absl::Status s = CheckLabelledScores("log-loss", log_odds, labels,
                                           ScoreKind::kLogOdds);
      !s.ok()) {
    return s;
  }
  CompensatedSum sum;
  for (size_t i = 0; i < log_odds.size(); ++i) {
    // log p = LogLogistic(z), log(1 - p) = LogLogistic(-z).
    sum.Add(-LogLogistic(labels[i] == 1 ? log_odds[i] : -log_odds[i]));
  }
  return sum.Value() / static_cast<double>(log_odds.size());
}

absl::StatusOr<double> BrierScore(absl::Span<const double> probabilities,
                                  absl::Span<const int> labels) {
  if (absl::Status s = CheckLabelledScores("Brier score", probabilities, labels,
                                           ScoreKind::kProbability);
      !s.ok()) {
    return s;
  }
  CompensatedSum sum;
  for (size_t i = 0; i < probabilities.size(); ++i) {
    const double d = probabilities[i] - labels[i];
    sum.Add(d * d);
  }
  return sum.Value() / static_cast<double>(probabilities.size());
}

absl::StatusOr<double> CalibrationInTheLarge(
    absl::Span<const double> probabilities, absl::Span<const int> labels) {
  if (absl::Status s =
          CheckLabelledScores("calibration-in-the-large", probabilities, labels,
                              ScoreKind::kProbability);
      !s.ok()) {
    return s;
  }
  CompensatedSum predicted;
  int64_t positives = 0;
  for (size_t i = 0; i < probabilities.size(); ++i) {
    predicted.Add(probabilities[i]);
    positives += labels[i];
  }
  const double n = static_cast<double>(probabilities.size());
  return predicted.Value() / n - static_cast<double>(positives) / n;
}

}  // namespace plumbline::monitor
