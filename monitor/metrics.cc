#include "monitor/metrics.h"

#include "absl/status/status.h"
#include "absl/strings/str_format.h"
#include "scorer/logistic.h"

namespace plumbline::monitor {

absl::StatusOr<double> LogLoss(absl::Span<const double> log_odds,
                               absl::Span<const int> labels) {
  if (log_odds.size() != labels.size()) {
    return absl::InvalidArgumentError(
        absl::StrFormat("log-loss: %d scores but %d labels", log_odds.size(),
                        labels.size()));
  }
  if (log_odds.empty()) {
    return absl::InvalidArgumentError("log-loss: no labelled records");
  }
  double sum = 0;
  for (size_t i = 0; i < log_odds.size(); ++i) {
    if (labels[i] != 0 && labels[i] != 1) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "log-loss: labels[%d] is %d; labels must be 0 or 1", i, labels[i]));
    }
    // log p = LogLogistic(z), log(1 - p) = LogLogistic(-z).
    sum -= LogLogistic(labels[i] == 1 ? log_odds[i] : -log_odds[i]);
  }
  return sum / static_cast<double>(log_odds.size());
}

}  // namespace plumbline::monitor
