"""plumbline.export.from_sklearn, one test per supported shape.

Each fits a model on a data set that scikit-learn or statsmodels ships,
exports it, lets a real plumbd load the JSON, scores the same rows through
the client and requires plumbd's probabilities to equal the model's
predict_proba within 1e-12 (reference: scikit-learn, same run).
Data:
- scikit-learn's breast-cancer data (load_breast_cancer): 569 tumours, 30
  numeric measurements; the label is "benign".
- statsmodels' anes96 (1996 American National Election Study extract):
  944 voters; vote 1 = Clinton. PID (party id 0..6) and educ (1..7) are
  coded categories.
- statsmodels' fair (affairs survey, 6366 women): occupation and religious
  are coded categories; the label is affairs > 0.
Where the tests make cells missing or categories into text, the comment says
how; every such change is deterministic.
"""
from __future__ import annotations

import unittest
import warnings

import numpy as np
import pandas as pd
from sklearn.compose import ColumnTransformer
from sklearn.datasets import load_breast_cancer, load_iris
from sklearn.exceptions import ConvergenceWarning
from sklearn.impute import SimpleImputer
from sklearn.linear_model import LogisticRegression
from sklearn.pipeline import Pipeline, make_pipeline
from sklearn.preprocessing import (FunctionTransformer, KBinsDiscretizer,
                                   OneHotEncoder, PolynomialFeatures,
                                   StandardScaler)
import statsmodels.api as sm

from plumbline import export
from daemon_case import DaemonTestCase, records


def breast_cancer():
    data = load_breast_cancer(as_frame=True)
    X = data.data
    y = data.target  # 1 = benign
    return X, y


def breast_cancer_with_gaps():
    """Breast-cancer data with cells made missing: every 7th row's 'mean
    texture', every 11th row's 'worst area' and every 13th row's 'mean
    smoothness' (deterministic, chosen for the test)."""
    X, y = breast_cancer()
    X = X.copy()
    X.loc[X.index[::7], "mean texture"] = np.nan
    X.loc[X.index[::11], "worst area"] = np.nan
    X.loc[X.index[::13], "mean smoothness"] = np.nan
    return X, y


def anes96():
    d = sm.datasets.anes96.load_pandas().data
    X = d[["PID", "educ", "age", "income", "TVnews", "selfLR", "logpopul",
           "ClinLR"]].copy()
    X["PID"] = X["PID"].astype(int)       # integer categories
    # educ as text levels "educ1".."educ7" (the codes of the data set).
    X["educ"] = "educ" + X["educ"].astype(int).astype(str)
    return X, d["vote"].astype(int)


def fair():
    """The fair data with text categories and gaps: occupation codes 1..6
    become "occ1".."occ6", religious 1..4 "rel1".."rel4"; every 9th row
    misses occupation (NaN), every 15th religious (None), every 10th
    yrs_married, every 12th age (deterministic, chosen for the test)."""
    d = sm.datasets.fair.load_pandas().data
    X = pd.DataFrame({
        "occupation": "occ" + d["occupation"].astype(int).astype(str),
        "religious": "rel" + d["religious"].astype(int).astype(str),
        "rate_marriage": d["rate_marriage"],
        "age": d["age"],
        "yrs_married": d["yrs_married"],
        "children": d["children"],
    })
    X["occupation"] = X["occupation"].astype(object)
    X["religious"] = X["religious"].astype(object)
    X.loc[X.index[::9], "occupation"] = np.nan   # as read from CSV
    X.loc[X.index[::15], "religious"] = None      # as built by hand
    X.loc[X.index[::10], "yrs_married"] = np.nan
    X.loc[X.index[::12], "age"] = np.nan
    return X, (d["affairs"] > 0).astype(int)


def fit_quietly(model, X, y):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ConvergenceWarning)
        return model.fit(X, y)


