"""plumbline.Client against a real plumbd: results, errors with their gRPC
codes, outcomes seen in the monitor's health, a token-protected daemon.

The set is INVENTED, in the project's courier scenario: the chance that a
parcel's first delivery attempt fails.
"""
from __future__ import annotations

import datetime
import math
import json
import os
import shutil
import subprocess
import tempfile
import unittest

import grpc
import numpy as np
import pandas as pd
from sklearn.metrics import brier_score_loss, log_loss, roc_auc_score

import plumbline
from daemon_case import DaemonTestCase
from plumbd_process import Plumbd, plumbctl_path, poll_until

COURIER = {
    "name": "courier_test", "version": "1",
    "description": "INVENTED: chance that a parcel's first attempt fails",
    "intercept": -1.5,
    "features": [
        {"name": "distance_km",
         "numeric": {"center": 6.0, "scale": 4.0, "coefficient": 0.4}},
        {"name": "building_type",
         "categorical": {"levels": [{"value": "house", "coefficient": 0.0},
                                    {"value": "flat", "coefficient": 0.5}],
                         "reference_level": "house"},
         "missing": {"kind": "INDICATOR", "indicator_coefficient": 0.2}},
        {"name": "rainfall_mm",
         "binned": {"edges": [1.0, 10.0], "coefficients": [0.0, 0.3, 0.9],
                    "reference": 0.0}},
    ],
}


def courier_log_odds(distance, building, rain):
    """The set's arithmetic written out (coefficient_set.proto)."""
    z = -1.5 + 0.4 * (distance - 6.0) / 4.0
    z += {"house": 0.0, "flat": 0.5, None: 0.2}[building]
    z += 0.0 if rain < 1.0 else (0.3 if rain < 10.0 else 0.9)
    return z


