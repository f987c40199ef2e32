// File: monitor/stability.h
//
// Population stability of a score or a feature against the baseline
// captured when the coefficient set was fitted, plus the data-quality rates
// that go with it: the share of records with the value missing and the share
// with a value outside the expected range (numeric) or an unseen level
// (categorical).
//
//   absl::StatusOr<BinnedBaseline> base =
//       BinnedBaseline::Create({2.0, 5.0, 10.0}, {0.2, 0.3, 0.3, 0.2});
//   absl::StatusOr<StabilityFigures> f = NumericStability(*base, distances);
//   if (f.ok() && f->psi && *f->psi > 0.25) { ... }
//
// PSI = sum over bins of (a_i - e_i) * ln(a_i / e_i), a the sample's and e
// the baseline's proportions among non-missing values (the symmetric
// Kullback–Leibler divergence of the two binned distributions).
//
// Empty-bin rule (common practice, no source): before the formula both
// proportions are floored at kPsiFloor = 1e-4, i.e. a_i <- max(a_i, 1e-4)
// and e_i <- max(e_i, 1e-4), without renormalising. A bin empty on one side
// then adds a large but finite term instead of an infinite one. The floor is
// a constant rather than 0.5 / count so that a window's PSI does not depend
// on its length through the rule.
//
// Numeric bins follow the coefficient-set file (plumbline.v1.Distribution):
// edges e[0] < ... < e[k-1]; bin 0 = (-inf, e[0]), bin i = [e[i-1], e[i]),
// bin k = [e[k-1], +inf). NaN is a missing value. Categorical levels are
// matched exactly; every level absent from the baseline goes to one extra
// "unseen" bin whose baseline proportion is 0 (so floored to 1e-4).
//
// The streaming versions are in monitor/stability_accumulators.h and give
// the same doubles. Baselines are immutable once created and safe to share
// between threads; the functions are pure.
#ifndef PLUMBLINE_MONITOR_STABILITY_H_
#define PLUMBLINE_MONITOR_STABILITY_H_

#include <algorithm>
#include <cstdint>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "absl/container/flat_hash_map.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/types/span.h"

namespace plumbline::monitor {

// Floor applied to both proportions of every bin (common practice, no
// source).
inline constexpr double kPsiFloor = 1e-4;

// Closed interval of values that count as in range.
struct ValueRange {
  double lower = 0;
  double upper = 0;
};

class BinnedBaseline {
 public:
  // `edges` strictly increasing and finite (may be empty: one bin);
  // `proportions` one per bin (edges.size() + 1), each >= 0, summing to 1
  // within 1e-6. INVALID_ARGUMENT naming the offending entry otherwise.
  static absl::StatusOr<BinnedBaseline> Create(std::vector<double> edges,
                                               std::vector<double> proportions);

  int num_bins() const { return static_cast<int>(proportions_.size()); }
  // Bin of a (non-NaN) value under the convention above: the number of
  // edges <= value. Few edges are counted without branches (a binary
  // search's branches are unpredictable on streaming data).
  int BinOf(double value) const {
    if (edges_.size() <= 32) {
      int bin = 0;
      for (double e : edges_) bin += e <= value ? 1 : 0;
      return bin;
    }
    return static_cast<int>(
        std::upper_bound(edges_.begin(), edges_.end(), value) - edges_.begin());
  }
  // [e[0], e[k-1]]: the values the baseline saw between its outer edges.
  // REQUIRES: at least one edge.
  ValueRange Range() const { return {edges_.front(), edges_.back()}; }
  const std::vector<double>& edges() const { return edges_; }
  const std::vector<double>& proportions() const { return proportions_; }

 private:
  BinnedBaseline() = default;
  std::vector<double> edges_;
  std::vector<double> proportions_;
};

class CategoricalBaseline {
 public:
  // Levels with their proportions among non-missing values: distinct,
  // proportions >= 0 summing to 1 within 1e-6. Bin i is level i in the given
  // order; bin levels.size() is "unseen".
  static absl::StatusOr<CategoricalBaseline> Create(
      std::vector<std::pair<std::string, double>> level_proportions);

  int num_bins() const { return static_cast<int>(proportions_.size()); }
  int unseen_bin() const { return num_bins() - 1; }
  // Bin of a level; unseen_bin() if the baseline does not know it.
  int BinOf(absl::string_view level) const;
  // Baseline proportions per bin, the unseen bin's being 0.
  const std::vector<double>& proportions() const { return proportions_; }
  const std::vector<std::string>& levels() const { return levels_; }

 private:
  CategoricalBaseline() = default;
  std::vector<std::string> levels_;
  std::vector<double> proportions_;
  absl::flat_hash_map<std::string, int> bin_of_;
};

struct StabilityFigures {
  int64_t count = 0;    // records, missing ones included
  int64_t missing = 0;  // records without a value
  // Numeric: non-missing values outside the range. Categorical: records
  // with a level the baseline does not know.
  int64_t out_of_range = 0;
  double missing_rate = 0;       // missing / count
  double out_of_range_rate = 0;  // out_of_range / count
  // Unset when every record was missing.
  std::optional<double> psi;
  // Sample proportions per baseline bin among non-missing values, before
  // the floor (categorical: levels, then unseen). Empty when psi is unset.
  std::vector<double> proportions;
};

// PSI of two proportion vectors of the same length after the empty-bin rule.
// REQUIRES: expected.size() == actual.size().
double PsiFromProportions(absl::Span<const double> expected,
                          absl::Span<const double> actual);

// Figures of numeric `values` (NaN = missing). Out of range means outside
// `range` if given (e.g. the feature's clip bounds), else outside
// baseline.Range() (no value is out of range when the baseline has no edge).
// INVALID_ARGUMENT when `values` is empty or range.lower > range.upper.
absl::StatusOr<StabilityFigures> NumericStability(
    const BinnedBaseline& baseline, absl::Span<const double> values,
    std::optional<ValueRange> range = std::nullopt);

// Figures of categorical `levels` (nullopt = missing). INVALID_ARGUMENT when
// `levels` is empty.
absl::StatusOr<StabilityFigures> CategoricalStability(
    const CategoricalBaseline& baseline,
    absl::Span<const std::optional<absl::string_view>> levels);

// Shorthands for the PSI alone; INVALID_ARGUMENT also when no value is
// present.
absl::StatusOr<double> PopulationStabilityIndex(
    const BinnedBaseline& baseline, absl::Span<const double> values);
absl::StatusOr<double> PopulationStabilityIndex(
    const CategoricalBaseline& baseline,
    absl::Span<const std::optional<absl::string_view>> levels);

// ---- Shared with the accumulators ----

// Per-bin counts of a sample.
struct StabilityCounts {
  std::vector<int64_t> bins;
  int64_t missing = 0;
  int64_t out_of_range = 0;

  void Merge(const StabilityCounts& other);
};

// Figures from counts against the baseline proportions.
StabilityFigures MakeStabilityFigures(absl::Span<const double> baseline,
                                      const StabilityCounts& counts);

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_STABILITY_H_
