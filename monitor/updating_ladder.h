// File: monitor/updating_ladder.h
//
// The updating ladder of a refit: four ways of updating a logistic model to
// new data, from the smallest change to the largest, and the closed testing
// procedure that chooses among them (Vergouwe et al. 2017, Stat Med
// 36(28):4529-4539, "A closed testing procedure to select an appropriate
// method for updating prediction models"; cited from memory).
//
//   rung 1  intercept-only recalibration: logit P = a + z, z the active
//           version's log-odds as an offset (1 parameter);
//   rung 2  logistic recalibration: logit P = a + b z (2 parameters);
//   rung 3  re-estimation of every coefficient on the active version's
//           encoding with a ridge penalty toward its coefficients,
//           lambda/2 ||beta - beta_active||^2, intercept free; lambda by
//           K-fold cross-validated log-likelihood on the training part;
//   rung 4  full re-estimation with re-learned transforms (scorer/fit.h;
//           the caller fits it and passes its log-likelihood in).
//
// Rungs 1 and 2 are monitor/calibration_fit.h's fits (checked against
// statsmodels there and again here). Every log-likelihood is unpenalised
// and on the same training records, so likelihood-ratio statistics compare
// them; p-values are chi-square tails (monitor/incomplete_gamma.h).
//
//   absl::StatusOr<RecalibrationFit> r1 = FitInterceptRecalibration(z, y);
//   absl::StatusOr<RidgeTowardPrior> r3 = FitRidgeTowardPrior(x, y, b0, b, l);
//   absl::StatusOr<LadderChoice> c = ChooseRung(ll_active, rungs, 0.05);
//
// Called by plumbd's refit job (daemon/refit/job.h), which builds the
// candidate set of the chosen rung. Thread-safe: pure functions; no threads.
// Errors are absl::Status values: INVALID_ARGUMENT for malformed input
// (sizes, labels not 0/1, non-finite numbers, alpha outside (0, 1)),
// FAILED_PRECONDITION when a fit is undefined (one class only).
#ifndef PLUMBLINE_MONITOR_UPDATING_LADDER_H_
#define PLUMBLINE_MONITOR_UPDATING_LADDER_H_

#include <Eigen/Core>
#include <cstdint>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/types/span.h"

