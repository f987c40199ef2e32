"""Python values -> plumbline.v1 records, and replies -> result types.

Internal to the client. NumPy and pandas are never imported here: their
objects are recognised by what they offer, so the client works with
python3-grpcio and python3-protobuf alone.
"""
from __future__ import annotations

import math
import numbers
from typing import Any, Callable, List, Mapping, Optional, Sequence, Tuple

from plumbline.results import Reason, Score, SetInfo
from plumbline.v1 import scoring_pb2


def is_integer(v: Any) -> bool:
    return isinstance(v, numbers.Integral) and not isinstance(v, bool) and \
        type(v).__name__ not in ("bool_", "bool")


def is_number(v: Any) -> bool:
    return isinstance(v, numbers.Real) and not isinstance(v, bool) and \
        type(v).__name__ not in ("bool_", "bool")


def _is_missing(v: Any, nan_is_missing: bool) -> bool:
    if v is None or type(v).__name__ in ("NAType", "NaTType"):
        return True
    return nan_is_missing and isinstance(v, numbers.Real) and \
        not is_integer(v) and math.isnan(float(v))


def _value(name: str, v: Any, schema: Optional[SetInfo], nan_is_missing: bool):
    """The Struct value of feature `name`: None, float, str or bool (plumbd
    refuses booleans with a message naming the feature)."""
    if _is_missing(v, nan_is_missing):
        return None
    if isinstance(v, str):
        return str(v)
    if isinstance(v, bool) or type(v).__name__ == "bool_":
        return bool(v)
    if isinstance(v, numbers.Real):
        f = schema.feature(name) if schema is not None else None
        if f is not None and f.kind == "categorical":
            # Integer-coded categories: the export writes levels as their
            # decimal text ("3"); an integral float is what pandas makes of
            # an integer column with a missing cell.
            if is_integer(v) or float(v).is_integer():
                return str(int(v))
        return float(v)
    raise ValueError(f"feature '{name}': cannot send a value of type "
                     f"{type(v).__name__}; use a number, a string or None")


def fill_struct(struct, features: Mapping[str, Any], schema: Optional[SetInfo],
                nan_is_missing: bool) -> None:
    for name, v in features.items():
        struct[str(name)] = _value(str(name), v, schema, nan_is_missing)


def score_from_proto(s, set: str, version: str) -> Score:
    return Score(record_id=s.record_id, log_odds=s.log_odds,
                 probability=s.probability,
                 reasons=tuple(Reason(r.feature, r.contribution) for r in s.reasons),
                 set=set, version=version)


def _chunks(n: int, size: Optional[int]):
    if size is not None and size <= 0:
        raise ValueError(f"chunk_rows must be > 0, got {size}")
    if n == 0:
        return [(0, 0)]  # plumbd refuses an empty batch with INVALID_ARGUMENT
    step = n if not size else size
    return [(i, min(n, i + step)) for i in range(0, n, max(step, 1))]


def _ids(record_ids: Optional[Sequence[str]], n: int) -> List[str]:
    if record_ids is None:
        return [""] * n
    ids = [str(i) for i in record_ids]
    if len(ids) != n:
        raise ValueError(f"record_ids has {len(ids)} ids for {n} rows")
    return ids


def _is_frame(rows: Any) -> bool:
    return hasattr(rows, "columns") and hasattr(rows, "iloc") and hasattr(rows, "dtypes")


def _is_array(rows: Any) -> bool:
    return hasattr(rows, "ndim") and hasattr(rows, "shape") and hasattr(rows, "dtype")


def batch_requests(set: str, rows: Any, *, record_ids, columns, nan_is_missing,
                   reasons, schema: Callable[[], SetInfo], chunk_rows
                   ) -> List[Tuple[scoring_pb2.ScoreBatchRequest, Optional[List[str]]]]:
    """The ScoreBatch requests for `rows`, each with the dense columns it
    sends by name (None for named records and for the set's own order)."""
    if _is_frame(rows):
        return _frame_requests(set, rows, record_ids, nan_is_missing, reasons,
                               schema, chunk_rows)
    if _is_array(rows):
        if rows.ndim != 2:
            raise ValueError(f"a NumPy array of rows must be 2-D, got shape {rows.shape}")
        names = [str(c) for c in columns] if columns is not None else []
        if names and len(names) != rows.shape[1]:
            raise ValueError(f"columns names {len(names)} columns but the array "
                             f"has {rows.shape[1]}")
        values = rows.astype("float64").tolist()
        return _dense_requests(set, names, values, _ids(record_ids, len(values)),
                               nan_is_missing, reasons, chunk_rows)
    if isinstance(rows, Mapping):
        raise ValueError("score_batch takes a list of dicts, a DataFrame or a "
                         "2-D array; for one record use score()")
    rows = list(rows)
    for i, r in enumerate(rows):
        if not isinstance(r, Mapping):
            raise ValueError(f"rows[{i}] is a {type(r).__name__}, not a dict")
    needs_schema = any(is_number(v) for r in rows for v in r.values())
    info = schema() if needs_schema else None
    return _record_requests(set, rows, _ids(record_ids, len(rows)), info,
                            nan_is_missing, reasons, chunk_rows)


def _frame_requests(set, frame, record_ids, nan_is_missing, reasons, schema,
                    chunk_rows):
    names = [str(c) for c in frame.columns]
    if len(set_of := {*names}) != len(names):
        raise ValueError("the DataFrame has repeated column names")
    n = len(frame)
    if record_ids is None and "record_id" in set_of:
        record_ids = [str(v) for v in frame["record_id"].tolist()]
    features = [c for c in frame.columns if str(c) != "record_id"]
    feature_names = [str(c) for c in features]
    info = schema()
    categorical = any((f := info.feature(c)) is not None and f.kind == "categorical"
                      for c in feature_names)
    numeric = all(frame[c].dtype.kind in "iuf" for c in features)
    ids = _ids(record_ids, n)
    if numeric and not categorical:
        values = frame[features].to_numpy(dtype="float64").tolist()
        return _dense_requests(set, feature_names, values, ids, nan_is_missing,
                               reasons, chunk_rows)
    rows = [dict(zip(feature_names, r))
            for r in frame[features].itertuples(index=False, name=None)]
    return _record_requests(set, rows, ids, info, nan_is_missing, reasons, chunk_rows)


def _dense_requests(set, names, values, ids, nan_is_missing, reasons, chunk_rows):
    out = []
    for start, end in _chunks(len(values), chunk_rows):
        request = scoring_pb2.ScoreBatchRequest(set=set, reasons=reasons)
        request.dense.columns.extend(names)
        request.dense.nan_is_missing = nan_is_missing
        for i in range(start, end):
            request.dense.rows.add(record_id=ids[i], values=values[i])
        out.append((request, names or None))
    return out


def _record_requests(set, rows, ids, info, nan_is_missing, reasons, chunk_rows):
    out = []
    for start, end in _chunks(len(rows), chunk_rows):
        request = scoring_pb2.ScoreBatchRequest(set=set, reasons=reasons)
        for i in range(start, end):
            record = request.records.add(record_id=ids[i])
            try:
                fill_struct(record.features, rows[i], info, nan_is_missing)
            except ValueError as e:
                raise ValueError(f"rows[{i}]: {e}") from None
        out.append((request, None))
    return out
