#include "scorer/scoring_plan.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "scorer/coefficient_set.h"
#include "scorer/logistic.h"

namespace plumbline::scorer {
namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();

// Rows encoded at once by ScoreDense: large enough for an efficient
// matrix-vector product, small enough that the block stays in cache.
constexpr Eigen::Index kDenseBlockRows = 256;

// Bin of x under the BinnedTransform convention: the number of edges <= x.
int BinOf(const std::vector<double>& edges, double x) {
  return static_cast<int>(std::upper_bound(edges.begin(), edges.end(), x) -
                          edges.begin());
}

}  // namespace

ScoringPlan::ScoringPlan(v1::CoefficientSet set, std::string source)
    : set_(std::move(set)), source_(std::move(source)) {}

absl::StatusOr<std::shared_ptr<const ScoringPlan>> ScoringPlan::Compile(
    v1::CoefficientSet set, std::string source) {
  if (absl::Status st = ValidateCoefficientSet(set, source); !st.ok())
    return st;
  std::shared_ptr<ScoringPlan> plan(
      new ScoringPlan(std::move(set), std::move(source)));
  if (absl::Status st = plan->Build(); !st.ok()) return st;
  return std::shared_ptr<const ScoringPlan>(std::move(plan));
}

absl::Status ScoringPlan::Build() {
  std::vector<double> beta;
  features_.resize(set_.features_size());
  for (int i = 0; i < set_.features_size(); ++i) {
    const v1::Feature& f = set_.features(i);
    CompiledFeature& c = features_[i];
    feature_index_.emplace(f.name(), i);
    c.offset = static_cast<int>(beta.size());
    c.missing = f.missing().kind();
    c.impute_number = f.missing().impute_number();
    switch (f.transform_case()) {
      case v1::Feature::kNumeric: {
        const auto& t = f.numeric();
        c.kind = FeatureKind::kNumeric;
        c.center = t.center();
        c.scale = t.scale();
        c.clip_low = t.has_clip_low() ? t.clip_low() : -kInf;
        c.clip_high = t.has_clip_high() ? t.clip_high() : kInf;
        c.width = 1;
        beta.push_back(t.coefficient());
        if (t.has_reference()) {
          const double r = std::clamp(t.reference(), c.clip_low, c.clip_high);
          c.reference_contribution = t.coefficient() * (r - c.center) / c.scale;
        }
        break;
      }
      case v1::Feature::kCategorical: {
        const auto& t = f.categorical();
        c.kind = FeatureKind::kCategorical;
        c.unseen = t.unseen();
        c.width = t.levels_size();
        for (int l = 0; l < t.levels_size(); ++l) {
          c.levels.emplace(t.levels(l).value(), l);
          beta.push_back(t.levels(l).coefficient());
          if (t.levels(l).value() == t.reference_level()) {
            c.reference_contribution = t.levels(l).coefficient();
          }
        }
        if (c.missing == v1::MissingRule::IMPUTE) {
          c.impute_level = c.levels.at(f.missing().impute_level());
        }
        break;
      }
      case v1::Feature::kBinned: {
        const auto& t = f.binned();
        c.kind = FeatureKind::kBinned;
        c.edges.assign(t.edges().begin(), t.edges().end());
        c.width = t.coefficients_size();
        beta.insert(beta.end(), t.coefficients().begin(),
                    t.coefficients().end());
        if (t.has_reference()) {
          c.reference_contribution =
              t.coefficients(BinOf(c.edges, t.reference()));
        }
        break;
      }
      case v1::Feature::TRANSFORM_NOT_SET:
        return absl::InternalError(
            "validated set has a feature without transform");
    }
    if (c.missing == v1::MissingRule::INDICATOR) {
      c.indicator = static_cast<int>(beta.size());
      beta.push_back(f.missing().indicator_coefficient());
    }
  }
  beta_ = Eigen::Map<const Eigen::VectorXd>(
      beta.data(), static_cast<Eigen::Index>(beta.size()));
  return absl::OkStatus();
}

