"""from_sklearn: a fitted scikit-learn LogisticRegression (alone or at the
end of a Pipeline) -> a coefficient-set document.

Supported steps before the model: StandardScaler, SimpleImputer (NaN/None
missing values, any strategy, add_indicator), OneHotEncoder (any drop,
handle_unknown and infrequent grouping whose unseen rule plumbd has),
KBinsDiscretizer (any strategy, onehot or ordinal), nested Pipelines of
these, and a ColumnTransformer of them as the first step ('drop',
'passthrough', remainder). Anything else is refused with a ValueError
naming the step.
"""
from __future__ import annotations

import datetime
from collections import Counter
from typing import Any, Dict, List, Optional, Sequence, Tuple

import numpy as np

from plumbline.export import _columns as C
from plumbline.export import _document as D
from plumbline.export._features import Feature, build


def _step_syms(step, name: str, syms: List[C.Sym], first: bool) -> List[C.Sym]:
    from sklearn.compose import ColumnTransformer
    from sklearn.impute import SimpleImputer
    from sklearn.pipeline import Pipeline
    from sklearn.preprocessing import (KBinsDiscretizer, OneHotEncoder,
                                       StandardScaler)
    if step is None or (isinstance(step, str) and step == "passthrough"):
        return syms
    kind = type(step)
    if kind is StandardScaler:
        return C.standard_scaler(step, name, syms)
    if kind is SimpleImputer:
        return C.simple_imputer(step, name, syms)
    if kind is OneHotEncoder:
        return C.one_hot_encoder(step, name, syms)
    if kind is KBinsDiscretizer:
        return C.kbins_discretizer(step, name, syms)
    if kind is Pipeline:
        for i, (sub_name, sub) in enumerate(step.steps):
            syms = _step_syms(sub, f"{name}.{sub_name}", syms, first and i == 0)
        return syms
    if kind is ColumnTransformer:
        if not first:
            raise C.refuse(name, "a ColumnTransformer must be the first step, "
                                 "where it sees the raw columns")
        return _column_transformer(step, name, syms)
    raise C.refuse(name, f"{kind.__name__} is not a step plumbd can reproduce "
                         "(supported: StandardScaler, SimpleImputer, "
                         "OneHotEncoder, KBinsDiscretizer, ColumnTransformer, "
                         "Pipeline)")


def _resolve(columns, names: List[str], name: str) -> List[int]:
    if callable(columns):
        raise C.refuse(name, "columns chosen by a callable cannot be resolved "
                             "without the training frame; list them")
    if isinstance(columns, slice):
        return list(range(len(names)))[columns]
    if isinstance(columns, (str, int, np.integer)):
        columns = [columns]
    columns = list(columns)
    if columns and all(isinstance(c, (bool, np.bool_)) for c in columns):
        return [i for i, keep in enumerate(columns) if keep]
    out = []
    for c in columns:
        if isinstance(c, str):
            if c not in names:
                raise C.refuse(name, f"column '{c}' is not among the feature names")
            out.append(names.index(c))
        else:
            out.append(int(c))
    return out


def _column_transformer(ct, name: str, syms: List[C.Sym]) -> List[C.Sym]:
    names = [s.source for s in syms]
    if hasattr(ct, "feature_names_in_") and list(ct.feature_names_in_) != names:
        raise C.refuse(name, f"the ColumnTransformer was fitted on columns "
                             f"{list(ct.feature_names_in_)}, feature_names are {names}")
    out: List[C.Sym] = []
    for block, trans, columns in ct.transformers_:
        idx = _resolve(columns, names, f"{name}.{block}")
        if (isinstance(trans, str) and trans == "drop") or not idx:
            continue
        out.extend(_step_syms(trans, f"{name}.{block}", [syms[i] for i in idx],
                              first=False))
    return out


def _model_steps(model) -> Tuple[List[Tuple[str, Any]], Any, str]:
    from sklearn.linear_model import LogisticRegression, LogisticRegressionCV
    from sklearn.pipeline import Pipeline
    if type(model) is Pipeline:
        steps = list(model.steps[:-1])
        final_name, final = model.steps[-1]
    else:
        steps, final_name, final = [], "model", model
    if type(final) not in (LogisticRegression, LogisticRegressionCV):
        raise C.refuse(final_name, f"{type(final).__name__} is not a "
                                   "LogisticRegression")
    if len(final.classes_) != 2:
        raise C.refuse(final_name, f"{len(final.classes_)} classes: plumbd scores "
                                   "binary models only (a multiclass model has "
                                   "one set of coefficients per class)")
    return steps, final, final_name


def _log_odds_factor(lr) -> float:
    """predict_proba's log-odds per unit of decision_function: 1 for
    one-vs-rest, 2 for a binary multinomial model (softmax of [-d, d],
    sklearn/linear_model/_logistic.py predict_proba)."""
    ovr = lr.multi_class in ("ovr", "warn") or (
        lr.multi_class == "auto" and (len(lr.classes_) <= 2 or
                                      lr.solver in ("liblinear", "newton-cholesky")))
    return 1.0 if ovr else 2.0


