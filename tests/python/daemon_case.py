"""Test cases with a real plumbd per class, and the check every export
test makes: the exported set, loaded by a real plumbd and scored through
the client, gives the fitted model's own probabilities.

Tolerance: 1e-12 absolute on probabilities (issue 19). The reference is
the fitted model itself: scikit-learn's predict_proba or statsmodels'
predict on the same rows, in the same run.
"""
from __future__ import annotations

import json
import unittest

import numpy as np

import plumbline
from plumbd_process import Plumbd

PROBABILITY_TOLERANCE = 1e-12


class DaemonTestCase(unittest.TestCase):
    """One plumbd per test class, started in setUpClass and stopped by a
    class cleanup, so it is killed even when setUpClass or a test fails."""

    config = None

    @classmethod
    def setUpClass(cls):
        cls.daemon = Plumbd(config=cls.config)
        cls.addClassCleanup(cls.daemon.stop)
        cls.daemon.start()
        cls.client = plumbline.Client(cls.daemon.addr, token="")
        cls.addClassCleanup(cls.client.close)

    def load(self, doc):
        # Through a JSON file, as a user would write it.
        text = json.dumps(doc)
        self.daemon.load(json.loads(text))

    def assert_scores_match(self, set_name, rows, expected, what):
        """Scores `rows` (a DataFrame, a list of dicts or an array) in one
        batch and compares with `expected` probabilities."""
        batch = self.client.score_batch(set_name, rows)
        got = np.array(batch.probabilities)
        expected = np.asarray(expected, dtype=float)
        self.assertEqual(got.shape, expected.shape)
        worst = float(np.max(np.abs(got - expected)))
        self.assertLessEqual(
            worst, PROBABILITY_TOLERANCE,
            f"{what}: largest |plumbd - reference| probability difference "
            f"{worst:.3g} over {len(expected)} rows")
        return batch


def records(frame):
    """A DataFrame's rows as a list of dicts, NaN as None."""
    out = []
    for row in frame.to_dict("records"):
        out.append({k: (None if isinstance(v, float) and np.isnan(v) else v)
                    for k, v in row.items()})
    return out