class Scoring(DaemonTestCase):
    @classmethod
    def setUpClass(cls):
        super().setUpClass()
        cls.daemon.load(COURIER)

    def test_score_with_reasons(self):
        s = self.client.score("courier_test", {"distance_km": 10.0,
                                               "building_type": "flat",
                                               "rainfall_mm": 12.5},
                              reasons=2, record_id="parcel-1")
        # By hand: -1.5 + 0.4*(10-6)/4 + 0.5 + 0.9 = 0.3.
        self.assertAlmostEqual(s.log_odds, 0.3, places=14)
        self.assertAlmostEqual(s.probability, 1 / (1 + math.exp(-0.3)), places=15)
        self.assertEqual((s.record_id, s.set, s.version), ("parcel-1", "courier_test", "1"))
        # Reasons: contribution minus the contribution at the reference
        # (rain 0 -> bin 0: 0.9 - 0; flat vs house: 0.5; distance vs its
        # centre: 0.4), largest first, top 2.
        self.assertEqual([r.feature for r in s.reasons], ["rainfall_mm", "building_type"])
        self.assertAlmostEqual(s.reasons[0].contribution, 0.9, places=14)
        self.assertAlmostEqual(s.reasons[1].contribution, 0.5, places=14)

    def test_batch_forms_agree(self):
        frame = pd.DataFrame({"distance_km": [1.0, 6.0, 14.5, 3.2],
                              "building_type": ["house", None, "flat", "flat"],
                              "rainfall_mm": [0.0, 5.0, 30.0, 0.5]})
        expected = [courier_log_odds(d, b, r) for d, b, r in
                    frame.itertuples(index=False, name=None)]
        by_frame = self.client.score_batch("courier_test", frame,
                                           record_ids=["a", "b", "c", "d"])
        self.assertEqual(by_frame.record_ids, ["a", "b", "c", "d"])
        np.testing.assert_allclose(by_frame.log_odds, expected, rtol=0, atol=1e-14)
        # Numeric columns only: the dense form, columns named by the frame
        # in their own order; building_type is absent, so missing (0.2).
        dense = self.client.score_batch("courier_test",
                                        frame[["rainfall_mm", "distance_km"]])
        np.testing.assert_allclose(
            dense.log_odds, [courier_log_odds(d, None, r) for d, _, r in
                             frame.itertuples(index=False, name=None)],
            rtol=0, atol=1e-14)
        # A 2-D array in the set's order: building_type as a level index.
        array = np.array([[1.0, 0.0, 0.0], [14.5, 1.0, 30.0]])
        by_array = self.client.score_batch("courier_test", array)
        np.testing.assert_allclose(by_array.log_odds,
                                   [courier_log_odds(1.0, "house", 0.0),
                                    courier_log_odds(14.5, "flat", 30.0)],
                                   rtol=0, atol=1e-14)
        # chunk_rows: several calls, one result in order.
        chunked = self.client.score_batch("courier_test", frame, chunk_rows=3)
        np.testing.assert_allclose(chunked.log_odds, expected, rtol=0, atol=1e-14)

    def test_sets(self):
        info = {s.name: s for s in self.client.sets()}["courier_test"]
        self.assertEqual(info.version, "1")
        self.assertEqual([(f.name, f.kind) for f in info.features],
                         [("distance_km", "numeric"), ("building_type", "categorical"),
                          ("rainfall_mm", "binned")])
        self.assertEqual(info.feature("building_type").levels, ("house", "flat"))
        self.assertEqual(info.feature("building_type").missing, "INDICATOR")

    def test_unknown_set_is_not_found(self):
        for call in (lambda: self.client.score("no_such_set", {"x": 1.0}),
                     lambda: self.client.score_batch("no_such_set", [{"x": 1.0}]),
                     lambda: self.client.health("no_such_set")):
            with self.assertRaises(plumbline.PlumblineError) as e:
                call()
            self.assertEqual(e.exception.code, grpc.StatusCode.NOT_FOUND)
            self.assertIn("no_such_set", e.exception.message)

    def test_bad_feature_is_invalid_argument(self):
        good = {"distance_km": 3.0, "building_type": "house", "rainfall_mm": 0.0}
        cases = [
            ({**good, "parcel_colour": 1.0}, "parcel_colour"),  # not in the set
            ({**good, "distance_km": "far"}, "distance_km"),    # wrong type
            ({**good, "building_type": "castle"}, "building_type"),  # UNSEEN_REJECT
            ({"building_type": "house", "rainfall_mm": 0.0}, "distance_km"),  # REJECT
        ]
        for record, feature in cases:
            with self.assertRaises(plumbline.PlumblineError) as e:
                self.client.score("courier_test", record)
            self.assertEqual(e.exception.code, grpc.StatusCode.INVALID_ARGUMENT)
            self.assertIn(feature, e.exception.message)
        # A batch is all-or-nothing: one bad record fails it, naming it.
        with self.assertRaises(plumbline.PlumblineError) as e:
            self.client.score_batch("courier_test", [good, {**good, "distance_km": "far"}])
        self.assertEqual(e.exception.code, grpc.StatusCode.INVALID_ARGUMENT)
        self.assertIn("distance_km", e.exception.message)
        # NaN is refused when it does not mean missing.
        with self.assertRaises(plumbline.PlumblineError) as e:
            self.client.score("courier_test", {**good, "distance_km": float("nan")},
                              nan_is_missing=False)
        self.assertEqual(e.exception.code, grpc.StatusCode.INVALID_ARGUMENT)

    def test_unreachable_daemon_is_unavailable(self):
        # A port nothing listens on: plumbd's own port after it is closed
        # would race, so ask the kernel for a free one and do not listen.
        import socket
        with socket.socket() as s:
            s.bind(("127.0.0.1", 0))
            port = s.getsockname()[1]
        with plumbline.Client(f"127.0.0.1:{port}", token="", timeout=5) as c:
            with self.assertRaises(plumbline.PlumblineError) as e:
                c.sets()
        self.assertIn(e.exception.code, (grpc.StatusCode.UNAVAILABLE,
                                         grpc.StatusCode.DEADLINE_EXCEEDED))


