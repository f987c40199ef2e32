#!/usr/bin/python3
"""Data and reference figures for plumbd's model-health end-to-end test.

Writes into OUT_DIR:
  sets/parcel_health.json  a coefficient set (invented courier scenario:
                           does a parcel's first delivery attempt fail) with
                           feature and score baselines and a training
                           log-loss (sklearn.metrics.log_loss on seeded
                           labels of the baseline sample); rainfall_mm deliberately has no baseline
  records.json             "steady": records drawn like the baseline sample,
                           with outcomes drawn from the set's own
                           probabilities; "shifted": records whose distance
                           and rainfall moved up and whose building type is
                           partly a level the set has never seen
  reference.json           figures of the steady records, computed here:
      log_loss, brier      sklearn.metrics.log_loss, brier_score_loss
      score_psi_test, psi_test[f]   see below

With --outcome-figures SCORES.json OUT.json it computes, from the log-odds,
probabilities and labels plumbd itself answered (in the order their outcomes
were reported), the exact outcome figures; on plumbd's own numbers, since
those records have many tied and nearly tied scores (a difference in the
last bit reorders a pair):
      auc                  sklearn.metrics.roc_auc_score on the log-odds
                           (plumbd's AUC is the Mann-Whitney statistic)
      hosmer_lemeshow      deciles of risk written out here with numpy
                           (sorted probabilities, group k = ranks
                           floor(k n / 10) .. floor((k + 1) n / 10) - 1, a run
                           of tied probabilities kept whole in the group of
                           its first record, empty groups dropped), p-value
                           scipy.stats.chi2.sf on groups - 2 degrees of freedom
      calibration_intercept  statsmodels GLM(Binomial) of the outcome on a
                           constant with the log-odds as offset (slope 1)
      calibration_slope    statsmodels Logit of the outcome on a constant and
                           the log-odds (joint fit): the slope
      score_psi_test, psi_test[f]   scipy.stats.chi2.sf(PSI / (1/n + 1/m),
                           B - 1) and chi2.isf(alpha / tests, B - 1) *
                           (1/n + 1/m): n the baseline's non-missing count
                           (count x (1 - missing_proportion)), m the window's
                           non-missing records, B the baseline bins with a
                           proportion > 0 (Yurdakul & Naranjo 2020)
      cusum[chart]         the risk-adjusted CUSUM (Steiner et al. 2000) run
                           with numpy over the records in the order they are
                           reported, S = max(0, S + W), W = y (zA - z) -
                           log((1 + e^zA) / (1 + e^z)) by numpy.logaddexp; no
                           reset (the test checks plumbd saw no alarm)
  and the PSI tests of the fixture's records:
      score_psi, psi[f]    sum of scipy.special.rel_entr(a, e) +
                           rel_entr(e, a) over the bins, both proportions
                           floored at 1e-4 first (the rule documented in
                           monitor/stability.h); bins by numpy.searchsorted
                           side="right" (edge belongs to the bin above),
                           categorical levels sorted plus one "unseen" bin
      missing[f], out_of_range[f]   shares computed with numpy
      probability          numpy logistic of the log-odds computed here from
                           the set's coefficients (to check plumbd scored
                           the same records)

Every float is written with repr (Python's json), so it reads back exactly.
Seeded: the same files every run.

  /usr/bin/python3 tests/daemon/health/health_reference.py OUT_DIR
  /usr/bin/python3 tests/daemon/health/health_reference.py \
      --outcome-figures SCORES.json OUT.json
"""
import json
import os
import sys

import numpy as np
import scipy
import sklearn
import statsmodels
import statsmodels.api as sm
from scipy.special import expit, rel_entr
from scipy.stats import chi2
from sklearn.metrics import brier_score_loss, log_loss, roc_auc_score

SEED = 20261202
PSI_FLOOR = 1e-4
# plumbd's defaults: drift_policy.alpha over its tests (Bonferroni), and
# the CUSUM alternatives (odds x 1.5, odds / 1.5, log-odds x 0.75).
ALPHA = 0.01
CUSUM = {"upper": (np.log(1.5), 1.0), "lower": (np.log(1 / 1.5), 1.0),
         "slope": (0.0, 0.75)}
LEVELS = ["house", "flat", "office", "shop"]
SHARES = [0.5, 0.3, 0.12, 0.08]
HOUR_EDGES = [10.0, 13.0, 17.0, 20.0]


