"""Writes the CSV files `plumbctl fit` is run on and the reference fits its
output is checked against (tests/daemon/plumbctl_fit_test.cc).

Usage: /usr/bin/python3 fit_cli_reference.py OUT_DIR

Files in OUT_DIR:
  spector.csv    statsmodels.datasets.spector (Spector & Mazzeo 1980; the
                 fit is tabulated in Greene, Econometric Analysis) with the
                 columns record_id, GPA, TUCE, PSI, GRADE (0/1) and w, an
                 integer weight 1 + (i mod 3).
  courier.csv    an invented courier data set (seeded): did the first
                 delivery attempt of a parcel fail? Columns record_id,
                 distance_km (numeric, a few empty cells), region (text:
                 urban / suburban / rural, a few empty cells), depot_code
                 (numeric-looking codes 11..14), parcel_kg, failed (0/1).
  courier_na.csv courier.csv with its empty cells written as NA
                 (distance_km) and n/a (region), for --na.
  spector_labels.csv  spector.csv with GRADE written as true / TRUE / 1.0
                 and false / 0 / 0.0 in turn (the same labels).
  reference.json the reference fits below.

Sections of reference.json:
  spector.raw       statsmodels Logit (Newton, tol 1e-12) of GRADE on
                    1, GPA, TUCE, PSI: params, bse, llf, llnull, aic,
                    prsquared and the fitted probabilities (predict).
  spector.std       the same model on the columns centred and scaled by
                    their mean and population standard deviation (numpy,
                    ddof=0), the design `plumbctl fit` builds: params, bse,
                    z (tvalues), p (pvalues); centre and scale.
  spector_weighted  statsmodels GLM(Binomial, freq_weights=w) of the raw
                    model: params, llf.
  courier.*         fits of `failed` on the design `plumbctl fit` builds
                    from courier.csv (numeric columns standardised, a
                    missing number imputed by the mean, i.e. 0 after
                    standardising; categorical columns one-hot without the
                    most frequent level, a missing level imputed by it),
                    as {"names": [...], "params": [...]} with "intercept"
                    first:
      numeric_depot      statsmodels Logit, depot_code numeric.
      categorical_depot  statsmodels Logit, depot_code categorical.
      indicator          statsmodels Logit, depot_code numeric,
                         distance_km with a missing indicator (the value
                         imputed by the mean, plus a 0/1 column
                         "distance_km:missing" right after it), region
                         imputed.
      l2                 scikit-learn LogisticRegression(penalty="l2",
                         C=1/L2_LAMBDA, solver="newton-cholesky",
                         tol=1e-12), depot_code categorical.
Everything comes from Debian's python3-statsmodels and python3-sklearn.
"""
import csv
import json
import os
import sys

import numpy as np
import sklearn
import statsmodels
import statsmodels.api as sm
from sklearn.linear_model import LogisticRegression

L2_LAMBDA = 2.0
COURIER_ROWS = 400
COURIER_SEED = 20261202


def floats(a):
    return [float(v) for v in np.ravel(a)]


def standardise(x):
    centre = x.mean(axis=0)
    scale = x.std(axis=0)  # population standard deviation, ddof=0
    return (x - centre) / scale, centre, scale


def logit(y, x):
    return sm.Logit(y, sm.add_constant(x)).fit(method="newton", tol=1e-12,
                                               maxiter=100, disp=0)


def spector(out_dir):
    data = sm.datasets.spector.load_pandas().data
    x = data[["GPA", "TUCE", "PSI"]].to_numpy(dtype=float)
    y = data["GRADE"].to_numpy(dtype=float)
    w = 1.0 + (np.arange(len(y)) % 3)
    with open(os.path.join(out_dir, "spector.csv"), "w", newline="") as f:
        out = csv.writer(f, lineterminator="\n")
        out.writerow(["record_id", "GPA", "TUCE", "PSI", "GRADE", "w"])
        for i in range(len(y)):
            out.writerow([f"student-{i + 1}", repr(x[i, 0]), int(x[i, 1]),
                          int(x[i, 2]), int(y[i]), int(w[i])])
    words = {1: ["true", "TRUE", "1.0"], 0: ["false", "0", "0.0"]}
    with open(os.path.join(out_dir, "spector_labels.csv"), "w",
              newline="") as f:
        out = csv.writer(f, lineterminator="\n")
        out.writerow(["GPA", "TUCE", "PSI", "GRADE"])
        for i in range(len(y)):
            out.writerow([repr(x[i, 0]), int(x[i, 1]), int(x[i, 2]),
                          words[int(y[i])][i % 3]])
    raw = logit(y, x)
    xs, centre, scale = standardise(x)
    std = logit(y, xs)
    weighted = sm.GLM(y, sm.add_constant(x), family=sm.families.Binomial(),
                      freq_weights=w).fit(method="IRLS", tol=1e-14,
                                          maxiter=100)
    return {
        "raw": {"params": floats(raw.params), "bse": floats(raw.bse),
                "llf": float(raw.llf), "llnull": float(raw.llnull),
                "aic": float(raw.aic), "prsquared": float(raw.prsquared),
                "predict": floats(raw.predict())},
        "std": {"centre": floats(centre), "scale": floats(scale),
                "params": floats(std.params), "bse": floats(std.bse),
                "z": floats(std.tvalues), "p": floats(std.pvalues),
                "llf": float(std.llf)},
    }, {"params": floats(weighted.params), "llf": float(weighted.llf)}


