#!/usr/bin/python3
"""Writes Plumbline's demo coefficient set and demo records. ALL INVENTED.

The scenario is made up for the demo: a courier company scores the chance
that the first delivery attempt for a parcel fails (nobody home, no safe
place to leave it, no access to the building). The "true" model below is
invented by hand; a synthetic training sample is drawn from it to fill in the
set's baselines and training figures. No real deliveries are involved.

Outputs (paths relative to the repository root):
  sets/courier_first_attempt.json  plumbline.v1.CoefficientSet (protobuf JSON)
                                   with baselines (bins, min and max per
                                   feature, score baseline) and the training
                                   log-loss
  var/demo/parcels.csv             2000 records to score, some cells missing
  var/demo/outcomes.csv            record_id,label: whether each parcel's
                                   first attempt failed (1) or not (0), drawn
                                   from the set's own probabilities
  var/demo/parcels_drift.csv       2000 later records from the storm season:
                                   rainfall far above anything in training
                                   and a new building type, "locker_bank",
                                   that the set has never seen
  var/demo/outcomes_drift.csv      their outcomes, drawn from a changed "true"
                                   model: more failures in the rain, almost
                                   none at locker banks

Deterministic: the same seed gives byte-identical files.

  /usr/bin/python3 ops/demo_data.py
"""
import argparse
import csv
import json
import math
import os

import numpy as np

SEED = 20261201
TRAINING_ROWS = 20000
DEMO_ROWS = 2000
DRIFT_ROWS = 2000
INVENTED = "INVENTED DEMO DATA"

HOUR_EDGES = [10.0, 13.0, 17.0, 20.0]
LEVELS = ["house", "flat", "office", "shop"]
LEVEL_SHARES = [0.48, 0.30, 0.14, 0.08]


def draw_parcels(rng, n, demo=False, drift=False):
    """Raw feature values of n synthetic parcels; NaN / None mark missing.

    drift: the storm season, when rainfall is far higher and parcel lockers
    ("locker_bank", a level the set does not know) take a share of parcels.
    """
    distance = np.clip(rng.gamma(2.0, 4.0, n), 0.1, 80.0).round(1)
    weight = np.clip(rng.lognormal(math.log(2.0), 0.8, n), 0.05, 40.0).round(2)
    weight[rng.random(n) < 0.04] = np.nan
    hour_weights = np.array([4, 7, 9, 10, 9, 8, 8, 8, 7, 7, 6, 6, 5, 3], float)
    hour = rng.choice(np.arange(8, 22), n, p=hour_weights / hour_weights.sum())
    building = rng.choice(np.array(LEVELS, dtype=object), n, p=LEVEL_SHARES)
    building[rng.random(n) < 0.03] = None
    if demo:
        # A building type the set has never seen: treated as missing.
        building[rng.choice(n, 3, replace=False)] = "warehouse"
    if drift:
        building[rng.random(n) < 0.25] = "locker_bank"
    prior = np.minimum(rng.poisson(0.35, n), 8).astype(float)
    rain = np.where(rng.random(n) < 0.6, 0.0, rng.gamma(1.2, 3.0, n)).round(1)
    if drift:
        rain = (rng.gamma(3.0, 5.0, n) + 6.0).round(1)
    rain[rng.random(n) < 0.07] = np.nan
    return {
        "distance_km": distance,
        "parcel_weight_kg": weight,
        "hour_of_day": hour.astype(float),
        "building_type": building,
        "prior_failed_attempts": prior,
        "rainfall_mm": rain,
    }