def draw(rng, n, shifted=False):
    distance = rng.gamma(2.0, 3.0, n).round(2)
    if shifted:
        distance = distance * 2.5 + 4.0
    weight = rng.lognormal(np.log(2.0), 0.7, n).round(2)
    weight[rng.random(n) < 0.05] = np.nan
    building = rng.choice(np.array(LEVELS, dtype=object), n, p=SHARES)
    building[rng.random(n) < 0.03] = None
    if shifted:
        building[rng.random(n) < 0.3] = "locker_bank"
    hour = rng.integers(8, 22, n).astype(float)
    rain = np.where(rng.random(n) < 0.6, 0.0, rng.gamma(1.2, 3.0, n)).round(1)
    if shifted:
        rain = rain + 12.0
    return {"distance_km": distance, "parcel_weight_kg": weight,
            "building_type": building, "hour_of_day": hour,
            "rainfall_mm": rain}


COEF = {"intercept": -1.6, "distance": 0.45, "weight": 0.2,
        "weight_missing": 0.3,
        "building": {"house": 0.0, "flat": 0.5, "office": -0.4, "shop": -0.6},
        "building_missing": 0.25, "hour": [-0.2, 0.15, 0.3, -0.3, 0.1],
        "rain": 0.1}


def log_odds(rows):
    """The set below, written out: log-odds of each record."""
    z = np.full(len(rows["distance_km"]), COEF["intercept"])
    z += COEF["distance"] * (np.clip(rows["distance_km"], 0, 60) - 6.0) / 4.0
    w = rows["parcel_weight_kg"]
    z += np.where(np.isnan(w), COEF["weight_missing"],
                  COEF["weight"] * (np.nan_to_num(w) - 2.5) / 2.0)
    z += np.array([COEF["building"].get(b, COEF["building_missing"])
                   if b is not None else COEF["building_missing"]
                   for b in rows["building_type"]])
    z += np.asarray(COEF["hour"])[np.searchsorted(HOUR_EDGES,
                                                  rows["hour_of_day"],
                                                  side="right")]
    z += COEF["rain"] * rows["rainfall_mm"] / 5.0
    return z


def numeric_baseline(x, edges, lo, hi):
    present = x[~np.isnan(x)]
    counts = np.bincount(np.searchsorted(edges, present, side="right"),
                         minlength=len(edges) + 1)
    return {"edges": list(edges),
            "proportions": (counts / counts.sum()).tolist(),
            "missing_proportion": float(1 - len(present) / len(x)),
            "count": len(x), "min": lo, "max": hi}


