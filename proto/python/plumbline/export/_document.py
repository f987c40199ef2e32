"""Pieces of a coefficient-set document shared by the exporters.

The document is a dict in protobuf's JSON form of plumbline.v1.CoefficientSet
(proto/plumbline/v1/coefficient_set.proto) with proto field names, as the set
files plumbd reads are written; json.dump writes it as a file plumbd loads.
Baselines follow plumbd's own fitter (scorer/design_matrix.cc,
QuantileDistribution): edges at the k/10 quantiles of the sorted values
(none repeated, none equal to the minimum), proportions per bin under the
BinnedTransform convention, min and max, the missing share.
"""
from __future__ import annotations

import bisect
import datetime
import math
import re
from collections import Counter
from typing import Any, Dict, List, Optional, Sequence

import numpy as np

BASELINE_BINS = 10  # scorer/design_matrix.cc kBaselineBins
_NAME = re.compile(r"^[A-Za-z0-9_.-]+$")


def finite(x: Any, what: str) -> float:
    v = float(x)
    if not math.isfinite(v):
        raise ValueError(f"{what} is {v}: a coefficient set holds finite numbers only")
    return v


def check_name(name: str, version: str) -> None:
    if not isinstance(name, str) or not _NAME.match(name):
        raise ValueError(f"name must be letters, digits, '_', '-' or '.', got {name!r}")
    if not isinstance(version, str) or not version:
        raise ValueError("version must be a non-empty string")


def quantile_distribution(values: Sequence[float], missing: int,
                          bins: int = BASELINE_BINS) -> Dict[str, Any]:
    """Mirror of scorer/design_matrix.cc QuantileDistribution."""
    v = sorted(float(x) for x in values)
    n = len(v)
    d: Dict[str, Any] = {"count": n + missing}
    if n + missing > 0:
        d["missing_proportion"] = missing / (n + missing)
    if n == 0:
        return d
    edges: List[float] = []
    for k in range(1, bins):
        e = v[k * n // bins]
        if e > v[0] and (not edges or e > edges[-1]):
            edges.append(e)
    counts = [0] * (len(edges) + 1)
    for x in v:
        counts[bisect.bisect_right(edges, x)] += 1
    d["edges"] = edges
    d["proportions"] = [c / n for c in counts]
    d["min"] = v[0]
    d["max"] = v[-1]
    return d


def level_distribution(levels: Sequence[Optional[str]]) -> Dict[str, Any]:
    """Categorical baseline: share of each level among present values."""
    present = [x for x in levels if x is not None]
    n = len(levels)
    counts = Counter(present)
    d: Dict[str, Any] = {"count": n,
                         "missing_proportion": (n - len(present)) / n if n else 0.0}
    if present:
        d["level_proportions"] = {k: c / len(present) for k, c in counts.items()}
    return d


def is_missing(v: Any) -> bool:
    if v is None or type(v).__name__ in ("NAType", "NaTType"):
        return True
    try:
        return isinstance(v, (float, np.floating)) and math.isnan(v)
    except TypeError:
        return False


def numeric_column(values: Sequence[Any], name: str):
    """(present values as floats, missing count) of a numeric column."""
    present, missing = [], 0
    for v in values:
        if is_missing(v):
            missing += 1
            continue
        try:
            present.append(float(v))
        except (TypeError, ValueError):
            raise ValueError(f"training_frame column '{name}': {v!r} is not a "
                             "number, but the feature is numeric") from None
    return present, missing


def level_text(v: Any, where: str) -> str:
    """The level string plumbd sees for a category value: text as is,
    integers (also integral floats) as their decimal text."""
    if isinstance(v, (bool, np.bool_)):
        raise ValueError(f"{where}: boolean categories cannot be levels; map "
                         "them to strings before fitting")
    if isinstance(v, str):
        if not v:
            raise ValueError(f"{where}: the empty string cannot be a level")
        return v
    if isinstance(v, (int, np.integer)):
        return str(int(v))
    if isinstance(v, (float, np.floating)) and math.isfinite(v) and float(v).is_integer():
        # Integer codes stored as floats (pandas does so for an integer
        # column with a missing cell): the level is the integer's text, and
        # the client sends 3.0 for a categorical feature as "3".
        return str(int(v))
    raise ValueError(f"{where}: category {v!r} ({type(v).__name__}) cannot be a "
                     "level; plumbd's levels are strings: use text or integer "
                     "categories")


def log_loss_figures(y: Sequence[float], p: Sequence[float],
                     w: Optional[Sequence[float]] = None):
    """(log-likelihood, log-loss per unit weight) of 0/1 labels y under
    probabilities p."""
    y = np.asarray(y, dtype=float)
    p = np.asarray(p, dtype=float)
    w = np.ones_like(y) if w is None else np.asarray(w, dtype=float)
    with np.errstate(divide="ignore"):
        terms = np.where(y == 1, np.log(p), np.log1p(-p))
    ll = float(np.sum(w * terms))
    return ll, -ll / float(np.sum(w))


def provenance(*, created_by: str, method: str, training_data: str,
               training_rows: int, notes: str,
               created_at: Optional[datetime.datetime],
               log_likelihood: Optional[float] = None,
               log_loss: Optional[float] = None) -> Dict[str, Any]:
    when = created_at or datetime.datetime.now(datetime.timezone.utc)
    if when.tzinfo is None:
        when = when.replace(tzinfo=datetime.timezone.utc)
    when = when.astimezone(datetime.timezone.utc)
    p: Dict[str, Any] = {
        "created_at": when.strftime("%Y-%m-%dT%H:%M:%S.%fZ"),
        "created_by": created_by,
        "method": method,
        "training_data": training_data,
        "training_rows": int(training_rows),
        "notes": notes,
    }
    if log_likelihood is not None and math.isfinite(log_likelihood):
        p["training_log_likelihood"] = log_likelihood
    if log_loss is not None and math.isfinite(log_loss):
        p["training_log_loss"] = log_loss
    return p


def column_values(frame: Any, names: Sequence[str], name: str) -> List[Any]:
    """The values of column `name` of a DataFrame or 2-D array whose columns
    are `names`."""
    if hasattr(frame, "columns") and hasattr(frame, "iloc"):
        if name not in frame.columns:
            raise ValueError(f"training_frame has no column '{name}'")
        return frame[name].tolist()
    a = np.asarray(frame, dtype=object)
    if a.ndim != 2 or a.shape[1] != len(names):
        raise ValueError(f"training_frame must have one column per feature name "
                         f"({len(names)}), got shape {a.shape}")
    return a[:, list(names).index(name)].tolist()


def frame_rows(frame: Any) -> int:
    return len(frame)