def invented_set(train):
    """The invented true model, with centres and scales from the sample."""
    dist = train["distance_km"]
    weight = train["parcel_weight_kg"]
    return {
        "name": "courier_first_attempt",
        "version": "2026-12-01.1",
        "description": (
            INVENTED + ". Chance that a courier's first delivery attempt for "
            "a parcel fails (nobody home, no safe place, no access). The "
            "scenario, the coefficients and the data are made up for the "
            "Plumbline demo."),
        "intercept": -2.35,
        "features": [
            {"name": "distance_km",
             "numeric": {"center": round(float(dist.mean()), 3),
                         "scale": round(float(dist.std()), 3),
                         "clip_low": 0.0, "clip_high": 60.0,
                         "coefficient": 0.32},
             "missing": {"kind": "REJECT"}},
            {"name": "parcel_weight_kg",
             "numeric": {"center": round(float(np.nanmean(weight)), 3),
                         "scale": round(float(np.nanstd(weight)), 3),
                         "clip_low": 0.1, "clip_high": 30.0,
                         "coefficient": 0.18},
             "missing": {"kind": "IMPUTE",
                         "impute_number": float(np.nanmedian(weight))}},
            {"name": "hour_of_day",
             "binned": {"edges": HOUR_EDGES,
                        "coefficients": [-0.15, 0.2, 0.35, -0.25, 0.05],
                        "reference": 12.0},
             "missing": {"kind": "REJECT"}},
            {"name": "building_type",
             "categorical": {
                 "levels": [{"value": "house", "coefficient": 0.0},
                            {"value": "flat", "coefficient": 0.4},
                            {"value": "office", "coefficient": -0.35},
                            {"value": "shop", "coefficient": -0.55}],
                 "unseen": "UNSEEN_AS_MISSING",
                 "reference_level": "house"},
             "missing": {"kind": "INDICATOR", "indicator_coefficient": 0.25}},
            {"name": "prior_failed_attempts",
             "numeric": {"center": 0.0, "scale": 1.0,
                         "clip_low": 0.0, "clip_high": 5.0,
                         "coefficient": 0.45},
             "missing": {"kind": "REJECT"}},
            {"name": "rainfall_mm",
             "numeric": {"center": 0.0, "scale": 5.0,
                         "clip_low": 0.0, "clip_high": 40.0,
                         "coefficient": 0.12},
             "missing": {"kind": "INDICATOR", "indicator_coefficient": 0.1}},
        ],
    }


def contribution(feature, x):
    """Mirror of the scorer's per-feature contribution (for labels/baselines)."""
    missing = feature["missing"]
    if "categorical" in feature:
        coef = {l["value"]: l["coefficient"]
                for l in feature["categorical"]["levels"]}
        is_missing = np.array([v is None or v not in coef for v in x])
        value = np.array([coef.get(v, 0.0) if v is not None else 0.0
                          for v in x])
    else:
        is_missing = np.isnan(x)
        if missing["kind"] == "IMPUTE":
            x = np.where(is_missing, missing["impute_number"], x)
            is_missing = np.zeros_like(is_missing)
        if "numeric" in feature:
            t = feature["numeric"]
            z = (np.clip(x, t["clip_low"], t["clip_high"]) - t["center"])
            value = t["coefficient"] * z / t["scale"]
        else:
            t = feature["binned"]
            bins = np.searchsorted(t["edges"], np.nan_to_num(x), side="right")
            value = np.asarray(t["coefficients"])[bins]
    if missing["kind"] == "INDICATOR":
        value = np.where(is_missing, missing["indicator_coefficient"], value)
    return value


def log_odds(model, rows):
    return model["intercept"] + sum(
        contribution(f, rows[f["name"]]) for f in model["features"])


def binned_distribution(x, edges, count):
    """Proportions per bin, with the bin convention of BinnedTransform, and
    the range of the values seen (a live value outside it is out of range)."""
    present = x[~np.isnan(x)]
    bins = np.searchsorted(edges, present, side="right")
    counts = np.bincount(bins, minlength=len(edges) + 1)
    return {"edges": [float(e) for e in edges],
            "proportions": [float(c) / len(present) for c in counts],
            "missing_proportion": (count - len(present)) / count,
            "count": count,
            "min": float(present.min()),
            "max": float(present.max())}


def decile_edges(x, digits):
    """Rounded deciles of the non-missing values, without empty bins."""
    present = x[~np.isnan(x)]
    edges = np.unique(np.round(np.quantile(present, np.arange(1, 10) / 10),
                               digits))
    return [e for e in edges if present.min() < e]


def add_baselines(model, train, probability):
    n = TRAINING_ROWS
    for f in model["features"]:
        x = train[f["name"]]
        if "categorical" in f:
            present = [v for v in x if v is not None]
            f["baseline"] = {
                "level_proportions": {
                    level: present.count(level) / len(present)
                    for level in LEVELS},
                "missing_proportion": (n - len(present)) / n,
                "count": n}
        elif "binned" in f:
            f["baseline"] = binned_distribution(x, HOUR_EDGES, n)
        elif f["name"] == "prior_failed_attempts":
            f["baseline"] = binned_distribution(x, [1.0, 2.0, 3.0, 4.0, 5.0], n)
        else:
            f["baseline"] = binned_distribution(x, decile_edges(x, 1), n)
    model["score_baseline"] = binned_distribution(
        probability, decile_edges(probability, 4), n)


