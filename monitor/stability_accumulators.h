// File: monitor/stability_accumulators.h
//
// Streaming population stability of one score or feature against its
// baseline, with the missing-value and out-of-range rates: per-bin counts
// only (O(bins) memory), Add() per record, Merge() to combine window
// buckets, Result() for the figures. Exact: Result() returns the same doubles
// as NumericStability / CategoricalStability (monitor/stability.h) on the
// same records, since both go through integer counts and
// MakeStabilityFigures. The empty-bin rule and bin conventions are those of
// monitor/stability.h.
//
//   auto base = std::make_shared<const BinnedBaseline>(*BinnedBaseline::Create(
//       {0.05, 0.1, 0.2, 0.4}, {0.3, 0.25, 0.2, 0.15, 0.1}));
//   absl::StatusOr<NumericStabilityAccumulator> score_psi =
//       NumericStabilityAccumulator::Create(base);
//   score_psi->Add(probability);
//   absl::StatusOr<StabilityFigures> f = score_psi->Result();
//
// The baseline is shared (not copied) between an accumulator and its copies,
// so a window of K buckets holds one baseline. Not thread-safe.
#ifndef PLUMBLINE_MONITOR_STABILITY_ACCUMULATORS_H_
#define PLUMBLINE_MONITOR_STABILITY_ACCUMULATORS_H_

#include <cstdint>
#include <memory>
#include <optional>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "monitor/stability.h"

namespace plumbline::monitor {

class NumericStabilityAccumulator {
 public:
  // Out of range means outside `range` if given (the feature's clip
  // bounds), else outside baseline->Range(). INVALID_ARGUMENT if `baseline`
  // is null or the range is empty.
  static absl::StatusOr<NumericStabilityAccumulator> Create(
      std::shared_ptr<const BinnedBaseline> baseline,
      std::optional<ValueRange> range = std::nullopt);

  // NaN counts as missing.
  void Add(double value) {
    if (value != value) {  // NaN
      ++counts_.missing;
      return;
    }
    ++counts_.bins[baseline_->BinOf(value)];
    if (range_ && (value < range_->lower || value > range_->upper)) {
      ++counts_.out_of_range;
    }
  }
  // INVALID_ARGUMENT unless both use the same baseline object and range.
  absl::Status Merge(const NumericStabilityAccumulator& other);
  int64_t count() const;
  // FAILED_PRECONDITION when no record was added.
  absl::StatusOr<StabilityFigures> Result() const;

  // The counts, for saving; Restore replaces them. INVALID_ARGUMENT naming
  // the field (accumulator unchanged) unless there is one bin count per
  // baseline bin, every count lies in [0, 2^40] and out_of_range is at most
  // the non-missing records.
  const StabilityCounts& counts() const { return counts_; }
  absl::Status Restore(StabilityCounts counts);

 private:
  NumericStabilityAccumulator(std::shared_ptr<const BinnedBaseline> baseline,
                              std::optional<ValueRange> range);

  std::shared_ptr<const BinnedBaseline> baseline_;
  std::optional<ValueRange> range_;
  StabilityCounts counts_;
};

class CategoricalStabilityAccumulator {
 public:
  // INVALID_ARGUMENT if `baseline` is null.
  static absl::StatusOr<CategoricalStabilityAccumulator> Create(
      std::shared_ptr<const CategoricalBaseline> baseline);

  // nullopt counts as missing; a level the baseline lacks as unseen (the
  // categorical out-of-range).
  void Add(std::optional<absl::string_view> level) {
    if (!level) {
      ++counts_.missing;
      return;
    }
    const int bin = baseline_->BinOf(*level);
    ++counts_.bins[bin];
    if (bin == baseline_->unseen_bin()) ++counts_.out_of_range;
  }
  // INVALID_ARGUMENT unless both use the same baseline object.
  absl::Status Merge(const CategoricalStabilityAccumulator& other);
  int64_t count() const;
  // FAILED_PRECONDITION when no record was added.
  absl::StatusOr<StabilityFigures> Result() const;

  // The counts, for saving; Restore replaces them. INVALID_ARGUMENT naming
  // the field (accumulator unchanged) unless there is one bin count per
  // baseline bin (the unseen bin last), every count lies in [0, 2^40] and
  // out_of_range equals the unseen bin's count.
  const StabilityCounts& counts() const { return counts_; }
  absl::Status Restore(StabilityCounts counts);

 private:
  explicit CategoricalStabilityAccumulator(
      std::shared_ptr<const CategoricalBaseline> baseline);

  std::shared_ptr<const CategoricalBaseline> baseline_;
  StabilityCounts counts_;
};

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_STABILITY_ACCUMULATORS_H_
