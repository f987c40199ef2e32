"""Client of plumbd's gRPC services: Scoring, Outcomes and Monitor.

    client = Client("127.0.0.1:7390", token=os.environ["PLUMBLINE_TOKEN"])
    s = client.score("courier_first_attempt", {"distance_km": 4.2}, reasons=3)
    batch = client.score_batch("courier_first_attempt", frame)  # DataFrame
    client.report_outcomes(batch.record_ids, labels)
    print(client.health("courier_first_attempt").state)

Every refused or failed call raises PlumblineError with the gRPC status
code. A Client holds one channel; it is safe to share between threads
(gRPC channels and stubs are), and close() or `with` releases it.
"""
from __future__ import annotations

import datetime
import os
import threading
from dataclasses import dataclass
from typing import Any, Dict, Iterable, List, Mapping, Optional, Sequence, Union

import grpc

from plumbline import _records
from plumbline.errors import PlumblineError
from plumbline.results import (FeatureInfo, OutcomeResult, OutcomesReport,
                               Score, ScoreBatch, SetHealth, SetInfo)
from plumbline import _health
from plumbline.v1 import monitor_pb2, monitor_pb2_grpc
from plumbline.v1 import outcomes_pb2, outcomes_pb2_grpc
from plumbline.v1 import scoring_pb2, scoring_pb2_grpc

DEFAULT_ADDR = "127.0.0.1:7390"

_ORDERS = {
    "raises": scoring_pb2.RAISES_LOG_ODDS,
    "lowers": scoring_pb2.LOWERS_LOG_ODDS,
    "magnitude": scoring_pb2.MAGNITUDE,
}
_KINDS = {
    scoring_pb2.FeatureSummary.NUMERIC: "numeric",
    scoring_pb2.FeatureSummary.CATEGORICAL: "categorical",
    scoring_pb2.FeatureSummary.BINNED: "binned",
}


@dataclass(frozen=True)
class Tls:
    """TLS to plumbd. ca: PEM file of the CA that signed plumbd's
    certificate (None: the system's roots). cert and key: the client's PEM
    certificate and key, for mutual TLS. server_name: the name to check
    plumbd's certificate against when it differs from the address's host."""
    ca: Optional[str] = None
    cert: Optional[str] = None
    key: Optional[str] = None
    server_name: Optional[str] = None

    def credentials(self) -> grpc.ChannelCredentials:
        if (self.cert is None) != (self.key is None):
            raise ValueError("Tls: cert and key go together (mutual TLS)")
        return grpc.ssl_channel_credentials(
            root_certificates=_read(self.ca),
            private_key=_read(self.key),
            certificate_chain=_read(self.cert))


def _read(path: Optional[str]) -> Optional[bytes]:
    if path is None:
        return None
    with open(path, "rb") as f:
        return f.read()