def storm_season_log_odds(model, rows):
    """The invented "true" model of the storm season: rain hurts three times
    as much as the set believes, and locker banks (which the set treats as a
    missing building type) almost never fail."""
    eta = log_odds(model, rows)
    rain = np.nan_to_num(rows["rainfall_mm"])
    eta = eta + 2.0 * 0.12 * np.clip(rain, 0.0, 40.0) / 5.0
    lockers = np.array([v == "locker_bank" for v in rows["building_type"]])
    return np.where(lockers, eta - 0.25 - 2.0, eta)


def write_outcomes(path, ids, failed):
    with open(path, "w", newline="") as out:
        w = csv.writer(out)
        w.writerow(["record_id", "label"])
        w.writerows(zip(ids, failed.astype(int)))


def write_records(path, rows, ids):
    names = list(rows)
    with open(path, "w", newline="") as out:
        w = csv.writer(out)
        w.writerow(["record_id"] + names)
        for i, record_id in enumerate(ids):
            cells = [record_id]
            for name in names:
                v = rows[name][i]
                if v is None or (isinstance(v, float) and math.isnan(v)):
                    cells.append("")
                elif name in ("hour_of_day", "prior_failed_attempts"):
                    cells.append(str(int(v)))
                else:
                    cells.append(str(v))
            w.writerow(cells)


def main():
    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument(
        "--set-out",
        default=os.path.join(root, "sets", "courier_first_attempt.json"))
    parser.add_argument("--demo-dir", default=os.path.join(root, "var", "demo"))
    args = parser.parse_args()

    rng = np.random.default_rng(SEED)
    train = draw_parcels(rng, TRAINING_ROWS)
    model = invented_set(train)
    eta = log_odds(model, train)
    probability = 1.0 / (1.0 + np.exp(-eta))
    labels = rng.random(TRAINING_ROWS) < probability
    log_likelihood = float(np.sum(np.where(labels, -np.logaddexp(0, -eta),
                                           -np.logaddexp(0, eta))))
    add_baselines(model, train, probability)
    model["provenance"] = {
        "created_at": "2026-12-01T09:00:00Z",
        "created_by": "ops/demo_data.py",
        "method": "invented for the demo: coefficients chosen by hand, "
                  "not estimated",
        "training_data": f"{TRAINING_ROWS} synthetic parcels drawn from the "
                         f"invented model (seed {SEED}); not real deliveries",
        "training_rows": TRAINING_ROWS,
        "training_log_loss": -log_likelihood / TRAINING_ROWS,
        "training_log_likelihood": log_likelihood,
        "notes": INVENTED + f"; first-attempt failure rate in the sample "
                 f"{labels.mean():.3f}",
    }

    os.makedirs(os.path.dirname(args.set_out) or ".", exist_ok=True)
    with open(args.set_out, "w") as out:
        json.dump(model, out, indent=2)
        out.write("\n")

    demo = draw_parcels(rng, DEMO_ROWS, demo=True)
    demo_eta = log_odds(model, demo)
    failed = rng.random(DEMO_ROWS) < 1.0 / (1.0 + np.exp(-demo_eta))
    ids = [f"parcel-{i:06d}" for i in range(1, DEMO_ROWS + 1)]
    os.makedirs(args.demo_dir, exist_ok=True)
    write_records(os.path.join(args.demo_dir, "parcels.csv"), demo, ids)
    write_outcomes(os.path.join(args.demo_dir, "outcomes.csv"), ids, failed)

    drift = draw_parcels(rng, DRIFT_ROWS, drift=True)
    drift_eta = storm_season_log_odds(model, drift)
    drift_failed = rng.random(DRIFT_ROWS) < 1.0 / (1.0 + np.exp(-drift_eta))
    drift_ids = [f"parcel-storm-{i:06d}" for i in range(1, DRIFT_ROWS + 1)]
    write_records(os.path.join(args.demo_dir, "parcels_drift.csv"), drift,
                  drift_ids)
    write_outcomes(os.path.join(args.demo_dir, "outcomes_drift.csv"),
                   drift_ids, drift_failed)
    rel = os.path.relpath(args.demo_dir, root)
    print(f"wrote {os.path.relpath(args.set_out, root)}, {rel}/parcels.csv "
          f"({DEMO_ROWS} records) and {rel}/parcels_drift.csv ({DRIFT_ROWS} "
          f"storm-season records) with their outcomes -- {INVENTED}")


if __name__ == "__main__":
    main()
