#include "monitor/calibration_fit.h"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <cstddef>
#include <utility>
#include <vector>

#include "absl/status/status.h"
#include "absl/strings/str_format.h"
#include "monitor/compensated_sum.h"
#include "monitor/input_check.h"
#include "scorer/logistic.h"

namespace plumbline::monitor {
namespace {

constexpr int kMaxNewtonSteps = 100;
constexpr int kMaxHalvings = 60;
// A step this small relative to the parameters ends the iteration; Newton's
// quadratic convergence puts the estimate at rounding level one step later,
// which the final step taken has already done.
constexpr double kStepTolerance = 1e-11;

// The model in centred form: eta = alpha + beta * (log_odds - centre).
struct Centred {
  absl::Span<const LogOddsGroup> groups;
  double centre = 0;

  double LogLikelihood(const Eigen::Vector2d& theta) const {
    double ll = 0;
    for (const LogOddsGroup& g : groups) {
      const double eta = theta[0] + theta[1] * (g.log_odds - centre);
      ll += static_cast<double>(g.positives) * LogLogistic(eta) +
            static_cast<double>(g.negatives) * LogLogistic(-eta);
    }
    return ll;
  }

  // Gradient of the log-likelihood and Fisher information at theta.
  void Derivatives(const Eigen::Vector2d& theta, Eigen::Vector2d& gradient,
                   Eigen::Matrix2d& information) const {
    gradient.setZero();
    information.setZero();
    for (const LogOddsGroup& g : groups) {
      const double x = g.log_odds - centre;
      const double p = Logistic(theta[0] + theta[1] * x);
      const double n = static_cast<double>(g.positives + g.negatives);
      const double residual = static_cast<double>(g.positives) - n * p;
      const double w = n * p * (1.0 - p);
      gradient[0] += residual;
      gradient[1] += residual * x;
      information(0, 0) += w;
      information(0, 1) += w * x;
      information(1, 1) += w * x * x;
    }
    information(1, 0) = information(0, 1);
  }
};

bool Invertible(const Eigen::Matrix2d& information) {
  const double det = information.determinant();
  return std::isfinite(det) && det > 0 && information(0, 0) > 0;
}

absl::Status NotConverged(int steps, absl::string_view why) {
  return absl::FailedPreconditionError(absl::StrFormat(
      "calibration intercept/slope fit did not converge after %d Newton "
      "steps (%s); the log-odds probably separate the outcomes perfectly",
      steps, why));
}

// Groups of equal log-odds from records.
std::vector<LogOddsGroup> Grouped(absl::Span<const double> log_odds,
                                  absl::Span<const int> labels) {
  std::vector<std::pair<double, int>> sorted(log_odds.size());
  for (size_t i = 0; i < log_odds.size(); ++i) {
    sorted[i] = {log_odds[i], labels[i]};
  }
  std::sort(sorted.begin(), sorted.end());
  std::vector<LogOddsGroup> groups;
  for (const auto& [z, label] : sorted) {
    if (groups.empty() || groups.back().log_odds != z)
      groups.push_back({z, 0, 0});
    (label == 1 ? groups.back().positives : groups.back().negatives) += 1;
  }
  return groups;
}

}  // namespace

absl::StatusOr<CalibrationInterceptFit> CalibrationIntercept(
    absl::Span<const double> log_odds, absl::Span<const int> labels) {
  if (absl::Status s = internal::CheckLabelledScores(
          "calibration intercept", log_odds, labels,
          internal::ScoreKind::kFiniteLogOdds);
      !s.ok()) {
    return s;
  }
  return FitCalibrationInterceptGroups(Grouped(log_odds, labels));
}

absl::StatusOr<CalibrationInterceptFit> FitCalibrationInterceptGroups(
    absl::Span<const LogOddsGroup> groups) {
  int64_t positives = 0, total = 0;
  for (const LogOddsGroup& g : groups) {
    positives += g.positives;
    total += g.positives + g.negatives;
  }
  if (total == 0) {
    return absl::FailedPreconditionError(
        "calibration intercept is undefined: no labelled records");
  }
  if (positives == 0 || positives == total) {
    return absl::FailedPreconditionError(absl::StrFormat(
        "calibration intercept is undefined: all %d labelled records have "
        "label %d",
        total, positives == 0 ? 0 : 1));
  }
  // The log-likelihood a -> sum n_pos log s(a + z) + n_neg log s(-a - z) is
  // strictly concave, so Newton with step halving converges from a = 0.
  auto log_likelihood = [&](double a) {
    CompensatedSum ll;
    for (const LogOddsGroup& g : groups) {
      ll.Add(static_cast<double>(g.positives) * LogLogistic(a + g.log_odds) +
             static_cast<double>(g.negatives) * LogLogistic(-a - g.log_odds));
    }
    return ll.Value();
  };
  auto derivatives = [&](double a, double& gradient, double& information) {
    CompensatedSum grad, info;
    for (const LogOddsGroup& g : groups) {
      const double p = Logistic(a + g.log_odds);
      const double n = static_cast<double>(g.positives + g.negatives);
      grad.Add(static_cast<double>(g.positives) - n * p);
      info.Add(n * p * (1 - p));
    }
    gradient = grad.Value();
    information = info.Value();
  };
  double a = 0;
  double ll = log_likelihood(a);
  for (int step = 1; step <= kMaxNewtonSteps; ++step) {
    double gradient = 0, information = 0;
    derivatives(a, gradient, information);
    if (!(information > 0)) return NotConverged(step, "zero information");
    const double delta = gradient / information;
    double scale = 1.0;
    double next = a + delta;
    double next_ll = log_likelihood(next);
    const double slack = 1e-12 * (std::abs(ll) + 1.0);
    for (int h = 0; h < kMaxHalvings && !(next_ll >= ll - slack); ++h) {
      scale /= 2;
      next = a + scale * delta;
      next_ll = log_likelihood(next);
    }
    const bool small =
        std::abs(scale * delta) <= kStepTolerance * (1 + std::abs(a));
    a = next;
    ll = next_ll;
    if (!std::isfinite(a)) return NotConverged(step, "estimate overflowed");
    if (small) {
      derivatives(a, gradient, information);
      if (!(information > 0)) {
        return NotConverged(step, "zero information at the estimate");
      }
      CalibrationInterceptFit fit;
      fit.intercept = a;
      fit.standard_error = 1 / std::sqrt(information);
      fit.iterations = step;
      return fit;
    }
  }
  return NotConverged(kMaxNewtonSteps, "step still large");
}

absl::StatusOr<CalibrationFit> CalibrationInterceptSlope(
    absl::Span<const double> log_odds, absl::Span<const int> labels) {
  if (absl::Status s = internal::CheckLabelledScores(
          "calibration intercept/slope", log_odds, labels,
          internal::ScoreKind::kFiniteLogOdds);
      !s.ok()) {
    return s;
  }
  return FitCalibrationGroups(Grouped(log_odds, labels));
}

absl::StatusOr<CalibrationFit> FitCalibrationGroups(
    absl::Span<const LogOddsGroup> groups) {
  int64_t positives = 0, total = 0;
  CompensatedSum weighted_log_odds;
  double lowest = 0, highest = 0;
  bool first = true;
  for (const LogOddsGroup& g : groups) {
    const int64_t n = g.positives + g.negatives;
    if (n == 0) continue;
    positives += g.positives;
    total += n;
    weighted_log_odds.Add(static_cast<double>(n) * g.log_odds);
    lowest = first ? g.log_odds : std::min(lowest, g.log_odds);
    highest = first ? g.log_odds : std::max(highest, g.log_odds);
    first = false;
  }
  if (total == 0) {
    return absl::FailedPreconditionError(
        "calibration intercept/slope is undefined: no labelled records");
  }
  if (positives == 0 || positives == total) {
    return absl::FailedPreconditionError(absl::StrFormat(
        "calibration intercept/slope is undefined: all %d labelled records "
        "have label %d",
        total, positives == 0 ? 0 : 1));
  }
  if (lowest == highest) {
    return absl::FailedPreconditionError(absl::StrFormat(
        "calibration slope is undefined: all %d records have log-odds %g",
        total, lowest));
  }

  const Centred model{groups,
                      weighted_log_odds.Value() / static_cast<double>(total)};
  // Start at the perfectly calibrated model, intercept 0 and slope 1.
  Eigen::Vector2d theta(model.centre, 1.0);
  double ll = model.LogLikelihood(theta);
  Eigen::Vector2d gradient;
  Eigen::Matrix2d information;
  for (int step = 1; step <= kMaxNewtonSteps; ++step) {
    model.Derivatives(theta, gradient, information);
    if (!Invertible(information)) return NotConverged(step, "singular Hessian");
    const Eigen::Vector2d delta = information.ldlt().solve(gradient);
    // Step halving keeps the log-likelihood from falling (a full Newton step
    // can overshoot far from the optimum).
    double scale = 1.0;
    Eigen::Vector2d next = theta + delta;
    double next_ll = model.LogLikelihood(next);
    const double slack = 1e-12 * (std::abs(ll) + 1.0);
    for (int h = 0; h < kMaxHalvings && !(next_ll >= ll - slack); ++h) {
      scale /= 2;
      next = theta + scale * delta;
      next_ll = model.LogLikelihood(next);
    }
    const bool small =
        std::abs(scale * delta[0]) <=
            kStepTolerance * (1 + std::abs(theta[0])) &&
        std::abs(scale * delta[1]) <= kStepTolerance * (1 + std::abs(theta[1]));
    theta = next;
    ll = next_ll;
    if (!std::isfinite(theta[0]) || !std::isfinite(theta[1])) {
      return NotConverged(step, "estimates overflowed");
    }
    if (small) {
      model.Derivatives(theta, gradient, information);
      if (!Invertible(information)) {
        return NotConverged(step, "singular Hessian at the estimate");
      }
      const Eigen::Matrix2d covariance = information.inverse();
      const double c = model.centre;
      CalibrationFit fit;
      fit.slope = theta[1];
      fit.intercept = theta[0] - theta[1] * c;
      fit.slope_standard_error = std::sqrt(covariance(1, 1));
      fit.intercept_standard_error =
          std::sqrt(covariance(0, 0) + c * c * covariance(1, 1) -
                    2 * c * covariance(0, 1));
      fit.iterations = step;
      return fit;
    }
  }
  return NotConverged(kMaxNewtonSteps, "step still large");
}

}  // namespace plumbline::monitor
