"""From (column, coefficient) terms per raw column to plumbd features.

plumbd scores log-odds = intercept + sum of one contribution per feature
(scorer/scoring_plan.cc): numeric coefficient * (clip(x) - center) / scale,
categorical the level's coefficient, binned the bin's coefficient; a
missing value is refused (REJECT), replaced (IMPUTE) or contributes a
constant (INDICATOR); an unseen level is refused, contributes 0 or counts as
missing. A raw column's terms are summed here into one such feature; a
constant a feature adds to every present value moves into the intercept.
Whatever cannot be written that way is refused, naming the step.
"""
from __future__ import annotations

from typing import Any, Dict, List, Sequence, Tuple

from plumbline.export._columns import MISSING, PRESENT, RAISE, UNKNOWN, Sym
from plumbline.export._document import finite


def _sum(values: Sequence[Any]):
    if any(v is RAISE for v in values):
        return RAISE
    total = 0.0
    for v in values:
        total += v
    return total


def _mul(c: float, v: Any):
    return RAISE if v is RAISE else c * v


class Feature:
    """One plumbd feature and the constant it moves into the intercept."""

    def __init__(self, doc: Dict[str, Any], shift: float, kind: str):
        self.doc = doc
        self.shift = shift
        self.kind = kind


def build(source: str, terms: List[Tuple[Sym, float]]) -> Feature:
    raws = [(s, c) for s, c in terms if s.kind == "raw"]
    flags = [(s, c) for s, c in terms if s.kind == "table" and s.domain == "flag"]
    levels = [(s, c) for s, c in terms if s.kind == "table" and s.domain == "levels"]
    bins = [(s, c) for s, c in terms if s.kind == "table" and s.domain == "bins"]
    kinds = [k for k, t in (("numeric", raws), ("categorical", levels),
                            ("binned", bins)) if t]
    if len(kinds) > 1:
        steps = sorted({s.step or "a numeric step" for s, _ in terms})
        raise ValueError(f"column '{source}' is used as {' and '.join(kinds)} "
                         f"(steps {', '.join(steps)}); a plumbd feature has one "
                         "transform")
    if not kinds:
        raise ValueError(f"column '{source}' is used only through a missing "
                         f"indicator (step '{flags[0][0].step}'); plumbd "
                         "needs a transform for it")
    # Flags add a constant when present and another when missing.
    present_flags = _sum([_mul(c, s.values[PRESENT]) for s, c in flags])
    missing_flags = _sum([_mul(c, s.values[MISSING]) for s, c in flags])
    if kinds[0] == "numeric":
        return _numeric(source, raws, flags, present_flags, missing_flags)
    if kinds[0] == "categorical":
        return _categorical(source, levels, flags, present_flags, missing_flags)
    return _binned(source, bins, flags, present_flags, missing_flags)


def _missing_rule(missing_total, present_shift: float, impute_rule):
    """REJECT, the IMPUTE rule given, or INDICATOR with the constant."""
    if missing_total is RAISE:
        return {"kind": "REJECT"}
    if impute_rule is not None:
        return impute_rule
    return {"kind": "INDICATOR",
            "indicator_coefficient": finite(missing_total - present_shift,
                                            "indicator_coefficient")}


def _numeric(source, raws, flags, present_flags, missing_flags) -> Feature:
    if len(raws) > 1:
        raise ValueError(f"column '{source}' reaches the model in {len(raws)} "
                         "numeric columns; plumbd's numeric feature has one")
    sym, coef = raws[0]
    if sym.impute is not None:
        if isinstance(sym.impute, str):
            raise ValueError(f"column '{source}': imputed with the text "
                             f"{sym.impute!r} but used as a number")
        at_missing = coef * ((float(sym.impute) - sym.c) / sym.s)
    elif sym.missing_out is not None:
        at_missing = coef * sym.missing_out
    else:
        at_missing = RAISE
    missing_total = _sum([at_missing, missing_flags])
    impute_rule = None
    if not flags and sym.impute is not None:
        impute_rule = {"kind": "IMPUTE",
                       "impute_number": finite(sym.impute, f"{source} impute value")}
    doc = {"name": source,
           "numeric": {"center": finite(sym.c, f"{source} center"),
                       "scale": finite(sym.s, f"{source} scale"),
                       "coefficient": finite(coef, f"{source} coefficient")},
           "missing": _missing_rule(missing_total, present_flags, impute_rule)}
    if not sym.s > 0:
        raise ValueError(f"column '{source}': scale {sym.s} is not positive")
    return Feature(doc, present_flags, "numeric")


def _categorical(source, terms, flags, present_flags, missing_flags) -> Feature:
    levels = terms[0][0].levels
    value = {L: _sum([_mul(c, s.values[("level", L)]) for s, c in terms]) for L in levels}
    unknown = _sum([_mul(c, s.values[UNKNOWN]) for s, c in terms])
    missing = _sum([_sum([_mul(c, s.values[MISSING]) for s, c in terms]), missing_flags])
    for L, v in value.items():
        if v is RAISE:
            raise ValueError(f"column '{source}': scikit-learn refuses its own "
                             f"level {L!r} (step '{terms[0][0].step}')")
    # scikit-learn: level L gives value[L] + present_flags, an unseen level
    # unknown + present_flags, a missing value `missing`. plumbd: the level's
    # coefficient (or the unseen rule, or the missing rule) + shift, the
    # constant moved into the intercept.
    shift = present_flags
    if unknown is RAISE:
        unseen = "UNSEEN_REJECT"
    elif unknown == 0:
        unseen = "UNSEEN_ZERO"
    elif missing is not RAISE and unknown + present_flags == missing:
        unseen = "UNSEEN_AS_MISSING"
    else:
        # Every level and the missing constant less `unknown`, which the
        # intercept takes: an unseen level then contributes exactly 0.
        unseen = "UNSEEN_ZERO"
        value = {L: v - unknown for L, v in value.items()}
        shift = present_flags + unknown
    impute_level = terms[0][0].impute
    impute_rule = None
    if (not flags and shift == 0 and impute_level is not None
            and impute_level in value and missing is not RAISE
            and missing == value[impute_level]):
        impute_rule = {"kind": "IMPUTE", "impute_level": impute_level}
    doc = {"name": source,
           "categorical": {
               "levels": [{"value": L, "coefficient": finite(v, f"{source} level {L}")}
                          for L, v in value.items()],
               "unseen": unseen},
           "missing": _missing_rule(missing, shift, impute_rule)}
    return Feature(doc, shift, "categorical")


def _binned(source, terms, flags, present_flags, missing_flags) -> Feature:
    edges = terms[0][0].edges
    if any(s.edges != edges for s, _ in terms):
        raise ValueError(f"column '{source}' is binned twice with different edges")
    nbins = len(edges) + 1
    coefs = [_sum([_mul(c, s.values[("bin", b)]) for s, c in terms]) for b in range(nbins)]
    missing = _sum([_sum([_mul(c, s.values[MISSING]) for s, c in terms]), missing_flags])
    impute = terms[0][0].impute
    impute_rule = None
    if not flags and impute is not None:
        impute_rule = {"kind": "IMPUTE", "impute_number": finite(impute, f"{source} impute value")}
    doc = {"name": source,
           "binned": {"edges": list(edges),
                      "coefficients": [finite(v, f"{source} bin {b}")
                                       for b, v in enumerate(coefs)]},
           "missing": _missing_rule(missing, present_flags, impute_rule)}
    return Feature(doc, present_flags, "binned")
