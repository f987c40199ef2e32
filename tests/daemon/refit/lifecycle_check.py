#!/usr/bin/env python3
"""Recomputes a refit job's holdout figures from plumbd's ledger.

usage: lifecycle_check.py [--split=out_of_time|random_by_id] LEDGER SET
                          VERSION HOLDOUT_FRACTION [OUT_DIR]
       lifecycle_check.py --compare OUT_DIR SCORED_CSV

Reads the labelled records the active role of SET scored (SQLite, the
ledger_scores view joined to outcomes), splits them with the documented
holdout rule of refit.holdout (daemon/refit/job.h) and prints, as JSON, the
number of
records on each side and the log-loss of VERSION's stored scores on the
holdout by scikit-learn's sklearn.metrics.log_loss. The split:
  out_of_time (the default, as plumbd's): records ranked by score time,
    equal times by record id; the last floor(n * HOLDOUT_FRACTION + 0.5)
    are held out.
  random_by_id: FNV-1a 64 of the record id mixed by MurmurHash3's fmix64,
    as a fraction of 2**64, below HOLDOUT_FRACTION.
It takes every labelled record, as a manual refit does while they number
fewer than refit.window_labelled. With OUT_DIR it also
writes the held-out records as OUT_DIR/holdout.csv (record_id and the stored
feature values; null -> empty cell) with their labels and VERSION's log-odds
(OUT_DIR/holdout.json), and the newest candidate's document from the ledger
as OUT_DIR/candidate.json, for `plumbctl score --set-file`.

--compare reads those and the candidate's scores of holdout.csv (SCORED_CSV,
written by plumbctl score) and prints the paired comparison of the two
versions on the holdout: log-losses (sklearn.metrics.log_loss), the mean
per-record difference, its standard error (scipy.stats.sem) and the 95%
interval with scipy.stats.norm.ppf(0.975).
"""
import csv
import json
import math
import os
import sqlite3
import sys

import numpy as np
from scipy.special import expit, log_expit
from scipy.stats import norm, sem
from sklearn.metrics import log_loss

from plumbline.ledger_rows import stored_features


def holdout_hash(text: str) -> int:
    """FNV-1a 64 of the id, then MurmurHash3's fmix64 finalizer."""
    mask = (1 << 64) - 1
    h = 14695981039346656037
    for byte in text.encode("utf-8"):
        h ^= byte
        h = (h * 1099511628211) & mask
    h ^= h >> 33
    h = (h * 0xff51afd7ed558ccd) & mask
    h ^= h >> 33
    h = (h * 0xc4ceb9fe1a85ec53) & mask
    h ^= h >> 33
    return h


def compare(out_dir: str, scored_csv: str) -> None:
    with open(os.path.join(out_dir, "holdout.json")) as f:
        held = json.load(f)
    with open(scored_csv, newline="") as f:
        candidate = {row["record_id"]: float(row["log_odds"])
                     for row in csv.DictReader(f)}
    y = np.array(held["labels"])
    za = np.array(held["log_odds"])
    zc = np.array([candidate[r] for r in held["record_ids"]])
    loss_a = -np.where(y == 1, log_expit(za), log_expit(-za))
    loss_c = -np.where(y == 1, log_expit(zc), log_expit(-zc))
    d = loss_c - loss_a
    half = norm.ppf(0.975) * sem(d)
    print(json.dumps({
        "records": int(len(y)),
        "active_log_loss": float(log_loss(y, expit(za), labels=[0, 1])),
        "candidate_log_loss": float(log_loss(y, expit(zc), labels=[0, 1])),
        "difference": float(np.mean(d)),
        "lower_95": float(np.mean(d) - half),
        "upper_95": float(np.mean(d) + half),
    }))


def main() -> None:
    if sys.argv[1] == "--compare":
        compare(sys.argv[2], sys.argv[3])
        return
    args = [a for a in sys.argv[1:] if not a.startswith("--split=")]
    split = "out_of_time"
    for a in sys.argv[1:]:
        if a.startswith("--split="):
            split = a[len("--split="):]
    if split not in ("out_of_time", "random_by_id"):
        raise SystemExit(f"--split: {split} is not out_of_time or random_by_id")
    ledger, set_name, version, fraction = args[0:4]
    out_dir = args[4] if len(args) > 4 else None
    fraction = float(fraction)
    db = sqlite3.connect(ledger)
    rows = db.execute(
        "SELECT s.record_id, s.set_version, s.log_odds, o.label, s.features,"
        " s.layout, s.scored_at_us"
        " FROM ledger_scores s JOIN outcomes o ON o.record_id = s.record_id"
        " WHERE s.set_name = ? AND s.role = 'active'", (set_name,)).fetchall()
    seen = set()
    records = []
    for row in rows:
        if row[0] in seen:
            continue
        seen.add(row[0])
        records.append(row)
    if split == "out_of_time":
        # Oldest first by score time, equal times by record id (Python
        # compares str by code point, the order of UTF-8 bytes).
        records.sort(key=lambda r: (r[6], r[0]))
        held_from = len(records) - math.floor(len(records) * fraction + 0.5)
        held = [i >= held_from for i in range(len(records))]
    else:
        # (h >> 11) * 2**-53: the top 53 bits as a double in [0, 1).
        held = [(holdout_hash(r[0]) >> 11) * 2.0 ** -53 < fraction
                for r in records]
    train = 0
    z, y, ids, features = [], [], [], []
    for (record_id, set_version, log_odds, label, stored, layout,
         _), is_held in zip(records, held):
        if is_held:
            if set_version != version:
                raise SystemExit(f"{record_id} was scored by {set_version}")
            z.append(log_odds)
            y.append(label)
            ids.append(record_id)
            # The package's own reader of packed rows (plumbline.ledger_rows),
            # a second implementation of daemon/scoring/packed_row.cc.
            features.append(stored_features(stored, layout))
        else:
            train += 1
    if out_dir is not None:
        (document,) = db.execute(
            "SELECT document FROM set_versions WHERE set_name = ? AND"
            " state = 'candidate' ORDER BY created_at_us DESC, version DESC"
            " LIMIT 1", (set_name,)).fetchone()
        with open(os.path.join(out_dir, "candidate.json"), "w") as f:
            f.write(document)
        names = [feature["name"] for feature in json.loads(document)["features"]]
        with open(os.path.join(out_dir, "holdout.csv"), "w", newline="") as f:
            w = csv.writer(f)
            w.writerow(["record_id"] + names)
            for record_id, values in zip(ids, features):
                cells = [record_id]
                for name in names:
                    v = values.get(name)
                    cells.append("" if v is None else str(v))
                w.writerow(cells)
        with open(os.path.join(out_dir, "holdout.json"), "w") as f:
            json.dump({"record_ids": ids, "labels": y, "log_odds": z}, f)
    print(json.dumps({
        "train": train,
        "holdout": len(y),
        "active_log_loss": float(log_loss(np.array(y), expit(np.array(z)),
                                          labels=[0, 1])),
    }))


if __name__ == "__main__":
    main()
