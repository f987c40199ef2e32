"""Writes reference values for the monitor's alarm and exact-figure code.

Usage: /usr/bin/python3 alarm_reference.py OUT.json

Every number comes from Debian's python3-scipy, python3-sklearn,
python3-statsmodels and python3-numpy, named per field below, or from a
simulation written here in NumPy, independently of the C++ code:
  chi2_isf            scipy.stats.chi2.isf on a grid of (upper tail, dof)
  psi_cases           PSI in numpy (floor 1e-4, the rule of
                      monitor/stability.h), p-value scipy.stats.chi2.sf of
                      PSI / (1/n + 1/m) on B - 1 dof, critical PSI
                      scipy.stats.chi2.isf(alpha, B - 1) * (1/n + 1/m)
  cusum               run lengths of the risk-adjusted CUSUM simulated here
                      in NumPy (10,000 seeded runs per chart, vectorised;
                      weights written as log(p_A / p) and
                      log((1 - p_A) / (1 - p)) with scipy.special.log_expit)
  exact_cases         per window of records:
                        auc                    sklearn.metrics.roc_auc_score
                        hosmer_lemeshow        deciles of risk written here in
                                               numpy (groups by sorted rank,
                                               ties to the group of their
                                               first rank), p-value
                                               scipy.stats.chi2.sf on g - 2 dof
                        calibration_intercept  statsmodels GLM(Binomial) on a
                                               constant with offset = log-odds
                        calibration_slope      statsmodels Logit on
                                               [1, log-odds]
The data: seeded numpy draws.
"""
import json
import sys

import numpy as np
import scipy
import sklearn
import statsmodels
import statsmodels.api as sm
from sklearn.metrics import roc_auc_score
from scipy.special import expit, log_expit
from scipy.stats import chi2

PSI_FLOOR = 1e-4


def floats(a):
    return [float(v) for v in np.asarray(a, dtype=float)]


def chi2_isf_grid():
    tails, dofs, values = [], [], []
    for dof in [1, 2, 3, 4, 5, 7, 9, 10, 14, 19, 30, 50, 99, 200, 1000]:
        for tail in [0.5, 0.2, 0.1, 0.05, 0.01, 1e-3, 1e-4, 1e-6, 1e-9,
                     1e-12]:
            tails.append(tail)
            dofs.append(float(dof))
            values.append(float(chi2.isf(tail, dof)))
    return {"upper_tail": tails, "dof": dofs, "isf": values}


def psi_case(rng, name, expected_p, actual_p, n, m, alpha):
    """Baseline of n and window of m records from two multinomials."""
    base = rng.multinomial(n, expected_p) / n
    window = rng.multinomial(m, actual_p) / m
    e = np.maximum(base, PSI_FLOOR)
    a = np.maximum(window, PSI_FLOOR)
    psi = float(np.sum((a - e) * np.log(a / e)))
    bins = int(np.sum(base > 0))
    scale = 1.0 / n + 1.0 / m
    stat = psi / scale
    return {"name": name, "baseline": floats(base), "window": floats(window),
            "n": n, "m": m, "bins": bins, "alpha": alpha, "psi": psi,
            "statistic": stat, "p_value": float(chi2.sf(stat, bins - 1)),
            "critical_psi": float(chi2.isf(alpha, bins - 1) * scale)}


def psi_cases(rng):
    deciles = np.full(10, 0.1)
    shifted = np.array([0.07, 0.08, 0.09, 0.1, 0.1, 0.1, 0.11, 0.11, 0.12,
                        0.12])
    five = np.array([0.1, 0.2, 0.4, 0.2, 0.1])
    return [
        psi_case(rng, "stable_deciles", deciles, deciles, 20000, 5000, 0.01),
        psi_case(rng, "shifted_deciles", deciles, shifted, 20000, 5000, 0.01),
        psi_case(rng, "small_window", deciles, shifted, 20000, 300, 0.05),
        psi_case(rng, "five_bins", five, five, 1000, 1000, 0.001),
        psi_case(rng, "five_bins_moved", five, five[::-1] * 0.5 + 0.1, 3000,
                 800, 0.05),
    ]


def cusum_weights(z, shift, slope):
    """W for y = 0 and y = 1: log-likelihood ratio of z_A = shift + slope z."""
    za = shift + slope * z
    return log_expit(-za) - log_expit(-z), log_expit(za) - log_expit(z)


def simulate_arl(rng, z, shift, slope, limit, truth_shift, truth_slope,
                 runs=10000, max_records=10**6):
    """Mean and standard error of the run length, all runs side by side."""
    w0, w1 = cusum_weights(z, shift, slope)
    q = 1.0 / (1.0 + np.exp(-(truth_shift + truth_slope * z)))
    s = np.zeros(runs)
    length = np.zeros(runs, dtype=np.int64)
    alive = np.arange(runs)
    t = 0
    while alive.size and t < max_records:
        t += 1
        i = rng.integers(0, z.size, alive.size)
        y = rng.random(alive.size) < q[i]
        s[alive] = np.maximum(0.0, s[alive] + np.where(y, w1[i], w0[i]))
        hit = s[alive] >= limit
        length[alive[hit]] = t
        alive = alive[~hit]
    assert alive.size == 0, "runs censored"
    return float(length.mean()), float(length.std(ddof=1) / np.sqrt(runs))


