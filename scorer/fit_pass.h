// File: scorer/fit_pass.h
//
// The passes over the data that FitLogistic (scorer/fit.h) makes: column
// statistics, then per Newton iteration one blocked pass that yields the
// log-likelihood, the gradient and the information matrix at a parameter
// vector. Internal to the fitter; not for other callers.
//
// Parameters live on the standardised scale: theta = (intercept, gamma) with
//   log-odds_i = theta_0 + sum_j gamma_j (x_ij - mean_j) * inv_scale_j,
// so the information matrix is well conditioned whatever the columns' units.
// Blocks of rows are standardised on the fly into a small buffer, so no
// standardised copy of x is ever made: memory is O(block_rows * d).
//
// Thread-compatible: a FitData is read-only after construction, but a pass
// uses its own scratch buffers, so one FitData must not run two passes at
// once.
#ifndef PLUMBLINE_SCORER_FIT_PASS_H_
#define PLUMBLINE_SCORER_FIT_PASS_H_

#include <Eigen/Core>
#include <cstdint>

#include "scorer/scoring_plan.h"

namespace plumbline::scorer::fit_internal {

// Weighted column statistics of x over rows with positive weight.
struct ColumnStats {
  Eigen::VectorXd mean;
  Eigen::VectorXd inv_scale;  // 1 / weighted population sd; 1 if constant
  // constant[j]: every row with positive weight has the same x_ij.
  Eigen::Array<bool, Eigen::Dynamic, 1> constant;
  double weight_sum = 0;
  double positive_weight = 0;  // sum of w_i over rows with y_i = 1
};

// Result of a full pass at theta. `information` is the (d+1) x (d+1)
// matrix X'WX of the standardised design with a leading column of ones;
// only its lower triangle is filled.
struct Evaluation {
  double log_likelihood = 0;
  Eigen::VectorXd gradient;     // d(log_likelihood)/d(theta)
  Eigen::MatrixXd information;  // lower triangle only
  // Rows with positive weight whose fitted probability of the observed
  // label is within FitData's `perfect_probability` of 1.
  int64_t perfect_rows = 0;
};

// How the rows lie along a direction v on the standardised scale: for each
// row with positive weight the cosine of the angle between v and the row's
// signed design vector, (2 y_i - 1) (z_i · v) / (|z_i| |v|), where z_i
// includes the leading 1. Rows on v's side of the origin have positive
// cosines; a row with a large norm (an outlier) weighs no more than any
// other.
struct DirectionMargins {
  double min = 0;
  double max = 0;
  int64_t rows = 0;               // rows with positive weight
  int64_t strictly_positive = 0;  // rows with cosine > threshold
};

class FitData {
 public:
  // Borrows x, y and weights (weights empty = unit weights): they must
  // outlive this object. REQUIRES: inputs already validated by the fitter.
  FitData(const Eigen::Ref<const RowMatrix>& x,
          const Eigen::Ref<const Eigen::VectorXd>& y,
          const Eigen::Ref<const Eigen::VectorXd>& weights, int block_rows,
          double perfect_probability);

  Eigen::Index rows() const { return x_.rows(); }
  Eigen::Index cols() const { return x_.cols(); }

  // Computes the weighted means, scales and constant-column flags and
  // keeps them for the passes below. One pass over x.
  const ColumnStats& ComputeStats();
  const ColumnStats& stats() const { return stats_; }

  // Log-likelihood, gradient and information at theta (size d + 1).
  void Evaluate(const Eigen::VectorXd& theta, Evaluation& out);

  // Log-likelihood only (for step halving): about 1/d the cost of Evaluate.
  double LogLikelihood(const Eigen::VectorXd& theta);

  // Cosines along direction v (size d + 1, not zero); `threshold` decides
  // which count as strictly positive.
  DirectionMargins Margins(const Eigen::VectorXd& v, double threshold);

  // Log-odds and log-likelihood on the original scale: log-odds_i =
  // intercept + x_i · beta, exactly as a ScoringPlan computes them from an
  // encoded row. Writes probabilities if `probabilities` is not null.
  double OriginalScaleLogLikelihood(double intercept,
                                    const Eigen::VectorXd& beta,
                                    Eigen::VectorXd* probabilities) const;

 private:
  // Fills block_ with rows [start, start + n) of the standardised design
  // (leading column of ones).
  void LoadBlock(Eigen::Index start, Eigen::Index n);
  double Weight(Eigen::Index i) const {
    return unit_weights_ ? 1.0 : weights_[i];
  }

  // Borrowed, constant after construction.
  const Eigen::Ref<const RowMatrix> x_;
  const Eigen::Ref<const Eigen::VectorXd> y_;
  const Eigen::Ref<const Eigen::VectorXd> weights_;
  const bool unit_weights_;
  const Eigen::Index block_rows_;
  const double perfect_margin_;  // log-odds margin of a "perfect" row
  ColumnStats stats_;

  // Scratch of the passes.
  RowMatrix block_;
  Eigen::VectorXd eta_, residual_, sqrt_w_;
};

}  // namespace plumbline::scorer::fit_internal

#endif  // PLUMBLINE_SCORER_FIT_PASS_H_
