#include "scorer/fit.h"

#include <Eigen/Cholesky>
#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>

#include "absl/status/status.h"
#include "absl/strings/str_format.h"
#include "scorer/fit_checks.h"
#include "scorer/fit_pass.h"

namespace plumbline::scorer {
namespace {

using fit_internal::Evaluation;
using fit_internal::FitData;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// A trial step is accepted when the penalised log-likelihood does not fall
// by more than this share of its size: a smaller fall is rounding in the
// sum over rows, not a worse estimate (common practice, no source).
constexpr double kAcceptSlack = 1e-14;

// A step at least this share of the step before counts as steady: along a
// diverging direction Newton steps settle to a constant size, while steps
// towards a finite optimum shrink quadratically (common practice, no
// source).
constexpr double kSteadyStep = 0.5;

// When the gradient and the objective have been at rounding level for two
// iterations in a row, a Newton step up to this size (standardised units)
// is rounding noise of an ill-conditioned information matrix, not
// progress, and the fit has converged. Steps along a diverging (separated)
// direction are orders of magnitude larger (common practice, no source).
constexpr double kStagnantStep = 1e-6;

// The penalised problem on the standardised scale: theta = (intercept,
// gamma), beta_j = gamma_j * inv_scale_j, so the penalty on beta is a
// diagonal penalty lambda * inv_scale_j^2 on gamma_j.
struct Penalty {
  Eigen::VectorXd diagonal;  // size d + 1, 0 for the intercept
  bool active = false;