const std::string& ScoringPlan::feature_name(int i) const {
  return set_.features(i).name();
}

int ScoringPlan::FeatureIndex(absl::string_view name) const {
  auto it = feature_index_.find(name);
  return it == feature_index_.end() ? -1 : it->second;
}

int ScoringPlan::LevelIndex(int feature, absl::string_view level) const {
  const auto& levels = features_[feature].levels;
  auto it = levels.find(level);
  return it == levels.end() ? -1 : it->second;
}

absl::Status ScoringPlan::FeatureError(int f, absl::string_view what) const {
  return absl::InvalidArgumentError(
      absl::StrCat("feature '", feature_name(f), "': ", what));
}

absl::Status ScoringPlan::Overflow(int f, double x) const {
  const CompiledFeature& c = features_[f];
  return FeatureError(
      f, absl::StrFormat("value %g is too far from the centre (%g) for the "
                         "scale (%g): (value - centre) / scale overflows",
                         x, c.center, c.scale));
}

absl::Status ScoringPlan::NotFinite(absl::string_view where,
                                    double log_odds) const {
  return absl::InvalidArgumentError(absl::StrFormat(
      "%sset '%s': the log-odds come to %g; the record's values are too "
      "extreme for the set's coefficients",
      where, name(), log_odds));
}

absl::Status ScoringPlan::EncodeMissing(int f, double* out) const {
  const CompiledFeature& c = features_[f];
  switch (c.missing) {
    case v1::MissingRule::REJECT:
      return FeatureError(f,
                          "value is missing and the set's rule for this "
                          "feature is REJECT");
    case v1::MissingRule::IMPUTE:
      if (c.kind == FeatureKind::kCategorical) {
        return EncodeLevel(f, c.impute_level, out);
      }
      return EncodeNumber(f, c.impute_number, out);
    case v1::MissingRule::INDICATOR:
      out[c.indicator] = 1.0;
      return absl::OkStatus();
    default:
      return FeatureError(f, "unknown missing rule");
  }
}

absl::Status ScoringPlan::EncodeNumber(int f, double x, double* out) const {
  const CompiledFeature& c = features_[f];
  if (!std::isfinite(x)) {
    return FeatureError(f, std::isnan(x) ? "value is NaN; send null for a "
                                           "missing value"
                                         : "value is infinite");
  }
  if (c.kind == FeatureKind::kNumeric) {
    const double z =
        (std::clamp(x, c.clip_low, c.clip_high) - c.center) / c.scale;
    if (!std::isfinite(z)) return Overflow(f, x);
    out[c.offset] = z;
  } else {
    out[c.offset + BinOf(c.edges, x)] = 1.0;
  }
  return absl::OkStatus();
}

absl::Status ScoringPlan::EncodeLevel(int f, int level, double* out) const {
  out[features_[f].offset + level] = 1.0;
  return absl::OkStatus();
}

absl::Status ScoringPlan::EncodeFeature(int f, const RawValue& v,
                                        double* out) const {
  const CompiledFeature& c = features_[f];
  switch (v.kind) {
    case RawValue::Kind::kMissing:
      return EncodeMissing(f, out);
    case RawValue::Kind::kNumber:
      if (c.kind == FeatureKind::kCategorical) {
        return FeatureError(f,
                            "expected a level name (a string), got a number");
      }
      return EncodeNumber(f, v.number, out);
    case RawValue::Kind::kText: {
      if (c.kind != FeatureKind::kCategorical) {
        return FeatureError(f,
                            absl::StrCat("expected a number, got the string \"",
                                         ShownText(v.text), "\""));
      }
      const int level = LevelIndex(f, v.text);
      if (level >= 0) return EncodeLevel(f, level, out);
      switch (c.unseen) {
        case v1::CategoricalTransform::UNSEEN_ZERO:
          return absl::OkStatus();
        case v1::CategoricalTransform::UNSEEN_AS_MISSING:
          return EncodeMissing(f, out);
        default:
          return FeatureError(
              f, absl::StrCat("level \"", ShownText(v.text),
                              "\" is not one of the set's levels "
                              "and the unseen rule is UNSEEN_REJECT"));
      }
    }
  }
  return absl::OkStatus();
}

