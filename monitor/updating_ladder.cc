// File: monitor/updating_ladder.cc
#include "monitor/updating_ladder.h"

#include <Eigen/Cholesky>
#include <algorithm>
#include <cmath>
#include <utility>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "monitor/calibration_fit.h"
#include "monitor/incomplete_gamma.h"

namespace plumbline::monitor {
namespace {

// log(1 + e^t) without overflow.
double Softplus(double t) {
  return t > 0 ? t + std::log1p(std::exp(-t)) : std::log1p(std::exp(t));
}

double RecordLogLikelihood(double z, int y) {
  return y == 1 ? -Softplus(-z) : -Softplus(z);
}

double Logistic(double z) {
  if (z >= 0) return 1.0 / (1.0 + std::exp(-z));
  const double e = std::exp(z);
  return e / (1.0 + e);
}

absl::Status CheckLabels(absl::Span<const int> labels) {
  bool zero = false, one = false;
  for (size_t i = 0; i < labels.size(); ++i) {
    if (labels[i] != 0 && labels[i] != 1) {
      return absl::InvalidArgumentError(
          absl::StrCat("labels[", i, "]: ", labels[i], " is not a 0/1 label"));
    }
    (labels[i] == 1 ? one : zero) = true;
  }
  if (!zero || !one) {
    return absl::FailedPreconditionError(
        "every label is the same: no logistic fit is defined");
  }
  return absl::OkStatus();
}

absl::Status CheckDesign(const Eigen::Ref<const LadderMatrix>& x,
                         absl::Span<const int> labels,
                         const Eigen::Ref<const Eigen::VectorXd>& prior) {
  if (x.rows() != static_cast<Eigen::Index>(labels.size())) {
    return absl::InvalidArgumentError(absl::StrCat("x has ", x.rows(),
                                                   " rows but labels has ",
                                                   labels.size(), " entries"));
  }
  if (x.cols() != prior.size()) {
    return absl::InvalidArgumentError(
        absl::StrCat("x has ", x.cols(), " columns but the prior has ",
                     prior.size(), " coefficients"));
  }
  if (!x.allFinite() || !prior.allFinite()) {
    return absl::InvalidArgumentError(
        "x and the prior coefficients must be finite");
  }
  return CheckLabels(labels);
}

// Labels as doubles, for the matrix products below.
Eigen::VectorXd LabelVector(absl::Span<const int> labels) {
  Eigen::VectorXd y(static_cast<Eigen::Index>(labels.size()));
  for (size_t i = 0; i < labels.size(); ++i) {
    y[static_cast<Eigen::Index>(i)] = labels[i];
  }
  return y;
}

// sum_i l_i at the linear predictor z.
double LogLikelihoodAt(const Eigen::VectorXd& z, const Eigen::VectorXd& y) {
  double sum = 0;
  for (Eigen::Index i = 0; i < z.size(); ++i) {
    sum += RecordLogLikelihood(z[i], y[i] > 0.5 ? 1 : 0);
  }
  return sum;
}

// Newton-Raphson on all rows of x: each iteration is three matrix products
// (the linear predictor, the gradient, X'WX as a rank update of the
// sqrt(w)-scaled rows), so it runs at Eigen's blocked speed.
RidgeTowardPrior RidgeNewton(const Eigen::Ref<const LadderMatrix>& x,
                             const Eigen::VectorXd& y, double prior_intercept,
                             const Eigen::VectorXd& prior, double lambda) {
  const Eigen::Index d = x.cols();
  RidgeTowardPrior fit;
  fit.lambda = lambda;
  double b0 = prior_intercept;
  Eigen::VectorXd beta = prior;
  auto objective_at = [&](double c, const Eigen::VectorXd& b, double* ll) {
    const Eigen::VectorXd z = (x * b).array() + c;
    *ll = LogLikelihoodAt(z, y);
    return *ll - 0.5 * lambda * (b - prior).squaredNorm();
  };
  double ll = 0;
  double objective = objective_at(b0, beta, &ll);
  Eigen::MatrixXd h(d + 1, d + 1);
  Eigen::VectorXd g(d + 1);
  LadderMatrix scaled(x.rows(), d);
  constexpr int kMaxIterations = 100;
  for (int it = 0; it < kMaxIterations; ++it) {
    // Negative Hessian and gradient of the objective, intercept first.
    const Eigen::VectorXd z = (x * beta).array() + b0;
    Eigen::VectorXd p(z.size()), w(z.size());
    for (Eigen::Index i = 0; i < z.size(); ++i) {
      p[i] = Logistic(z[i]);
      w[i] = p[i] * (1 - p[i]);
    }
    const Eigen::VectorXd r = y - p;
    g[0] = r.sum();
    g.tail(d) = x.transpose() * r - lambda * (beta - prior);
    scaled = w.cwiseSqrt().asDiagonal() * x;
    h(0, 0) = w.sum();
    h.block(1, 0, d, 1) = x.transpose() * w;
    h.block(0, 1, 1, d) = h.block(1, 0, d, 1).transpose();
    h.bottomRightCorner(d, d).setZero();
    h.bottomRightCorner(d, d).selfadjointView<Eigen::Lower>().rankUpdate(
        scaled.transpose());
    h.bottomRightCorner(d, d) =
        h.bottomRightCorner(d, d).selfadjointView<Eigen::Lower>();
    h.diagonal().tail(d).array() += lambda;
    Eigen::LDLT<Eigen::MatrixXd> ldlt(h);
    const Eigen::VectorXd step = ldlt.solve(g);
    if (!step.allFinite()) break;
    double t = 1;
    double next_b0 = 0, next_ll = 0, next_objective = 0;
    Eigen::VectorXd next_beta;
    for (int halving = 0; halving <= 30; ++halving, t *= 0.5) {
      next_b0 = b0 + t * step[0];
      next_beta = beta + t * step.tail(d);
      next_objective = objective_at(next_b0, next_beta, &next_ll);
      if (next_objective >=
          objective - 1e-14 * std::max(std::abs(objective), 1.0)) {
        break;
      }
    }
    const double change = std::abs(next_objective - objective) /
                          std::max(std::abs(next_objective), 1.0);
    b0 = next_b0;
    beta = std::move(next_beta);
    objective = next_objective;
    ll = next_ll;
    fit.iterations = it + 1;
    if ((t * step).cwiseAbs().maxCoeff() < 1e-10 || change < 1e-15) {
      fit.converged = true;
      break;
    }
  }
  fit.intercept = b0;
  fit.coefficients = std::move(beta);
  fit.log_likelihood = ll;
  fit.penalized_log_likelihood = objective;
  return fit;
}

// The rows `rows` of x and y.
void Gather(const Eigen::Ref<const LadderMatrix>& x, const Eigen::VectorXd& y,
            const std::vector<int>& rows, LadderMatrix& xs,
            Eigen::VectorXd& ys) {
  xs.resize(static_cast<Eigen::Index>(rows.size()), x.cols());
  ys.resize(static_cast<Eigen::Index>(rows.size()));
  for (size_t k = 0; k < rows.size(); ++k) {
    xs.row(static_cast<Eigen::Index>(k)) = x.row(rows[k]);
    ys[static_cast<Eigen::Index>(k)] = y[rows[k]];
  }
}

}  // namespace

absl::StatusOr<double> LogisticLogLikelihood(absl::Span<const double> log_odds,
                                             absl::Span<const int> labels) {
  if (log_odds.size() != labels.size()) {
    return absl::InvalidArgumentError(
        absl::StrCat("log_odds has ", log_odds.size(), " entries but labels ",
                     labels.size()));
  }
  double sum = 0;
  for (size_t i = 0; i < labels.size(); ++i) {
    if (labels[i] != 0 && labels[i] != 1) {
      return absl::InvalidArgumentError(
          absl::StrCat("labels[", i, "]: ", labels[i], " is not a 0/1 label"));
    }
    if (!std::isfinite(log_odds[i])) {
      return absl::InvalidArgumentError(
          absl::StrCat("log_odds[", i, "] is not finite"));
    }
    sum += RecordLogLikelihood(log_odds[i], labels[i]);
  }
  return sum;
}

absl::StatusOr<RecalibrationFit> FitInterceptRecalibration(
    absl::Span<const double> log_odds, absl::Span<const int> labels) {
  absl::StatusOr<CalibrationInterceptFit> fit =
      CalibrationIntercept(log_odds, labels);
  if (!fit.ok()) return fit.status();
  RecalibrationFit out;
  out.intercept = fit->intercept;
  out.iterations = fit->iterations;
  double ll = 0;
  for (size_t i = 0; i < labels.size(); ++i) {
    ll += RecordLogLikelihood(out.intercept + log_odds[i], labels[i]);
  }
  out.log_likelihood = ll;
  return out;
}

absl::StatusOr<RecalibrationFit> FitLogisticRecalibration(
    absl::Span<const double> log_odds, absl::Span<const int> labels) {
  absl::StatusOr<CalibrationFit> fit =
      CalibrationInterceptSlope(log_odds, labels);
  if (!fit.ok()) return fit.status();
  RecalibrationFit out;
  out.intercept = fit->intercept;
  out.slope = fit->slope;
  out.iterations = fit->iterations;
  double ll = 0;
  for (size_t i = 0; i < labels.size(); ++i) {
    ll +=
        RecordLogLikelihood(out.intercept + out.slope * log_odds[i], labels[i]);
  }
  out.log_likelihood = ll;
  return out;
}

absl::StatusOr<RidgeTowardPrior> FitRidgeTowardPrior(
    const Eigen::Ref<const LadderMatrix>& x, absl::Span<const int> labels,
    double prior_intercept, const Eigen::Ref<const Eigen::VectorXd>& prior,
    double lambda) {
  if (absl::Status s = CheckDesign(x, labels, prior); !s.ok()) return s;
  if (!(lambda > 0) || !std::isfinite(lambda) ||
      !std::isfinite(prior_intercept)) {
    return absl::InvalidArgumentError(absl::StrCat(
        "ridge toward the prior: lambda ", lambda,
        " must be > 0 and finite, and the prior intercept finite"));
  }
  RidgeTowardPrior fit = RidgeNewton(x, LabelVector(labels), prior_intercept,
                                     Eigen::VectorXd(prior), lambda);
  if (!fit.converged) {
    return absl::FailedPreconditionError(
        absl::StrCat("ridge toward the prior (lambda ", lambda,
                     ") did not converge in 100 Newton steps"));
  }
  return fit;
}

absl::StatusOr<PenaltyChoice> ChooseRidgePenalty(
    const Eigen::Ref<const LadderMatrix>& x, absl::Span<const int> labels,
    double prior_intercept, const Eigen::Ref<const Eigen::VectorXd>& prior,
    int folds, std::vector<double> grid) {
  if (absl::Status s = CheckDesign(x, labels, prior); !s.ok()) return s;
  const int64_t n = x.rows();
  if (folds < 2 || folds > n) {
    return absl::InvalidArgumentError(
        absl::StrCat("cross-validation needs 2 to ", n, " folds, not ", folds));
  }
  if (grid.empty()) {
    for (int k = -8; k <= 2; ++k) {
      grid.push_back(static_cast<double>(n) * std::pow(10.0, k / 2.0));
    }
  }
  for (double l : grid) {
    if (!(l > 0) || !std::isfinite(l)) {
      return absl::InvalidArgumentError(
          absl::StrCat("penalty grid: ", l, " is not a positive number"));
    }
  }
  PenaltyChoice choice;
  choice.folds = folds;
  choice.grid = grid;
  const Eigen::VectorXd prior_copy = prior;
  const Eigen::VectorXd y = LabelVector(labels);
  // Each fold's training and held-out rows, gathered once for every lambda.
  std::vector<LadderMatrix> train_x(static_cast<size_t>(folds)),
      test_x(static_cast<size_t>(folds));
  std::vector<Eigen::VectorXd> train_y(static_cast<size_t>(folds)),
      test_y(static_cast<size_t>(folds));
  for (int f = 0; f < folds; ++f) {
    std::vector<int> train, test;
    for (int64_t i = 0; i < n; ++i) {
      (i % folds == f ? test : train).push_back(static_cast<int>(i));
    }
    Gather(x, y, train, train_x[static_cast<size_t>(f)],
           train_y[static_cast<size_t>(f)]);
    Gather(x, y, test, test_x[static_cast<size_t>(f)],
           test_y[static_cast<size_t>(f)]);
  }
  for (double lambda : grid) {
    double held_out = 0;
    for (size_t f = 0; f < static_cast<size_t>(folds); ++f) {
      // The penalty scales with the rows fitted, so that a fold's fit
      // shrinks as much as the fit on every row would.
      const double fold_lambda = lambda *
                                 static_cast<double>(train_x[f].rows()) /
                                 static_cast<double>(n);
      RidgeTowardPrior fit = RidgeNewton(
          train_x[f], train_y[f], prior_intercept, prior_copy, fold_lambda);
      const Eigen::VectorXd z =
          (test_x[f] * fit.coefficients).array() + fit.intercept;
      held_out += LogLikelihoodAt(z, test_y[f]);
    }
    choice.cv_log_likelihood.push_back(held_out);
  }
  size_t best = 0;
  for (size_t k = 1; k < grid.size(); ++k) {
    const double a = choice.cv_log_likelihood[k];
    const double b = choice.cv_log_likelihood[best];
    if (a > b || (a == b && grid[k] > grid[best])) best = k;
  }
  choice.lambda = grid[best];
  return choice;
}

absl::StatusOr<LikelihoodRatioTest> LikelihoodRatio(double ll_larger,
                                                    double ll_smaller,
                                                    double df) {
  if (!std::isfinite(ll_larger) || !std::isfinite(ll_smaller) || !(df > 0) ||
      !std::isfinite(df)) {
    return absl::InvalidArgumentError(
        absl::StrCat("likelihood ratio: log-likelihoods ", ll_larger, " and ",
                     ll_smaller, " must be finite and df ", df, " positive"));
  }
  LikelihoodRatioTest t;
  t.statistic = std::max(0.0, 2.0 * (ll_larger - ll_smaller));
  t.df = df;
  absl::StatusOr<double> p = ChiSquareSurvival(t.statistic, df);
  if (!p.ok()) return p.status();
  t.p_value = *p;
  return t;
}

const char* RungName(int rung) {
  switch (rung) {
    case 1:
      return "intercept recalibration";
    case 2:
      return "logistic recalibration";
    case 3:
      return "ridge toward the active coefficients";
    case 4:
      return "full re-estimation";
    default:
      return "the active version";
  }
}

absl::StatusOr<LadderChoice> ChooseRung(double active_log_likelihood,
                                        absl::Span<const RungFit> rungs,
                                        double alpha) {
  if (rungs.size() != 4) {
    return absl::InvalidArgumentError(
        absl::StrCat("the ladder has 4 rungs, not ", rungs.size()));
  }
  if (!(alpha > 0 && alpha < 1)) {
    return absl::InvalidArgumentError(
        absl::StrCat("alpha ", alpha, " is not between 0 and 1"));
  }
  LadderChoice c;
  c.alpha = alpha;
  auto rung = [&](int k) -> const RungFit& {
    return rungs[static_cast<size_t>(k - 1)];
  };
  auto test = [&](int larger, int smaller) -> absl::StatusOr<LadderTest> {
    const double ll_s =
        smaller == 0 ? active_log_likelihood : rung(smaller).log_likelihood;
    const double df_s = smaller == 0 ? 0 : rung(smaller).df;
    absl::StatusOr<LikelihoodRatioTest> t = LikelihoodRatio(
        rung(larger).log_likelihood, ll_s, rung(larger).df - df_s);
    if (!t.ok()) return t.status();
    return LadderTest{larger, smaller, *t, t->p_value < alpha};
  };
  for (int k = 1; k <= 4; ++k) {
    if (!rung(k).fitted) continue;
    absl::StatusOr<LadderTest> t = test(k, 0);
    if (!t.ok()) return t.status();
    c.against_active.push_back(*t);
    const RungFit& r = rung(k);
    if (c.top == 0 || r.df > rung(c.top).df ||
        (r.df == rung(c.top).df &&
         r.log_likelihood > rung(c.top).log_likelihood)) {
      c.top = k;
    }
  }
  if (c.top == 0) {
    return absl::FailedPreconditionError("no rung of the ladder was fitted");
  }
  for (const LadderTest& t : c.against_active) {
    if (t.rung == c.top) c.steps.push_back(t);
  }
  for (int j = 1; j <= 4; ++j) {
    if (j == c.top || !rung(j).fitted || rung(j).df >= rung(c.top).df) {
      continue;
    }
    absl::StatusOr<LadderTest> t = test(c.top, j);
    if (!t.ok()) return t.status();
    c.steps.push_back(*t);
  }
  c.chosen = c.top;
  for (size_t s = 0; s < c.steps.size(); ++s) {
    if (!c.steps[s].significant) {
      c.chosen = c.steps[s].against;
      c.decided_by = static_cast<int>(s);
      break;
    }
  }
  const LadderTest* decisive =
      c.decided_by >= 0 ? &c.steps[static_cast<size_t>(c.decided_by)] : nullptr;
  if (c.chosen == 0) {
    c.reason = absl::StrFormat(
        "rung %d (%s) is not significantly better than the active version "
        "(LR %.3f, df %g, p %.4g >= alpha %g): keep the active version",
        c.top, RungName(c.top), decisive->test.statistic, decisive->test.df,
        decisive->test.p_value, alpha);
  } else if (decisive != nullptr) {
    c.reason = absl::StrFormat(
        "rung %d (%s) beats the active version but not rung %d (LR %.3f, "
        "df %g, p %.4g >= alpha %g): rung %d, %s",
        c.top, RungName(c.top), c.chosen, decisive->test.statistic,
        decisive->test.df, decisive->test.p_value, alpha, c.chosen,
        RungName(c.chosen));
  } else {
    c.reason = absl::StrFormat(
        "rung %d (%s) is significantly better than the active version and "
        "than every rung below it at alpha %g: rung %d",
        c.top, RungName(c.top), alpha, c.top);
  }
  return c;
}

}  // namespace plumbline::monitor
