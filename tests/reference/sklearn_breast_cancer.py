#!/usr/bin/python3
"""Reference figures from scikit-learn for Plumbline's scoring and log-loss.

Fits StandardScaler + LogisticRegression on the Wisconsin diagnostic
breast-cancer data that ships inside scikit-learn (load_breast_cancer, no
download) and writes everything the C++ reference test needs to rebuild the
model and compare: feature names, scaler mean_/scale_, coef_/intercept_, the
raw rows, labels, predict_proba[:, 1], decision_function and log_loss.

Python's json module writes floats with repr, the shortest text that reads
back as the same double, so every number round-trips exactly.

  /usr/bin/python3 tests/reference/sklearn_breast_cancer.py OUT.json
"""
import json
import re
import sys

import numpy as np
import sklearn
from sklearn.datasets import load_breast_cancer
from sklearn.linear_model import LogisticRegression
from sklearn.metrics import log_loss
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler


def feature_names(raw):
    """Valid, unique set feature names: 'mean radius' -> 'mean_radius'."""
    names = [re.sub(r"[^A-Za-z0-9_]+", "_", n.strip()) for n in raw]
    if len(set(names)) != len(names):
        sys.exit("feature names are not unique after cleaning: %r" % names)
    return names


def main():
    if len(sys.argv) != 2:
        sys.exit("usage: sklearn_breast_cancer.py OUT.json")
    data = load_breast_cancer()
    X, y = data.data, data.target
    pipeline = make_pipeline(
        StandardScaler(),
        LogisticRegression(C=1.0, solver="lbfgs", tol=1e-10, max_iter=10000))
    pipeline.fit(X, y)
    scaler, model = pipeline[0], pipeline[1]
    proba = pipeline.predict_proba(X)[:, 1]
    out = {
        "source": "sklearn.datasets.load_breast_cancer (Wisconsin diagnostic "
                  "breast-cancer data), StandardScaler + LogisticRegression("
                  "C=1.0, lbfgs, tol=1e-10)",
        "sklearn_version": sklearn.__version__,
        "numpy_version": np.__version__,
        "feature_names": feature_names(data.feature_names),
        "mean": scaler.mean_.tolist(),
        "scale": scaler.scale_.tolist(),
        "coef": model.coef_[0].tolist(),
        "intercept": float(model.intercept_[0]),
        "X": X.tolist(),
        "y": [int(v) for v in y],
        "predict_proba": proba.tolist(),
        "decision_function": pipeline.decision_function(X).tolist(),
        "log_loss": float(log_loss(y, proba)),
    }
    with open(sys.argv[1], "w") as f:
        json.dump(out, f)
        f.write("\n")


if __name__ == "__main__":
    main()
