// File: scorer/fit.h
//
// Maximum-likelihood fitting of the logistic model
//
//   P(y = 1 | x) = Logistic(intercept + x · beta)
//
// by Newton–Raphson (equivalently IRLS) on Eigen. Called by the refit job and
// by `plumbctl fit`, usually on a design matrix built by
// scorer/design_matrix.h, whose result becomes a coefficient set through
// CoefficientSetFromFit.
//
//   FitOptions options;
//   options.l2_lambda = 1.0;   // optional ridge penalty, see below
//   absl::StatusOr<FitResult> fit =
//       FitLogistic(x, y, /*weights=*/Eigen::VectorXd(), names, options);
//   if (!fit.ok()) { ... fit.status().message() names the problem ... }
//   double b0 = fit->intercept;  Eigen::VectorXd b = fit->coefficients;
//
// Objective and penalty scale. With sample weights w_i (1 when none are
// given) and l_i = y_i log p_i + (1 - y_i) log(1 - p_i), the fitter maximises
//
//   F(intercept, beta) = sum_i w_i l_i - (lambda / 2) ||beta||^2,
//
// that is it minimises -sum_i w_i l_i + (lambda / 2) ||beta||^2. The
// intercept is never penalised and the penalty applies to beta on the scale
// of the columns as given (standardise them first, as design_matrix.h does,
// if the penalty should treat them alike). scikit-learn's
// LogisticRegression(penalty="l2", C=c) minimises 1/2 ||beta||^2 +
// c * sum_i (log-loss)_i, whose minimiser is the same as ours with
// lambda = 1 / c (unit weights; with sample_weight the weights enter both
// objectives the same way).
//
// Method. Columns are centred and scaled internally (weighted mean and
// standard deviation) for conditioning; results are reported on the original
// scale. Each iteration makes one pass over x in blocks of rows: the linear
// predictor, the gradient and the information matrix X'WX (lower triangle,
// a rank update with rows scaled by sqrt(w_i)), so memory beyond x and y is
// O(n + block * d). The Newton step is solved with a Cholesky factorisation
// (never an explicit inverse); a step that lowers F is halved until it no
// longer does. x is row-major; a column-major matrix is copied once by the
// Eigen::Ref conversion.
//
// Separation (unpenalised fits) is recognised without linear programming:
// once a Newton step that is not shrinking leaves rows fitted within
// separation_probability of their label, the direction of that step is
// tested; if no row lies on its wrong side, the likelihood keeps rising
// along it for ever and the fit stops with the columns that move along it.
// (A complete separation in which some row has a tiny margin may be called
// quasi-complete.)
//
// Problems are reported instead of huge or meaningless coefficients:
//   INVALID_ARGUMENT     malformed input: sizes, NaN/inf, labels not 0/1,
//                        negative weights, lambda < 0.
//   FAILED_PRECONDITION  data that cannot identify the model: all labels
//                        equal, a constant column, collinear columns
//                        (unpenalised fits), complete or quasi-complete
//                        separation (unpenalised fits).
// Each message names the columns involved and says what to change.
//
// Thread-safe: FitLogistic is a pure function of its arguments; it starts no
// threads (Eigen runs single-threaded here).
#ifndef PLUMBLINE_SCORER_FIT_H_
#define PLUMBLINE_SCORER_FIT_H_

#include <Eigen/Core>
#include <cstdint>
#include <functional>
#include <string>

#include "absl/status/statusor.h"
#include "absl/types/span.h"
#include "scorer/scoring_plan.h"

namespace plumbline::scorer {

// What FitOptions::progress sees after each Newton iteration.
struct FitProgress {
  int iteration = 0;            // 1 for the first Newton step taken
  double log_likelihood = 0;    // sum_i w_i l_i at the new estimate
  double max_abs_gradient = 0;  // same measure as FitOptions::tol_grad
  double max_abs_step = 0;      // step taken, as for FitOptions::tol_step
  int step_halvings = 0;        // halvings this iteration needed
};

struct FitOptions {
  // L2 penalty lambda >= 0 on beta (not the intercept); 0 = plain maximum
  // likelihood. lambda = 1 / C for scikit-learn's C (see the file comment).
  double l2_lambda = 0;

  // Newton iterations before giving up (the result then has converged =
  // false and a stop_reason).
  int max_iterations = 100;