def courier_rows():
    """The invented parcels, as lists of CSV cells."""
    rng = np.random.RandomState(COURIER_SEED)
    rows = []
    for i in range(COURIER_ROWS):
        distance = round(float(rng.uniform(0.5, 40.0)), 2)
        region = ["urban", "suburban", "rural"][
            rng.choice(3, p=[0.5, 0.3, 0.2])]
        depot = int(rng.choice([11, 12, 13, 14], p=[0.2, 0.4, 0.25, 0.15]))
        kg = round(float(rng.lognormal(0.5, 0.6)), 2)
        eta = (-1.2 + 0.045 * distance + 0.7 * (region == "rural") +
               0.3 * (region == "suburban") + 0.4 * (depot == 13) -
               0.15 * kg)
        failed = int(rng.uniform() < 1.0 / (1.0 + np.exp(-eta)))
        distance_cell = "" if rng.uniform() < 0.03 else repr(distance)
        region_cell = "" if rng.uniform() < 0.03 else region
        rows.append([f"parcel-{i + 1:04d}", distance_cell, region_cell,
                     str(depot), repr(kg), str(failed)])
    return rows


def numeric_column(cells):
    values = np.array([float(c) for c in cells if c != ""])
    centre, scale = values.mean(), values.std()
    return np.array([0.0 if c == "" else (float(c) - centre) / scale
                     for c in cells])


def categorical_columns(name, cells):
    present = [c for c in cells if c != ""]
    levels = sorted(set(present))  # byte order (ASCII here)
    counts = {lv: present.count(lv) for lv in levels}
    reference = max(levels, key=lambda lv: (counts[lv], -levels.index(lv)))
    names, cols = [], []
    for lv in levels:
        if lv == reference:
            continue
        names.append(f"{name}={lv}")
        cols.append(np.array([1.0 if c == lv else 0.0 for c in cells]))
    return names, cols


def courier_design(rows, depot_categorical, indicators=()):
    names, cols = [], []
    header = ["distance_km", "region", "depot_code", "parcel_kg"]
    for j, name in enumerate(header, start=1):
        cells = [r[j] for r in rows]
        if name == "region" or (name == "depot_code" and depot_categorical):
            n, c = categorical_columns(name, cells)
            names += n
            cols += c
        else:
            names.append(name)
            cols.append(numeric_column(cells))
        if name in indicators:
            names.append(f"{name}:missing")
            cols.append(np.array([1.0 if c == "" else 0.0 for c in cells]))
    return names, np.column_stack(cols)


def courier(out_dir):
    rows = courier_rows()
    with open(os.path.join(out_dir, "courier.csv"), "w", newline="") as f:
        out = csv.writer(f, lineterminator="\n")
        out.writerow(["record_id", "distance_km", "region", "depot_code",
                      "parcel_kg", "failed"])
        out.writerows(rows)
    with open(os.path.join(out_dir, "courier_na.csv"), "w", newline="") as f:
        out = csv.writer(f, lineterminator="\n")
        out.writerow(["record_id", "distance_km", "region", "depot_code",
                      "parcel_kg", "failed"])
        for r in rows:
            out.writerow([r[0], r[1] or "NA", r[2] or "n/a"] + r[3:])
    y = np.array([float(r[5]) for r in rows])
    result = {"l2_lambda": L2_LAMBDA}
    for key, depot_categorical in (("numeric_depot", False),
                                   ("categorical_depot", True)):
        names, x = courier_design(rows, depot_categorical)
        fit = logit(y, x)
        result[key] = {"names": ["intercept"] + names,
                       "params": floats(fit.params), "llf": float(fit.llf)}
    names, x = courier_design(rows, False, indicators=("distance_km",))
    fit = logit(y, x)
    result["indicator"] = {"names": ["intercept"] + names,
                           "params": floats(fit.params),
                           "llf": float(fit.llf)}
    names, x = courier_design(rows, True)
    model = LogisticRegression(penalty="l2", C=1.0 / L2_LAMBDA, tol=1e-12,
                               max_iter=1000, solver="newton-cholesky")
    model.fit(x, y)
    result["l2"] = {"names": ["intercept"] + names,
                    "params": [float(model.intercept_[0])] +
                              floats(model.coef_[0])}
    return result


def main():
    out_dir = sys.argv[1]
    os.makedirs(out_dir, exist_ok=True)
    spector_ref, weighted_ref = spector(out_dir)
    out = {
        "source": f"statsmodels {statsmodels.__version__}, scikit-learn "
                  f"{sklearn.__version__}, numpy {np.__version__}",
        "spector": spector_ref,
        "spector_weighted": weighted_ref,
        "courier": courier(out_dir),
    }
    with open(os.path.join(out_dir, "reference.json"), "w") as f:
        json.dump(out, f)


if __name__ == "__main__":
    main()
