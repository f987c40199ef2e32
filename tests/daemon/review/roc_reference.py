#!/usr/bin/python3
"""Reference figures for the refit dossier's holdout data (daemon/review/
dossier_data.h), from scikit-learn 1.2 (Debian's python3-sklearn).

  roc_reference.py OUT.json

Log-odds on a grid of 0.25 (so many records tie) with labels drawn from
their own probabilities, seeded. Written: the log-odds, the labels, and
scikit-learn's roc_curve (drop_intermediate=False: one point per distinct
score), roc_auc_score, brier_score_loss and log_loss of the probabilities
1 / (1 + exp(-z)).
"""
import json
import sys

import numpy as np
from sklearn.metrics import brier_score_loss, log_loss, roc_auc_score, roc_curve


def main():
    rng = np.random.default_rng(20261203)
    z = np.round(rng.normal(-0.6, 1.4, 600) * 4) / 4
    p = 1.0 / (1.0 + np.exp(-z))
    y = (rng.random(600) < p).astype(int)
    fpr, tpr, thresholds = roc_curve(y, p, drop_intermediate=False)
    out = {
        "log_odds": z.tolist(),
        "labels": y.tolist(),
        "fpr": fpr.tolist(),
        "tpr": tpr.tolist(),
        # thresholds[0] is scikit-learn's "above every score" marker.
        "thresholds": thresholds[1:].tolist(),
        "auc": float(roc_auc_score(y, p)),
        "brier": float(brier_score_loss(y, p)),
        "log_loss": float(log_loss(y, p)),
    }
    with open(sys.argv[1], "w") as f:
        json.dump(out, f)


if __name__ == "__main__":
    main()