class LogisticRegressionAlone(DaemonTestCase):
    def test_raw_features(self):
        X, y = breast_cancer()
        model = fit_quietly(LogisticRegression(max_iter=5000), X, y)
        doc = export.from_sklearn(model, list(X.columns), X, name="bc_raw",
                                  version="1", training_labels=y)
        self.load(doc)
        # Reference: scikit-learn's predict_proba on the same 569 rows.
        self.assert_scores_match("bc_raw", X, model.predict_proba(X)[:, 1],
                                 "LogisticRegression on raw columns")
        # The training log-loss in the provenance: scikit-learn's log_loss.
        from sklearn.metrics import log_loss
        self.assertAlmostEqual(doc["provenance"]["training_log_loss"],
                               log_loss(y, model.predict_proba(X)[:, 1]), places=12)

    def test_numpy_array_and_named_records(self):
        X, y = breast_cancer()
        model = fit_quietly(LogisticRegression(max_iter=5000), X.to_numpy(), y)
        names = [f"x{i}" for i in range(X.shape[1])]
        doc = export.from_sklearn(model, names, X.to_numpy(), name="bc_array",
                                  version="1")
        self.load(doc)
        expected = model.predict_proba(X.to_numpy())[:, 1]
        # Reference: predict_proba; the dense form in the set's own order.
        self.assert_scores_match("bc_array", X.to_numpy(), expected, "2-D array")
        # The same rows as named records (list of dicts) and one by one.
        rows = [dict(zip(names, r)) for r in X.to_numpy().tolist()]
        self.assert_scores_match("bc_array", rows, expected, "list of dicts")
        for i in (0, 100, 568):
            s = self.client.score("bc_array", rows[i])
            self.assertLessEqual(abs(s.probability - expected[i]), 1e-12)


class ScalerPipeline(DaemonTestCase):
    def test_standard_scaler(self):
        X, y = breast_cancer()
        model = make_pipeline(StandardScaler(), LogisticRegression(C=0.5))
        model.fit(X, y)
        doc = export.from_sklearn(model, list(X.columns), X, name="bc_scaled",
                                  version="1")
        f = doc["features"][0]["numeric"]
        # The centre and scale are StandardScaler's own mean_ and scale_.
        self.assertEqual(f["center"], model[0].mean_[0])
        self.assertEqual(f["scale"], model[0].scale_[0])
        self.load(doc)
        batch = self.assert_scores_match(
            "bc_scaled", X, model.predict_proba(X)[:, 1], "StandardScaler + LR")
        # Log-odds: scikit-learn's decision_function, 1e-12 absolute.
        d = model.decision_function(X)
        self.assertLessEqual(float(np.max(np.abs(np.array(batch.log_odds) - d))), 1e-12)

    def test_multinomial_binary(self):
        # multi_class="multinomial" with two classes: predict_proba is the
        # softmax of [-d, d], so the set's log-odds are 2d.
        X, y = breast_cancer()
        model = make_pipeline(StandardScaler(with_mean=False),
                              LogisticRegression(multi_class="multinomial"))
        model.fit(X, y)
        doc = export.from_sklearn(model, list(X.columns), X, name="bc_multinomial",
                                  version="1")
        self.load(doc)
        self.assert_scores_match("bc_multinomial", X, model.predict_proba(X)[:, 1],
                                 "multinomial binary")

    def test_imputer_with_indicator_then_scaler(self):
        X, y = breast_cancer_with_gaps()
        model = Pipeline([
            ("impute", SimpleImputer(strategy="median", add_indicator=True)),
            ("scale", StandardScaler()),
            ("model", LogisticRegression(C=0.3, max_iter=2000))])
        model.fit(X, y)
        doc = export.from_sklearn(model, list(X.columns), X, name="bc_gaps",
                                  version="1")
        rules = {f["name"]: f["missing"]["kind"] for f in doc["features"]}
        # Columns with gaps in training carry an indicator column; the rest
        # are imputed with their median.
        self.assertEqual(rules["mean texture"], "INDICATOR")
        self.assertEqual(rules["mean radius"], "IMPUTE")
        self.load(doc)
        self.assert_scores_match("bc_gaps", X, model.predict_proba(X)[:, 1],
                                 "SimpleImputer(add_indicator) + StandardScaler")
        # Named records with null cells go through the same rules.
        self.assert_scores_match("bc_gaps", records(X.iloc[:60]),
                                 model.predict_proba(X.iloc[:60])[:, 1],
                                 "named records with nulls")


    def test_step_orders(self):
        # Less usual orders of the same steps: an imputer after the scaler
        # (missing becomes a constant in scaled units: INDICATOR), two
        # scalers in a row (composed), bin indices scaled, indicator
        # columns scaled with the rest (their constant moves to the
        # intercept).
        X, y = breast_cancer_with_gaps()
        X = X[["mean radius", "mean texture", "mean smoothness", "worst area"]]
        shapes = {
            "bc_scale_then_impute": [StandardScaler(), SimpleImputer(add_indicator=True)],
            "bc_two_scalers": [SimpleImputer(), StandardScaler(),
                               StandardScaler(with_mean=False)],
            "bc_bins_scaled": [SimpleImputer(), KBinsDiscretizer(n_bins=4, encode="ordinal"),
                               StandardScaler()],
            "bc_flags_scaled": [SimpleImputer(add_indicator=True), StandardScaler()],
        }
        for name, steps in shapes.items():
            with self.subTest(name):
                model = make_pipeline(*steps, LogisticRegression(max_iter=3000)).fit(X, y)
                doc = export.from_sklearn(model, list(X.columns), X, name=name,
                                          version="1")
                self.load(doc)
                self.assert_scores_match(name, X, model.predict_proba(X)[:, 1], name)


