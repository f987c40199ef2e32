// File: scorer/design_set.h
//
// Turns a fit (scorer/fit.h) of a design (scorer/design_matrix.h) into a
// coefficient set: the layout's transforms, missing rules and feature
// baselines, the fitted intercept and coefficients (0 for reference levels
// and bins), a score baseline from the fitted probabilities and the
// provenance of the fit. Scoring a training record with the set gives the
// probability the fitter computed for it (to rounding, ~1e-15).
//
//   absl::StatusOr<v1::CoefficientSet> set = CoefficientSetFromFit(
//       *layout, *fit, {.name = "courier_first_attempt", .version = "r7",
//                       .created_by = "refit job 12"});
//
// Called by the refit job and `plumbctl fit`.
// Thread-safe: pure function.
#ifndef PLUMBLINE_SCORER_DESIGN_SET_H_
#define PLUMBLINE_SCORER_DESIGN_SET_H_

#include <string>

#include "absl/status/statusor.h"
#include "absl/time/time.h"
#include "plumbline/v1/coefficient_set.pb.h"
#include "scorer/design_matrix.h"
#include "scorer/fit.h"

namespace plumbline::scorer {

// What the fit cannot know about the set it becomes.
struct SetDescription {
  std::string name;           // set name, [A-Za-z0-9_.-]+
  std::string version;        // required by the set file
  std::string description;    // free text for people
  std::string created_by;     // "plumbctl fit", "refit job 12"
  std::string training_data;  // the rows, in words a reviewer understands
  absl::Time created_at = absl::UnixEpoch();
};

// The coefficient set of `fit` on `layout`'s design. Provenance: method
// "IRLS" or "IRLS, L2 lambda=<lambda>", training_rows = fit.rows,
// training_log_likelihood = fit.log_likelihood, training_log_loss =
// -log_likelihood / weight_sum (-LL / n for unit weights), and notes with
// the iterations and standard errors. The score baseline cuts the fitted
// probabilities at their deciles.
// INVALID_ARGUMENT when the fit does not belong to the layout (column count)
// or lacks fitted probabilities (keep_fitted_probabilities was false) or the
// result fails ValidateCoefficientSet (e.g. a bad name);
// FAILED_PRECONDITION when the fit did not converge.
absl::StatusOr<v1::CoefficientSet> CoefficientSetFromFit(
    const DesignLayout& layout, const FitResult& fit,
    const SetDescription& description);

}  // namespace plumbline::scorer

#endif  // PLUMBLINE_SCORER_DESIGN_SET_H_
