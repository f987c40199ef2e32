// File: monitor/reliability.h
//
// Reliability tables (calibration curves) and the expected calibration error
// of a window of labelled records. Predictions are grouped into bins of
// probability; each bin reports how many records it holds, their mean
// predicted probability and the observed rate of positives, so a dashboard
// can draw the curve and alert on a bin that drifts.
//
//   absl::StatusOr<ReliabilityTable> t =
//       monitor::EqualWidthReliability(probabilities, labels, /*bins=*/10);
//   double ece = monitor::ExpectedCalibrationError(*t);
//
// Bin convention (that of scikit-learn's calibration_curve, so the two agree
// record for record): edges e[0] <= ... <= e[B]; bin 0 holds
// e[0] <= p <= e[1], bin i > 0 holds e[i] < p <= e[i+1]. Equal-width edges are
// i/B computed as i * (1.0 / B) (numpy.linspace). Equal-count edges are the
// sample quantiles at i/B with numpy.percentile's default "linear" rule,
// reproduced operation for operation, so tied predictions never straddle two
// bins and a bin can be empty when many predictions are tied.
//
// The streaming versions are ReliabilityAccumulator (equal-width, exact) and
// ScoreGridAccumulator::EqualCountReliability (quantiles from a grid). The
// building blocks below (edges, bin lookup, BinSums) are public so that those
// accumulators share this file's arithmetic. Thread-safe (pure functions).
#ifndef PLUMBLINE_MONITOR_RELIABILITY_H_
#define PLUMBLINE_MONITOR_RELIABILITY_H_

#include <cstdint>
#include <limits>
#include <vector>

#include "absl/functional/function_ref.h"
#include "absl/status/statusor.h"
#include "absl/types/span.h"
#include "monitor/compensated_sum.h"

namespace plumbline::monitor {

struct ReliabilityBin {
  double lower = 0;  // e[i]
  double upper = 0;  // e[i+1]
  int64_t count = 0;
  int64_t positives = 0;
  double sum_predicted = 0;
  // sum_predicted / count and positives / count; NaN when count == 0.
  double mean_predicted = std::numeric_limits<double>::quiet_NaN();
  double observed_rate = std::numeric_limits<double>::quiet_NaN();
};

struct ReliabilityTable {
  std::vector<ReliabilityBin> bins;  // all bins, empty ones included
  int64_t count = 0;
  int64_t positives = 0;
};

// Bins of equal width over [0, 1]. INVALID_ARGUMENT for bad input (see
// monitor/metrics.h) or bins < 1.
absl::StatusOr<ReliabilityTable> EqualWidthReliability(
    absl::Span<const double> probabilities, absl::Span<const int> labels,
    int bins = 10);

// Bins of (as nearly as ties allow) equal count; edges at the sample
// quantiles. INVALID_ARGUMENT for bad input or bins < 1.
absl::StatusOr<ReliabilityTable> EqualCountReliability(
    absl::Span<const double> probabilities, absl::Span<const int> labels,
    int bins = 10);

// Sum over non-empty bins of (count / total) * |observed_rate -
// mean_predicted|. NaN when the table holds no record.
double ExpectedCalibrationError(const ReliabilityTable& table);

// ---- Building blocks shared with the accumulators ----

// e[i] = i * (1.0 / bins) for i < bins, e[bins] = 1. REQUIRES: bins >= 1.
std::vector<double> EqualWidthEdges(int bins);

// Edges at the i/bins quantiles of n sorted values, numpy.percentile
// "linear" rule. `sorted_value(r)` returns the r-th smallest value
// (0 <= r < n). REQUIRES: n >= 1, bins >= 1.
std::vector<double> EqualCountEdges(
    int64_t n, int bins, absl::FunctionRef<double(int64_t)> sorted_value);

// Index of the bin holding `p` under the convention above; values below
// e[0] or above e[B] fall in the first or last bin.
int ReliabilityBinOf(absl::Span<const double> edges, double p);

// ReliabilityBinOf for EqualWidthEdges(B) (B = edges.size() - 1), in O(1):
// a first guess floor(p * B) corrected against the edges themselves, so the
// answer is the same.
inline int EqualWidthBinOf(absl::Span<const double> edges, double p) {
  const int last = static_cast<int>(edges.size()) - 2;
  int bin = static_cast<int>(p * (last + 1));
  bin = bin < 0 ? 0 : (bin > last ? last : bin);
  while (bin > 0 && !(edges[bin] < p)) --bin;
  while (bin < last && edges[bin + 1] < p) ++bin;
  return bin;
}

// Running sums of one bin.
struct BinSums {
  int64_t count = 0;
  int64_t positives = 0;
  CompensatedSum predicted;

  void Add(double p, int label) {
    ++count;
    positives += label;
    predicted.Add(p);
  }
  void Merge(const BinSums& other) {
    count += other.count;
    positives += other.positives;
    predicted.Merge(other.predicted);
  }
};

// The table for `edges` (B + 1 values) and per-bin sums (B values).
ReliabilityTable MakeReliabilityTable(absl::Span<const double> edges,
                                      absl::Span<const BinSums> sums);

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_RELIABILITY_H_