class ColumnTransformerShapes(DaemonTestCase):
    def test_onehot_and_bins(self):
        X, y = anes96()
        ct = ColumnTransformer([
            ("party", OneHotEncoder(handle_unknown="ignore"), ["PID"]),
            ("educ", OneHotEncoder(drop="first"), ["educ"]),
            ("age", KBinsDiscretizer(n_bins=5, encode="onehot",
                                     strategy="quantile"), ["age"]),
            ("income", KBinsDiscretizer(n_bins=4, encode="ordinal",
                                        strategy="uniform"), ["income"]),
            ("num", make_pipeline(SimpleImputer(), StandardScaler()),
             ["TVnews", "selfLR", "logpopul"]),
        ], remainder="drop")
        model = make_pipeline(ct, LogisticRegression(C=2.0, max_iter=2000))
        model.fit(X, y)
        doc = export.from_sklearn(model, list(X.columns), X, name="anes_ct",
                                  version="1", training_labels=y)
        kinds = {f["name"]: next(k for k in ("numeric", "categorical", "binned")
                                 if k in f) for f in doc["features"]}
        self.assertEqual(kinds, {"PID": "categorical", "educ": "categorical",
                                 "age": "binned", "income": "binned",
                                 "TVnews": "numeric", "selfLR": "numeric",
                                 "logpopul": "numeric"})
        party = next(f for f in doc["features"] if f["name"] == "PID")
        educ = next(f for f in doc["features"] if f["name"] == "educ")
        self.assertEqual(party["categorical"]["unseen"], "UNSEEN_ZERO")
        self.assertEqual(educ["categorical"]["unseen"], "UNSEEN_REJECT")
        self.load(doc)
        used = X.drop(columns=["ClinLR"])  # dropped by the model: not a feature
        self.assert_scores_match("anes_ct", used, model.predict_proba(X)[:, 1],
                                 "ColumnTransformer: onehot, bins")
        np.testing.assert_allclose(export.to_sklearn(doc).predict_proba(used)[:, 1],
                                   model.predict_proba(X)[:, 1], rtol=0, atol=1e-12)
        # An unseen party id (9): scikit-learn ignores it (all zeros), plumbd
        # gives it 0 (UNSEEN_ZERO). Ages on and just below each bin edge.
        probe = X.iloc[:12].copy()
        probe.loc[probe.index[:4], "PID"] = 9
        edges = model[0].named_transformers_["age"].bin_edges_[0][1:-1]
        for i, e in enumerate(edges):
            probe.loc[probe.index[4 + 2 * i], "age"] = e
            probe.loc[probe.index[5 + 2 * i], "age"] = np.nextafter(e, -np.inf)
        self.assert_scores_match("anes_ct", records(probe.drop(columns=["ClinLR"])),
                                 model.predict_proba(probe)[:, 1],
                                 "unseen level, values at bin edges")
        # An unseen educ level is refused, as scikit-learn refuses it.
        bad = records(used.iloc[:1])
        bad[0]["educ"] = "educ9"
        with self.assertRaises(Exception):
            model.predict_proba(pd.DataFrame([{**bad[0], "ClinLR": 1.0}]))
        with self.assertRaises(Exception) as e:
            self.client.score("anes_ct", bad[0])
        self.assertEqual(e.exception.code.name, "INVALID_ARGUMENT")

    def test_imputers_infrequent_and_passthrough(self):
        X, y = fair()
        ct = ColumnTransformer([
            ("occupation", make_pipeline(
                SimpleImputer(strategy="most_frequent"),
                OneHotEncoder(handle_unknown="ignore")), ["occupation"]),
            ("religious", make_pipeline(
                SimpleImputer(missing_values=None, strategy="constant",
                              fill_value="none"),
                # rel4 (604 rows) and "none" (425) are infrequent.
                OneHotEncoder(handle_unknown="infrequent_if_exist",
                              min_frequency=700)), ["religious"]),
            ("age", make_pipeline(SimpleImputer(strategy="median"),
                                  KBinsDiscretizer(n_bins=4, encode="onehot-dense",
                                                   strategy="kmeans")), ["age"]),
            ("years", make_pipeline(SimpleImputer(add_indicator=True),
                                    StandardScaler()), ["yrs_married"]),
            ("rate", StandardScaler(), ["rate_marriage"]),
        ], remainder="passthrough")  # children as they are
        model = make_pipeline(ct, LogisticRegression(max_iter=3000))
        model.fit(X, y)
        doc = export.from_sklearn(model, list(X.columns), X, name="fair_ct",
                                  version="1", training_labels=y)
        by_name = {f["name"]: f for f in doc["features"]}
        self.assertEqual(by_name["occupation"]["missing"]["kind"], "IMPUTE")
        # Unseen and missing religious both land in the infrequent group.
        self.assertEqual(by_name["religious"]["categorical"]["unseen"],
                         "UNSEEN_AS_MISSING")
        self.assertEqual(by_name["religious"]["missing"],
                         {"kind": "IMPUTE", "impute_level": "none"})
        self.assertEqual(by_name["age"]["missing"]["kind"], "IMPUTE")
        self.assertEqual(by_name["yrs_married"]["missing"]["kind"], "INDICATOR")
        self.load(doc)
        self.assert_scores_match("fair_ct", X, model.predict_proba(X)[:, 1],
                                 "ColumnTransformer: imputers, infrequent, passthrough")
        # to_sklearn: the set as an estimator in Python gives the same
        # probabilities (reference: predict_proba).
        back = export.to_sklearn(doc)
        np.testing.assert_allclose(back.predict_proba(X)[:, 1],
                                   model.predict_proba(X)[:, 1], rtol=0, atol=1e-12)
        # Unseen levels: occupation "occ9" is ignored, religious "rel9" goes
        # to the infrequent group.
        probe = X.iloc[:10].copy()
        probe.loc[probe.index[:5], "occupation"] = "occ9"
        probe.loc[probe.index[3:8], "religious"] = "rel9"
        self.assert_scores_match("fair_ct", records(probe),
                                 model.predict_proba(probe)[:, 1],
                                 "unseen levels under ignore / infrequent")


    def test_scaler_after_column_transformer(self):
        # A scaler after the ColumnTransformer scales the one-hot columns
        # too; each level still has one coefficient (and the unseen level
        # a constant, moved into the intercept).
        # ClinLR (1..7, stored as floats) is one-hot encoded as it is: its
        # levels are "1".."7".
        X, y = anes96()
        ct = ColumnTransformer([("party", OneHotEncoder(handle_unknown="ignore"),
                                 ["PID"]),
                                ("clinton", OneHotEncoder(drop="first"), ["ClinLR"]),
                                ("num", "passthrough", ["age", "selfLR"])],
                               sparse_threshold=0)
        model = make_pipeline(ct, StandardScaler(), LogisticRegression()).fit(X, y)
        doc = export.from_sklearn(model, list(X.columns), X, name="anes_scaled_ct",
                                  version="1")
        self.assertEqual([f["name"] for f in doc["features"]],
                         ["PID", "age", "selfLR", "ClinLR"])
        clinton = doc["features"][3]["categorical"]
        self.assertEqual([lv["value"] for lv in clinton["levels"]],
                         [str(i) for i in range(1, 8)])
        self.load(doc)
        used = X[["PID", "age", "selfLR", "ClinLR"]]
        self.assert_scores_match("anes_scaled_ct", used, model.predict_proba(X)[:, 1],
                                 "StandardScaler after a ColumnTransformer")
        probe = X.iloc[:5].copy()
        probe["PID"] = 9  # unseen: all one-hot columns 0 before scaling
        self.assert_scores_match("anes_scaled_ct", records(probe[used.columns]),
                                 model.predict_proba(probe)[:, 1], "unseen party id")