def cusum_cases(rng):
    z = rng.normal(-1.5, 1.0, 2000)
    charts = [
        # name, alternative (shift, slope), limit, truth (shift, slope)
        ("upper_in_control", (np.log(1.5), 1.0), 2.8, (0.0, 1.0)),
        ("lower_in_control", (np.log(1 / 1.5), 1.0), 2.8, (0.0, 1.0)),
        ("slope_in_control", (0.0, 0.75), 2.5, (0.0, 1.0)),
        ("upper_shift_0.5", (np.log(1.5), 1.0), 5.0, (0.5, 1.0)),
    ]
    cases = []
    for name, (shift, slope), limit, (t_shift, t_slope) in charts:
        mean, se = simulate_arl(rng, z, shift, slope, limit, t_shift, t_slope)
        cases.append({"name": name, "shift": shift, "slope": slope,
                      "limit": limit, "truth_shift": t_shift,
                      "truth_slope": t_slope, "arl": mean,
                      "standard_error": se})
    return {"log_odds": floats(z), "charts": cases}


def hl_deciles_of_risk(p, y, g=10):
    """Hosmer-Lemeshow over deciles of risk; ties kept in one group."""
    n = p.size
    sorted_p = np.sort(p, kind="stable")
    # Rank of the first record holding each record's probability.
    first_rank = np.searchsorted(sorted_p, p, side="left")
    # Group k starts at rank floor(k n / g).
    starts = (np.arange(1, g) * n) // g
    group = np.searchsorted(starts, first_rank, side="right")
    count = np.bincount(group, minlength=g).astype(float)
    observed = np.bincount(group, weights=y, minlength=g)
    expected = np.bincount(group, weights=p, minlength=g)
    keep = count > 0
    count, observed, expected = count[keep], observed[keep], expected[keep]
    stat = float(np.sum((observed - expected) ** 2 /
                        (expected * (1 - expected / count))))
    groups = int(keep.sum())
    return {"statistic": stat, "groups": groups,
            "p_value": float(chi2.sf(stat, groups - 2))}


def exact_case(name, z, y):
    z = np.asarray(z, dtype=float)
    y = np.asarray(y, dtype=int)
    p = 1.0 / (1.0 + np.exp(-z))
    ones = np.ones((z.size, 1))
    offset_fit = sm.GLM(y, ones, family=sm.families.Binomial(),
                        offset=z).fit(method="IRLS", tol=1e-14, maxiter=200)
    joint_fit = sm.Logit(y, sm.add_constant(z)).fit(
        method="newton", tol=1e-12, maxiter=100, disp=0)
    return {"name": name, "log_odds": floats(z),
            "labels": [int(v) for v in y],
            "auc": float(roc_auc_score(y, z)),
            "hosmer_lemeshow": hl_deciles_of_risk(p, y),
            "calibration_intercept": float(offset_fit.params[0]),
            "calibration_intercept_se": float(offset_fit.bse[0]),
            "calibration_slope": float(joint_fit.params[1]),
            "calibration_slope_se": float(joint_fit.bse[1])}


def exact_cases(rng):
    cases = []
    # Over-confident model (true slope 0.7) that under-predicts a little.
    z = rng.normal(-1.0, 1.5, 5000)
    cases.append(exact_case("overconfident", z,
                            rng.random(5000) < expit(0.3 + 0.7 * z)))
    # Log-odds on a 0.5 grid: runs of ties straddle the decile cuts.
    z = np.round(rng.normal(-0.5, 1.2, 3003) * 2) / 2
    cases.append(exact_case("tied", z, rng.random(3003) < expit(0.2 + z)))
    # A window that is not a multiple of 10 records.
    z = rng.normal(0.0, 1.5, 57)
    cases.append(exact_case("small", z, rng.random(57) < expit(z)))
    # A well-calibrated model on a larger window.
    z = rng.normal(-2.0, 1.0, 20000)
    cases.append(exact_case("calibrated", z, rng.random(20000) < expit(z)))
    return cases


def main() -> None:
    rng = np.random.default_rng(20240917)
    out = {
        "versions": {"sklearn": sklearn.__version__,
                     "scipy": scipy.__version__,
                     "statsmodels": statsmodels.__version__,
                     "numpy": np.__version__},
        "chi2_isf": chi2_isf_grid(),
        "psi_cases": psi_cases(rng),
        "cusum": cusum_cases(rng),
        "exact_cases": exact_cases(rng),
    }
    with open(sys.argv[1], "w") as f:
        json.dump(out, f)


if __name__ == "__main__":
    main()