def hosmer_lemeshow(p, y, groups=10):
    """Deciles of risk, written out independently of plumbd's code."""
    order = np.argsort(p, kind="stable")
    ps, ys = p[order], y[order]
    n = len(ps)
    group = np.array([(k * groups) // n for k in range(n)])
    # A run of tied probabilities goes whole to the group of its first record.
    for i in range(1, n):
        if ps[i] == ps[i - 1]:
            group[i] = group[i - 1]
    stat, used = 0.0, 0
    for g in range(groups):
        sel = group == g
        if not sel.any():
            continue
        used += 1
        m, o, e = sel.sum(), ys[sel].sum(), ps[sel].sum()
        stat += (o - e) ** 2 / (e * (1 - e / m))
    return {"statistic": float(stat), "groups": used,
            "p_value": float(chi2.sf(stat, used - 2))}


def psi_test(psi_value, baseline, m, tests):
    """Yurdakul & Naranjo's asymptotic test of a PSI."""
    proportions = (baseline["proportions"] if "proportions" in baseline
                   else list(baseline["level_proportions"].values()))
    bins = int(np.sum(np.asarray(proportions) > 0))
    n = round(baseline["count"] * (1 - baseline.get("missing_proportion", 0)))
    scale = 1 / n + 1 / m
    return {"p_value": float(chi2.sf(psi_value / scale, bins - 1)),
            "critical_psi": float(chi2.isf(ALPHA / tests, bins - 1) * scale),
            "baseline_count": n, "window_count": int(m),
            "degrees_of_freedom": bins - 1}


def cusum(z, y, shift, slope):
    """S after every record, no reset."""
    za = shift + slope * z
    w = y * (za - z) - (np.logaddexp(0, za) - np.logaddexp(0, z))
    s, path = 0.0, []
    for x in w:
        s = max(0.0, s + x)
        path.append(s)
    return {"value": float(s), "max": float(max(path))}


def make_set(train, probability):
    b = train["building_type"]
    present = [v for v in b if v is not None]
    score_edges = [float(e) for e in
                   np.unique(np.round(np.quantile(probability,
                                                  np.arange(1, 10) / 10), 4))]
    score_counts = np.bincount(np.searchsorted(score_edges, probability,
                                               side="right"),
                               minlength=len(score_edges) + 1)
    return {
        "name": "parcel_health", "version": "e2e-1",
        "description": "invented courier scenario for the monitor test",
        "intercept": COEF["intercept"],
        "features": [
            {"name": "distance_km",
             "numeric": {"center": 6.0, "scale": 4.0, "clip_low": 0,
                         "clip_high": 60, "coefficient": COEF["distance"]},
             "baseline": numeric_baseline(train["distance_km"],
                                          [2.0, 4.0, 6.0, 9.0, 14.0],
                                          0.0, 40.0)},
            {"name": "parcel_weight_kg",
             "numeric": {"center": 2.5, "scale": 2.0,
                         "coefficient": COEF["weight"]},
             "missing": {"kind": "INDICATOR",
                         "indicator_coefficient": COEF["weight_missing"]},
             "baseline": numeric_baseline(train["parcel_weight_kg"],
                                          [1.0, 2.0, 4.0], 0.1, 12.0)},
            {"name": "building_type",
             "categorical": {"levels": [{"value": k, "coefficient": v}
                                        for k, v in COEF["building"].items()],
                             "unseen": "UNSEEN_AS_MISSING"},
             "missing": {"kind": "INDICATOR",
                         "indicator_coefficient": COEF["building_missing"]},
             "baseline": {"level_proportions": {
                 level: present.count(level) / len(present)
                 for level in LEVELS},
                 "missing_proportion": 1 - len(present) / len(b),
                 "count": len(b)}},
            {"name": "hour_of_day",
             "binned": {"edges": HOUR_EDGES, "coefficients": COEF["hour"]},
             "baseline": numeric_baseline(train["hour_of_day"], HOUR_EDGES,
                                          8.0, 21.0)},
            {"name": "rainfall_mm",
             "numeric": {"center": 0.0, "scale": 5.0,
                         "coefficient": COEF["rain"]}},
        ],
        "score_baseline": {"edges": score_edges,
                           "proportions": (score_counts /
                                           score_counts.sum()).tolist(),
                           "count": len(probability),
                           "min": float(probability.min()),
                           "max": float(probability.max())},
    }


# PSI tests plumbd runs per evaluation: the score and the 4 features with a
# baseline (rainfall_mm has none), in both windows.
TESTS = 2 * 5


def psi(expected, actual):
    e = np.maximum(np.asarray(expected, float), PSI_FLOOR)
    a = np.maximum(np.asarray(actual, float), PSI_FLOOR)
    return float(np.sum(rel_entr(a, e) + rel_entr(e, a)))


def shares(bins, n_bins):
    counts = np.bincount(bins, minlength=n_bins)
    return counts / counts.sum()


def feature_figures(feature, values):
    n = len(values)
    base = feature.get("baseline")
    if "categorical" in feature:
        missing = np.array([v is None for v in values])
        levels = sorted(base["level_proportions"])
        index = {level: i for i, level in enumerate(levels)}
        bins = np.array([index.get(v, len(levels)) for v in values
                         if v is not None])
        expected = [base["level_proportions"][l] for l in levels] + [0.0]
        out_of_range = int(np.sum(bins == len(levels)))
        value = psi(expected, shares(bins, len(expected)))
        return {"missing": float(missing.sum() / n),
                "out_of_range": out_of_range / n, "psi": value,
                "psi_test": psi_test(value, base, len(bins), TESTS)}
    x = np.asarray(values, float)
    missing = np.isnan(x)
    out = {"missing": float(missing.sum() / n)}
    if base is None:
        return out
    present = x[~missing]
    bins = np.searchsorted(base["edges"], present, side="right")
    out["psi"] = psi(base["proportions"], shares(bins, len(base["edges"]) + 1))
    out["psi_test"] = psi_test(out["psi"], base, len(present), TESTS)
    out["out_of_range"] = float(np.sum((present < base["min"]) |
                                       (present > base["max"])) / n)
    return out


def records(rows, labels, prefix):
    out = []
    for i in range(len(labels)):
        features = {}
        for name, column in rows.items():
            v = column[i]
            if v is None or (isinstance(v, float) and np.isnan(v)):
                features[name] = None
            elif isinstance(v, str):
                features[name] = v
            else:
                features[name] = float(v)
        out.append({"record_id": f"{prefix}-{i:05d}", "features": features,
                    "label": int(labels[i])})
    return out


def outcome_figures(scores_path, out_path):
    with open(scores_path) as f:
        scores = json.load(f)
    z = np.asarray(scores["log_odds"], float)
    p = np.asarray(scores["probability"], float)
    y = np.asarray(scores["labels"], int)
    # statsmodels: the offset fit (slope 1) and the joint fit.
    offset_fit = sm.GLM(y, np.ones((len(z), 1)), family=sm.families.Binomial(),
                        offset=z).fit(tol=1e-14, maxiter=100)
    joint_fit = sm.Logit(y, sm.add_constant(z)).fit(
        method="newton", tol=1e-14, maxiter=100, disp=0)
    out = {
        "versions": {"numpy": np.__version__, "scipy": scipy.__version__,
                     "sklearn": sklearn.__version__,
                     "statsmodels": statsmodels.__version__},
        "auc": float(roc_auc_score(y, z)),
        "hosmer_lemeshow": hosmer_lemeshow(p, y),
        "calibration_intercept": float(offset_fit.params[0]),
        "calibration_slope": float(joint_fit.params[1]),
        "cusum": {name: cusum(z, y, *alt) for name, alt in CUSUM.items()},
    }
    with open(out_path, "w") as f:
        json.dump(out, f, indent=1)


def main():
    if len(sys.argv) == 4 and sys.argv[1] == "--outcome-figures":
        outcome_figures(sys.argv[2], sys.argv[3])
        return
    if len(sys.argv) != 2:
        sys.exit("usage: health_reference.py OUT_DIR\n"
                 "       health_reference.py --outcome-figures SCORES OUT")
    out_dir = sys.argv[1]
    os.makedirs(os.path.join(out_dir, "sets"), exist_ok=True)
    rng = np.random.default_rng(SEED)
    train = draw(rng, 20000)
    train_p = expit(log_odds(train))
    coefficient_set = make_set(train, train_p)
    train_y = (rng.random(len(train_p)) < train_p).astype(int)
    coefficient_set["provenance"] = {
        "training_rows": len(train_p),
        "training_log_loss": float(log_loss(train_y, train_p))}
    with open(os.path.join(out_dir, "sets", "parcel_health.json"), "w") as f:
        json.dump(coefficient_set, f, indent=1)

    steady = draw(rng, 3000)
    z = log_odds(steady)
    p = expit(z)
    y = (rng.random(len(p)) < p).astype(int)
    shifted = draw(rng, 2000, shifted=True)
    ps = expit(log_odds(shifted))
    ys = (rng.random(len(ps)) < ps).astype(int)
    with open(os.path.join(out_dir, "records.json"), "w") as f:
        json.dump({"steady": records(steady, y, "steady"),
                   "shifted": records(shifted, ys, "shifted")}, f)

    score_base = coefficient_set["score_baseline"]
    score_bins = np.searchsorted(score_base["edges"], p, side="right")
    score_psi = psi(score_base["proportions"],
                    shares(score_bins, len(score_base["proportions"])))
    reference = {
        "versions": {"numpy": np.__version__, "scipy": scipy.__version__,
                     "sklearn": sklearn.__version__,
                     "statsmodels": statsmodels.__version__},
        "count": len(p),
        "positives": int(y.sum()),
        "probability": p.tolist(),
        "log_loss": float(log_loss(y, p)),
        "brier": float(brier_score_loss(y, p)),
        "score_psi": score_psi,
        "score_psi_test": psi_test(score_psi, score_base, len(p), TESTS),
        "stability_test_alpha": ALPHA / TESTS,
        "features": {f["name"]: feature_figures(f, steady[f["name"]])
                     for f in coefficient_set["features"]},
    }
    with open(os.path.join(out_dir, "reference.json"), "w") as f:
        json.dump(reference, f, indent=1)


if __name__ == "__main__":
    main()
