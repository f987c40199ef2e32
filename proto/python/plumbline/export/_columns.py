"""What each output column of a fitted scikit-learn preprocessing is, as a
function of one raw input column: the symbolic model from_sklearn reads.

A Sym is one column the LogisticRegression sees:
  kind "raw":   (x - c) / s of the raw number x; `impute` is the raw-space
                value an imputer put in for a missing x (before any scaling),
                `missing_out` an output-space value put in after scaling.
  kind "table": a value per class of the raw value: ("level", text),
                ("bin", i), PRESENT, plus MISSING and UNKNOWN; RAISE where
                scikit-learn refuses the input.
Each step of a pipeline maps a list of Syms to the list of its output
columns; the final coefficients are then summed per raw column into one
plumbd feature (see _features.py).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Any, Dict, List, Optional, Tuple

import numpy as np

from plumbline.export._document import is_missing, level_text


class _Marker:
    def __init__(self, name):
        self.name = name

    def __repr__(self):
        return self.name


RAISE = _Marker("RAISE")        # scikit-learn refuses this input
MISSING = _Marker("MISSING")    # class: the raw value is missing
UNKNOWN = _Marker("UNKNOWN")    # class: a category the encoder never saw
PRESENT = _Marker("PRESENT")    # class: any present value (flags)


@dataclass
class Sym:
    source: str
    kind: str = "raw"                 # "raw" or "table"
    # raw
    c: float = 0.0
    s: float = 1.0
    scaled: bool = False
    composed: bool = False            # two scalers: c and s were composed
    impute: Any = None                # raw-space imputed value, or None
    # The raw value a missing cell holds on its way through scikit-learn:
    # NaN, or None in a text column whose training cells were None. An
    # imputer catches only its own missing_values.
    marker: Any = float("nan")
    missing_out: Optional[float] = None
    # table
    domain: str = ""                  # "levels", "bins" or "flag"
    values: Dict[Any, Any] = field(default_factory=dict)
    levels: Tuple[str, ...] = ()
    edges: Tuple[float, ...] = ()
    step: str = ""                    # the step that made the table

    def missing_resolved(self) -> bool:
        return self.impute is not None or self.missing_out is not None


def refuse(step: str, why: str) -> ValueError:
    return ValueError(f"step '{step}': {why}")


def _is_nan(v) -> bool:
    return isinstance(v, (float, np.floating)) and math.isnan(v)


def raw_columns(names, markers) -> List[Sym]:
    return [Sym(source=n, marker=m) for n, m in zip(names, markers)]


def _affine(v, c, s):
    return v if v is RAISE else (v - c) / s


def standard_scaler(step, name: str, syms: List[Sym]) -> List[Sym]:
    out = []
    for k, sym in enumerate(syms):
        c = float(step.mean_[k]) if step.with_mean else 0.0
        s = float(step.scale_[k]) if step.with_std else 1.0
        if sym.kind == "raw":
            if sym.scaled:
                # ((x - c1)/s1 - c2)/s2 = (x - (c1 + c2 s1)) / (s1 s2): the
                # same map up to rounding (about 1e-16 relative).
                new = replace(sym, c=sym.c + c * sym.s, s=sym.s * s, composed=True)
            else:
                new = replace(sym, c=c, s=s, scaled=True)
            if sym.missing_out is not None:
                new.missing_out = (sym.missing_out - c) / s
            out.append(new)
        else:
            out.append(replace(sym, values={k2: _affine(v, c, s)
                                            for k2, v in sym.values.items()}))
    return out


def simple_imputer(step, name: str, syms: List[Sym]) -> List[Sym]:
    mv = step.missing_values
    if not (mv is None or (isinstance(mv, float) and math.isnan(mv))):
        raise refuse(name, f"SimpleImputer(missing_values={mv!r}): plumbd's "
                           "missing values are null and NaN only")
    stats = step.statistics_
    if len(stats) != len(syms):
        raise refuse(name, f"SimpleImputer dropped columns ({len(syms)} in, "
                           f"{len(stats)} statistics): a column with no value "
                           "in training cannot be a feature")
    def catches(sym: Sym) -> bool:
        return sym.kind == "raw" and not sym.missing_resolved() and (
            (mv is None and sym.marker is None) or
            (mv is not None and _is_nan(sym.marker)))

    out = []
    for k, sym in enumerate(syms):
        stat = stats[k]
        if is_missing(stat):
            raise refuse(name, f"SimpleImputer has no value for column "
                               f"'{sym.source}' (it had none in training)")
        if catches(sym):
            if sym.scaled:
                sym = replace(sym, missing_out=float(stat))
            else:
                sym = replace(sym, impute=stat if isinstance(stat, str)
                              else stat.item() if hasattr(stat, "item") else stat)
        out.append(sym)
    if step.add_indicator:
        for k in step.indicator_.features_:
            sym = syms[k]
            hit = 1.0 if catches(sym) else 0.0
            out.append(Sym(source=sym.source, kind="table", domain="flag",
                           values={PRESENT: 0.0, MISSING: hit}, step=name))
    return out


def _dense(x) -> np.ndarray:
    return np.asarray(x.toarray() if hasattr(x, "toarray") else x, dtype=float)


def _probe_frame(step, columns: List[List[Any]]):
    """Rows for step.transform: a DataFrame with the names the step was
    fitted with when it has them, else an object array."""
    if hasattr(step, "feature_names_in_"):
        import pandas as pd
        return pd.DataFrame({n: pd.Series(col, dtype=object)
                             for n, col in zip(step.feature_names_in_, columns)})
    return np.array(columns, dtype=object).T


def one_hot_encoder(step, name: str, syms: List[Sym]) -> List[Sym]:
    for sym in syms:
        if sym.kind != "raw" or sym.scaled:
            raise refuse(name, f"OneHotEncoder must see the raw values of "
                               f"'{sym.source}', not the output of another step")
    widths = getattr(step, "_n_features_outs", None)
    if widths is None or len(widths) != len(syms):
        raise refuse(name, "this scikit-learn's OneHotEncoder does not say how "
                           "many columns each input makes")
    base = []
    for k, cats in enumerate(step.categories_):
        present = [v for v in cats if not is_missing(v)]
        base.append(present[0] if present else cats[0])
    offsets = np.concatenate([[0], np.cumsum(widths)]).astype(int)
    out: List[Sym] = []
    for k, sym in enumerate(syms):
        where = f"step '{name}', column '{sym.source}'"
        cats = list(step.categories_[k])
        present = [v for v in cats if not is_missing(v)]
        levels = tuple(level_text(v, where) for v in present)
        if len(set(levels)) != len(levels):
            raise refuse(name, f"column '{sym.source}': two categories have the "
                               "same text")
        probes: List[Tuple[Any, Any]] = [(("level", t), v) for t, v in zip(levels, present)]
        if all(isinstance(v, str) for v in present):
            unseen = "\x00plumbline-unseen"
        else:
            unseen = max(int(v) for v in present) + 1
        probes.append((UNKNOWN, unseen))
        probes.append((MISSING, sym.impute if sym.impute is not None else sym.marker))
        rows = []
        for _, value in probes:
            row = list(base)
            row[k] = value
            rows.append(row)
        values: List[Dict[Any, Any]] = [dict() for _ in range(widths[k])]
        for (key, _), row in zip(probes, rows):
            try:
                enc = _dense(step.transform(_probe_frame(step, [[v] for v in row])))
                enc = enc[0, offsets[k]:offsets[k + 1]]
                for m in range(widths[k]):
                    values[m][key] = float(enc[m])
            except Exception:  # scikit-learn refuses this value
                for m in range(widths[k]):
                    values[m][key] = RAISE
        impute_level = None
        if sym.impute is not None and not is_missing(sym.impute):
            try:
                impute_level = level_text(sym.impute, where)
            except ValueError:
                impute_level = None
        for m in range(widths[k]):
            out.append(Sym(source=sym.source, kind="table", domain="levels",
                           values=values[m], levels=levels, step=name,
                           impute=impute_level))
    return out


def kbins_discretizer(step, name: str, syms: List[Sym]) -> List[Sym]:
    for sym in syms:
        if sym.kind != "raw" or sym.scaled:
            raise refuse(name, f"KBinsDiscretizer must see the raw values of "
                               f"'{sym.source}', not the output of another step")
    n = len(syms)
    inner = [np.asarray(e[1:-1], dtype=float) for e in step.bin_edges_]
    nbins = [int(b) for b in step.n_bins_]
    onehot = step.encode != "ordinal"
    offsets = np.concatenate([[0], np.cumsum(nbins if onehot else [1] * n)]).astype(int)
    for k, sym in enumerate(syms):
        if len(inner[k]) == 0:
            raise refuse(name, f"column '{sym.source}' has a single bin; a "
                               "binned feature needs at least one edge")
    # plumbd's bins are [e_{i-1}, e_i): check that this scikit-learn puts
    # each edge, and the double just below it, where plumbd does.
    base = [float(e[0]) for e in step.bin_edges_]
    rows, expect = [], []
    for k in range(n):
        for i, e in enumerate(inner[k]):
            for x, b in ((e, i + 1), (np.nextafter(e, -np.inf), i)):
                row = list(base)
                row[k] = float(x)
                rows.append(row)
                expect.append((k, b))
    got = _dense(step.transform(_probe_frame(step, [list(c) for c in zip(*rows)])
                                if hasattr(step, "feature_names_in_")
                                else np.array(rows, dtype=float)))
    for r, (k, b) in enumerate(expect):
        block = got[r, offsets[k]:offsets[k + 1]]
        binned = int(np.argmax(block)) if onehot else int(block[0])
        if binned != b:
            raise refuse(name, f"KBinsDiscretizer puts {rows[r][k]!r} of "
                               f"'{syms[k].source}' in bin {binned}, plumbd in "
                               f"bin {b}: this scikit-learn bins differently")
    out = []
    for k, sym in enumerate(syms):
        edges = tuple(float(e) for e in inner[k])
        if sym.impute is not None:
            missing_bin = int(np.searchsorted(edges, float(sym.impute), side="right"))
        else:
            missing_bin = None
        columns = range(nbins[k]) if onehot else [None]
        for m in columns:
            vals: Dict[Any, Any] = {}
            for b in range(nbins[k]):
                vals[("bin", b)] = (1.0 if b == m else 0.0) if onehot else float(b)
            vals[MISSING] = RAISE if missing_bin is None else vals[("bin", missing_bin)]
            out.append(Sym(source=sym.source, kind="table", domain="bins",
                           values=vals, edges=edges, step=name,
                           impute=None if sym.impute is None else float(sym.impute)))
    return out
