// File: scorer/scoring_plan.h
//
// A ScoringPlan is a validated coefficient set compiled for scoring: every
// feature's transform becomes a fixed slice of a dense encoded row, so that
//
//   log-odds = intercept + encoded_row · beta,   probability =
//   Logistic(log-odds)
//
// Encoding per feature (the slice's columns):
//   numeric      1 column  (clip(x) - center) / scale
//   categorical  1 column per level, one-hot
//   binned       1 column per bin, one-hot
//   + 1 indicator column when the missing rule is INDICATOR (1 when missing;
//     the transform's columns are then all 0).
//
// Example:
//
//   auto set = scorer::ReadCoefficientSetFile("sets/courier.json");
//   auto plan = scorer::ScoringPlan::Compile(*std::move(set),
//   "sets/courier.json"); std::vector<scorer::RawValue>
//   row((*plan)->num_features()); row[(*plan)->FeatureIndex("distance_km")] =
//   scorer::RawValue::Number(4.2);
//   ...
//   absl::StatusOr<scorer::ScoreResult> r = (*plan)->Score(row, {.top = 3});
//
// A plan is immutable once compiled and safe to share between threads; the
// daemon hands out std::shared_ptr<const ScoringPlan> snapshots and a reload
// swaps the pointer.
#ifndef PLUMBLINE_SCORER_SCORING_PLAN_H_
#define PLUMBLINE_SCORER_SCORING_PLAN_H_

#include <Eigen/Core>
#include <memory>
#include <string>
#include <vector>

#include "absl/container/flat_hash_map.h"
#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/types/span.h"
#include "plumbline/v1/coefficient_set.pb.h"

namespace plumbline::scorer {

using RowMatrix =
    Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;

// One raw feature value as the caller sent it. Text views must outlive the
// call they are passed to.
struct RawValue {
  enum class Kind { kMissing, kNumber, kText };
  Kind kind = Kind::kMissing;
  double number = 0;
  absl::string_view text;

  static RawValue Missing() { return {}; }
  static RawValue Number(double v) { return {Kind::kNumber, v, {}}; }
  static RawValue Text(absl::string_view t) { return {Kind::kText, 0, t}; }
};

enum class FeatureKind { kNumeric, kCategorical, kBinned };

// Which reason codes to return; see plumbline.v1.ReasonOrder.
enum class ReasonOrder { kRaisesLogOdds, kLowersLogOdds, kMagnitude };

struct ReasonOptions {
  int top = 0;  // 0 = no reasons
  ReasonOrder order = ReasonOrder::kRaisesLogOdds;
};

// A feature's contribution to log-odds minus its contribution at the set's
// reference point.
struct Reason {
  int feature = 0;  // index into the plan's features
  double contribution = 0;
};

struct ScoreResult {
  double log_odds = 0;
  double probability = 0;
  // At most ReasonOptions::top entries; for kRaisesLogOdds only positive and
  // for kLowersLogOdds only negative contributions are reasons, so there may
  // be fewer.
  std::vector<Reason> reasons;
};

struct DenseOptions {
  // If true NaN means "missing" and the feature's missing rule applies;
  // otherwise a NaN is refused.
  bool nan_is_missing = false;
  // What messages call the rows: a bad value of row i is reported as
  // "<rows_path>[i]: ...", a bad shape as "<rows_path>: ...".
  std::string rows_path = "rows";
};

class ScoringPlan {
 public:
  // Validates `set` and compiles it. `source` names it in error messages.
  static absl::StatusOr<std::shared_ptr<const ScoringPlan>> Compile(
      v1::CoefficientSet set, std::string source);

  // Not copyable or movable: share the compiled plan through shared_ptr.
  ScoringPlan(const ScoringPlan&) = delete;
  ScoringPlan& operator=(const ScoringPlan&) = delete;

  const v1::CoefficientSet& set() const { return set_; }
  const std::string& name() const { return set_.name(); }
  const std::string& version() const { return set_.version(); }
  const std::string& source() const { return source_; }

  int num_features() const { return static_cast<int>(features_.size()); }
  const std::string& feature_name(int i) const;
  FeatureKind feature_kind(int i) const { return features_[i].kind; }
  // Index of the feature called `name`, or -1.
  int FeatureIndex(absl::string_view name) const;
  // Categorical feature `feature`: index of `level`, or -1 if unseen.
  // REQUIRES: feature_kind(feature) == kCategorical.
  int LevelIndex(int feature, absl::string_view level) const;

