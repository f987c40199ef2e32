"""Coefficient sets from the tools people fit with.

    doc = export.from_sklearn(pipeline, feature_names, X_train,
                              name="parcel_failure", version="2026-12-01.1")
    with open("sets/parcel_failure.json", "w") as f:
        json.dump(doc, f, indent=1)

Each function returns the set as a dict in protobuf's JSON form of
plumbline.v1.CoefficientSet (proto field names), ready for json.dump; plumbd
scores it exactly as the fitted model predicts (to rounding), and whatever
it could not reproduce is refused with a ValueError naming the step.
scikit-learn and statsmodels are imported only by the function that needs
them.
"""
from plumbline.export._sklearn import from_sklearn
from plumbline.export._statsmodels import from_statsmodels
from plumbline.export._set_model import SetModel, to_sklearn

__all__ = ["from_sklearn", "from_statsmodels", "to_sklearn", "SetModel"]
