"""from_statsmodels: a fitted statsmodels Logit or GLM(Binomial, logit link)
result -> a coefficient-set document.

Array or DataFrame exog: each non-constant column is a numeric feature
(centre 0, scale 1) and the constant column the intercept. Formula models
(statsmodels.formula.api): plain numeric variables become numeric
features and categorical factors (C(x), or text columns) categorical ones,
each level's coefficient read through the factor's contrast matrix;
interactions and transformed terms (np.log(x), I(x**2)) are refused.
Standard errors go into provenance.notes: the set file has no field of its
own for them.
"""
from __future__ import annotations

import datetime
import re
from typing import Any, Dict, List, Optional, Sequence, Tuple

import numpy as np

from plumbline.export import _document as D

_PLAIN = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")
_C_CALL = re.compile(r"^C\(\s*([A-Za-z_][A-Za-z0-9_]*)\s*\)$")


def _check_model(result) -> str:
    import statsmodels.api as sm
    from statsmodels.discrete.discrete_model import Logit
    model = result.model
    if type(model) is Logit:
        return "Logit"
    if type(model) is sm.GLM:
        family = model.family
        if type(family) is not sm.families.Binomial:
            raise ValueError(f"GLM family {type(family).__name__}: only Binomial "
                             "is a logistic model")
        if type(family.link).__name__.lower() != "logit":
            raise ValueError(f"GLM Binomial link {type(family.link).__name__}: "
                             "plumbd scores the logit link only")
        for attr in ("offset", "exposure"):
            if getattr(model, attr, None) is not None:
                raise ValueError(f"GLM with an {attr}: the set has no per-record "
                                 f"{attr}, so scores would differ")
        return "GLM(Binomial, logit)"
    raise ValueError(f"{type(model).__name__} results cannot be exported: use "
                     "Logit or GLM with the Binomial family")


def _converged(result, kind: str) -> str:
    if kind == "Logit":
        ret = getattr(result, "mle_retvals", None) or {}
        if ret.get("converged") is False:
            raise ValueError("the Logit fit did not converge; a set is only made "
                             "from a converged fit")
        method = getattr(result, "mle_settings", {}).get("optimizer", "")
        return f"maximum likelihood ({method}), {ret.get('iterations', '?')} iterations"
    if getattr(result, "converged", True) is False:
        raise ValueError("the GLM fit did not converge; a set is only made from "
                         "a converged fit")
    iterations = (getattr(result, "fit_history", None) or {}).get("iteration", "?")
    return f"IRLS, {iterations} iterations"


def _array_features(result, names: List[str], feature_names) -> Tuple[float, List[dict], List[str]]:
    model = result.model
    params = np.asarray(result.params, dtype=float)
    const = getattr(model.data, "const_idx", None) if getattr(model, "k_constant", 0) else None
    intercept = float(params[const]) if const is not None else 0.0
    columns = [i for i in range(len(params)) if i != const]
    if feature_names is None:
        feature_names = [names[i] for i in columns]
    feature_names = [str(n) for n in feature_names]
    if len(feature_names) != len(columns):
        raise ValueError(f"feature_names has {len(feature_names)} names for the "
                         f"{len(columns)} non-constant exog columns {[names[i] for i in columns]}")
    docs = [{"name": n, "numeric": {"center": 0.0, "scale": 1.0,
                                    "coefficient": D.finite(params[i], n)},
             "missing": {"kind": "REJECT"}}
            for n, i in zip(feature_names, columns)]
    return intercept, docs, feature_names


