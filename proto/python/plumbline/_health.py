"""plumbline.v1.SetHealth -> plumbline.results.SetHealth. Internal."""
from __future__ import annotations

from plumbline.results import (DriftReason, FeatureHealth, Figure, SetHealth,
                               WindowHealth)
from plumbline.v1 import monitor_pb2

_STATES = {monitor_pb2.STEADY: "steady", monitor_pb2.WATCH: "watch",
           monitor_pb2.DRIFTING: "drifting"}


def _figure(f) -> Figure:
    return Figure(value=f.value if f.defined else None, note=f.note)


def _window(w) -> WindowHealth:
    return WindowHealth(
        window=w.window, span=w.span, labelled=w.labelled,
        positives=w.positives, scored=w.scored,
        log_loss=_figure(w.log_loss), brier_score=_figure(w.brier_score),
        auc=_figure(w.auc), auc_grid_bound=w.auc_grid_bound,
        expected_calibration_error=_figure(w.expected_calibration_error),
        mean_predicted_minus_observed=_figure(
            w.mean_predicted_minus_observed),
        calibration_intercept=_figure(w.calibration_intercept),
        calibration_slope=_figure(w.calibration_slope),
        hosmer_lemeshow_statistic=_figure(w.hosmer_lemeshow_statistic),
        hosmer_lemeshow_p_value=_figure(w.hosmer_lemeshow_p_value),
        score_psi=_figure(w.score_psi),
        features=tuple(FeatureHealth(
            feature=f.feature, psi=_figure(f.psi),
            missing_rate=_figure(f.missing_rate),
            out_of_range_rate=_figure(f.out_of_range_rate)) for f in w.features),
        refused_labelled=w.refused_labelled, refused_scored=w.refused_scored)


def from_proto(h) -> SetHealth:
    return SetHealth(
        set=h.set, version=h.version, state=_STATES.get(h.state, str(h.state)),
        reasons=tuple(DriftReason(
            metric=r.metric, window=r.window, feature=r.feature, value=r.value,
            threshold=r.threshold, state=_STATES.get(r.state, str(r.state)),
            text=r.text) for r in h.reasons),
        notes=tuple(h.notes),
        windows=tuple(_window(w) for w in h.windows),
        evaluated_at=(h.evaluated_at.ToDatetime(tzinfo=_utc())
                      if h.HasField("evaluated_at") else None),
        labelled_since_start=h.labelled_since_start)


def _utc():
    import datetime
    return datetime.timezone.utc
