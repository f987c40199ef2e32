#include "monitor/hosmer_lemeshow.h"

#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <limits>
#include <numeric>
#include <vector>

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

absl::StatusOr<HosmerLemeshowResult> HosmerLemeshowDecilesOfRisk(
    absl::Span<const double> probabilities, absl::Span<const int> labels,
    int groups) {
  constexpr char kFigure[] = "Hosmer-Lemeshow (deciles of risk)";
  if (absl::Status s = internal::CheckBinCount(kFigure, "groups", groups, 3);
      !s.ok()) {
    return s;
  }
  if (absl::Status s = internal::CheckLabelledScores(
          kFigure, probabilities, labels, internal::ScoreKind::kProbability);
      !s.ok()) {
    return s;
  }
  const size_t n = probabilities.size();
  std::vector<size_t> order(n);
  std::iota(order.begin(), order.end(), size_t{0});
  std::stable_sort(order.begin(), order.end(), [&](size_t a, size_t b) {
    return probabilities[a] < probabilities[b];
  });
  const int64_t count = static_cast<int64_t>(n);
  // Group of sorted rank r: the k with floor(k n / g) <= r < floor((k+1) n /
  // g).
  auto group_of_rank = [&](int64_t r) {
    int64_t k = (r * groups) / count;  // a first guess, corrected below
    while (k + 1 < groups && (k + 1) * count / groups <= r) ++k;
    while (k > 0 && k * count / groups > r) --k;
    return static_cast<size_t>(k);
  };
  std::vector<BinSums> sums(static_cast<size_t>(groups));
  std::vector<double> lower(sums.size(), 0), upper(sums.size(), 0);
  size_t group = 0;
  for (size_t r = 0; r < n; ++r) {
    const double p = probabilities[order[r]];
    // A new run of tied probabilities takes the group of its first record.
    if (r == 0 || p != probabilities[order[r - 1]]) {
      group = group_of_rank(static_cast<int64_t>(r));
    }
    if (sums[group].count == 0) lower[group] = p;
    upper[group] = p;
    sums[group].Add(p, labels[order[r]]);
  }
  std::vector<double> edges = {0.0};
  for (size_t k = 0; k < sums.size(); ++k) {
    edges.push_back(sums[k].count > 0 ? upper[k] : edges.back());
  }
  ReliabilityTable table = MakeReliabilityTable(edges, sums);
  for (size_t k = 0; k < sums.size(); ++k) {
    if (sums[k].count > 0) table.bins[k].lower = lower[k];
  }
  return HosmerLemeshowFromTable(table);
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