  // Convergence needs all three tests at once:
  // max_j |dF/dtheta_j| / sum_i w_i, on the internally standardised columns
  // (so the test does not depend on n or on the columns' units) ...
  double tol_grad = 1e-9;
  // ... |F_k - F_{k-1}| / max(|F_k|, 1) between the last two iterates ...
  double tol_objective = 1e-12;
  // ... and the next Newton step, max_j |step_j| in standardised units
  // (log-odds per standard deviation). The gradient alone is not enough:
  // under separation it vanishes while the coefficients keep growing.
  // (When the first two tests have held for two iterations, steps up to
  // 1e-6 are taken as rounding noise of an ill-conditioned problem.)
  double tol_step = 1e-10;

  // Step halvings per iteration. If every halved step still lowers F, or
  // the gradient test holds and no halved step raises F, the fit stops
  // there: converged if the gradient test holds, else not.
  int max_step_halvings = 30;

  // A column whose 1 - R^2 on the columns before it (weighted, standardised)
  // is at most this is reported as collinear (unpenalised fits only; a
  // penalty makes such fits well defined).
  double collinearity_tolerance = 1e-9;

  // Separation is suspected once some rows are fitted within this of their
  // label (and then confirmed from the direction the estimates move in).
  double separation_probability = 1e-10;

  // Rows per block of the pass over x: large enough for an efficient matrix
  // product, small enough that the block stays in cache.
  int block_rows = 256;

  // If true, FitResult::fitted_probabilities holds one entry per row.
  bool keep_fitted_probabilities = true;

  // Called after every iteration, on the calling thread; may be empty.
  std::function<void(const FitProgress&)> progress;
};

struct FitResult {
  // Estimates on the scale of the columns as given.
  double intercept = 0;
  Eigen::VectorXd coefficients;  // one per column of x

  // Square roots of the diagonal of the inverse information matrix at the
  // estimate (observed = expected information for the logit link). For
  // penalised fits (`penalized`) they come from the penalised Hessian, the
  // inverse of X'WX + lambda I (intercept unpenalised): the penalty
  // shrinks and biases the estimates, so these are not sampling standard
  // errors and no z or p-values are given.
  double intercept_standard_error = 0;
  Eigen::VectorXd standard_errors;

  // Wald z = estimate / standard error and its two-sided normal p-value.
  // Unpenalised fits only: for penalised fits z and p_values are empty and
  // the intercept's are NaN.
  double intercept_z = 0;
  double intercept_p_value = 0;
  Eigen::VectorXd z;
  Eigen::VectorXd p_values;

  // (d+1) x (d+1) covariance of (intercept, beta), intercept first: the
  // inverse (penalised) information on the original scale.
  Eigen::MatrixXd covariance;

  bool penalized = false;
  double l2_lambda = 0;

  // Goodness of fit, all with the sample weights.
  double log_likelihood = 0;            // sum_i w_i l_i
  double penalized_log_likelihood = 0;  // F = log_likelihood - lambda/2 |b|^2
  double null_log_likelihood = 0;       // intercept-only model
  double deviance = 0;                  // -2 log_likelihood
  double aic = 0;                       // deviance + 2 (d + 1)
  double pseudo_r2 = 0;                 // McFadden: 1 - ll / null ll

  int64_t rows = 0;       // rows of x (including zero-weight rows)
  double weight_sum = 0;  // sum_i w_i (= rows for unit weights)
  int iterations = 0;     // Newton steps taken
  bool converged = false;
  // Why the fit stopped without converging; empty when converged.
  std::string stop_reason;
  double max_abs_gradient = 0;  // at the estimate, as for tol_grad

  // Logistic(intercept + x_i · coefficients) for every row, computed from
  // the reported coefficients; empty unless keep_fitted_probabilities.
  Eigen::VectorXd fitted_probabilities;
};

// Fits the model to rows of `x` (n x d, no intercept column: the intercept
// is added and fitted unpenalised) and labels `y` (0 or 1).
// `weights` holds n non-negative sample weights or is empty for unit
// weights. `column_names` holds d names used in messages, or is empty
// ("x[0]", "x[1]", ...).
// REQUIRES: nothing; every precondition is checked and reported (see the
// file comment for the codes).
absl::StatusOr<FitResult> FitLogistic(
    const Eigen::Ref<const RowMatrix>& x,
    const Eigen::Ref<const Eigen::VectorXd>& y,
    const Eigen::Ref<const Eigen::VectorXd>& weights,
    absl::Span<const std::string> column_names, const FitOptions& options);

// Unit weights and generic column names.
absl::StatusOr<FitResult> FitLogistic(
    const Eigen::Ref<const RowMatrix>& x,
    const Eigen::Ref<const Eigen::VectorXd>& y, const FitOptions& options = {});

}  // namespace plumbline::scorer

#endif  // PLUMBLINE_SCORER_FIT_H_