namespace plumbline::monitor {

// Row-major, as scorer::RowMatrix (the same type).
using LadderMatrix =
    Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;

// sum_i [y_i log p_i + (1 - y_i) log(1 - p_i)], p_i = logistic(z_i),
// computed without overflow. INVALID_ARGUMENT for different sizes, a label
// not 0/1 or a non-finite log-odds.
absl::StatusOr<double> LogisticLogLikelihood(absl::Span<const double> log_odds,
                                             absl::Span<const int> labels);

// Rungs 1 and 2: new log-odds = intercept + slope * z.
struct RecalibrationFit {
  double intercept = 0;
  double slope = 1;  // exactly 1 for rung 1
  double log_likelihood = 0;
  int iterations = 0;
};
absl::StatusOr<RecalibrationFit> FitInterceptRecalibration(
    absl::Span<const double> log_odds, absl::Span<const int> labels);
absl::StatusOr<RecalibrationFit> FitLogisticRecalibration(
    absl::Span<const double> log_odds, absl::Span<const int> labels);

// Rung 3 at one penalty: maximises
//   sum_i l_i(b0 + x_i . beta) - (lambda / 2) ||beta - prior||^2
// by Newton-Raphson from (prior_intercept, prior), halving steps that lower
// it. Written here rather than through scorer/fit.h because that fitter
// penalises toward zero and refuses the collinear one-hot columns a serving
// encoding has (every level, no reference dropped), which the penalty
// toward the prior makes well defined.
struct RidgeTowardPrior {
  double intercept = 0;
  Eigen::VectorXd coefficients;
  double lambda = 0;
  double log_likelihood = 0;            // unpenalised
  double penalized_log_likelihood = 0;  // the objective above
  int iterations = 0;
  bool converged = false;
};
// REQUIRES nothing: x n x d, labels n, prior d, lambda > 0 finite are
// checked (INVALID_ARGUMENT otherwise).
absl::StatusOr<RidgeTowardPrior> FitRidgeTowardPrior(
    const Eigen::Ref<const LadderMatrix>& x, absl::Span<const int> labels,
    double prior_intercept, const Eigen::Ref<const Eigen::VectorXd>& prior,
    double lambda);

// The penalty of rung 3, chosen by K-fold cross-validation on the training
// part: row i belongs to fold i mod K; for every lambda of the grid the
// held-out log-likelihood summed over the folds; the largest wins (ties:
// the larger lambda, the smaller change). The default grid is
// lambda = n * 10^(k/2), k = -8 .. 2 (n = rows): penalties from
// negligible to one that holds the coefficients at the prior.
struct PenaltyChoice {
  double lambda = 0;
  int folds = 0;
  std::vector<double> grid;
  std::vector<double> cv_log_likelihood;  // one per grid entry
};
absl::StatusOr<PenaltyChoice> ChooseRidgePenalty(
    const Eigen::Ref<const LadderMatrix>& x, absl::Span<const int> labels,
    double prior_intercept, const Eigen::Ref<const Eigen::VectorXd>& prior,
    int folds = 5, std::vector<double> grid = {});

// 2 (ll_larger - ll_smaller) against chi-square(df). A statistic below 0
// (rounding, or a penalised fit below the model it should contain) counts
// as 0 (p = 1). INVALID_ARGUMENT for df <= 0 or non-finite inputs.
struct LikelihoodRatioTest {
  double statistic = 0;
  double df = 0;
  double p_value = 1;
};
absl::StatusOr<LikelihoodRatioTest> LikelihoodRatio(double ll_larger,
                                                    double ll_smaller,
                                                    double df);

// One rung's fit on the training part, as ChooseRung judges it.
struct RungFit {
  bool fitted = false;  // false: the rung could not be fitted
  double log_likelihood = 0;
  double df = 0;  // parameters counted (rung 1: 1, rung 2: 2, 3 and 4: p)
};

struct LadderTest {
  int rung = 0;     // the larger model
  int against = 0;  // the smaller one; 0 = the active version
  LikelihoodRatioTest test;
  bool significant = false;  // p_value < alpha
};

struct LadderChoice {
  int chosen = 0;  // 0: keep the active version; else the rung, 1..4
  int top = 0;     // the rung the closed test starts from
  double alpha = 0.05;
  // Every fitted rung against the active version (df = the rung's df).
  std::vector<LadderTest> against_active;
  // The closed test: top against the active version, then against each
  // fitted rung with fewer df, lowest first; `decided_by` indexes the step
  // that decided (-1: every step was significant, top chosen).
  std::vector<LadderTest> steps;
  int decided_by = -1;
  std::string reason;  // for people
};

// The closed testing procedure. `rungs` holds rungs 1..4 in order. The
// top is the fitted rung with the most df; rungs 3 and 4 have the same df
// by convention, so between them the higher training log-likelihood is the
// top (a tie keeps rung 3, which keeps the active transforms). Then:
//   top vs active not significant           -> 0 (keep the active version);
//   else, for each lower rung j (fewer df), lowest first:
//     top vs j not significant              -> j;
//   every step significant                  -> top.
// FAILED_PRECONDITION when no rung was fitted; INVALID_ARGUMENT for alpha
// outside (0, 1) or a rungs span that is not 4 long.
absl::StatusOr<LadderChoice> ChooseRung(double active_log_likelihood,
                                        absl::Span<const RungFit> rungs,
                                        double alpha);

// "intercept recalibration", "logistic recalibration", "ridge toward the
// active coefficients", "full re-estimation"; 0: "the active version".
const char* RungName(int rung);

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_UPDATING_LADDER_H_
