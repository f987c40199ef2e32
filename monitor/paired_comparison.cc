// File: monitor/paired_comparison.cc
#include "monitor/paired_comparison.h"

#include <cmath>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "monitor/compensated_sum.h"
#include "monitor/input_check.h"
#include "scorer/logistic.h"

namespace plumbline::monitor {
namespace {

constexpr char kFigure[] = "paired log-loss comparison";
// Standard normal 0.975 quantile (scipy.stats.norm.ppf(0.975)).
constexpr double kZ975 = 1.959963984540054;

// -log P(label | log_odds), finite for every finite log-odds.
double RecordLoss(double log_odds, int label) {
  return -(label == 1 ? LogLogistic(log_odds) : LogLogistic(-log_odds));
}

}  // namespace

absl::StatusOr<PairedLogLoss> ComparePairedLogLoss(
    absl::Span<const double> active_log_odds,
    absl::Span<const double> candidate_log_odds, absl::Span<const int> labels) {
  if (absl::Status s =
          internal::CheckLabelledScores(kFigure, active_log_odds, labels,
                                        internal::ScoreKind::kFiniteLogOdds);
      !s.ok()) {
    return s;
  }
  if (absl::Status s =
          internal::CheckLabelledScores(kFigure, candidate_log_odds, labels,
                                        internal::ScoreKind::kFiniteLogOdds);
      !s.ok()) {
    return s;
  }
  const size_t size = labels.size();
  const double n = static_cast<double>(size);
  if (size < 2) {
    return absl::InvalidArgumentError(
        absl::StrCat(kFigure, ": needs at least 2 records, got ", size));
  }
  CompensatedSum active, candidate, diff;
  for (size_t i = 0; i < size; ++i) {
    const double a = RecordLoss(active_log_odds[i], labels[i]);
    const double c = RecordLoss(candidate_log_odds[i], labels[i]);
    active.Add(a);
    candidate.Add(c);
    diff.Add(c - a);
  }
  PairedLogLoss out;
  out.records = static_cast<int64_t>(size);
  out.active_log_loss = active.Value() / n;
  out.candidate_log_loss = candidate.Value() / n;
  out.mean_difference = diff.Value() / n;
  // Second pass about the mean: no cancellation of large squares.
  CompensatedSum squares;
  for (size_t i = 0; i < size; ++i) {
    const double d = RecordLoss(candidate_log_odds[i], labels[i]) -
                     RecordLoss(active_log_odds[i], labels[i]) -
                     out.mean_difference;
    squares.Add(d * d);
  }
  out.standard_error = std::sqrt(squares.Value() / (n - 1) / n);
  out.lower_95 = out.mean_difference - kZ975 * out.standard_error;
  out.upper_95 = out.mean_difference + kZ975 * out.standard_error;
  return out;
}

}  // namespace plumbline::monitor
