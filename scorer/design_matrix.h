// File: scorer/design_matrix.h
//
// Turns raw training records into the design matrix the fitter takes
// (scorer/fit.h), using exactly the encoding a ScoringPlan applies when it
// scores, so that a set made from the fit (scorer/design_set.h) scores every
// training record with the probability the fitter computed for it.
//
//   std::vector<FeatureSpec> specs = {
//       {.name = "distance_km"},                             // numeric
//       {.name = "building", .kind = FeatureKind::kCategorical},
//       {.name = "hour", .kind = FeatureKind::kBinned, .bins = 4}};
//   absl::StatusOr<DesignLayout> layout = DesignLayout::Learn(specs, records);
//   absl::StatusOr<RowMatrix> x = layout->Encode(records);
//   absl::StatusOr<FitResult> fit =
//       FitLogistic(*x, y, Eigen::VectorXd(), layout->column_names(), {});
//
// What is learned from the records (every statistic counts records, not
// sample weights):
//   numeric      centre = mean, scale = population standard deviation of
//                the values present (or 0 and 1 when standardize is false);
//                one column.
//   categorical  levels = the distinct values, in byte order; the reference
//                level is the most frequent one (ties: the first in byte
//                order). Its column is dropped from the design (it would be
//                collinear with the intercept) and its coefficient in the
//                set is 0. One column per other level.
//   binned       edges as given, or at the training quantiles k / bins;
//                the most populated bin is the reference (ties: the lowest)
//                and is dropped like a reference level.
//   missing      IMPUTE (default): the mean (numeric, binned) or the
//                reference level (categorical). INDICATOR: one more column,
//                1 when the value is missing, if any training record lacks
//                the value; otherwise the feature falls back to IMPUTE (an
//                indicator that is always 0 cannot be fitted). REJECT:
//                records without the value are refused.
//   baselines    numeric and binned: edges at the training deciles, the
//                share of values per bin, min and max; categorical: the
//                share of each level; both: missing share and record count.
//
// Thread-safe: a DesignLayout is immutable after Learn and may be shared.
#ifndef PLUMBLINE_SCORER_DESIGN_MATRIX_H_
#define PLUMBLINE_SCORER_DESIGN_MATRIX_H_

#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/types/span.h"
#include "plumbline/v1/coefficient_set.pb.h"
#include "scorer/scoring_plan.h"

namespace plumbline::scorer {

// How one feature enters the model. Plain struct; every field has a
// default except the name.
struct FeatureSpec {
  // Name the feature is sent under; the design's columns start with it.
  std::string name;
  // Transform: numeric (one column), categorical (one-hot) or binned.
  FeatureKind kind = FeatureKind::kNumeric;
  // Numeric: centre and scale by the training mean and standard deviation.
  bool standardize = true;
  // Binned: bin edges; when empty, edges at the training quantiles k / bins.
  std::vector<double> edges;
  // Binned without edges: number of quantile bins (fewer when values tie).
  int bins = 5;
  // Missing rule of the set; see the file comment.
  v1::MissingRule::Kind missing = v1::MissingRule::IMPUTE;
  // Categorical: what the set does with a level not seen in training.
  v1::CategoricalTransform::UnseenRule unseen =
      v1::CategoricalTransform::UNSEEN_AS_MISSING;
  // Categorical: levels in the order a set already serving gives them (a
  // refit). Those the data holds keep this order and come first, so dense
  // callers' level codes keep their meaning; other levels follow in byte
  // order. Empty: byte order.
  std::vector<std::string> known_levels;
};

// Where a design column's coefficient goes in the set.
struct DesignColumn {
  enum class Slot { kNumeric, kLevel, kBin, kIndicator };
  int feature = 0;  // index into the set's features
  Slot slot = Slot::kNumeric;
  int index = 0;    // level or bin index for kLevel / kBin
  int encoded = 0;  // column of the ScoringPlan's encoded row
};

class DesignLayout {
 public:
  // Learns transforms, reference levels, missing rules and baselines from
  // `records` (each holds one value per spec, in spec order; text values
  // must outlive the call). INVALID_ARGUMENT naming the feature and record
  // for a value of the wrong type or a non-finite number;
  // FAILED_PRECONDITION naming the feature when it cannot be estimated
  // (no values, a single value or level, an empty bin).
  static absl::StatusOr<DesignLayout> Learn(
      absl::Span<const FeatureSpec> specs,
      absl::Span<const std::vector<RawValue>> records);

  // The design matrix of `records` (any records, e.g. a holdout): one row
  // per record, one column per column_names() entry. Errors name the
  // record: "records[12]: feature 'hour': ...".
  absl::StatusOr<RowMatrix> Encode(
      absl::Span<const std::vector<RawValue>> records) const;

  // Column names: "distance_km", "building=flat", "hour[9,17)",
  // "weight_kg:missing".
  const std::vector<std::string>& column_names() const { return names_; }
  const std::vector<DesignColumn>& columns() const { return columns_; }
  int num_columns() const { return static_cast<int>(columns_.size()); }

  // The set the layout encodes with: transforms, missing rules and
  // baselines filled in, every coefficient 0, named "unfitted".
  const v1::CoefficientSet& skeleton() const { return plan_->set(); }

 private:
  DesignLayout() = default;

  std::shared_ptr<const ScoringPlan> plan_;
  std::vector<DesignColumn> columns_;
  std::vector<std::string> names_;
};

// Distribution of numeric values for a baseline: edges at the quantiles
// k / bins (k = 1 .. bins-1) of the values (the value at sorted position
// floor(k * n / bins)), repeated edges and edges equal to the minimum
// dropped so that no bin is empty; the share of values per bin; min and
// max; `missing` records without a value among `values.size() + missing`.
v1::Distribution QuantileDistribution(std::vector<double> values, int bins,
                                      int64_t missing);

}  // namespace plumbline::scorer

#endif  // PLUMBLINE_SCORER_DESIGN_MATRIX_H_
