#include "monitor/incomplete_gamma.h"

#include <cmath>
#include <limits>

#include "absl/status/status.h"
#include "absl/strings/str_format.h"

namespace plumbline::monitor {
namespace {

constexpr double kEpsilon = std::numeric_limits<double>::epsilon();
constexpr double kTiny = 1e-300;  // keeps Lentz's denominators off zero
constexpr int kMaxIterations = 100000;

// log(1 + t) - t, accurate also for small |t| where the difference cancels.
double Log1pMinus(double t) {
  if (std::abs(t) > 0.25) return std::log1p(t) - t;
  // -t^2/2 + t^3/3 - t^4/4 + ...
  double term = -t * t;
  double sum = 0;
  for (int k = 2; k < 200; ++k) {
    const double add = term / k;
    sum += add;
    if (std::abs(add) <= kEpsilon * std::abs(sum)) break;
    term *= -t;
  }
  return sum;
}

// Stirling's correction lgamma(a) - ((a - 1/2) log a - a + log(2 pi) / 2),
// by its asymptotic series (coefficients B_2k / (2k (2k - 1)) from the
// Bernoulli numbers); accurate to ~1e-17 for a >= 10.
double StirlingCorrection(double a) {
  const double r = 1.0 / a;
  const double r2 = r * r;
  return r * (1.0 / 12 +
              r2 * (-1.0 / 360 +
                    r2 * (1.0 / 1260 +
                          r2 * (-1.0 / 1680 +
                                r2 * (1.0 / 1188 + r2 * (-691.0 / 360360 +
                                                         r2 * (1.0 / 156)))))));
}

// x^a e^-x / Gamma(a), the factor common to the series and the continued
// fraction.
double Prefactor(double a, double x) {
  if (a < 10) {
    // Directly while e^-x is a normal double: exp, pow and tgamma are each
    // within an ulp or two, where exp(a log x - x - lgamma a) would lose
    // |x| ulps to the rounding of its argument.
    if (x < 700) return std::pow(x, a) * std::exp(-x) / std::tgamma(a);
    return std::exp(a * std::log(x) - x - std::lgamma(a));
  }
  // log of it = a (log(x/a) - (x - a)/a) + log(a / 2pi) / 2 -
  // StirlingCorrection(a): no large terms cancel, so the exponent keeps its
  // relative accuracy.
  const double t = (x - a) / a;
  constexpr double kTwoPi = 6.283185307179586476925286766559;
  return std::exp(a * Log1pMinus(t) + 0.5 * std::log(a / kTwoPi) -
                  StirlingCorrection(a));
}

// P(a, x) by the series e^-x x^a / Gamma(a+1) * sum x^n / ((a+1)...(a+n)).
absl::StatusOr<double> LowerBySeries(double a, double x) {
  double term = 1.0 / a;
  double sum = term;
  double denominator = a;
  for (int n = 1; n < kMaxIterations; ++n) {
    denominator += 1;
    term *= x / denominator;
    sum += term;
    if (std::abs(term) < std::abs(sum) * kEpsilon) {
      return sum * Prefactor(a, x);
    }
  }
  return absl::InternalError(absl::StrFormat(
      "incomplete gamma: series for P(%g, %g) did not converge", a, x));
}

// Q(a, x) by the continued fraction
//   e^-x x^a / Gamma(a) * 1 / (x + 1 - a - 1 (1 - a) / (x + 3 - a - ...)),
// evaluated front to back by the modified Lentz algorithm.
absl::StatusOr<double> UpperByContinuedFraction(double a, double x) {
  double b = x + 1 - a;
  double c = 1 / kTiny;
  double d = 1 / b;
  double h = d;
  for (int i = 1; i < kMaxIterations; ++i) {
    const double an = -i * (i - a);
    b += 2;
    d = an * d + b;
    if (std::abs(d) < kTiny) d = kTiny;
    c = b + an / c;
    if (std::abs(c) < kTiny) c = kTiny;
    d = 1 / d;
    const double delta = d * c;
    h *= delta;
    if (std::abs(delta - 1) < kEpsilon) {
      return h * Prefactor(a, x);
    }
  }
  return absl::InternalError(absl::StrFormat(
      "incomplete gamma: continued fraction for Q(%g, %g) did not converge", a,
      x));
}

}  // namespace

absl::StatusOr<double> RegularizedUpperGamma(double a, double x) {
  if (!(a > 0) || std::isinf(a) || !(x >= 0)) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "incomplete gamma Q(a, x) needs a > 0 finite and x >= 0; got a = %g, "
        "x = %g",
        a, x));
  }
  if (x == 0) return 1.0;
  if (std::isinf(x)) return 0.0;
  if (x < a + 1) {
    absl::StatusOr<double> p = LowerBySeries(a, x);
    if (!p.ok()) return p.status();
    return 1.0 - *p;
  }
  return UpperByContinuedFraction(a, x);
}

absl::StatusOr<double> ChiSquareSurvival(double x, double dof) {
  if (!(dof > 0) || std::isnan(x)) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "chi-square survival needs dof > 0 and a number x; got dof = %g, "
        "x = %g",
        dof, x));
  }
  if (x <= 0) return 1.0;
  return RegularizedUpperGamma(dof / 2, x / 2);
}

}  // namespace plumbline::monitor
