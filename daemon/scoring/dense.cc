// File: daemon/scoring/dense.cc
#include "daemon/scoring/dense.h"

#include <cmath>
#include <string>

#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "daemon/scoring/core.h"
#include "daemon/util/caller_text.h"

namespace plumbline::daemon {
namespace {

// Checks every categorical cell: a level index must be an integer in
// [0, levels), unless it is a NaN that means missing (other NaNs are left to
// the scorer, which refuses them with its usual message).
absl::Status CheckLevelCodes(const scorer::ScoringPlan& plan,
                             const v1::DenseRows& dense,
                             const std::vector<int>& column_of_feature) {
  for (int f = 0; f < plan.num_features(); ++f) {
    const int col = column_of_feature[static_cast<size_t>(f)];
    if (col < 0 || plan.feature_kind(f) != scorer::FeatureKind::kCategorical) {
      continue;
    }
    const int levels = plan.set().features(f).categorical().levels_size();
    for (int r = 0; r < dense.rows_size(); ++r) {
      const double x = dense.rows(r).values(col);
      if (std::isnan(x)) continue;
      if (x != std::floor(x) || !std::isfinite(x)) {
        return absl::InvalidArgumentError(
            absl::StrCat("dense.rows[", r, "]: feature '", plan.feature_name(f),
                         "': level index ", x, " is not an integer"));
      }
      if (x < 0 || x >= levels) {
        return absl::InvalidArgumentError(
            absl::StrCat("dense.rows[", r, "]: feature '", plan.feature_name(f),
                         "': level index ", x, " is out of range; the set has ",
                         levels, " levels (0..", levels - 1, ")"));
      }
    }
  }
  return absl::OkStatus();
}

// Reason codes of dense row `r`: the row is turned back into named raw values
// (level codes into level names) and encoded like a named record.
absl::StatusOr<std::vector<scorer::Reason>> DenseRowReasons(
    const scorer::ScoringPlan& plan, const v1::DenseRows::Row& row,
    const std::vector<int>& column_of_feature, bool nan_is_missing,
    const scorer::ReasonOptions& reasons) {
  std::vector<scorer::RawValue> raw(static_cast<size_t>(plan.num_features()));
  DenseRowToRawValues(plan, row, column_of_feature, nan_is_missing, raw.data());
  Eigen::RowVectorXd encoded(plan.encoded_width());
  encoded.setZero();
  if (absl::Status s = plan.Encode(raw, encoded); !s.ok()) return s;
  return plan.Reasons(encoded, reasons);
}

}  // namespace

void DenseRowToRawValues(const scorer::ScoringPlan& plan,
                         const v1::DenseRows::Row& row,
                         const std::vector<int>& column_of_feature,
                         bool nan_is_missing, scorer::RawValue* out) {
  for (int f = 0; f < plan.num_features(); ++f) {
    scorer::RawValue& value = out[f];
    value = scorer::RawValue::Missing();
    const int col = column_of_feature[static_cast<size_t>(f)];
    if (col < 0) continue;
    const double x = row.values(col);
    if (std::isnan(x) && nan_is_missing) continue;
    if (plan.feature_kind(f) == scorer::FeatureKind::kCategorical) {
      value = scorer::RawValue::Text(plan.set()
                                         .features(f)
                                         .categorical()
                                         .levels(static_cast<int>(x))
                                         .value());
    } else {
      value = scorer::RawValue::Number(x);
    }
  }
}

absl::StatusOr<std::vector<int>> DenseColumnOfFeature(
    const scorer::ScoringPlan& plan, const v1::DenseRows& dense) {
  std::vector<int> column_of_feature(static_cast<size_t>(plan.num_features()),
                                     -1);
  if (dense.columns_size() == 0) {
    for (int f = 0; f < plan.num_features(); ++f) {
      column_of_feature[static_cast<size_t>(f)] = f;
    }
    return column_of_feature;
  }
  for (int c = 0; c < dense.columns_size(); ++c) {
    const std::string& name = dense.columns(c);
    const int f = plan.FeatureIndex(name);
    if (f < 0) {
      return absl::InvalidArgumentError(
          absl::StrCat("dense.columns[", c, "]: '", CallerText(name),
                       "' is not a feature of set '", plan.name(), "'"));
    }
    int& slot = column_of_feature[static_cast<size_t>(f)];
    if (slot >= 0) {
      return absl::InvalidArgumentError(
          absl::StrCat("dense.columns[", c, "]: '", CallerText(name),
                       "' appears twice (also dense.columns[", slot, "])"));
    }
    slot = c;
  }
  return column_of_feature;
}

absl::Status ScoreDenseRows(const scorer::ScoringPlan& plan,
                            const v1::DenseRows& dense,
                            const scorer::ReasonOptions& reasons,
                            v1::ScoreBatchReply* reply, RecordInputs* inputs) {
  absl::StatusOr<std::vector<int>> column_of_feature =
      DenseColumnOfFeature(plan, dense);
  if (!column_of_feature.ok()) return column_of_feature.status();
  const int width =
      dense.columns_size() == 0 ? plan.num_features() : dense.columns_size();
  const int rows = dense.rows_size();
  scorer::RowMatrix raw(rows, width);
  for (int r = 0; r < rows; ++r) {
    const auto& values = dense.rows(r).values();
    if (values.size() != width) {
      return absl::InvalidArgumentError(
          absl::StrCat("dense.rows[", r, "]: ", values.size(), " values, but ",
                       width, " columns"));
    }
    for (int c = 0; c < width; ++c) raw(r, c) = values.Get(c);
  }
  if (absl::Status s = CheckLevelCodes(plan, dense, *column_of_feature);
      !s.ok()) {
    return s;
  }
  Eigen::VectorXd log_odds(rows);
  Eigen::VectorXd probability(rows);
  scorer::DenseOptions options;
  options.nan_is_missing = dense.nan_is_missing();
  options.rows_path = "dense.rows";
  if (absl::Status s = plan.ScoreDense(raw, *column_of_feature, options,
                                       log_odds, probability);
      !s.ok()) {
    return s;
  }
  reply->mutable_scores()->Reserve(rows);
  for (int r = 0; r < rows; ++r) {
    v1::Scored* scored = reply->add_scores();
    scored->set_record_id(dense.rows(r).record_id());
    scored->set_log_odds(log_odds[r]);
    scored->set_probability(probability[r]);
    if (reasons.top == 0) continue;
    absl::StatusOr<std::vector<scorer::Reason>> row_reasons =
        DenseRowReasons(plan, dense.rows(r), *column_of_feature,
                        dense.nan_is_missing(), reasons);
    if (!row_reasons.ok()) {
      return absl::Status(row_reasons.status().code(),
                          absl::StrCat("dense.rows[", r,
                                       "]: ", row_reasons.status().message()));
    }
    AppendReasons(plan, *row_reasons, scored);
  }
  if (inputs != nullptr) {
    const size_t features = static_cast<size_t>(plan.num_features());
    const size_t first = inputs->values.size();
    inputs->values.resize(first + features * static_cast<size_t>(rows));
    inputs->sent.resize(first + features * static_cast<size_t>(rows));
    for (int r = 0; r < rows; ++r) {
      const size_t at = first + features * static_cast<size_t>(r);
      DenseRowToRawValues(plan, dense.rows(r), *column_of_feature,
                          dense.nan_is_missing(), &inputs->values[at]);
      for (size_t f = 0; f < features; ++f) {
        inputs->sent[at + f] = (*column_of_feature)[f] >= 0 ? 1 : 0;
      }
    }
  }
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
