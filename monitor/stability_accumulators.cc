#include "monitor/stability_accumulators.h"

#include <string>
#include <utility>

#include "absl/strings/str_format.h"
#include "monitor/input_check.h"

namespace plumbline::monitor {
namespace {

int64_t Total(const StabilityCounts& counts) {
  int64_t n = counts.missing;
  for (int64_t c : counts.bins) n += c;
  return n;
}

absl::Status NoRecords(absl::string_view what) {
  return absl::FailedPreconditionError(
      absl::StrFormat("%s stability: no records in the window", what));
}

// The checks both Restore methods share.
absl::Status CheckCounts(absl::string_view what, const StabilityCounts& counts,
                         int bins) {
  if (counts.bins.size() != static_cast<size_t>(bins)) {
    return absl::InvalidArgumentError(
        absl::StrFormat("%s stability state: %d bin counts; the baseline has "
                        "%d bins",
                        what, counts.bins.size(), bins));
  }
  const std::string state = absl::StrFormat("%s stability state", what);
  for (size_t i = 0; i < counts.bins.size(); ++i) {
    if (absl::Status s = internal::CheckStateCount(
            state, absl::StrFormat("bins[%d]", i), counts.bins[i]);
        !s.ok()) {
      return s;
    }
  }
  if (absl::Status s =
          internal::CheckStateCount(state, "missing", counts.missing);
      !s.ok()) {
    return s;
  }
  return internal::CheckStateCount(state, "out_of_range", counts.out_of_range);
}

int64_t NonMissing(const StabilityCounts& counts) {
  int64_t n = 0;
  for (int64_t c : counts.bins) n += c;
  return n;
}

}  // namespace

// ---- NumericStabilityAccumulator ----

NumericStabilityAccumulator::NumericStabilityAccumulator(
    std::shared_ptr<const BinnedBaseline> baseline,
    std::optional<ValueRange> range)
    : baseline_(std::move(baseline)), range_(range) {
  counts_.bins.assign(baseline_->num_bins(), 0);
}

absl::StatusOr<NumericStabilityAccumulator> NumericStabilityAccumulator::Create(
    std::shared_ptr<const BinnedBaseline> baseline,
    std::optional<ValueRange> range) {
  if (baseline == nullptr) {
    return absl::InvalidArgumentError("numeric stability: no baseline");
  }
  if (range && !(range->lower <= range->upper)) {
    return absl::InvalidArgumentError(
        absl::StrFormat("numeric stability: range [%g, %g] is empty",
                        range->lower, range->upper));
  }
  if (!range && !baseline->edges().empty()) range = baseline->Range();
  return NumericStabilityAccumulator(std::move(baseline), range);
}

absl::Status NumericStabilityAccumulator::Merge(
    const NumericStabilityAccumulator& other) {
  const bool same_range = range_.has_value() == other.range_.has_value() &&
                          (!range_ || (range_->lower == other.range_->lower &&
                                       range_->upper == other.range_->upper));
  if (baseline_ != other.baseline_ || !same_range) {
    return absl::InvalidArgumentError(
        "numeric stability: cannot merge accumulators with different "
        "baselines or ranges");
  }
  counts_.Merge(other.counts_);
  return absl::OkStatus();
}

int64_t NumericStabilityAccumulator::count() const { return Total(counts_); }

absl::Status NumericStabilityAccumulator::Restore(StabilityCounts counts) {
  if (absl::Status s = CheckCounts("numeric", counts, baseline_->num_bins());
      !s.ok()) {
    return s;
  }
  if (counts.out_of_range > NonMissing(counts)) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "numeric stability state: out_of_range is %d, more than the %d "
        "non-missing records",
        counts.out_of_range, NonMissing(counts)));
  }
  counts_ = std::move(counts);
  return absl::OkStatus();
}

absl::StatusOr<StabilityFigures> NumericStabilityAccumulator::Result() const {
  if (count() == 0) return NoRecords("numeric");
  return MakeStabilityFigures(baseline_->proportions(), counts_);
}

// ---- CategoricalStabilityAccumulator ----

CategoricalStabilityAccumulator::CategoricalStabilityAccumulator(
    std::shared_ptr<const CategoricalBaseline> baseline)
    : baseline_(std::move(baseline)) {
  counts_.bins.assign(baseline_->num_bins(), 0);
}

absl::StatusOr<CategoricalStabilityAccumulator>
CategoricalStabilityAccumulator::Create(
    std::shared_ptr<const CategoricalBaseline> baseline) {
  if (baseline == nullptr) {
    return absl::InvalidArgumentError("categorical stability: no baseline");
  }
  return CategoricalStabilityAccumulator(std::move(baseline));
}

absl::Status CategoricalStabilityAccumulator::Merge(
    const CategoricalStabilityAccumulator& other) {
  if (baseline_ != other.baseline_) {
    return absl::InvalidArgumentError(
        "categorical stability: cannot merge accumulators with different "
        "baselines");
  }
  counts_.Merge(other.counts_);
  return absl::OkStatus();
}

int64_t CategoricalStabilityAccumulator::count() const {
  return Total(counts_);
}

absl::Status CategoricalStabilityAccumulator::Restore(StabilityCounts counts) {
  if (absl::Status s =
          CheckCounts("categorical", counts, baseline_->num_bins());
      !s.ok()) {
    return s;
  }
  const int64_t unseen =
      counts.bins[static_cast<size_t>(baseline_->unseen_bin())];
  if (counts.out_of_range != unseen) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "categorical stability state: out_of_range is %d; it must equal the "
        "unseen bin's count, %d",
        counts.out_of_range, unseen));
  }
  counts_ = std::move(counts);
  return absl::OkStatus();
}

absl::StatusOr<StabilityFigures> CategoricalStabilityAccumulator::Result()
    const {
  if (count() == 0) return NoRecords("categorical");
  return MakeStabilityFigures(baseline_->proportions(), counts_);
}

}  // namespace plumbline::monitor
