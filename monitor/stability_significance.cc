#include "monitor/stability_significance.h"

#include <cerrno>
#include <cmath>

#include "absl/status/status.h"
#include "absl/strings/str_format.h"
#include "boost/math/policies/policy.hpp"
#include "boost/math/special_functions/gamma.hpp"
#include "monitor/incomplete_gamma.h"

namespace plumbline::monitor {
namespace {

// Boost.Math reports domain, overflow and evaluation errors through errno
// and a NaN or infinite result instead of throwing.
using NoThrowPolicy = boost::math::policies::policy<
    boost::math::policies::domain_error<boost::math::policies::errno_on_error>,
    boost::math::policies::pole_error<boost::math::policies::errno_on_error>,
    boost::math::policies::overflow_error<
        boost::math::policies::errno_on_error>,
    boost::math::policies::evaluation_error<
        boost::math::policies::errno_on_error>>;

}  // namespace

absl::StatusOr<double> ChiSquareUpperQuantile(double upper_tail, double dof) {
  if (!(upper_tail > 0 && upper_tail < 1) || !(dof > 0) || std::isinf(dof)) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "chi-square quantile needs 0 < upper tail < 1 and finite dof > 0; got "
        "upper tail %g, dof %g",
        upper_tail, dof));
  }
  // Q(dof/2, x/2) = upper_tail  <=>  x = 2 * gamma_q_inv(dof/2, upper_tail).
  errno = 0;
  const double half =
      boost::math::gamma_q_inv(dof / 2, upper_tail, NoThrowPolicy());
  if (errno != 0 || !std::isfinite(half)) {
    return absl::InternalError(absl::StrFormat(
        "chi-square quantile: Boost.Math gamma_q_inv(%g, %g) failed", dof / 2,
        upper_tail));
  }
  return 2 * half;
}

absl::StatusOr<PsiSignificance> TestPsi(const PsiCounts& counts, double alpha) {
  if (!(counts.psi >= 0) || std::isinf(counts.psi)) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "PSI test: psi is %g; it must be finite and >= 0", counts.psi));
  }
  if (counts.baseline_count < 1 || counts.window_count < 1) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "PSI test: baseline_count is %d and window_count %d; both must be "
        ">= 1",
        counts.baseline_count, counts.window_count));
  }
  if (counts.bins < 2) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "PSI test: bins is %d; it must be at least 2", counts.bins));
  }
  if (!(alpha > 0 && alpha < 1)) {
    return absl::InvalidArgumentError(
        absl::StrFormat("PSI test: alpha is %g; it must lie in (0, 1)", alpha));
  }
  const double scale = 1.0 / static_cast<double>(counts.baseline_count) +
                       1.0 / static_cast<double>(counts.window_count);
  PsiSignificance result;
  result.alpha = alpha;
  result.degrees_of_freedom = counts.bins - 1;
  result.statistic = counts.psi / scale;
  absl::StatusOr<double> p =
      ChiSquareSurvival(result.statistic, result.degrees_of_freedom);
  if (!p.ok()) return p.status();
  result.p_value = *p;
  absl::StatusOr<double> critical =
      ChiSquareUpperQuantile(alpha, result.degrees_of_freedom);
  if (!critical.ok()) return critical.status();
  result.critical_psi = *critical * scale;
  result.significant = result.p_value < alpha;
  return result;
}

}  // namespace plumbline::monitor
