// File: monitor/stability_significance.h
//
// Whether a population stability index is larger than sampling noise alone
// would make it, at the counts the PSI was computed from. The drift policy
// flags a score or feature only when its PSI is both significant here and
// above the configured effect size (callers: the daemon's health evaluation).
//
// Under stability (baseline and window drawn from one distribution over B
// bins), with n baseline records and m window records,
//
//   PSI / (1/n + 1/m)  ~  chi-square with B - 1 degrees of freedom
//
// asymptotically (Yurdakul & Naranjo 2020, on the sampling distribution of
// the population stability index). So the p-value is the chi-square upper
// tail at that statistic, and the PSI that is just significant at level
// alpha is chi2_isf(alpha, B - 1) * (1/n + 1/m). A baseline treated as known
// exactly is the limit n -> infinity (statistic m * PSI).
//
//   absl::StatusOr<PsiSignificance> s = monitor::TestPsi(
//       {.psi = 0.031, .baseline_count = 20000, .window_count = 5000,
//        .bins = 10},
//       /*alpha=*/0.01);
//   if (s.ok() && s->p_value < 0.01 && psi > effect_size) { ... }
//
// B is the number of bins with a non-zero baseline proportion. The empty-bin
// floor of monitor/stability.h (1e-4) is a small-count rule outside the
// asymptotics: a bin that is empty on one side inflates the statistic, so
// counts of a few records per bin make the test anti-conservative (common
// practice, no source: keep about 5 or more expected records per bin).
//
// The p-value uses monitor/incomplete_gamma.h (the project's chi-square
// tail, checked against SciPy). The critical value inverts the tail with
// Boost.Math's gamma_q_inv (header-only, Debian libboost-dev): inverting by
// hand would need a careful bracketed Newton iteration on the tail we have,
// and Boost.Math already ships one that is tested to a few ulps. Boost's
// errors are turned into return values (no exceptions escape).
// Thread-safe (pure functions).
#ifndef PLUMBLINE_MONITOR_STABILITY_SIGNIFICANCE_H_
#define PLUMBLINE_MONITOR_STABILITY_SIGNIFICANCE_H_

#include <cstdint>

#include "absl/status/statusor.h"

namespace plumbline::monitor {

// What a PSI was computed from.
struct PsiCounts {
  double psi = 0;              // >= 0, finite
  int64_t baseline_count = 0;  // n: records the baseline was measured on
  int64_t window_count = 0;    // m: non-missing records of the window
  int bins = 0;                // B >= 2: bins with baseline proportion > 0
};

struct PsiSignificance {
  double statistic = 0;        // psi / (1/n + 1/m)
  int degrees_of_freedom = 0;  // B - 1
  double p_value = 1;          // chi-square upper tail at `statistic`
  double alpha = 0;            // the level asked for
  double critical_psi = 0;     // PSI with p-value exactly alpha at n, m, B
  bool significant = false;    // p_value < alpha
};

// INVALID_ARGUMENT naming the field when psi < 0 or not finite, a count
// < 1, bins < 2, or alpha outside (0, 1); INTERNAL if the chi-square tail or
// its inverse fails (not seen for B <= 1e6).
absl::StatusOr<PsiSignificance> TestPsi(const PsiCounts& counts, double alpha);

// x with P(X > x) = upper_tail for X chi-square with `dof` degrees of
// freedom (scipy.stats.chi2.isf). INVALID_ARGUMENT unless 0 < upper_tail < 1
// and dof > 0 finite.
absl::StatusOr<double> ChiSquareUpperQuantile(double upper_tail, double dof);

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_STABILITY_SIGNIFICANCE_H_
