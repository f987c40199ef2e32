"""Writes reference values for the monitor library's figures.

Usage: /usr/bin/python3 monitor_reference.py OUT.json

Every number comes from Debian's python3-sklearn (1.2), python3-scipy,
python3-statsmodels and python3-numpy, named per field below:
  log_loss, brier, auc           sklearn.metrics.log_loss, brier_score_loss,
                                 roc_auc_score
  curves                         sklearn.calibration.calibration_curve
                                 (strategy "uniform" and "quantile")
  quantile_edges                 numpy.percentile (what calibration_curve
                                 uses for "quantile")
  logit                          statsmodels.api.Logit of y on [1, log-odds]
  hosmer_lemeshow                statistic in numpy on the calibration_curve
                                 groups, p-value scipy.stats.chi2.sf
  chi2                           scipy.stats.chi2.sf on a grid of (x, dof)
  psi_*                          sum of scipy.special.rel_entr(a, e) +
                                 rel_entr(e, a) after flooring both
                                 proportions at 1e-4 (the rule of
                                 monitor/stability.h)
The data: seeded numpy draws (courier-company scenario: does a parcel's
first delivery attempt fail) with tied and untied scores, and the
Wisconsin breast-cancer data shipped inside scikit-learn
(sklearn.datasets.load_breast_cancer) scored by a LogisticRegression fitted
on the other half of it.
"""
import json
import sys

import numpy as np
import scipy
import sklearn
import statsmodels
import statsmodels.api as sm
from scipy.special import expit, log_expit, rel_entr
from scipy.stats import chi2, norm, sem
from sklearn.calibration import calibration_curve
from sklearn.datasets import load_breast_cancer
from sklearn.linear_model import LogisticRegression
from sklearn.metrics import brier_score_loss, log_loss, roc_auc_score
from sklearn.model_selection import train_test_split
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

PSI_FLOOR = 1e-4
BIN_COUNTS = (5, 10, 15)


def floats(a):
    return [float(v) for v in np.asarray(a, dtype=float)]


def grouped_hosmer_lemeshow(p, y, edges):
    """HL on the calibration_curve grouping for `edges` (searchsorted)."""
    g = len(edges) - 1
    ids = np.searchsorted(edges[1:-1], p)
    n = np.bincount(ids, minlength=g).astype(float)
    observed = np.bincount(ids, weights=y, minlength=g)
    expected = np.bincount(ids, weights=p, minlength=g)
    keep = n > 0
    n, observed, expected = n[keep], observed[keep], expected[keep]
    variance = expected * (1 - expected / n)
    stat = float(np.sum((observed - expected) ** 2 / variance))
    groups = int(keep.sum())
    return {"statistic": stat, "groups": groups,
            "p_value": float(chi2.sf(stat, groups - 2))}


def labelled_case(name, z, y):
    z = np.asarray(z, dtype=float)
    y = np.asarray(y, dtype=int)
    p = expit(z)
    out = {"name": name, "log_odds": floats(z), "probability": floats(p),
           "labels": [int(v) for v in y]}
    out["log_loss"] = float(log_loss(y, p))
    out["brier"] = float(brier_score_loss(y, p))
    out["auc"] = float(roc_auc_score(y, z))
    out["citl"] = float(np.mean(p) - np.mean(y))
    curves = {}
    for bins in BIN_COUNTS:
        for strategy in ("uniform", "quantile"):
            prob_true, prob_pred = calibration_curve(
                y, p, n_bins=bins, strategy=strategy)
            curves[f"{strategy}_{bins}"] = {
                "observed": floats(prob_true), "predicted": floats(prob_pred)}
        curves[f"quantile_edges_{bins}"] = floats(
            np.percentile(p, np.linspace(0, 1, bins + 1) * 100))
    out["curves"] = curves
    fit = sm.Logit(y, sm.add_constant(z)).fit(
        method="newton", tol=1e-12, maxiter=100, disp=0)
    out["logit"] = {"intercept": float(fit.params[0]),
                    "slope": float(fit.params[1]),
                    "intercept_se": float(fit.bse[0]),
                    "slope_se": float(fit.bse[1])}
    out["hosmer_lemeshow"] = grouped_hosmer_lemeshow(
        p, y, np.percentile(p, np.linspace(0, 1, 11) * 100))
    out["hosmer_lemeshow_uniform"] = grouped_hosmer_lemeshow(
        p, y, np.linspace(0.0, 1.0, 11))
    # A second model of the same records (a shrunken, shifted copy) for the
    # paired log-loss comparison: per-record losses from log_loss with
    # normalize=False one record at a time would be slow, so the mean losses
    # come from log_loss and the per-record ones from scipy's log_expit.
    z2 = 0.7 * z + 0.2
    loss1 = -np.where(y == 1, log_expit(z), log_expit(-z))
    loss2 = -np.where(y == 1, log_expit(z2), log_expit(-z2))
    d = loss2 - loss1
    half = norm.ppf(0.975) * sem(d)
    out["paired"] = {"candidate_log_odds": floats(z2),
                     "active_log_loss": float(log_loss(y, p)),
                     "candidate_log_loss": float(log_loss(y, expit(z2))),
                     "mean_difference": float(np.mean(d)),
                     "standard_error": float(sem(d)),
                     "lower_95": float(np.mean(d) - half),
                     "upper_95": float(np.mean(d) + half)}
    return out


def breast_cancer_case():
    x, y = load_breast_cancer(return_X_y=True)
    x_fit, x_watch, y_fit, y_watch = train_test_split(
        x, y, test_size=0.5, random_state=0, stratify=y)
    model = make_pipeline(StandardScaler(), LogisticRegression(C=0.05))
    model.fit(x_fit, y_fit)
    return labelled_case("breast_cancer", model.decision_function(x_watch),
                         y_watch)


