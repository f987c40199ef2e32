#!/usr/bin/env python3
"""Recomputes a refit job's holdout figures from plumbd's ledger.

usage: lifecycle_check.py LEDGER SET VERSION HOLDOUT_FRACTION

Reads the labelled records the active role of SET scored (SQLite, the
ledger_scores view joined to outcomes), splits them with the documented
holdout rule (FNV-1a 64 of the record id mixed by MurmurHash3's fmix64, as
a fraction of 2**64, below HOLDOUT_FRACTION: daemon/refit_job.h) and prints, as JSON, the number of
records on each side and the log-loss of VERSION's stored scores on the
holdout by scikit-learn's sklearn.metrics.log_loss.
"""
import json
import sqlite3
import sys

import numpy as np
from scipy.special import expit
from sklearn.metrics import log_loss


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


def main() -> None:
    ledger, set_name, version, fraction = sys.argv[1:5]
    fraction = float(fraction)
    db = sqlite3.connect(ledger)
    rows = db.execute(
        "SELECT s.record_id, s.set_version, s.log_odds, o.label"
        " FROM ledger_scores s JOIN outcomes o ON o.record_id = s.record_id"
        " WHERE s.set_name = ? AND s.role = 'active'", (set_name,)).fetchall()
    seen = set()
    train = 0
    z, y = [], []
    for record_id, set_version, log_odds, label in rows:
        if record_id in seen:
            continue
        seen.add(record_id)
        # (h >> 11) * 2**-53: the top 53 bits as a double in [0, 1).
        if (holdout_hash(record_id) >> 11) * 2.0 ** -53 < fraction:
            if set_version != version:
                raise SystemExit(f"{record_id} was scored by {set_version}")
            z.append(log_odds)
            y.append(label)
        else:
            train += 1
    print(json.dumps({
        "train": train,
        "holdout": len(y),
        "active_log_loss": float(log_loss(np.array(y), expit(np.array(z)),
                                          labels=[0, 1])),
    }))


if __name__ == "__main__":
    main()