class Client:
    """One connection to plumbd.

    addr: "HOST:PORT" (default 127.0.0.1:7390, plumbd's default).
    token: bearer token for a plumbd with access control; None reads
        PLUMBLINE_TOKEN from the environment, as plumbctl does ("" sends
        none).
    tls: None for plain text (plumbd allows it on loopback only), a Tls, or
        the path of a CA file (Tls(ca=path)).
    timeout: seconds each call may take (its gRPC deadline).
    """

    def __init__(self, addr: str = DEFAULT_ADDR, token: Optional[str] = None,
                 tls: Union[None, Tls, str] = None, timeout: float = 30.0):
        if token is None:
            token = os.environ.get("PLUMBLINE_TOKEN", "")
        self._metadata = (("authorization", f"Bearer {token}"),) if token else ()
        self._timeout = timeout
        if isinstance(tls, str):
            tls = Tls(ca=tls)
        if tls is None:
            self._channel = grpc.insecure_channel(addr)
        else:
            options = []
            if tls.server_name:
                options.append(("grpc.ssl_target_name_override", tls.server_name))
            self._channel = grpc.secure_channel(addr, tls.credentials(), options)
        self._scoring = scoring_pb2_grpc.ScoringStub(self._channel)
        self._outcomes = outcomes_pb2_grpc.OutcomesStub(self._channel)
        self._monitor = monitor_pb2_grpc.MonitorStub(self._channel)
        self._schemas: Dict[str, SetInfo] = {}
        self._schemas_mu = threading.Lock()

    def close(self) -> None:
        self._channel.close()

    def __enter__(self) -> "Client":
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    # --- Scoring ---------------------------------------------------------

    def score(self, set: str, features: Mapping[str, Any], reasons: int = 0,
              *, record_id: str = "", order: str = "raises",
              nan_is_missing: bool = True) -> Score:
        """Scores one record against the active version of `set`.

        features: name -> value; numbers for numeric and binned features,
        strings for categorical ones (an integer, or an integral float, is
        sent as its decimal text when the set's feature is categorical, as
        the export writes integer categories), None for missing.
        NaN counts as missing unless nan_is_missing is False (plumbd then
        refuses it). reasons: how many reason codes to return, in `order`
        ("raises", "lowers" or "magnitude"). record_id: the id to report
        the outcome under; plumbd makes one up when empty.
        """
        request = scoring_pb2.ScoreRequest(
            set=set, reasons=_reason_options(reasons, order))
        request.record.record_id = record_id
        schema = self._schema_if_needed(set, [features])
        _records.fill_struct(request.record.features, features, schema,
                             nan_is_missing)
        reply = self._call(self._scoring.Score, request, "Score")
        return _records.score_from_proto(reply.score, reply.set, reply.version)

    def score_batch(self, set: str, rows: Any, *, record_ids: Optional[Sequence[str]] = None,
                    columns: Optional[Sequence[str]] = None, reasons: int = 0,
                    order: str = "raises", nan_is_missing: bool = True,
                    chunk_rows: Optional[int] = None) -> ScoreBatch:
        """Scores many records against one set, in one all-or-nothing call.

        rows is one of:
        - a list of dicts (name -> value, as for score());
        - a pandas DataFrame whose columns are feature names (a column
          "record_id" gives the ids). Numeric and binned columns go in
          plumbd's dense form; a frame with a categorical feature goes as
          named records, so that level names never depend on a level order
          that a new version of the set could change;
        - a 2-D NumPy array in the dense form: one column per name in
          `columns` (default: every feature of the set in the set's order);
          numeric and binned columns hold raw values, categorical ones the
          level index (see SetInfo.features[i].levels).
        NaN (or None) counts as missing unless nan_is_missing is False.
        record_ids: one id per row (default: the frame's record_id column,
        else plumbd makes them up; they come back in the result).
        chunk_rows: send at most this many rows per call (each call is then
        all-or-nothing on its own); default one call.
        """
        options = _reason_options(reasons, order)
        requests = _records.batch_requests(
            set, rows, record_ids=record_ids, columns=columns,
            nan_is_missing=nan_is_missing, reasons=options,
            schema=lambda: self._schema(set), chunk_rows=chunk_rows)
        scores: List[Score] = []
        version = ""
        for request, dense_columns in requests:
            reply = self._call(self._scoring.ScoreBatch, request, "ScoreBatch")
            if dense_columns and version != reply.version:
                self._check_dense_still_numeric(set, reply.version, dense_columns)
            version = reply.version
            scores.extend(_records.score_from_proto(s, reply.set, reply.version)
                          for s in reply.scores)
        return ScoreBatch(set=set, version=version, scores=tuple(scores))

    def sets(self) -> List[SetInfo]:
        """The loaded sets, their active versions and feature schemas."""
        reply = self._call(self._scoring.ListSets, scoring_pb2.ListSetsRequest(),
                           "ListSets")
        out = [SetInfo(name=s.name, version=s.version, description=s.description,
                       source=s.source,
                       features=tuple(FeatureInfo(
                           name=f.name, kind=_KINDS.get(f.kind, "unspecified"),
                           levels=tuple(f.levels), missing=f.missing)
                           for f in s.features))
               for s in reply.sets]
        with self._schemas_mu:
            self._schemas = {s.name: s for s in out}
        return out

    # --- Outcomes --------------------------------------------------------

    def report_outcome(self, record_id: str, label: int,
                       observed_at: Optional[datetime.datetime] = None) -> OutcomeResult:
        """Reports one outcome. Raises PlumblineError: NOT_FOUND when no
        score has that id, FAILED_PRECONDITION when a different label was
        recorded before, INVALID_ARGUMENT for a bad id or label."""
        request = outcomes_pb2.ReportOutcomeRequest(
            outcome=_outcome(record_id, label, observed_at))
        reply = self._call(self._outcomes.ReportOutcome, request, "ReportOutcome")
        return OutcomeResult(record_id=reply.result.record_id or record_id,
                             code="OK", message="", repeat=reply.result.repeat)

    def report_outcomes(self, ids: Sequence[str], labels: Sequence[int],
                        observed_at: Union[None, datetime.datetime,
                                           Sequence[datetime.datetime]] = None,
                        *, strict: bool = True) -> OutcomesReport:
        """Reports many outcomes in one call: labels are 0/1 (1 = the event
        the set predicts happened); observed_at is None (when reported), one
        time for all, or one per outcome (naive datetimes are taken as UTC).

        Each outcome is accepted or refused on its own. With strict (the
        default) any refusal raises PlumblineError carrying the first
        refusal's code and the whole report (error.report) — the accepted
        ones are recorded all the same; strict=False returns the report.
        """
        ids = list(ids)
        labels = list(labels)
        if len(ids) != len(labels):
            raise ValueError(f"report_outcomes: {len(ids)} ids but {len(labels)} labels")
        if observed_at is None or isinstance(observed_at, datetime.datetime):
            times = [observed_at] * len(ids)
        else:
            times = list(observed_at)
            if len(times) != len(ids):
                raise ValueError(f"report_outcomes: {len(ids)} ids but "
                                 f"{len(times)} observed_at times")
        request = outcomes_pb2.ReportOutcomesRequest(
            outcomes=[_outcome(i, l, t) for i, l, t in zip(ids, labels, times)])
        reply = self._call(self._outcomes.ReportOutcomes, request, "ReportOutcomes")
        results = tuple(OutcomeResult(
            record_id=r.record_id, code=_status_code(r.code).name,
            message=r.message, repeat=r.repeat) for r in reply.results)
        report = OutcomesReport(results=results, accepted=reply.accepted,
                                refused=reply.refused)
        if strict and reply.refused:
            first = next(r for r in reply.results if r.code != 0)
            error = PlumblineError(
                _status_code(first.code),
                f"{reply.refused} of {len(ids)} outcomes refused; first, "
                f"record '{first.record_id}': {first.message}", "ReportOutcomes")
            error.report = report
            raise error
        return report

    # --- Monitor ---------------------------------------------------------

    def health(self, set: str) -> SetHealth:
        """The monitor's last evaluation of the set's active version."""
        reply = self._call(self._monitor.GetSetHealth,
                           monitor_pb2.GetSetHealthRequest(set=set), "GetSetHealth")
        return _health.from_proto(reply)

    # --- internals -------------------------------------------------------

    def _call(self, method, request, name: str):
        try:
            return method(request, timeout=self._timeout, metadata=self._metadata)
        except grpc.RpcError as e:
            raise PlumblineError.from_rpc_error(e, name) from None

    def _schema(self, set: str) -> SetInfo:
        with self._schemas_mu:
            if set in self._schemas:
                return self._schemas[set]
        for s in self.sets():
            if s.name == set:
                return s
        raise PlumblineError(grpc.StatusCode.NOT_FOUND,
                             f"set '{set}' is not loaded", "ListSets")

    def _schema_if_needed(self, set: str, rows: Iterable[Mapping[str, Any]]):
        """The schema (one ListSets per set and client), fetched only when a
        value's meaning depends on it: a number may be an integer-coded
        level of a categorical feature."""
        if any(_records.is_number(v) for row in rows for v in row.values()):
            return self._schema(set)
        return None

    def _check_dense_still_numeric(self, set: str, version: str,
                                   columns: Sequence[str]) -> None:
        schema = self._schema(set)
        if schema.version != version:
            with self._schemas_mu:
                self._schemas.pop(set, None)
            schema = self._schema(set)
        for name in columns:
            f = schema.feature(name)
            if f is not None and f.kind == "categorical":
                raise PlumblineError(
                    grpc.StatusCode.FAILED_PRECONDITION,
                    f"set '{set}' changed to version {version} during the call "
                    f"and its feature '{name}' is now categorical: the numbers "
                    "sent were read as level indices; score again", "ScoreBatch")