def synthetic_cases(rng):
    cases = []
    # Tied log-odds on a 0.5 grid; the outcome follows a slightly
    # miscalibrated model.
    z = np.round(rng.normal(-0.5, 1.2, 3000) * 2) / 2
    y = rng.random(3000) < expit(0.2 + 0.9 * z)
    cases.append(labelled_case("tied", z, y))
    # Untied, over-confident scores (slope about 0.7).
    z = rng.normal(-1.0, 1.5, 5000)
    y = rng.random(5000) < expit(0.3 + 0.7 * z)
    cases.append(labelled_case("overconfident", z, y))
    # Five distinct scores only: quantile bins collapse, some stay empty.
    z = rng.choice([-2.0, -1.0, 0.0, 1.0, 2.0], size=800,
                   p=[0.1, 0.2, 0.4, 0.2, 0.1])
    y = rng.random(800) < expit(z)
    cases.append(labelled_case("five_levels", z, y))
    # A small window.
    z = rng.normal(0.0, 2.0, 23)
    y = rng.random(23) < expit(z)
    cases.append(labelled_case("small", z, y))
    return cases


def psi(expected, actual):
    e = np.maximum(np.asarray(expected, dtype=float), PSI_FLOOR)
    a = np.maximum(np.asarray(actual, dtype=float), PSI_FLOOR)
    return float(np.sum(rel_entr(a, e) + rel_entr(e, a)))


def numeric_psi_case(rng, name, baseline_values, values, clip=None):
    edges = np.round(np.percentile(baseline_values, [10, 25, 50, 75, 90]), 2)
    base_bins = np.searchsorted(edges, baseline_values, side="right")
    expected = np.bincount(base_bins, minlength=len(edges) + 1) / len(
        baseline_values)
    present = values[~np.isnan(values)]
    bins = np.searchsorted(edges, present, side="right")
    actual = np.bincount(bins, minlength=len(edges) + 1) / len(present)
    low, high = (edges[0], edges[-1]) if clip is None else clip
    out_of_range = int(np.sum((present < low) | (present > high)))
    out = {"name": name, "edges": floats(edges),
           "expected": floats(expected), "values": floats(values),
           "actual": floats(actual), "psi": psi(expected, actual),
           "missing_rate": float(np.mean(np.isnan(values))),
           "out_of_range_rate": out_of_range / len(values)}
    if clip is not None:
        out["clip"] = floats(clip)
    # JSON has no NaN: missing values travel as null.
    out["values"] = [None if np.isnan(v) else float(v) for v in values]
    return out


def psi_cases(rng):
    cases = []
    # Delivery distance in km: the sample drifts farther out, 3% missing.
    baseline = rng.lognormal(1.5, 0.6, 20000)
    sample = rng.lognormal(1.7, 0.7, 4000)
    sample[rng.random(4000) < 0.03] = np.nan
    cases.append(numeric_psi_case(rng, "distance_km", baseline, sample))
    # Same feature against the set's clip bounds, and a sample that leaves
    # the two lowest bins empty (the floor rule decides the PSI).
    sample = rng.lognormal(2.6, 0.2, 1500)
    cases.append(numeric_psi_case(rng, "distance_km_far", baseline, sample,
                                  clip=(0.5, 40.0)))
    return cases


def categorical_case(rng):
    levels = ["van", "cargo_bike", "car", "foot"]
    expected = np.array([0.55, 0.2, 0.2, 0.05])
    drawn = rng.choice(levels + ["drone", "scooter", None], size=3000,
                       p=[0.5, 0.3, 0.12, 0.0, 0.02, 0.01, 0.05])
    present = [v for v in drawn if v is not None]
    counts = [sum(1 for v in present if v == level) for level in levels]
    unseen = len(present) - sum(counts)
    actual = np.array(counts + [unseen]) / len(present)
    return {"name": "vehicle", "levels": levels,
            "expected": floats(expected),
            "values": [None if v is None else str(v) for v in drawn],
            "actual": floats(actual),
            "psi": psi(np.append(expected, 0.0), actual),
            "missing_rate": float(np.mean([v is None for v in drawn])),
            "out_of_range_rate": unseen / len(drawn)}


def chi2_grid():
    xs, dofs, sfs = [], [], []
    ratios = [1e-6, 1e-3, 0.01, 0.1, 0.3, 0.5, 0.8, 0.95, 1.0, 1.05, 1.2,
              1.5, 2.0, 3.0, 5.0, 8.0, 12.0, 20.0, 40.0, 80.0]
    fixed = [0.5, 1.0, 3.0, 10.0, 50.0, 100.0, 300.0, 700.0, 1000.0, 1400.0]
    for dof in [1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 13, 17, 20, 30, 50, 100, 200,
                500, 1000]:
        for x in [dof * r for r in ratios] + fixed:
            sf = float(chi2.sf(x, dof))
            if sf > 1e-300:
                xs.append(float(x))
                dofs.append(float(dof))
                sfs.append(sf)
    return {"x": xs, "dof": dofs, "sf": sfs}


def main() -> None:
    rng = np.random.default_rng(20240611)
    out = {
        "versions": {"sklearn": sklearn.__version__,
                     "scipy": scipy.__version__,
                     "statsmodels": statsmodels.__version__,
                     "numpy": np.__version__},
        "labelled": [breast_cancer_case()] + synthetic_cases(rng),
        "psi_numeric": psi_cases(rng),
        "psi_categorical": categorical_case(rng),
        "chi2": chi2_grid(),
    }
    with open(sys.argv[1], "w") as f:
        json.dump(out, f)


if __name__ == "__main__":
    main()