absl::Status ScoringPlan::Encode(absl::Span<const RawValue> values,
                                 Eigen::Ref<Eigen::RowVectorXd> out) const {
  if (values.size() != features_.size() || out.size() != beta_.size()) {
    return absl::InvalidArgumentError(
        absl::StrFormat("set '%s': got %d values for %d features", name(),
                        values.size(), features_.size()));
  }
  out.setZero();
  for (int f = 0; f < num_features(); ++f) {
    if (absl::Status st = EncodeFeature(f, values[f], out.data()); !st.ok()) {
      return st;
    }
  }
  return absl::OkStatus();
}

absl::StatusOr<ScoreResult> ScoringPlan::Score(
    absl::Span<const RawValue> values, const ReasonOptions& reasons) const {
  Eigen::RowVectorXd row(beta_.size());
  if (absl::Status st = Encode(values, row); !st.ok()) return st;
  ScoreResult r;
  r.log_odds = intercept() + row.dot(beta_.transpose());
  // Finite values and coefficients can still sum past the largest double.
  if (!std::isfinite(r.log_odds)) return NotFinite("", r.log_odds);
  r.probability = Logistic(r.log_odds);
  if (reasons.top > 0) r.reasons = Reasons(row, reasons);
  return r;
}

absl::Status ScoringPlan::EncodeDenseFeature(int f, double x, bool absent,
                                             const DenseOptions& options,
                                             double* out) const {
  const CompiledFeature& c = features_[f];
  if (absent || (std::isnan(x) && options.nan_is_missing)) {
    return EncodeMissing(f, out);
  }
  if (c.kind != FeatureKind::kCategorical) return EncodeNumber(f, x, out);
  if (!(x >= 0 && x < c.width && x == std::floor(x))) {
    return FeatureError(f, absl::StrFormat("level index must be an integer in "
                                           "[0, %d), got %g",
                                           c.width, x));
  }
  return EncodeLevel(f, static_cast<int>(x), out);
}

