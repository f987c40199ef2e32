"""plumbline.export.from_statsmodels, one test per supported shape.

Each fits a model on a data set statsmodels ships, exports it, lets a real
plumbd load the JSON, scores the same rows through the client and requires
plumbd's probabilities to equal the result's predict() within 1e-12
(reference: statsmodels, same run).
Data:
- spector (Spector and Mazzeo 1980): 32 students; GRADE improved or not,
  from GPA, TUCE and PSI. The classic Logit example of statsmodels' docs.
- fair (affairs survey, 6366 women): the label is affairs > 0;
  occupation 1..6 becomes the text levels "occ1".."occ6" in the formula
  test (deterministic, chosen for the test).
"""
from __future__ import annotations

import unittest

import numpy as np
import pandas as pd
import statsmodels.api as sm
import statsmodels.formula.api as smf

from plumbline import export
from daemon_case import DaemonTestCase


def spector():
    d = sm.datasets.spector.load_pandas()
    return d.exog[["GPA", "TUCE", "PSI"]], d.endog


def fair_frame():
    d = sm.datasets.fair.load_pandas().data
    return pd.DataFrame({
        "had_affair": (d["affairs"] > 0).astype(int),
        "rate_marriage": d["rate_marriage"], "age": d["age"],
        "yrs_married": d["yrs_married"], "children": d["children"],
        "occupation": "occ" + d["occupation"].astype(int).astype(str),
        "religious": d["religious"].astype(int),
    })


class LogitShapes(DaemonTestCase):
    def test_logit_arrays(self):
        X, y = spector()
        result = sm.Logit(y, sm.add_constant(X)).fit(disp=0)
        doc = export.from_statsmodels(result, list(X.columns), X,
                                      name="spector_logit", version="1")
        self.assertEqual(doc["intercept"], result.params["const"])
        prov = doc["provenance"]
        # Provenance figures: statsmodels' own llf; log-loss = -llf / n.
        self.assertAlmostEqual(prov["training_log_likelihood"], result.llf, places=10)
        self.assertAlmostEqual(prov["training_log_loss"], -result.llf / 32, places=12)
        # Standard errors in the notes, as statsmodels reports them (bse).
        self.assertIn(f"GPA {result.bse['GPA']:.10g}", prov["notes"])
        self.load(doc)
        # Reference: statsmodels' predict on the 32 rows.
        self.assert_scores_match("spector_logit", X, result.predict(sm.add_constant(X)),
                                 "Logit")

    def test_glm_binomial_with_default_frame(self):
        X, y = spector()
        result = sm.GLM(y, sm.add_constant(X.to_numpy()),
                        family=sm.families.Binomial()).fit()
        # No feature names or frame: the exog names (x1..x3) and the
        # model's own data.
        doc = export.from_statsmodels(result, name="spector_glm", version="1")
        self.assertEqual([f["name"] for f in doc["features"]], ["x1", "x2", "x3"])
        self.load(doc)
        expected = result.predict(sm.add_constant(X.to_numpy()))
        self.assert_scores_match("spector_glm", X.to_numpy(), expected,
                                 "GLM(Binomial), dense array in set order")

    def test_formula_with_categories(self):
        frame = fair_frame()
        result = smf.logit(
            "had_affair ~ rate_marriage + age + yrs_married + children"
            " + C(occupation) + C(religious)", data=frame).fit(disp=0)
        doc = export.from_statsmodels(result, name="fair_formula", version="1")
        kinds = {f["name"]: ("categorical" if "categorical" in f else "numeric")
                 for f in doc["features"]}
        self.assertEqual(kinds["occupation"], "categorical")
        self.assertEqual(kinds["religious"], "categorical")  # integer levels
        self.load(doc)
        rows = frame.drop(columns=["had_affair"])
        self.assert_scores_match("fair_formula", rows, result.predict(rows),
                                 "formula Logit with C() terms")

    def test_glm_formula(self):
        frame = fair_frame()
        result = smf.glm("had_affair ~ rate_marriage + yrs_married + C(occupation)",
                         data=frame, family=sm.families.Binomial()).fit()
        doc = export.from_statsmodels(result, name="fair_glm", version="1")
        self.assertAlmostEqual(doc["provenance"]["training_log_likelihood"],
                               result.llf, places=8)
        self.load(doc)
        rows = frame[["rate_marriage", "yrs_married", "occupation"]]
        self.assert_scores_match("fair_glm", rows, result.predict(rows),
                                 "formula GLM(Binomial)")


class Refusals(unittest.TestCase):
    def assert_refused(self, result, *needles):
        with self.assertRaises(ValueError) as e:
            export.from_statsmodels(result, name="refused", version="1")
        for needle in needles:
            self.assertIn(needle, str(e.exception))

    def test_probit(self):
        X, y = spector()
        self.assert_refused(sm.Probit(y, sm.add_constant(X)).fit(disp=0),
                            "Probit", "Logit")

    def test_other_family_and_link(self):
        X, y = spector()
        exog = sm.add_constant(X)
        self.assert_refused(sm.GLM(y, exog, family=sm.families.Poisson()).fit(),
                            "Poisson")
        probit = sm.families.Binomial(link=sm.families.links.probit())
        self.assert_refused(sm.GLM(y, exog, family=probit).fit(), "link", "probit")

    def test_offset(self):
        X, y = spector()
        result = sm.GLM(y, sm.add_constant(X), family=sm.families.Binomial(),
                        offset=np.full(len(y), 0.1)).fit()
        self.assert_refused(result, "offset")

    def test_interaction_and_transform(self):
        frame = fair_frame()
        self.assert_refused(smf.logit("had_affair ~ age * children", data=frame).fit(disp=0),
                            "term 'age:children'", "interaction")
        self.assert_refused(smf.logit("had_affair ~ np.log(age)", data=frame).fit(disp=0),
                            "term 'np.log(age)'")


if __name__ == "__main__":
    unittest.main()
