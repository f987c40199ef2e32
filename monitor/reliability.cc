#include "monitor/reliability.h"

#include <algorithm>
#include <cmath>
#include <cstddef>

#include "absl/status/status.h"
#include "monitor/input_check.h"

namespace plumbline::monitor {
namespace {

// Fraction i / bins as numpy.linspace(0, 1, bins + 1) computes it.
double LinspaceFraction(int i, int bins) {
  return i == bins ? 1.0 : static_cast<double>(i) * (1.0 / bins);
}

absl::StatusOr<ReliabilityTable> TableWithEdges(
    absl::Span<const double> probabilities, absl::Span<const int> labels,
    absl::Span<const double> edges) {
  std::vector<BinSums> sums(edges.size() - 1);
  for (size_t i = 0; i < probabilities.size(); ++i) {
    sums[ReliabilityBinOf(edges, probabilities[i])].Add(probabilities[i],
                                                        labels[i]);
  }
  return MakeReliabilityTable(edges, sums);
}

}  // namespace

std::vector<double> EqualWidthEdges(int bins) {
  std::vector<double> edges(bins + 1);
  for (int i = 0; i <= bins; ++i) edges[i] = LinspaceFraction(i, bins);
  return edges;
}

std::vector<double> EqualCountEdges(
    int64_t n, int bins, absl::FunctionRef<double(int64_t)> sorted_value) {
  std::vector<double> edges(bins + 1);
  const double last = static_cast<double>(n - 1);
  for (int i = 0; i <= bins; ++i) {
    // numpy.percentile(x, linspace(0, 1, B + 1) * 100): the percentage is
    // divided by 100 again, then the "linear" method interpolates at the
    // virtual index (n - 1) * q between its floor and floor + 1.
    const double q = (LinspaceFraction(i, bins) * 100.0) / 100.0;
    const double virtual_index = last * q;
    if (virtual_index >= last) {
      edges[i] = sorted_value(n - 1);
      continue;
    }
    const double below = std::floor(virtual_index);
    const double gamma = virtual_index - below;
    const double a = sorted_value(static_cast<int64_t>(below));
    const double b = sorted_value(static_cast<int64_t>(below) + 1);
    const double diff = b - a;
    // numpy's _lerp interpolates from the nearer end.
    edges[i] = gamma >= 0.5 ? b - diff * (1.0 - gamma) : a + diff * gamma;
  }
  return edges;
}

int ReliabilityBinOf(absl::Span<const double> edges, double p) {
  // numpy.searchsorted(edges[1:-1], p, side="left"): the number of inner
  // edges strictly below p.
  const auto inner_begin = edges.begin() + 1;
  const auto inner_end = edges.end() - 1;
  return static_cast<int>(std::lower_bound(inner_begin, inner_end, p) -
                          inner_begin);
}

ReliabilityTable MakeReliabilityTable(absl::Span<const double> edges,
                                      absl::Span<const BinSums> sums) {
  ReliabilityTable table;
  table.bins.resize(sums.size());
  for (size_t i = 0; i < sums.size(); ++i) {
    ReliabilityBin& bin = table.bins[i];
    bin.lower = edges[i];
    bin.upper = edges[i + 1];
    bin.count = sums[i].count;
    bin.positives = sums[i].positives;
    bin.sum_predicted = sums[i].predicted.Value();
    if (bin.count > 0) {
      const double n = static_cast<double>(bin.count);
      bin.mean_predicted = bin.sum_predicted / n;
      bin.observed_rate = static_cast<double>(bin.positives) / n;
    }
    table.count += bin.count;
    table.positives += bin.positives;
  }
  return table;
}

absl::StatusOr<ReliabilityTable> EqualWidthReliability(
    absl::Span<const double> probabilities, absl::Span<const int> labels,
    int bins) {
  constexpr char kFigure[] = "equal-width reliability table";
  if (absl::Status s = internal::CheckBinCount(kFigure, "bins", bins, 1);
      !s.ok()) {
    return s;
  }
  if (absl::Status s = internal::CheckLabelledScores(
          kFigure, probabilities, labels, internal::ScoreKind::kProbability);
      !s.ok()) {
    return s;
  }
  return TableWithEdges(probabilities, labels, EqualWidthEdges(bins));
}

absl::StatusOr<ReliabilityTable> EqualCountReliability(
    absl::Span<const double> probabilities, absl::Span<const int> labels,
    int bins) {
  constexpr char kFigure[] = "equal-count reliability table";
  if (absl::Status s = internal::CheckBinCount(kFigure, "bins", bins, 1);
      !s.ok()) {
    return s;
  }
  if (absl::Status s = internal::CheckLabelledScores(
          kFigure, probabilities, labels, internal::ScoreKind::kProbability);
      !s.ok()) {
    return s;
  }
  std::vector<double> sorted(probabilities.begin(), probabilities.end());
  std::sort(sorted.begin(), sorted.end());
  const std::vector<double> edges = EqualCountEdges(
      static_cast<int64_t>(sorted.size()), bins,
      [&sorted](int64_t r) { return sorted[static_cast<size_t>(r)]; });
  return TableWithEdges(probabilities, labels, edges);
}

double ExpectedCalibrationError(const ReliabilityTable& table) {
  if (table.count == 0) return std::numeric_limits<double>::quiet_NaN();
  // (n_b / n) |positives_b / n_b - sum_b / n_b| = |positives_b - sum_b| / n.
  CompensatedSum sum;
  for (const ReliabilityBin& bin : table.bins) {
    if (bin.count > 0) {
      sum.Add(std::abs(static_cast<double>(bin.positives) - bin.sum_predicted));
    }
  }
  return sum.Value() / static_cast<double>(table.count);
}

}  // namespace plumbline::monitor