class Refusals(unittest.TestCase):
    """What plumbd cannot reproduce is refused, naming the step."""

    def assert_refused(self, model, X, names, *needles):
        with self.assertRaises(ValueError) as e:
            export.from_sklearn(model, names, X, name="refused", version="1")
        for needle in needles:
            self.assertIn(needle, str(e.exception))

    def test_unknown_transformer(self):
        X, y = breast_cancer()
        X = X.iloc[:, :4]
        model = Pipeline([("poly", PolynomialFeatures(2)), ("scale", StandardScaler()),
                          ("model", LogisticRegression(max_iter=3000))]).fit(X, y)
        self.assert_refused(model, X, list(X.columns), "step 'poly'",
                            "PolynomialFeatures")
        model = Pipeline([("log", FunctionTransformer(np.log1p)),
                          ("model", LogisticRegression(max_iter=3000))]).fit(X, y)
        self.assert_refused(model, X, list(X.columns), "step 'log'",
                            "FunctionTransformer")

    def test_multiclass(self):
        data = load_iris(as_frame=True)
        model = LogisticRegression(max_iter=2000).fit(data.data, data.target)
        self.assert_refused(model, data.data, list(data.data.columns),
                            "step 'model'", "3 classes")

    def test_bins_after_scaler(self):
        X, y = breast_cancer()
        X = X.iloc[:, :3]
        model = make_pipeline(StandardScaler(), KBinsDiscretizer(n_bins=3),
                              LogisticRegression()).fit(X, y)
        self.assert_refused(model, X, list(X.columns), "kbinsdiscretizer",
                            "raw values")

    def test_column_used_twice(self):
        X, y = anes96()
        ct = ColumnTransformer([("scaled", StandardScaler(), ["age"]),
                                ("bins", KBinsDiscretizer(n_bins=3), ["age"])])
        model = make_pipeline(ct, LogisticRegression()).fit(X, y)
        self.assert_refused(model, X, list(X.columns), "'age'", "numeric and binned")

    def test_other_missing_marker(self):
        X, y = breast_cancer()
        X = X.iloc[:, :3]
        model = make_pipeline(SimpleImputer(missing_values=-1.0),
                              LogisticRegression()).fit(X, y)
        self.assert_refused(model, X, list(X.columns), "simpleimputer",
                            "missing_values=-1.0")

    def test_fractional_categories(self):
        X, y = anes96()
        ct = ColumnTransformer([("pop", OneHotEncoder(), ["logpopul"])])
        model = make_pipeline(ct, LogisticRegression()).fit(X, y)
        self.assert_refused(model, X, list(X.columns), "column 'logpopul'",
                            "cannot be a level")


if __name__ == "__main__":
    unittest.main()
