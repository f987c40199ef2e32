"""Plain result types of the client: small frozen dataclasses, no protobuf.

Each mirrors a reply of proto/plumbline/v1/*.proto; the field comments
there are the reference for what each value means.
"""
from __future__ import annotations

import datetime
from dataclasses import dataclass
from typing import List, Optional, Tuple


@dataclass(frozen=True)
class Reason:
    """A feature's contribution to the log-odds minus its contribution at
    the set's reference point."""
    feature: str
    contribution: float


@dataclass(frozen=True)
class Score:
    record_id: str
    log_odds: float
    probability: float
    reasons: Tuple[Reason, ...] = ()
    set: str = ""
    version: str = ""


@dataclass(frozen=True)
class ScoreBatch:
    """Scores of one ScoreBatch call, in request order."""
    set: str
    version: str
    scores: Tuple[Score, ...]

    def __len__(self) -> int:
        return len(self.scores)

    def __iter__(self):
        return iter(self.scores)

    def __getitem__(self, i):
        return self.scores[i]

    @property
    def probabilities(self) -> List[float]:
        return [s.probability for s in self.scores]

    @property
    def log_odds(self) -> List[float]:
        return [s.log_odds for s in self.scores]

    @property
    def record_ids(self) -> List[str]:
        return [s.record_id for s in self.scores]


@dataclass(frozen=True)
class FeatureInfo:
    name: str
    kind: str                    # "numeric", "categorical" or "binned"
    levels: Tuple[str, ...] = ()  # categorical: levels in index order
    missing: str = "REJECT"      # the missing rule's enum name


@dataclass(frozen=True)
class SetInfo:
    name: str
    version: str
    description: str
    source: str
    features: Tuple[FeatureInfo, ...]

    def feature(self, name: str) -> Optional[FeatureInfo]:
        for f in self.features:
            if f.name == name:
                return f
        return None


@dataclass(frozen=True)
class OutcomeResult:
    record_id: str
    code: str        # grpc status code name: "OK", "NOT_FOUND", ...
    message: str
    repeat: bool     # the same label had been recorded before

    @property
    def ok(self) -> bool:
        return self.code == "OK"


@dataclass(frozen=True)
class OutcomesReport:
    results: Tuple[OutcomeResult, ...]
    accepted: int
    refused: int


@dataclass(frozen=True)
class Figure:
    """A model-health figure; value is None when it is undefined (note says
    why)."""
    value: Optional[float]
    note: str = ""

    @property
    def defined(self) -> bool:
        return self.value is not None


@dataclass(frozen=True)
class FeatureHealth:
    feature: str
    psi: Figure
    missing_rate: Figure
    out_of_range_rate: Figure


@dataclass(frozen=True)
class WindowHealth:
    window: str      # "count" or "time"
    span: str
    labelled: int
    positives: int
    scored: int
    log_loss: Figure
    brier_score: Figure
    auc: Figure
    auc_grid_bound: float
    expected_calibration_error: Figure
    # Mean predicted probability minus observed rate (a difference of
    # means; the calibration-in-the-large intercept is calibration_intercept).
    mean_predicted_minus_observed: Figure
    calibration_intercept: Figure
    calibration_slope: Figure
    hosmer_lemeshow_statistic: Figure
    hosmer_lemeshow_p_value: Figure
    score_psi: Figure
    features: Tuple[FeatureHealth, ...]
    refused_labelled: int
    refused_scored: int


@dataclass(frozen=True)
class DriftReason:
    metric: str
    window: str
    feature: str
    value: float
    threshold: float
    state: str
    text: str


@dataclass(frozen=True)
class SetHealth:
    set: str
    version: str
    state: str       # "steady", "watch" or "drifting"
    reasons: Tuple[DriftReason, ...]
    notes: Tuple[str, ...]
    windows: Tuple[WindowHealth, ...]
    # None before the monitor's first evaluation of the version.
    evaluated_at: Optional[datetime.datetime]
    labelled_since_start: int

    def window(self, name: str) -> Optional[WindowHealth]:
        for w in self.windows:
            if w.window == name:
                return w
        return None