class OutcomesAndHealth(DaemonTestCase):
    # Evaluate every second so the test sees its outcomes soon.
    config = {"drift_policy": {"tick_seconds": 1}}

    @classmethod
    def setUpClass(cls):
        super().setUpClass()
        cls.daemon.load(COURIER)

    def test_outcomes_reach_the_monitor(self):
        rng = np.random.default_rng(20261201)
        n = 400
        frame = pd.DataFrame({
            "distance_km": rng.gamma(2.0, 4.0, n).round(1),
            "building_type": rng.choice(["house", "flat"], n),
            "rainfall_mm": rng.choice([0.0, 4.0, 15.0], n)})
        ids = [f"parcel-{i:04d}" for i in range(n)]
        batch = self.client.score_batch("courier_test", frame, record_ids=ids)
        p = np.array(batch.probabilities)
        labels = (rng.random(n) < p).astype(int)
        when = datetime.datetime(2026, 12, 1, 9, 30, tzinfo=datetime.timezone.utc)
        report = self.client.report_outcomes(ids, labels, observed_at=when)
        self.assertEqual((report.accepted, report.refused), (n, 0))

        def labelled():
            h = self.client.health("courier_test")
            w = h.window("count")
            return h if w is not None and w.labelled == n else None
        health = poll_until(labelled, f"the count window to hold {n} labelled records")
        w = health.window("count")
        self.assertEqual(w.positives, int(labels.sum()))
        self.assertIsNotNone(health.evaluated_at)
        # References: scikit-learn's log_loss, brier_score_loss and
        # roc_auc_score on the same scores and labels; the AUC is exact
        # (Mann-Whitney over the window's log-odds, so compared on the
        # log-odds plumbd answered: two log-odds a bit apart can round to one
        # probability, and a tie counts 1/2).
        self.assertAlmostEqual(w.log_loss.value, log_loss(labels, p), places=10)
        self.assertAlmostEqual(w.brier_score.value, brier_score_loss(labels, p), places=10)
        self.assertLessEqual(
            abs(w.auc.value - roc_auc_score(labels, batch.log_odds)), 1e-12)
        self.assertIn(health.state, ("steady", "watch", "drifting"))

    def test_refused_outcomes(self):
        s = self.client.score("courier_test", {"distance_km": 2.0,
                                               "building_type": "house",
                                               "rainfall_mm": 0.0},
                              record_id="parcel-refusals")
        self.client.report_outcome(s.record_id, 1)
        self.assertTrue(self.client.report_outcome(s.record_id, 1).repeat)
        with self.assertRaises(plumbline.PlumblineError) as e:
            self.client.report_outcome(s.record_id, 0)
        self.assertEqual(e.exception.code, grpc.StatusCode.FAILED_PRECONDITION)
        with self.assertRaises(plumbline.PlumblineError) as e:
            self.client.report_outcome("never-scored", 1)
        self.assertEqual(e.exception.code, grpc.StatusCode.NOT_FOUND)
        # Many at once: strict raises with the report, which says which.
        with self.assertRaises(plumbline.PlumblineError) as e:
            self.client.report_outcomes([s.record_id, "never-scored"], [1, 0])
        self.assertEqual(e.exception.code, grpc.StatusCode.NOT_FOUND)
        self.assertEqual([r.code for r in e.exception.report.results],
                         ["OK", "NOT_FOUND"])
        report = self.client.report_outcomes(["never-scored"], [0], strict=False)
        self.assertEqual((report.accepted, report.refused), (0, 1))
        with self.assertRaises(ValueError):
            self.client.report_outcomes(["a"], [2])


class TokenProtected(unittest.TestCase):
    """plumbd with access control: a score token made by `plumbctl token
    new`, sent as `authorization: Bearer <token>`."""

    @classmethod
    def setUpClass(cls):
        out = subprocess.run([plumbctl_path(), "token", "new", "--role", "score",
                              "--name", "python-test"], check=True,
                             capture_output=True, text=True, timeout=60).stdout
        lines = [l for l in out.splitlines() if l and not l.startswith("#")]
        cls.token = next(l for l in lines if not l.startswith("{"))
        entry = next(l for l in lines if l.startswith("{"))
        config = {"security": {"access": {"tokens": [json.loads(entry)]}}}
        cls.daemon = Plumbd(config=config, sets=[COURIER])
        cls.addClassCleanup(cls.daemon.stop)
        cls.daemon.start()

    def test_token(self):
        record = {"distance_km": 6.0, "building_type": "house", "rainfall_mm": 0.0}
        with plumbline.Client(self.daemon.addr, token=self.token) as c:
            self.assertAlmostEqual(c.score("courier_test", record).log_odds, -1.5,
                                   places=14)
        for token in ("", "plb_notatoken_x", self.token + "x"):
            with plumbline.Client(self.daemon.addr, token=token) as c:
                with self.assertRaises(plumbline.PlumblineError) as e:
                    c.score("courier_test", record)
                self.assertEqual(e.exception.code, grpc.StatusCode.UNAUTHENTICATED,
                                 f"token {token[:8]!r}")

    def test_token_from_environment(self):
        os.environ["PLUMBLINE_TOKEN"] = self.token
        try:
            with plumbline.Client(self.daemon.addr) as c:
                self.assertEqual(c.sets()[0].name, "courier_test")
        finally:
            del os.environ["PLUMBLINE_TOKEN"]