_CODE_BY_NUMBER = {c.value[0]: c for c in grpc.StatusCode}


def _status_code(number: int) -> grpc.StatusCode:
    """The grpc.StatusCode of a google.rpc.Code number."""
    return _CODE_BY_NUMBER.get(number, grpc.StatusCode.UNKNOWN)


def _reason_options(top: int, order: str) -> scoring_pb2.ReasonOptions:
    if top < 0:
        raise ValueError(f"reasons must be >= 0, got {top}")
    key = order.lower()
    if key not in _ORDERS:
        raise ValueError(f"order must be one of {sorted(_ORDERS)}, got {order!r}")
    return scoring_pb2.ReasonOptions(top=top, order=_ORDERS[key])


def _outcome(record_id: str, label: Any, observed_at) -> outcomes_pb2.Outcome:
    if (isinstance(label, bool) or _records.is_integer(label) or
            isinstance(label, float)) and label in (0, 1):
        value = int(label)
    else:
        raise ValueError(f"record '{record_id}': label must be 0 or 1, got {label!r}")
    out = outcomes_pb2.Outcome(record_id=str(record_id), label=value)
    if observed_at is not None:
        if observed_at.tzinfo is None:
            observed_at = observed_at.replace(tzinfo=datetime.timezone.utc)
        out.observed_at.FromDatetime(observed_at.astimezone(datetime.timezone.utc))
    return out
