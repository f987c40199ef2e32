"""to_sklearn: a coefficient set as a scikit-learn style classifier.

SetModel scores a DataFrame (or a list of dicts) with the set's own
arithmetic, written after scorer/scoring_plan.cc: clip, centre and scale
for numeric features, level and bin coefficients, the missing and unseen
rules, then the logistic. It is for looking at a set in Python (offline
scoring, calibration plots with scikit-learn's tools); plumbd stays the
reference. It cannot be refitted.
"""
from __future__ import annotations

import bisect
import json
import math
from typing import Any, List, Mapping, Union

import numpy as np

from plumbline.export._document import is_missing, level_text


def _logistic(z: float) -> float:
    # Stable on both sides, as scorer/logistic.h.
    if z >= 0:
        return 1.0 / (1.0 + math.exp(-z))
    e = math.exp(z)
    return e / (1.0 + e)


class SetModel:
    """predict_proba / decision_function / predict of a coefficient set.

    classes_ is [0, 1]: the set predicts the probability of label 1."""

    _estimator_type = "classifier"

    def __init__(self, document: Mapping[str, Any]):
        self.document = dict(document)
        self.features_ = list(self.document.get("features", []))
        self.feature_names_in_ = np.array([f["name"] for f in self.features_], dtype=object)
        self.n_features_in_ = len(self.features_)
        self.classes_ = np.array([0, 1])
        self.intercept_ = float(self.document.get("intercept", 0.0))

    def fit(self, X=None, y=None):
        raise TypeError("a SetModel holds a fitted coefficient set; it cannot be refitted")

    def _contribution(self, f: Mapping[str, Any], v: Any, row: int) -> float:
        name = f["name"]
        missing = f.get("missing", {})
        kind = missing.get("kind", "REJECT")

        def at_missing() -> float:
            if kind == "IMPUTE":
                if "categorical" in f:
                    return self._contribution(
                        {**f, "missing": {}}, missing.get("impute_level", ""), row)
                return self._contribution({**f, "missing": {}},
                                          missing.get("impute_number", 0.0), row)
            if kind == "INDICATOR":
                return float(missing.get("indicator_coefficient", 0.0))
            raise ValueError(f"rows[{row}]: feature '{name}': value is missing "
                             "and the rule is REJECT")

        if is_missing(v):
            return at_missing()
        if "categorical" in f:
            t = f["categorical"]
            text = v if isinstance(v, str) else level_text(v, f"feature '{name}'")
            for level in t["levels"]:
                if level["value"] == text:
                    return float(level.get("coefficient", 0.0))
            unseen = t.get("unseen", "UNSEEN_REJECT")
            if unseen == "UNSEEN_ZERO":
                return 0.0
            if unseen == "UNSEEN_AS_MISSING":
                return at_missing()
            raise ValueError(f"rows[{row}]: feature '{name}': level {text!r} is "
                             "not one of the set's levels")
        x = float(v)
        if not math.isfinite(x):
            raise ValueError(f"rows[{row}]: feature '{name}': value {x} is not finite")
        if "numeric" in f:
            t = f["numeric"]
            lo, hi = t.get("clip_low", -math.inf), t.get("clip_high", math.inf)
            return float(t.get("coefficient", 0.0)) * (
                (min(max(x, lo), hi) - float(t.get("center", 0.0))) / float(t["scale"]))
        t = f["binned"]
        return float(t["coefficients"][bisect.bisect_right(t["edges"], x)])

    def _rows(self, X) -> List[Mapping[str, Any]]:
        if hasattr(X, "to_dict") and hasattr(X, "columns"):
            return X.to_dict("records")
        if isinstance(X, np.ndarray):
            names = list(self.feature_names_in_)
            return [dict(zip(names, r)) for r in X.tolist()]
        return list(X)

    def decision_function(self, X) -> np.ndarray:
        out = []
        for i, row in enumerate(self._rows(X)):
            z = self.intercept_
            for f in self.features_:
                z += self._contribution(f, row.get(f["name"]), i)
            out.append(z)
        return np.array(out, dtype=float)

    def predict_proba(self, X) -> np.ndarray:
        p = np.array([_logistic(z) for z in self.decision_function(X)])
        return np.column_stack([1.0 - p, p])

    def predict(self, X) -> np.ndarray:
        return (self.predict_proba(X)[:, 1] > 0.5).astype(int)


def to_sklearn(document: Union[str, Mapping[str, Any]]) -> SetModel:
    """A SetModel of a coefficient set: its dict, or the path of its file."""
    if isinstance(document, str):
        with open(document) as f:
            document = json.load(f)
    return SetModel(document)
