"""Plumbline from Python: a client for plumbd and coefficient-set export.

    import plumbline
    with plumbline.Client("127.0.0.1:7390") as client:
        s = client.score("courier_first_attempt",
                         {"distance_km": 4.2, "building_type": "flat"},
                         reasons=3)
        print(s.probability, s.reasons)

    from plumbline import export
    doc = export.from_sklearn(pipeline, feature_names, X_train,
                              name="courier_first_attempt", version="1")

The gRPC messages and stubs (plumbline.v1) are generated from
proto/plumbline/v1/*.proto at build time; see DEVELOPERS.md.
"""
from plumbline.errors import PlumblineError
from plumbline.results import (FeatureInfo, FeatureHealth, Figure,
                               OutcomeResult, OutcomesReport, Reason, Score,
                               ScoreBatch, SetHealth, SetInfo, WindowHealth)
from plumbline.client import Client, Tls

__all__ = [
    "Client", "Tls", "PlumblineError", "Score", "ScoreBatch", "Reason",
    "SetInfo", "FeatureInfo", "OutcomeResult", "OutcomesReport", "SetHealth",
    "WindowHealth", "FeatureHealth", "Figure",
]