def from_sklearn(model, feature_names: Sequence[str], training_frame, *,
                 name: str, version: str, description: str = "",
                 training_labels: Optional[Sequence[Any]] = None,
                 training_data: str = "", created_by: str = "",
                 created_at: Optional[datetime.datetime] = None) -> Dict[str, Any]:
    """The coefficient set of a fitted binary LogisticRegression, alone or at
    the end of a Pipeline, as a JSON-ready dict.

    feature_names: the raw input columns in the order the model takes them;
    they become the set's feature names. training_frame: the rows the model
    was fitted on (a DataFrame or a 2-D array with those columns), for the
    baselines. training_labels: optional outcomes of those rows, for the
    training log-loss the drift policy compares with. The set's probability
    is that of model.classes_[1].
    Raises ValueError naming the step for whatever plumbd cannot reproduce.
    """
    import sklearn
    D.check_name(name, version)
    names = [str(n) for n in feature_names]
    if len(set(names)) != len(names):
        raise ValueError("feature_names has repeated names")
    if "record_id" in names:
        raise ValueError("'record_id' is reserved for the record's id; rename the column")
    steps, lr, lr_name = _model_steps(model)
    if getattr(lr, "n_features_in_", None) is not None and not steps \
            and lr.n_features_in_ != len(names):
        raise ValueError(f"the model takes {lr.n_features_in_} columns, "
                         f"feature_names has {len(names)}")
    syms = C.raw_columns(names, [_marker(training_frame, names, n) for n in names])
    for i, (step_name, step) in enumerate(steps):
        syms = _step_syms(step, step_name, syms, first=i == 0)
    factor = _log_odds_factor(lr)
    coef = np.asarray(lr.coef_, dtype=float)
    if coef.shape != (1, len(syms)):
        raise C.refuse(lr_name, f"coef_ has shape {coef.shape}, the steps before "
                                f"it make {len(syms)} columns")
    terms: Dict[str, List[Tuple[C.Sym, float]]] = {}
    for sym, c in zip(syms, coef[0]):
        terms.setdefault(sym.source, []).append((sym, float(c) * factor))
    intercept = float(np.ravel(lr.intercept_)[0]) * factor if np.size(lr.intercept_) else 0.0
    features: List[Feature] = []
    for n in names:
        if n in terms:
            features.append(build(n, terms[n]))
    for f in features:
        intercept += f.shift
    unused = [n for n in names if n not in terms]
    docs = [f.doc for f in features]
    _add_baselines(docs, names, training_frame)
    if hasattr(training_frame, "columns") and hasattr(training_frame, "iloc"):
        training_frame = training_frame[names]  # the label may be a column too
    probability = model.predict_proba(training_frame)[:, 1]
    rows = D.frame_rows(training_frame)
    ll = loss = None
    if training_labels is not None:
        y = [1.0 if v == lr.classes_[1] else 0.0 for v in list(training_labels)]
        if len(y) != rows:
            raise ValueError(f"training_labels has {len(y)} values for {rows} rows")
        ll, loss = D.log_loss_figures(y, probability)
    notes = [f"probability of class {lr.classes_[1]!r} (classes {list(lr.classes_)}); "
             f"report outcomes as 1 for {lr.classes_[1]!r} and 0 for {lr.classes_[0]!r}"]
    if factor != 1.0:
        notes.append("multinomial binary model: coefficients doubled (softmax of "
                     "[-d, d] is the logistic of 2d)")
    if unused:
        notes.append(f"columns the model does not use (not features of the set; "
                     f"do not send them): {', '.join(unused)}")
    if any(s.composed for s in syms):
        notes.append("two scalers in a row were composed into one centre and scale")
    params = lr.get_params()
    method = (f"scikit-learn {sklearn.__version__} {type(lr).__name__}("
              f"penalty={params.get('penalty')!r}, C={params.get('C')!r}, "
              f"solver={params.get('solver')!r}, class_weight={params.get('class_weight')!r})")
    if steps:
        method += " after " + " -> ".join(f"{n}:{type(s).__name__}" for n, s in steps
                                          if s is not None)
    doc: Dict[str, Any] = {
        "name": name, "version": version,
        "description": description,
        "intercept": D.finite(intercept, "intercept"),
        "features": docs,
        "score_baseline": D.quantile_distribution(probability.tolist(), 0),
        "provenance": D.provenance(
            created_by=created_by or "plumbline.export.from_sklearn",
            method=method,
            training_data=training_data or f"{rows} rows passed as training_frame",
            training_rows=rows, notes="; ".join(notes), created_at=created_at,
            log_likelihood=ll, log_loss=loss),
    }
    return doc


def _marker(frame, names: List[str], name: str):
    """None when the column's missing training cells are None (a text
    column built by hand), else NaN (what pandas reads from CSV). Both in
    one column are refused: scikit-learn treats them differently and plumbd
    receives both as null."""
    values = D.column_values(frame, names, name)
    nones = any(v is None for v in values)
    nans = any(isinstance(v, (float, np.floating)) and np.isnan(v) for v in values)
    if nones and nans:
        raise ValueError(f"training_frame column '{name}' marks missing cells "
                         "with both None and NaN, which scikit-learn treats "
                         "differently; use one")
    return None if nones else float("nan")


def _add_baselines(docs: List[Dict[str, Any]], names: List[str], frame) -> None:
    for doc in docs:
        values = D.column_values(frame, names, doc["name"])
        if "categorical" in doc:
            where = f"training_frame column '{doc['name']}'"
            texts = [None if D.is_missing(v) else D.level_text(v, where) for v in values]
            doc["baseline"] = D.level_distribution(texts)
            known = {lv["value"] for lv in doc["categorical"]["levels"]}
            counts = Counter(t for t in texts if t in known)
            if counts:
                doc["categorical"]["reference_level"] = counts.most_common(1)[0][0]
        else:
            present, missing = D.numeric_column(values, doc["name"])
            doc["baseline"] = D.quantile_distribution(present, missing)
            t = doc.get("numeric") or doc.get("binned")
            if present and ("binned" in doc or t["center"] == 0.0):
                # Reason codes measure from a typical value: the training
                # median when the set has no centre of its own.
                t["reference"] = float(np.median(present))
