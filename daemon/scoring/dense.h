// File: daemon/scoring/dense.h
//
// The dense form of ScoreBatch (plumbline.v1.DenseRows): column checks, row
// widths and categorical level codes are checked here, the rows go into an
// Eigen row-major matrix scored by ScoringPlan::ScoreDense, and reason codes,
// when asked for, come from re-encoding the rows one by one.
// Called by ScoreBatchWithPlan (scoring_core.h).
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_SCORING_DENSE_H_
#define PLUMBLINE_DAEMON_SCORING_DENSE_H_

#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "daemon/scoring/core.h"
#include "plumbline/v1/scoring.pb.h"
#include "scorer/scoring_plan.h"

namespace plumbline::daemon {

// For each feature of `plan`, its column in `dense` or -1. Empty
// dense.columns means every feature in the set's order. INVALID_ARGUMENT for
// an unknown or repeated column name.
absl::StatusOr<std::vector<int>> DenseColumnOfFeature(
    const scorer::ScoringPlan& plan, const v1::DenseRows& dense);

// Row `row` as named raw values in the plan's feature order: level codes
// become level names (views into `plan`), a NaN under nan_is_missing and a
// feature without a column are missing. `out` gets plan.num_features()
// entries. REQUIRES: the row's width and level codes have been checked.
void DenseRowToRawValues(const scorer::ScoringPlan& plan,
                         const v1::DenseRows::Row& row,
                         const std::vector<int>& column_of_feature,
                         bool nan_is_missing, scorer::RawValue* out);

// Scores every row of `dense` and appends one Scored per row to `reply`.
// Errors start with "dense.rows[i]: " or "dense.columns[i]: ". With
// `inputs`, appends every row's inputs once all rows have scored (a feature
// counts as sent when it has a column).
absl::Status ScoreDenseRows(const scorer::ScoringPlan& plan,
                            const v1::DenseRows& dense,
                            const scorer::ReasonOptions& reasons,
                            v1::ScoreBatchReply* reply,
                            RecordInputs* inputs = nullptr);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SCORING_DENSE_H_