def _formula_features(result, design_info) -> Tuple[float, List[dict], List[str]]:
    params = np.asarray(result.params, dtype=float)
    intercept = 0.0
    docs: List[dict] = []
    for term in design_info.terms:
        cols = design_info.slice(term)
        label = term.name()
        if not term.factors:
            intercept = float(params[cols][0])
            continue
        if len(term.factors) > 1:
            raise ValueError(f"term '{label}': interactions cannot be a plumbd "
                             "feature (one raw value per feature)")
        factor = term.factors[0]
        info = design_info.factor_infos[factor]
        code = factor.code.strip()
        if info.type == "numerical":
            if not _PLAIN.match(code) or info.num_columns != 1:
                raise ValueError(f"term '{label}': only plain numeric variables "
                                 "are supported, not transformed ones")
            docs.append({"name": code, "numeric": {
                "center": 0.0, "scale": 1.0,
                "coefficient": D.finite(params[cols][0], label)},
                "missing": {"kind": "REJECT"}})
            continue
        m = _C_CALL.match(code)
        variable = m.group(1) if m else (code if _PLAIN.match(code) else None)
        if variable is None:
            raise ValueError(f"term '{label}': only C(x) or a plain text column "
                             "can be a categorical feature")
        coding = design_info.term_codings[term]
        if len(coding) != 1 or len(coding[0].contrast_matrices) != 1:
            raise ValueError(f"term '{label}': unexpected coding")
        contrast = np.asarray(coding[0].contrast_matrices[factor].matrix, dtype=float)
        beta = params[cols]
        values = contrast @ beta
        levels = [D.level_text(v, f"term '{label}'") for v in info.categories]
        docs.append({"name": variable, "categorical": {
            "levels": [{"value": L, "coefficient": D.finite(v, f"{label}[{L}]")}
                       for L, v in zip(levels, values)],
            "unseen": "UNSEEN_REJECT"},
            "missing": {"kind": "REJECT"}})
    names = [d["name"] for d in docs]
    if len(set(names)) != len(names):
        raise ValueError(f"a variable appears in two terms ({names}); a plumbd "
                         "feature has one transform")
    return intercept, docs, names


def from_statsmodels(result, feature_names: Optional[Sequence[str]] = None,
                     training_frame=None, *, name: str, version: str,
                     description: str = "", training_data: str = "",
                     created_by: str = "",
                     created_at: Optional[datetime.datetime] = None) -> Dict[str, Any]:
    """The coefficient set of a fitted statsmodels Logit or GLM(Binomial)
    result, as a JSON-ready dict.

    feature_names: names of the non-constant exog columns in order (default
    their exog names; ignored for formula models, whose variables name the
    features). training_frame: the raw rows, for the baselines (default the
    model's own data). Missing values are refused (REJECT), as statsmodels
    cannot score them; unseen levels too (UNSEEN_REJECT).
    """
    import statsmodels
    D.check_name(name, version)
    kind = _check_model(result)
    fit = _converged(result, kind)
    model = result.model
    exog_names = list(model.exog_names)
    design_info = getattr(model.data, "design_info", None)
    if design_info is not None:
        intercept, docs, names = _formula_features(result, design_info)
        if training_frame is None:
            training_frame = model.data.frame
    else:
        intercept, docs, names = _array_features(result, exog_names, feature_names)
        if training_frame is None:
            const = model.data.const_idx if getattr(model, "k_constant", 0) else None
            keep = [i for i in range(model.exog.shape[1]) if i != const]
            training_frame = np.asarray(model.exog)[:, keep]
    for doc in docs:
        values = D.column_values(training_frame, names, doc["name"])
        if "categorical" in doc:
            texts = [None if D.is_missing(v) else D.level_text(v, doc["name"])
                     for v in values]
            doc["baseline"] = D.level_distribution(texts)
            counts = [(texts.count(lv["value"]), lv["value"])
                      for lv in doc["categorical"]["levels"]]
            doc["categorical"]["reference_level"] = max(counts)[1]
        else:
            present, missing = D.numeric_column(values, doc["name"])
            doc["baseline"] = D.quantile_distribution(present, missing)
            if present:
                doc["numeric"]["reference"] = float(np.median(present))
    probability = np.asarray(result.predict(), dtype=float)
    endog = np.asarray(model.endog, dtype=float)
    ll = loss = None
    note_ll = ""
    if endog.ndim == 1 and np.all((endog == 0) | (endog == 1)):
        weights = getattr(model, "freq_weights", None) if kind != "Logit" else None
        ll, loss = D.log_loss_figures(endog, probability, weights)
    else:
        note_ll = "; the outcome is not 0/1, so no training log-loss"
    se = np.asarray(result.bse, dtype=float)
    pairs = ", ".join(f"{n} {s:.10g}" for n, s in zip(exog_names, se))
    notes = (f"standard errors (statsmodels {statsmodels.__version__}, "
             f"{getattr(result, 'cov_type', 'nonrobust')}): {pairs}; "
             f"log-likelihood {float(result.llf):.17g}{note_ll}")
    rows = int(result.nobs)
    return {
        "name": name, "version": version, "description": description,
        "intercept": D.finite(intercept, "intercept"),
        "features": docs,
        "score_baseline": D.quantile_distribution(probability.tolist(), 0),
        "provenance": D.provenance(
            created_by=created_by or "plumbline.export.from_statsmodels",
            method=f"statsmodels {statsmodels.__version__} {kind}, {fit}",
            training_data=training_data or f"{rows} rows of the model's data",
            training_rows=rows, notes=notes, created_at=created_at,
            log_likelihood=ll, log_loss=loss),
    }
