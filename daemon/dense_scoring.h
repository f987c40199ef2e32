// File: daemon/dense_scoring.h
//
// The dense form of ScoreBatch (plumbline.v1.DenseRows): column checks, row
// widths and categorical level codes are checked here, the rows go into an
// Eigen row-major matrix scored by ScoringPlan::ScoreDense, and reason codes,
// when asked for, come from re-encoding the rows one by one.
// Called by ScoreBatchWithPlan (scoring_core.h).
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_DENSE_SCORING_H_
#define PLUMBLINE_DAEMON_DENSE_SCORING_H_

#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "plumbline/v1/scoring.pb.h"
#include "scorer/scoring_plan.h"

namespace plumbline::daemon {

// For each feature of `plan`, its column in `dense` or -1. Empty
// dense.columns means every feature in the set's order. INVALID_ARGUMENT for
// an unknown or repeated column name.
absl::StatusOr<std::vector<int>> DenseColumnOfFeature(
    const scorer::ScoringPlan& plan, const v1::DenseRows& dense);

// Scores every row of `dense` and appends one Scored per row to `reply`.
// Errors start with "dense.rows[i]: " or "dense.columns[i]: ".
absl::Status ScoreDenseRows(const scorer::ScoringPlan& plan,
                            const v1::DenseRows& dense,
                            const scorer::ReasonOptions& reasons,
                            v1::ScoreBatchReply* reply);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_DENSE_SCORING_H_