  double Value(const Eigen::VectorXd& theta) const {
    return active ? 0.5 * theta.cwiseAbs2().dot(diagonal) : 0.0;
  }
};

struct NewtonState {
  Eigen::VectorXd theta;
  Evaluation eval;
  double objective = 0;  // log-likelihood - penalty
};

// Two-sided p-value of a standard normal z: erfc(|z| / sqrt 2).
double TwoSidedP(double z) { return std::erfc(std::abs(z) / std::sqrt(2.0)); }

// Moves from `state` along the Newton `step`, halved while the penalised
// log-likelihood falls by more than rounding. Returns false, leaving `next`
// unspecified, when no point along the step is an improvement: every
// halving fell, or halving was needed and the best point found only ties
// with `state` while the gradient test holds (the optimum to rounding).
bool TryStep(FitData& data, const Penalty& penalty, const NewtonState& state,
             const Eigen::VectorXd& step, bool grad_ok, int max_halvings,
             NewtonState& next, int& halvings) {
  next.theta = state.theta + step;
  data.Evaluate(next.theta, next.eval);
  next.objective = next.eval.log_likelihood - penalty.Value(next.theta);
  const double floor =
      state.objective - kAcceptSlack * std::max(std::abs(state.objective), 1.0);
  double t = 1;
  halvings = 0;
  while (!(next.objective >= floor) && halvings < max_halvings) {
    ++halvings;
    t *= 0.5;
    next.theta = state.theta + t * step;
    next.objective = data.LogLikelihood(next.theta) - penalty.Value(next.theta);
  }
  if (!(next.objective >= floor)) return false;
  if (halvings > 0) {
    if (grad_ok && !(next.objective > state.objective)) return false;
    data.Evaluate(next.theta, next.eval);
  }
  return true;
}

// Everything reported from the final estimate on the original scale.
void FillResult(FitData& data, const NewtonState& state,
                const Eigen::LLT<Eigen::MatrixXd>& llt,
                const FitOptions& options, FitResult& r) {
  const fit_internal::ColumnStats& s = data.stats();
  const Eigen::Index d = data.cols();
  r.coefficients = state.theta.tail(d).cwiseProduct(s.inv_scale);
  r.intercept = state.theta[0] - r.coefficients.dot(s.mean);

  // theta_original = T theta; covariance = T H^-1 T' = A'A with A = L^-1 T'.
  Eigen::MatrixXd t_transpose = Eigen::MatrixXd::Zero(d + 1, d + 1);
  t_transpose(0, 0) = 1;
  for (Eigen::Index j = 0; j < d; ++j) {
    t_transpose(j + 1, 0) = -s.mean[j] * s.inv_scale[j];
    t_transpose(j + 1, j + 1) = s.inv_scale[j];
  }
  const Eigen::MatrixXd a = llt.matrixL().solve(t_transpose);
  r.covariance = a.transpose() * a;
  const Eigen::VectorXd se = r.covariance.diagonal().cwiseMax(0).cwiseSqrt();
  r.intercept_standard_error = se[0];
  r.standard_errors = se.tail(d);

  r.penalized = options.l2_lambda > 0;
  r.l2_lambda = options.l2_lambda;
  if (r.penalized) {
    r.intercept_z = r.intercept_p_value = kNaN;
    r.z.resize(0);
    r.p_values.resize(0);
  } else {
    r.intercept_z = r.intercept / r.intercept_standard_error;
    r.intercept_p_value = TwoSidedP(r.intercept_z);
    r.z = r.coefficients.cwiseQuotient(r.standard_errors);
    r.p_values = r.z.unaryExpr(&TwoSidedP);
  }

  r.log_likelihood = data.OriginalScaleLogLikelihood(
      r.intercept, r.coefficients,
      options.keep_fitted_probabilities ? &r.fitted_probabilities : nullptr);
  r.penalized_log_likelihood =
      r.log_likelihood - 0.5 * options.l2_lambda * r.coefficients.squaredNorm();
  const double w1 = s.positive_weight, w0 = s.weight_sum - s.positive_weight;
  r.null_log_likelihood =
      w1 * std::log(w1 / s.weight_sum) + w0 * std::log(w0 / s.weight_sum);
  r.deviance = -2 * r.log_likelihood;
  r.aic = r.deviance + 2.0 * static_cast<double>(d + 1);
  r.pseudo_r2 = 1 - r.log_likelihood / r.null_log_likelihood;
  r.rows = data.rows();
  r.weight_sum = s.weight_sum;
}

}  // namespace

absl::StatusOr<FitResult> FitLogistic(
    const Eigen::Ref<const RowMatrix>& x,
    const Eigen::Ref<const Eigen::VectorXd>& y,
    const Eigen::Ref<const Eigen::VectorXd>& weights,
    absl::Span<const std::string> column_names, const FitOptions& options) {
  if (absl::Status st =
          fit_internal::ValidateInput(x, y, weights, column_names, options);
      !st.ok()) {
    return st;
  }
  FitData data(x, y, weights, options.block_rows,
               options.separation_probability);
  const fit_internal::ColumnStats& stats = data.ComputeStats();
  if (absl::Status st =
          fit_internal::CheckVariation(stats, data.rows(), column_names);
      !st.ok()) {
    return st;
  }
  const Eigen::Index d = data.cols();
  const bool penalized = options.l2_lambda > 0;
  Penalty penalty;
  penalty.active = penalized;
  penalty.diagonal = Eigen::VectorXd::Zero(d + 1);
  penalty.diagonal.tail(d) = options.l2_lambda * stats.inv_scale.cwiseAbs2();

  // Start from the intercept-only estimate, where the information matrix
  // is proportional to the Gram matrix of the standardised design: the
  // place to look for collinear columns.
  NewtonState state;
  state.theta = Eigen::VectorXd::Zero(d + 1);
  state.theta[0] = std::log(stats.positive_weight /
                            (stats.weight_sum - stats.positive_weight));
  data.Evaluate(state.theta, state.eval);
  if (!penalized) {
    if (absl::Status st = fit_internal::CheckCollinearity(
            state.eval.information, column_names,
            options.collinearity_tolerance);
        !st.ok()) {
      return st;
    }
  }
  state.objective = state.eval.log_likelihood - penalty.Value(state.theta);

  // Separation shows as a direction the estimates keep moving in by steps
  // that do not shrink (converging Newton steps shrink quadratically);
  // checked whenever such a step leaves rows fitted perfectly.
  auto check_separation = [&](const Eigen::VectorXd& direction,
                              bool steady) -> absl::Status {
    if (penalized || !steady || state.eval.perfect_rows == 0) {
      return absl::OkStatus();
    }
    const double scale = direction.cwiseAbs().maxCoeff();
    if (!(scale > 0)) return absl::OkStatus();
    const Eigen::VectorXd v = direction / scale;
    const fit_internal::DirectionMargins margins =
        data.Margins(v, fit_internal::kSeparatedCosine);
    return fit_internal::SeparationStatus(v, margins, state.eval.perfect_rows,
                                          column_names);
  };

  FitResult result;
  Eigen::VectorXd last_step = Eigen::VectorXd::Zero(d + 1);
  double previous_objective = kNaN;
  bool previous_flat = false;  // gradient and objective tests met last time
  Eigen::LLT<Eigen::MatrixXd> llt;
  for (int iteration = 0;; ++iteration) {
    Eigen::MatrixXd h = state.eval.information;
    h.diagonal() += penalty.diagonal;
    const Eigen::VectorXd g =
        state.eval.gradient - penalty.diagonal.cwiseProduct(state.theta);
    result.max_abs_gradient = g.cwiseAbs().maxCoeff() / stats.weight_sum;
    llt.compute(h);
    if (llt.info() != Eigen::Success) {
      if (absl::Status st = check_separation(last_step, true); !st.ok()) {
        return st;
      }
      return absl::FailedPreconditionError(absl::StrFormat(
          "the information matrix is not positive definite at iteration %d "
          "(rows fitted perfectly: %d); the columns are nearly collinear or "
          "some are informed only by rows with fitted probabilities of 0 or "
          "1. Drop such columns or fit with an L2 penalty (l2_lambda > 0)",
          iteration, state.eval.perfect_rows));
    }
    const Eigen::VectorXd step = llt.solve(g);
    const double max_step = step.cwiseAbs().maxCoeff();
    const bool grad_ok = result.max_abs_gradient <= options.tol_grad;
    const bool objective_ok =
        std::abs(state.objective - previous_objective) <=
        options.tol_objective * std::max(std::abs(state.objective), 1.0);
    const bool flat = grad_ok && objective_ok;
    if (flat && (max_step <= options.tol_step ||
                 (previous_flat && max_step <= kStagnantStep))) {
      result.converged = true;
      break;
    }
    previous_flat = flat;
    if (iteration == options.max_iterations) {
      result.stop_reason = absl::StrFormat(
          "no convergence after %d iterations: max gradient %.3g (tol_grad "
          "%.3g), next step %.3g (tol_step %.3g)",
          iteration, result.max_abs_gradient, options.tol_grad, max_step,
          options.tol_step);
      break;
    }

    NewtonState next;
    int halvings = 0;
    if (!TryStep(data, penalty, state, step, grad_ok, options.max_step_halvings,
                 next, halvings)) {
      result.converged = grad_ok;
      if (!grad_ok) {
        result.stop_reason = absl::StrFormat(
            "step halving (%d times) did not raise the penalised "
            "log-likelihood at iteration %d; max gradient %.3g",
            halvings, iteration + 1, result.max_abs_gradient);
      }
      break;
    }
    const double previous_step = last_step.cwiseAbs().maxCoeff();
    last_step = next.theta - state.theta;
    previous_objective = state.objective;
    state = std::move(next);
    result.iterations = iteration + 1;
    if (options.progress) {
      options.progress(
          {.iteration = result.iterations,
           .log_likelihood = state.eval.log_likelihood,
           .max_abs_gradient = (state.eval.gradient -
                                penalty.diagonal.cwiseProduct(state.theta))
                                   .cwiseAbs()
                                   .maxCoeff() /
                               stats.weight_sum,
           .max_abs_step = last_step.cwiseAbs().maxCoeff(),
           .step_halvings = halvings});
    }
    const bool steady =
        last_step.cwiseAbs().maxCoeff() >= kSteadyStep * previous_step;
    if (absl::Status st = check_separation(last_step, steady); !st.ok()) {
      return st;
    }
  }
  // Every way out of the loop leaves `llt` holding the factor of the
  // (penalised) information at state.theta, and separation already checked
  // for the last step taken.
  FillResult(data, state, llt, options, result);
  return result;
}

absl::StatusOr<FitResult> FitLogistic(
    const Eigen::Ref<const RowMatrix>& x,
    const Eigen::Ref<const Eigen::VectorXd>& y, const FitOptions& options) {
  return FitLogistic(x, y, Eigen::VectorXd(), {}, options);
}

}  // namespace plumbline::scorer
