// File: scorer/fit_checks.h
//
// The checks FitLogistic (scorer/fit.h) runs before and during a fit, each
// turning a problem into an absl::Status whose message names the rows or
// columns involved and says what to change: malformed input, labels without
// variation, constant and collinear columns, and separation. Internal to
// the fitter.
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_SCORER_FIT_CHECKS_H_
#define PLUMBLINE_SCORER_FIT_CHECKS_H_

#include <Eigen/Core>
#include <string>

#include "absl/status/status.h"
#include "absl/types/span.h"
#include "scorer/fit.h"
#include "scorer/fit_pass.h"
#include "scorer/scoring_plan.h"

namespace plumbline::scorer::fit_internal {

// Name of column j in messages: column_names[j] if given, else "x[j]".
std::string ColumnName(absl::Span<const std::string> column_names,
                       Eigen::Index j);

// INVALID_ARGUMENT for mismatched sizes, non-finite or out-of-domain values
// (naming the first offending row and column) and bad options.
absl::Status ValidateInput(const Eigen::Ref<const RowMatrix>& x,
                           const Eigen::Ref<const Eigen::VectorXd>& y,
                           const Eigen::Ref<const Eigen::VectorXd>& weights,
                           absl::Span<const std::string> column_names,
                           const FitOptions& options);

// FAILED_PRECONDITION when every row with positive weight has the same
// label, or when some column is constant over those rows.
absl::Status CheckVariation(const ColumnStats& stats, Eigen::Index rows,
                            absl::Span<const std::string> column_names);

// FAILED_PRECONDITION naming each column that is (within `tolerance` of
// 1 - R^2) a linear combination of the columns before it, and those
// columns. `information` is the lower triangle of the information matrix at
// the intercept-only start, which is proportional to the weighted Gram
// matrix of (1, standardised x).
absl::Status CheckCollinearity(const Eigen::MatrixXd& information,
                               absl::Span<const std::string> column_names,
                               double tolerance);

// Rows whose cosine along a diverging direction (see DirectionMargins) is
// at least -kOpposingCosine do not oppose it; those above kSeparatedCosine
// are pushed to a fitted probability of 0 or 1 along it. Along a truly
// diverging direction the rows that are not separated have cosines that
// vanish like the fitted probabilities of the separated rows (below 1e-10
// once those are fitted perfectly); a finite but distant optimum leaves
// some clearly negative. (Common practice, no source; chosen on seeded
// heavy-tailed data sets checked against a linear-programming separation
// test.)
inline constexpr double kOpposingCosine = 1e-9;
inline constexpr double kSeparatedCosine = 1e-6;

// Whether direction `v` (standardised scale, intercept first), along which
// the estimates keep moving, certifies separation: no row with positive
// weight lies on the wrong side (every cosine >= -kOpposingCosine)
// and some lie on the right side. If so, returns FAILED_PRECONDITION naming
// the columns whose coefficients diverge: complete separation when every
// row lies clearly on the right side, quasi-complete otherwise (a complete
// separation whose margin along v is tiny for some row is reported as
// quasi-complete). Else OK.
absl::Status SeparationStatus(const Eigen::VectorXd& v,
                              const DirectionMargins& margins,
                              int64_t perfect_rows,
                              absl::Span<const std::string> column_names);

}  // namespace plumbline::scorer::fit_internal

#endif  // PLUMBLINE_SCORER_FIT_CHECKS_H_
