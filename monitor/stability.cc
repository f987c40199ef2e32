#include "monitor/stability.h"

#include <algorithm>
#include <cmath>
#include <cstddef>

#include "absl/status/status.h"
#include "absl/strings/str_format.h"
#include "monitor/compensated_sum.h"

namespace plumbline::monitor {
namespace {

constexpr double kProportionSumTolerance = 1e-6;

absl::Status CheckProportions(absl::string_view what,
                              absl::Span<const double> proportions) {
  CompensatedSum sum;
  for (size_t i = 0; i < proportions.size(); ++i) {
    if (!(proportions[i] >= 0 && proportions[i] <= 1)) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "%s: proportions[%d] is %g; proportions must lie in [0, 1]", what, i,
          proportions[i]));
    }
    sum.Add(proportions[i]);
  }
  if (std::abs(sum.Value() - 1.0) > kProportionSumTolerance) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "%s: proportions sum to %.9g; they must sum to 1", what, sum.Value()));
  }
  return absl::OkStatus();
}

double Rate(int64_t part, int64_t whole) {
  return whole == 0 ? 0.0
                    : static_cast<double>(part) / static_cast<double>(whole);
}

}  // namespace

absl::StatusOr<BinnedBaseline> BinnedBaseline::Create(
    std::vector<double> edges, std::vector<double> proportions) {
  constexpr char kWhat[] = "binned baseline";
  for (size_t i = 0; i < edges.size(); ++i) {
    if (!std::isfinite(edges[i])) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "%s: edges[%d] is %g; edges must be finite", kWhat, i, edges[i]));
    }
    if (i > 0 && !(edges[i] > edges[i - 1])) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "%s: edges[%d] = %g does not exceed edges[%d] = %g; edges must be "
          "strictly increasing",
          kWhat, i, edges[i], i - 1, edges[i - 1]));
    }
  }
  if (proportions.size() != edges.size() + 1) {
    return absl::InvalidArgumentError(
        absl::StrFormat("%s: %d edges need %d proportions, got %d", kWhat,
                        edges.size(), edges.size() + 1, proportions.size()));
  }
  if (absl::Status s = CheckProportions(kWhat, proportions); !s.ok()) return s;
  BinnedBaseline baseline;
  baseline.edges_ = std::move(edges);
  baseline.proportions_ = std::move(proportions);
  return baseline;
}

absl::StatusOr<CategoricalBaseline> CategoricalBaseline::Create(
    std::vector<std::pair<std::string, double>> level_proportions) {
  constexpr char kWhat[] = "categorical baseline";
  CategoricalBaseline baseline;
  for (auto& [level, proportion] : level_proportions) {
    const int bin = static_cast<int>(baseline.levels_.size());
    if (!baseline.bin_of_.emplace(level, bin).second) {
      return absl::InvalidArgumentError(
          absl::StrFormat("%s: level \"%s\" appears twice", kWhat, level));
    }
    baseline.levels_.push_back(std::move(level));
    baseline.proportions_.push_back(proportion);
  }
  if (absl::Status s = CheckProportions(kWhat, baseline.proportions_);
      !s.ok()) {
    return s;
  }
  baseline.proportions_.push_back(0.0);  // the unseen bin
  return baseline;
}

int CategoricalBaseline::BinOf(absl::string_view level) const {
  auto it = bin_of_.find(level);
  return it == bin_of_.end() ? unseen_bin() : it->second;
}

double PsiFromProportions(absl::Span<const double> expected,
                          absl::Span<const double> actual) {
  CompensatedSum psi;
  for (size_t i = 0; i < expected.size(); ++i) {
    const double e = std::max(expected[i], kPsiFloor);
    const double a = std::max(actual[i], kPsiFloor);
    psi.Add((a - e) * std::log(a / e));
  }
  return psi.Value();
}

void StabilityCounts::Merge(const StabilityCounts& other) {
  for (size_t i = 0; i < bins.size(); ++i) bins[i] += other.bins[i];
  missing += other.missing;
  out_of_range += other.out_of_range;
}

StabilityFigures MakeStabilityFigures(absl::Span<const double> baseline,
                                      const StabilityCounts& counts) {
  StabilityFigures f;
  int64_t present = 0;
  for (int64_t c : counts.bins) present += c;
  f.count = present + counts.missing;
  f.missing = counts.missing;
  f.out_of_range = counts.out_of_range;
  f.missing_rate = Rate(f.missing, f.count);
  f.out_of_range_rate = Rate(f.out_of_range, f.count);
  if (present > 0) {
    f.proportions.resize(counts.bins.size());
    for (size_t i = 0; i < counts.bins.size(); ++i) {
      f.proportions[i] = Rate(counts.bins[i], present);
    }
    f.psi = PsiFromProportions(baseline, f.proportions);
  }
  return f;
}

absl::StatusOr<StabilityFigures> NumericStability(
    const BinnedBaseline& baseline, absl::Span<const double> values,
    std::optional<ValueRange> range) {
  if (values.empty()) {
    return absl::InvalidArgumentError("numeric stability: no values");
  }
  if (range && !(range->lower <= range->upper)) {
    return absl::InvalidArgumentError(
        absl::StrFormat("numeric stability: range [%g, %g] is empty",
                        range->lower, range->upper));
  }
  if (!range && !baseline.edges().empty()) range = baseline.Range();
  StabilityCounts counts;
  counts.bins.assign(baseline.num_bins(), 0);
  for (double v : values) {
    if (std::isnan(v)) {
      ++counts.missing;
      continue;
    }
    ++counts.bins[baseline.BinOf(v)];
    if (range && (v < range->lower || v > range->upper)) ++counts.out_of_range;
  }
  return MakeStabilityFigures(baseline.proportions(), counts);
}

absl::StatusOr<StabilityFigures> CategoricalStability(
    const CategoricalBaseline& baseline,
    absl::Span<const std::optional<absl::string_view>> levels) {
  if (levels.empty()) {
    return absl::InvalidArgumentError("categorical stability: no values");
  }
  StabilityCounts counts;
  counts.bins.assign(baseline.num_bins(), 0);
  for (const std::optional<absl::string_view>& level : levels) {
    if (!level) {
      ++counts.missing;
      continue;
    }
    const int bin = baseline.BinOf(*level);
    ++counts.bins[bin];
    if (bin == baseline.unseen_bin()) ++counts.out_of_range;
  }
  return MakeStabilityFigures(baseline.proportions(), counts);
}

namespace {

absl::StatusOr<double> PsiOnly(absl::StatusOr<StabilityFigures> figures,
                               absl::string_view what) {
  if (!figures.ok()) return figures.status();
  if (!figures->psi) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "%s PSI: all %d values are missing", what, figures->count));
  }
  return *figures->psi;
}

}  // namespace

absl::StatusOr<double> PopulationStabilityIndex(
    const BinnedBaseline& baseline, absl::Span<const double> values) {
  return PsiOnly(NumericStability(baseline, values), "numeric");
}

absl::StatusOr<double> PopulationStabilityIndex(
    const CategoricalBaseline& baseline,
    absl::Span<const std::optional<absl::string_view>> levels) {
  return PsiOnly(CategoricalStability(baseline, levels), "categorical");
}

}  // namespace plumbline::monitor
