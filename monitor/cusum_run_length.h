// File: monitor/cusum_run_length.h
//
// Average run length (ARL: records from a fresh start to the first alarm) of
// a risk-adjusted CUSUM (monitor/risk_adjusted_cusum.h), and the control
// limit h that gives a stated in-control ARL. The daemon calls
// ChooseControlLimit once per set version at load time, with the risk
// distribution of the set's score baseline, and shows the limit and its ARL;
// the benchmark also uses AverageRunLength for shifted truths.
//
//   absl::StatusOr<RiskDistribution> risks =
//       RiskDistribution::FromLogOdds(baseline_log_odds);
//   absl::StatusOr<ControlLimit> h = ChooseControlLimit(
//       LogOddsChange::OddsRatio(1.5), /*in_control_arl=*/100000, *risks);
//   // h->limit, h->arl.value (~100000), h->arl.discretisation_error
//
// Method: the Markov-chain approximation Steiner et al. (2000) use (after
// Brook & Evans 1972). The chart value lives on a lattice of M + 1 points
// 0, d, ..., M d = h; each record's W is spread over its two neighbouring
// lattice points with the probabilities that keep its mean (W/d = k + f goes
// to k with probability 1 - f and to k + 1 with probability f), which makes
// the approximation converge smoothly as d shrinks (rounding W to the
// nearest point instead gives errors of a few percent that do not shrink
// steadily: measured in a NumPy prototype). Values at or below 0 go to
// state 0, values at or above h are the alarm (absorbing). The ARL from 0
// solves (I - Q) L = 1 (Eigen LU; Q is banded plus the column of
// returns to 0). It is computed at M and M/2 states and extrapolated as
// 2 L_M - L_{M/2} (Richardson, first order, since the error shrinks about
// as d); `discretisation_error` = |L_M - L_{M/2}|, the error of the
// unextrapolated value, is an upper estimate of the error that remains.
// Measured with M = 1000 on a normal spread of risks: the stated error is
// 0.16% of the ARL at ARL 500, 0.4% at 10^4, 0.9% at 10^5 and 2% at 10^6
// (it grows with h because the step d = h / M does), while the
// extrapolated value moves by only about a quarter of the stated error
// when M goes to 4000. In the tests it agrees with Monte Carlo simulations
// (C++ and NumPy) within their 0.5-2% sampling error. Raise lattice_states
// for tighter figures at large ARL.
//
// The in-control truth is the model itself: outcome probability p for a
// record of predicted risk p. A `truth` other than the identity gives the
// out-of-control ARL (expected records to detection from a fresh start)
// under that change.
//
// The risk distribution matters: the in-control ARL of a chart with a given
// h depends on the mix of predicted risks the model will see. Build it from
// the set's score baseline (the fitted log-odds, or their histogram via
// FromProbabilityHistogram); if the live mix moves away, the stability
// tests (monitor/stability_significance.h) say so.
//
// Cost: one LU of an M x M band matrix per solve (dense when the band is
// wide, Eigen's SparseLU otherwise) and two solves per ARL;
// ChooseControlLimit needs about 6-10 ARLs: 0.1-1.4 s at M = 1000 on one
// core (longest for small limits, whose band is widest). Thread-safe:
// RiskDistribution is immutable, the functions are pure.
#ifndef PLUMBLINE_MONITOR_CUSUM_RUN_LENGTH_H_
#define PLUMBLINE_MONITOR_CUSUM_RUN_LENGTH_H_

#include <vector>

#include "absl/status/statusor.h"
#include "absl/types/span.h"
#include "monitor/risk_adjusted_cusum.h"

namespace plumbline::monitor {

// A discrete distribution of predicted risks: log-odds with weights summing
// to 1.
class RiskDistribution {
 public:
  // Equal weights on the given log-odds. INVALID_ARGUMENT when empty or a
  // value is not finite (naming the index).
  static absl::StatusOr<RiskDistribution> FromLogOdds(
      absl::Span<const double> log_odds);
  // Weighted points; weights >= 0 with a positive sum (normalised here).
  static absl::StatusOr<RiskDistribution> FromWeighted(
      absl::Span<const double> log_odds, absl::Span<const double> weights);
  // From a histogram of predicted probabilities, as the score baseline of a
  // coefficient set stores it: edges e[0] < ... < e[k-1] inside (0, 1),
  // proportions of the k + 1 bins (-inf, e0), [e0, e1), ..., [e[k-1], inf),
  // and the smallest and largest probability seen, which close the outer
  // bins. Each bin is represented by `points_per_bin` probabilities evenly
  // spaced inside it (at (j + 1/2) / points_per_bin of its width), an
  // approximation of the unknown spread within a bin. INVALID_ARGUMENT
  // naming the field for edges out of order or outside (min, max), min or
  // max outside (0, 1), proportions not summing to 1 within 1e-6, or
  // points_per_bin < 1.
  static absl::StatusOr<RiskDistribution> FromProbabilityHistogram(
      absl::Span<const double> edges, absl::Span<const double> proportions,
      double min, double max, int points_per_bin = 16);

  const std::vector<double>& log_odds() const { return log_odds_; }
  const std::vector<double>& weights() const { return weights_; }

 private:
  RiskDistribution() = default;
  std::vector<double> log_odds_;
  std::vector<double> weights_;
};

struct RunLengthOptions {
  // Lattice points M between 0 and h; the coarse solve uses M / 2.
  // At least 20. Larger is slower (about M^1.5 to M^2) and more exact.
  int lattice_states = 1000;
};

struct RunLengthEstimate {
  double value = 0;  // ARL in records, extrapolated
  // |L_M - L_{M/2}|: upper estimate of the remaining approximation error.
  double discretisation_error = 0;
};

// ARL of `alternative`'s chart with limit `limit` when records come from
// `risks` and outcomes from `truth` applied to the model's log-odds.
// INVALID_ARGUMENT for a bad alternative, limit or option; INTERNAL if the
// linear solve fails (or the ARL exceeds about 1e13, beyond double
// precision for this method).
absl::StatusOr<RunLengthEstimate> AverageRunLength(
    const LogOddsChange& alternative, double limit,
    const RiskDistribution& risks, const LogOddsChange& truth = {},
    const RunLengthOptions& options = {});

struct ControlLimit {
  double limit = 0;       // h
  double target_arl = 0;  // the in-control ARL asked for
  RunLengthEstimate arl;  // in-control ARL at `limit` (~ target_arl)
};

// The h whose in-control ARL is `in_control_arl` (records), found by the
// Illinois variant of regula falsi on log ARL(h), to 1e-6 relative in the
// ARL. INVALID_ARGUMENT unless 1 < in_control_arl <= 1e12, or if even a
// limit near 0 gives a longer run (the target is too small for this chart).
absl::StatusOr<ControlLimit> ChooseControlLimit(
    const LogOddsChange& alternative, double in_control_arl,
    const RiskDistribution& risks, const RunLengthOptions& options = {});

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_CUSUM_RUN_LENGTH_H_
