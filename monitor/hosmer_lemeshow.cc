#include "monitor/hosmer_lemeshow.h"

#include <limits>

#include "absl/status/status.h"
#include "absl/strings/str_format.h"
#include "monitor/compensated_sum.h"
#include "monitor/incomplete_gamma.h"
#include "monitor/input_check.h"

namespace plumbline::monitor {

absl::StatusOr<HosmerLemeshowResult> HosmerLemeshow(
    absl::Span<const double> probabilities, absl::Span<const int> labels,
    int groups) {
  if (absl::Status s =
          internal::CheckBinCount("Hosmer-Lemeshow", "groups", groups, 3);
      !s.ok()) {
    return s;
  }
  if (absl::Status s = internal::CheckLabelledScores(
          "Hosmer-Lemeshow", probabilities, labels,
          internal::ScoreKind::kProbability);
      !s.ok()) {
    return s;
  }
  absl::StatusOr<ReliabilityTable> table =
      EqualCountReliability(probabilities, labels, groups);
  if (!table.ok()) return table.status();
  return HosmerLemeshowFromTable(*table);
}

absl::StatusOr<HosmerLemeshowResult> HosmerLemeshowFromTable(
    const ReliabilityTable& table) {
  HosmerLemeshowResult result;
  CompensatedSum statistic;
  bool infinite = false;
  for (const ReliabilityBin& bin : table.bins) {
    if (bin.count == 0) continue;
    ++result.groups;
    const double expected = bin.sum_predicted;
    const double observed = static_cast<double>(bin.positives);
    const double variance =
        expected * (1.0 - expected / static_cast<double>(bin.count));
    const double diff = observed - expected;
    if (variance > 0) {
      statistic.Add(diff * diff / variance);
    } else if (diff != 0) {
      infinite = true;
    }
  }
  if (result.groups < 3) {
    return absl::FailedPreconditionError(absl::StrFormat(
        "Hosmer-Lemeshow needs at least 3 non-empty groups; the %d records "
        "fill %d (too few records or too many tied probabilities)",
        table.count, result.groups));
  }
  result.degrees_of_freedom = result.groups - 2;
  if (infinite) {
    result.statistic = std::numeric_limits<double>::infinity();
    result.p_value = 0;
    return result;
  }
  result.statistic = statistic.Value();
  absl::StatusOr<double> p =
      ChiSquareSurvival(result.statistic, result.degrees_of_freedom);
  if (!p.ok()) return p.status();
  result.p_value = *p;
  return result;
}

}  // namespace plumbline::monitor