absl::Status ScoringPlan::ScoreDense(
    const Eigen::Ref<const RowMatrix>& raw,
    absl::Span<const int> column_of_feature, const DenseOptions& options,
    Eigen::Ref<Eigen::VectorXd> log_odds,
    Eigen::Ref<Eigen::VectorXd> probability) const {
  const Eigen::Index rows = raw.rows();
  if (column_of_feature.size() != features_.size()) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "%s: set '%s': column map has %d entries for %d features",
        options.rows_path, name(), column_of_feature.size(), features_.size()));
  }
  for (int col : column_of_feature) {
    if (col < -1 || col >= raw.cols()) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "%s: set '%s': column %d is outside the %d columns given",
          options.rows_path, name(), col, raw.cols()));
    }
  }
  if (log_odds.size() != rows || probability.size() != rows) {
    return absl::InvalidArgumentError(absl::StrCat(
        options.rows_path, ": output vectors must have one entry per row"));
  }
  // Fast path: every feature numeric and present, the common shape of a
  // high-volume batch. Same arithmetic as EncodeNumber.
  bool all_numeric = true;
  for (int f = 0; f < num_features(); ++f) {
    all_numeric = all_numeric && features_[f].kind == FeatureKind::kNumeric &&
                  features_[f].indicator < 0 && column_of_feature[f] >= 0;
  }
  RowMatrix block(std::min(rows, kDenseBlockRows), beta_.size());
  for (Eigen::Index start = 0; start < rows; start += kDenseBlockRows) {
    const Eigen::Index n = std::min(kDenseBlockRows, rows - start);
    if (all_numeric) {
      for (Eigen::Index r = 0; r < n; ++r) {
        const double* in = raw.row(start + r).data();
        double* out = block.row(r).data();
        bool finite = true;
        for (int f = 0; f < num_features(); ++f) {
          const CompiledFeature& c = features_[f];
          const double x = in[column_of_feature[f]];
          out[f] =
              (std::clamp(x, c.clip_low, c.clip_high) - c.center) / c.scale;
          finite &= std::isfinite(x) && std::isfinite(out[f]);
        }
        if (!finite) {
          // Re-encode through the general path for the right error or the
          // missing rule.
          block.row(r).setZero();
          for (int f = 0; f < num_features(); ++f) {
            absl::Status st = EncodeDenseFeature(f, in[column_of_feature[f]],
                                                 false, options, out);
            if (!st.ok()) {
              return absl::InvalidArgumentError(absl::StrCat(
                  options.rows_path, "[", start + r, "]: ", st.message()));
            }
          }
        }
      }
    } else {
      block.topRows(n).setZero();
      for (Eigen::Index r = 0; r < n; ++r) {
        const double* in = raw.row(start + r).data();
        double* out = block.row(r).data();
        for (int f = 0; f < num_features(); ++f) {
          const int col = column_of_feature[f];
          absl::Status st = EncodeDenseFeature(f, col >= 0 ? in[col] : 0.0,
                                               col < 0, options, out);
          if (!st.ok()) {
            return absl::InvalidArgumentError(absl::StrCat(
                options.rows_path, "[", start + r, "]: ", st.message()));
          }
        }
      }
    }
    auto lo = log_odds.segment(start, n);
    lo.noalias() = block.topRows(n) * beta_;
    lo.array() += intercept();
    for (Eigen::Index r = 0; r < n; ++r) {
      if (!std::isfinite(lo[r])) {
        return NotFinite(absl::StrCat(options.rows_path, "[", start + r, "]: "),
                         lo[r]);
      }
    }
    auto p = probability.segment(start, n);
    for (Eigen::Index r = 0; r < n; ++r) p[r] = Logistic(lo[r]);
  }
  return absl::OkStatus();
}

std::vector<Reason> ScoringPlan::Reasons(
    const Eigen::Ref<const Eigen::RowVectorXd>& row,
    const ReasonOptions& options) const {
  std::vector<Reason> all;
  all.reserve(features_.size());
  for (int f = 0; f < num_features(); ++f) {
    const CompiledFeature& c = features_[f];
    double contribution =
        row.segment(c.offset, c.width)
            .dot(beta_.segment(c.offset, c.width).transpose());
    if (c.indicator >= 0) contribution += row[c.indicator] * beta_[c.indicator];
    const double reason = contribution - c.reference_contribution;
    const bool keep =
        options.order == ReasonOrder::kMagnitude ||
        (options.order == ReasonOrder::kRaisesLogOdds && reason > 0) ||
        (options.order == ReasonOrder::kLowersLogOdds && reason < 0);
    if (keep) all.push_back({f, reason});
  }
  auto key = [&](const Reason& r) {
    switch (options.order) {
      case ReasonOrder::kRaisesLogOdds:
        return r.contribution;
      case ReasonOrder::kLowersLogOdds:
        return -r.contribution;
      case ReasonOrder::kMagnitude:
        return std::abs(r.contribution);
    }
    return r.contribution;
  };
  // Ties keep the set's feature order, so reasons are deterministic.
  std::stable_sort(
      all.begin(), all.end(),
      [&](const Reason& a, const Reason& b) { return key(a) > key(b); });
  if (all.size() > static_cast<size_t>(std::max(options.top, 0))) {
    all.resize(static_cast<size_t>(std::max(options.top, 0)));
  }
  return all;
}

}  // namespace plumbline::scorer