OPENSSL_CONFIG = """[req]
distinguished_name = dn
prompt = no
[dn]
[ca]
basicConstraints = critical,CA:TRUE
keyUsage = critical,keyCertSign,cRLSign
subjectKeyIdentifier = hash
[server]
subjectAltName = IP:127.0.0.1,DNS:localhost
extendedKeyUsage = serverAuth
[client]
extendedKeyUsage = clientAuth
"""


def make_certs(dir: str) -> None:
    """A test CA, a server certificate for 127.0.0.1 and a client
    certificate, with Debian's openssl command (EC P-256 keys), as
    tests/daemon/security_testing.cc makes them."""
    with open(os.path.join(dir, "openssl.cnf"), "w") as f:
        f.write(OPENSSL_CONFIG)
    key = ("-newkey ec -pkeyopt ec_paramgen_curve:prime256v1 -nodes "
           "-config openssl.cnf")
    script = f"""set -e
openssl req -x509 {key} -keyout ca.key -out ca.crt -days 2 -subj '/CN=Plumbline Test CA' -extensions ca
for leaf in server:localhost:2 client:router-1:3; do
  name=${{leaf%%:*}}; rest=${{leaf#*:}}; cn=${{rest%%:*}}; serial=${{rest#*:}}
  openssl req -new {key} -keyout $name.key -out $name.csr -subj "/CN=$cn"
  openssl x509 -req -in $name.csr -CA ca.crt -CAkey ca.key -set_serial $serial -days 2 -out $name.crt -extfile openssl.cnf -extensions $name
done
"""
    subprocess.run(["/bin/sh", "-c", script], cwd=dir, check=True,
                   capture_output=True, timeout=60)


class MutualTls(unittest.TestCase):
    """plumbd with TLS and required client certificates."""

    @classmethod
    def setUpClass(cls):
        cls.certs = tempfile.mkdtemp(prefix="plumbline-python-tls-")
        cls.addClassCleanup(shutil.rmtree, cls.certs, True)
        make_certs(cls.certs)
        path = lambda f: os.path.join(cls.certs, f)
        config = {"security": {"tls": {"cert_file": path("server.crt"),
                                       "key_file": path("server.key"),
                                       "client_ca_file": path("ca.crt")}}}
        cls.daemon = Plumbd(config=config, sets=[COURIER])
        cls.addClassCleanup(cls.daemon.stop)
        cls.daemon.start()

    def test_client_certificate(self):
        path = lambda f: os.path.join(self.certs, f)
        record = {"distance_km": 6.0, "building_type": "flat", "rainfall_mm": 0.0}
        tls = plumbline.Tls(ca=path("ca.crt"), cert=path("client.crt"),
                            key=path("client.key"))
        with plumbline.Client(self.daemon.addr, token="", tls=tls) as c:
            # By hand: -1.5 + 0 + 0.5 + 0 = -1.0.
            self.assertAlmostEqual(c.score("courier_test", record).log_odds, -1.0,
                                   places=14)
        # Without a client certificate the handshake fails.
        with plumbline.Client(self.daemon.addr, token="", tls=path("ca.crt"),
                              timeout=10) as c:
            with self.assertRaises(plumbline.PlumblineError) as e:
                c.score("courier_test", record)
            self.assertEqual(e.exception.code, grpc.StatusCode.UNAVAILABLE)
        with self.assertRaises(ValueError):
            plumbline.Tls(ca=path("ca.crt"), cert=path("client.crt")).credentials()


if __name__ == "__main__":
    unittest.main()