  // Width of the encoded row and the coefficient vector over it.
  int encoded_width() const { return static_cast<int>(beta_.size()); }
  const Eigen::VectorXd& beta() const { return beta_; }
  double intercept() const { return set_.intercept(); }

  // Encodes one record. `values` holds num_features() entries in feature
  // order; `out` must have encoded_width() entries. INVALID_ARGUMENT naming
  // the feature for: a missing value under REJECT, a wrong type (text for a
  // numeric feature or a number for a categorical one), NaN or ±inf, a
  // number so far from the centre that (x - centre) / scale overflows, an
  // unseen level under UNSEEN_REJECT.
  absl::Status Encode(absl::Span<const RawValue> values,
                      Eigen::Ref<Eigen::RowVectorXd> out) const;

  // Encodes and scores one record. Also INVALID_ARGUMENT when the log-odds
  // are not finite (finite values and coefficients whose sum overflows): a
  // probability is always a number in [0, 1].
  absl::StatusOr<ScoreResult> Score(absl::Span<const RawValue> values,
                                    const ReasonOptions& reasons = {}) const;

  // Scores a dense batch. `raw` has one row per record; `column_of_feature`
  // has num_features() entries giving, for each feature, its column in `raw`
  // or -1 when the caller did not send it (the feature is then missing).
  // Numeric and binned columns hold raw values, categorical columns the
  // zero-based level index. Writes rows() log-odds and probabilities.
  // Errors name the row ("rows[12]: feature 'x': ..."), as Score's.
  absl::Status ScoreDense(const Eigen::Ref<const RowMatrix>& raw,
                          absl::Span<const int> column_of_feature,
                          const DenseOptions& options,
                          Eigen::Ref<Eigen::VectorXd> log_odds,
                          Eigen::Ref<Eigen::VectorXd> probability) const;

  // Reason codes of an encoded row (as produced by Encode).
  std::vector<Reason> Reasons(const Eigen::Ref<const Eigen::RowVectorXd>& row,
                              const ReasonOptions& options) const;

 private:
  struct CompiledFeature {
    FeatureKind kind = FeatureKind::kNumeric;
    int offset = 0;      // first encoded column
    int width = 0;       // encoded columns of the transform
    int indicator = -1;  // encoded column of the missing indicator, or -1
    v1::MissingRule::Kind missing = v1::MissingRule::REJECT;
    // numeric
    double center = 0, scale = 1, clip_low = 0, clip_high = 0;
    // numeric / binned imputation value; categorical imputation level index
    double impute_number = 0;
    int impute_level = -1;
    // binned
    std::vector<double> edges;
    // categorical
    v1::CategoricalTransform::UnseenRule unseen =
        v1::CategoricalTransform::UNSEEN_REJECT;
    absl::flat_hash_map<std::string, int> levels;
    // Contribution at the reference point, subtracted for reason codes.
    double reference_contribution = 0;
  };

  ScoringPlan(v1::CoefficientSet set, std::string source);
  absl::Status Build();

  // Encodes feature `f`'s value into `out` (already zeroed).
  absl::Status EncodeFeature(int f, const RawValue& value, double* out) const;
  // Dense form: `x` is the raw number (NaN when the column is absent and
  // `absent` is true).
  absl::Status EncodeDenseFeature(int f, double x, bool absent,
                                  const DenseOptions& options,
                                  double* out) const;
  absl::Status EncodeMissing(int f, double* out) const;
  absl::Status EncodeNumber(int f, double x, double* out) const;
  absl::Status EncodeLevel(int f, int level, double* out) const;
  absl::Status FeatureError(int f, absl::string_view what) const;
  // INVALID_ARGUMENT: feature `f`'s value `x` standardises past the largest
  // double.
  absl::Status Overflow(int f, double x) const;
  // INVALID_ARGUMENT: a record's log-odds are not finite; `where` prefixes
  // the message (a dense row's path).
  absl::Status NotFinite(absl::string_view where, double log_odds) const;

  // Constant after construction.
  v1::CoefficientSet set_;
  std::string source_;
  std::vector<CompiledFeature> features_;
  absl::flat_hash_map<std::string, int> feature_index_;
  Eigen::VectorXd beta_;
};

}  // namespace plumbline::scorer

#endif  // PLUMBLINE_SCORER_SCORING_PLAN_H_
