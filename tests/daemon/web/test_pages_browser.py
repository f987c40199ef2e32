#!/usr/bin/python3
"""The model-health page and a refit dossier in a real browser.

A real plumbd (tests/python/plumbd_process.py) with the demo's invented
courier set and parcels (ops/demo_data.py) scores the normal weeks and the
storm season through plumbctl, gets their outcomes, drifts, refits on its
own (the drift policy starts the job) and a person approves the candidate.
Then Debian's headless Chromium loads the overview, the set page and the
dossier (served by plumbd, and the file the refit job wrote):

  - every chart's <svg> id is in the DOM Chromium built (--dump-dom);
  - the screenshot is not blank (many colours, pixels off the background,
    the Okabe-Ito fills painted);
  - the page makes no request outside plumbd. Chromium runs with
    --proxy-server pointing at a recording proxy of this test and
    --proxy-bypass-list=<-loopback>, so every request it makes, plumbd's
    included, passes the proxy, which forwards only to plumbd's metrics
    listener and records everything (--host-resolver-rules fails any
    other host as a second fence). The proxy must have seen the page's own
    request (the fence is on). Requests a page makes (its navigation and
    subresources) carry the Fetch Metadata headers (Sec-Fetch-*): every one
    of those must go to plumbd. The browser also talks to its vendor's
    services on its own (component updates, sign-in); those carry no
    Sec-Fetch header, or are HTTPS tunnels whose headers the proxy cannot
    see, so they may only go to hosts the same browser contacts on a blank
    page (a baseline run with the same flags); a page's HTTPS load of any
    other host fails the test. The dossier file, opened from disk, must
    make no page request at all. The served HTML is also scanned: no
    src/href/url() to anywhere but plumbd's own paths and in-document
    anchors (the SVG namespace URI is a name, never fetched), and plumbd
    sends a Content-Security-Policy that lets the browser load nothing
    from anywhere else;
  - the numbers in the pictures are Monitor.GetSetHealth's: every bin of
    the reliability diagrams (count, mean predicted, observed rate) and
    every stability bar (PSI) read from the data- attributes equal the
    RPC's doubles exactly.

Screenshots go to PLUMBLINE_SCREENSHOT_DIR (the README's come from there).
Every wait has a deadline (plumbd_process.poll_until); no timing is checked.
"""
import html.parser
import http.server
import json
import os
import re
import shutil
import socketserver
import subprocess
import sys
import tempfile
import threading
import time
import unittest
import urllib.error
import urllib.parse
import urllib.request

import grpc
from plumbline.v1 import monitor_pb2, monitor_pb2_grpc
from plumbline.v1 import registry_pb2, registry_pb2_grpc

from plumbd_process import Plumbd, plumbctl_path, poll_until

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(os.path.dirname(HERE)))
sys.path.insert(0, os.path.join(ROOT, "tests", "daemon", "charts"))
from screenshot_check import read_png  # noqa: E402

SET = "courier_first_attempt"
WIDTH, HEIGHT = 1400, 2600
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
         "--no-first-run", "--disable-background-networking",
         "--disable-component-update", "--disable-sync",
         "--disable-default-apps", "--disable-extensions",
         "--disable-features=NetworkTimeServiceQuerying,OptimizationHints,"
         "MediaRouter,Translate,AutofillServerCommunication",
         "--no-pings", "--disable-domain-reliability",
         "--disable-client-side-phishing-detection", "--metrics-recording-only",
         "--hide-scrollbars", "--force-device-scale-factor=1"]
SET_PAGE_CHARTS = ["reliability-count", "reliability-time", "score-count",
                   "score-time", "stability-count", "stability-time",
                   "history-log-loss", "history-calibration",
                   "history-score-psi", "history-feature-psi"]
DOSSIER_CHARTS = ["dossier-reliability", "dossier-roc", "dossier-score-active",
                  "dossier-score-candidate", "dossier-stability"]
# Okabe-Ito colours that fill large areas of these pages.
FILLS = {"bluish green": (0x00, 0x9E, 0x73), "vermilion": (0xD5, 0x5E, 0x00)}


class RecordingProxy(socketserver.ThreadingMixIn, http.server.HTTPServer):
    """An HTTP proxy that forwards GETs to one allowed HOST:PORT only and
    records every request it is asked for."""
    daemon_threads = True

    def __init__(self, allowed):
        self.allowed = allowed
        self.seen = []
        self.lock = threading.Lock()
        super().__init__(("127.0.0.1", 0), ProxyHandler)

    def record(self, method, target, from_page):
        """from_page: the request carried Fetch Metadata (Sec-Fetch-*)."""
        with self.lock:
            self.seen.append((method, target, from_page))

    def take(self):
        with self.lock:
            seen, self.seen = self.seen, []
        return seen


class ProxyHandler(http.server.BaseHTTPRequestHandler):
    def log_message(self, *args):
        pass

    def do_CONNECT(self):
        self.server.record("CONNECT", self.path, False)
        self.send_error(403, "this proxy forwards to plumbd only")

    def do_GET(self):
        url = urllib.parse.urlsplit(self.path)
        from_page = any(k.lower().startswith("sec-fetch-")
                        for k in self.headers.keys())
        self.server.record(self.command, f"{url.netloc}{url.path}", from_page)
        if url.netloc != self.server.allowed:
            self.send_error(403, "this proxy forwards to plumbd only")
            return
        path = url.path + (f"?{url.query}" if url.query else "")
        try:
            with urllib.request.urlopen(f"http://{url.netloc}{path}",
                                        timeout=30) as r:
                status, headers, body = r.status, r.headers, r.read()
        except urllib.error.HTTPError as e:
            status, headers, body = e.code, e.headers, e.read()
        self.send_response(status)
        for name in ("Content-Type", "Content-Security-Policy"):
            if headers.get(name):
                self.send_header(name, headers[name])
        self.send_header("Content-Length", str(len(body)))
        self.end_headers()
        self.wfile.write(body)

    do_HEAD = do_GET
    do_POST = do_GET


class ChartData(html.parser.HTMLParser):
    """The data- attributes of the elements inside each <svg id=...>."""

    def __init__(self):
        super().__init__()
        self.ids = set()
        self.charts = {}
        self._stack = []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if "id" in a:
            self.ids.add(a["id"])
        if tag == "svg" and "id" in a:
            self._stack.append(a["id"])
            self.charts[a["id"]] = []
        elif self._stack:
            data = {k: v for k, v in a.items() if k.startswith("data-")}
            if data:
                self.charts[self._stack[-1]].append(data)

    def handle_endtag(self, tag):
        if tag == "svg" and self._stack:
            self._stack.pop()


def host_of(target):
    """'host:port/path' or 'host:port' -> 'host'."""
    return target.split("/", 1)[0].rsplit(":", 1)[0] if ":" in \
        target.split("/", 1)[0] else target.split("/", 1)[0]


def chromium(browser, url, extra, proxy):
    """Runs headless Chromium on `url` with every request through `proxy`."""
    argv = [browser, *FLAGS,
            f"--proxy-server=http://127.0.0.1:{proxy.server_address[1]}",
            "--proxy-bypass-list=<-loopback>",
            "--host-resolver-rules=MAP * ~NOTFOUND, EXCLUDE 127.0.0.1"]
    with tempfile.TemporaryDirectory(prefix="plumbline-chromium-") as profile:
        return subprocess.run(argv + [f"--user-data-dir={profile}", *extra, url],
                              capture_output=True, text=True, timeout=120,
                              check=True).stdout


def parse(dom):
    p = ChartData()
    p.feed(dom)
    return p


def outside_urls(text):
    """src/href/url() targets that would leave the document or plumbd."""
    bad = []
    for m in re.finditer(r'(?:src|href|action|xlink:href)\s*=\s*"([^"]*)"', text):
        target = m.group(1)
        if not (target.startswith("/") and not target.startswith("//")) and \
                not target.startswith("#"):
            bad.append(target)
    for m in re.finditer(r"url\(([^)]*)\)", text):
        if not m.group(1).strip("'\" ").startswith("#"):
            bad.append(m.group(0))
    for m in re.finditer(r"https?://[^\s\"'<>]+", text):
        if m.group(0) not in ("http://www.w3.org/2000/svg",
                              "http://www.w3.org/1999/xlink"):
            bad.append(m.group(0))
    if re.search(r"<script|<link|<iframe|<img|<object|<embed|@import", text):
        bad.append("a script, link, frame, image or import element")
    return bad


class PageBrowserTest(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.browser = shutil.which("chromium")
        if cls.browser is None:
            raise AssertionError("chromium not found: run ops/setup")
        cls.work = tempfile.mkdtemp(prefix="plumbline-pages-test-")
        cls.shots = os.environ.get("PLUMBLINE_SCREENSHOT_DIR",
                                   os.path.join(cls.work, "shots"))
        os.makedirs(cls.shots, exist_ok=True)
        demo = os.path.join(cls.work, "demo")
        set_file = os.path.join(cls.work, f"{SET}.json")
        subprocess.run(["/usr/bin/python3", os.path.join(ROOT, "ops", "demo_data.py"),
                        "--set-out", set_file, "--demo-dir", demo],
                       check=True, capture_output=True, timeout=120)
        with open(set_file) as f:
            doc = json.load(f)
        # The demo's config (ops/demo), with a history row every second.
        config = {
            "ledger": {"relaxed_commits": True},
            "windows": {"labelled_count": 1000, "scored_count": 1000,
                        "time_seconds": 86400, "buckets": 10},
            "drift_policy": {"tick_seconds": 1, "min_labelled": 200,
                             "min_scored": 200},
            "refit": {"mode": "PROPOSE", "min_labelled": 500, "l2": 1.0,
                      "min_new_labelled": 1500},
            "pages": {"history_interval_seconds": 1, "refresh_seconds": 30},
        }
        cls.browser_own = cls._browser_own_hosts()
        cls.plumbd = Plumbd(config=config, sets=[doc])
        cls.plumbd.start()
        try:
            cls._drive(demo)
        except BaseException:
            print(cls.plumbd.log()[-4000:], file=sys.stderr)
            cls.plumbd.stop()
            raise

    @classmethod
    def _browser_own_hosts(cls):
        """Hosts the browser contacts by itself, on a blank page."""
        proxy = RecordingProxy("nowhere:0")
        threading.Thread(target=proxy.serve_forever, daemon=True).start()
        try:
            chromium(cls.browser, "data:text/html,<p>blank</p>", ["--dump-dom"],
                     proxy)
            seen = proxy.take()
        finally:
            proxy.shutdown()
            proxy.server_close()
        if any(from_page for _, _, from_page in seen):
            raise AssertionError(f"a blank page made requests: {seen}")
        return {host_of(target) for _, target, _ in seen}

    @classmethod
    def _drive(cls, demo):
        addr = cls.plumbd.addr

        def logged(event):
            for line in cls.plumbd.log().splitlines():
                if f"event={event} " in line + " ":
                    return line
            return None

        line = poll_until(lambda: logged("metrics_listening"), "metrics address")
        cls.metrics = line.split("addr=")[1].split()[0]
        line = poll_until(lambda: logged("pages_serving"), "the page's url")
        cls.page_url = line.split("url=")[1].split()[0]
        ctl = [plumbctl_path(), "--addr", addr]

        def run(*args):
            subprocess.run(ctl + list(args), check=True, capture_output=True,
                           timeout=120)

        run("score", "--set", SET, "--csv", f"{demo}/parcels.csv",
            "--out", f"{demo}/scored.csv")
        run("outcomes", "--csv", f"{demo}/outcomes.csv")
        cls.channel = grpc.insecure_channel(addr)
        cls.monitor = monitor_pb2_grpc.MonitorStub(cls.channel)
        cls.registry = registry_pb2_grpc.RegistryStub(cls.channel)
        # As in ops/demo: the monitor sees the normal weeks steady before the
        # storm begins, so the drift's onset (the last steady evaluation)
        # separates the storm's parcels, which the drift job fits.
        normal_done = time.time()

        def steady_after_normal_weeks():
            h = cls.monitor.GetSetHealth(
                monitor_pb2.GetSetHealthRequest(set=SET), timeout=30)
            return (h.state == monitor_pb2.STEADY
                    and h.HasField("evaluated_at")
                    and h.evaluated_at.ToDatetime().timestamp() > normal_done)
        poll_until(steady_after_normal_weeks,
                   "a steady evaluation after the normal weeks")
        run("score", "--set", SET, "--csv", f"{demo}/parcels_drift.csv",
            "--out", f"{demo}/scored_drift.csv")
        # As in ops/demo: the storm's inputs make the set drift first; its
        # refit waits for outcomes that arrive after that.
        poll_until(lambda: logged("refit_waits_for_labels"),
                   "the drift-started refit to wait for new outcomes")
        run("outcomes", "--csv", f"{demo}/outcomes_drift.csv")

        def candidate():
            reply = cls.registry.ListVersions(
                registry_pb2.ListVersionsRequest(set=SET), timeout=30)
            for v in reply.versions:
                if v.state == registry_pb2.CANDIDATE:
                    return v.version
            return None
        cls.candidate = poll_until(candidate, "the drift-started refit's candidate",
                                   deadline_s=120)
        # The job writes its dossier just after it stores the candidate.
        def dossier_written():
            return f"event=refit_dossier set={SET} " in cls.plumbd.log()
        poll_until(dossier_written, "the refit job's dossier")
        run("approve", "--set", SET, "--version", cls.candidate,
            "--actor", "page-test-owner", "--reason", "holdout reviewed")
        cls.dossier = cls.registry.GetDossier(
            registry_pb2.GetDossierRequest(set=SET), timeout=30)
        # The page after the approval: the new version's windows start
        # empty, so the storm season comes again under new record ids, with
        # its outcomes.
        for name in ("parcels_drift", "outcomes_drift"):
            with open(f"{demo}/{name}.csv") as f:
                text = f.read().replace("parcel-storm-", "parcel-again-")
            with open(f"{demo}/{name}_again.csv", "w") as f:
                f.write(text)
        run("score", "--set", SET, "--csv", f"{demo}/parcels_drift_again.csv",
            "--out", f"{demo}/scored_again.csv")
        run("outcomes", "--csv", f"{demo}/outcomes_drift_again.csv")
        # Wait until the evaluation holds every record the count windows can.
        def evaluated_full():
            h = cls.monitor.GetSetHealth(
                monitor_pb2.GetSetHealthRequest(set=SET), timeout=30)
            count = [w for w in h.windows if w.window == "count"]
            return (h.version == cls.candidate and count and
                    count[0].scored == 1000 and count[0].labelled == 1000)
        poll_until(evaluated_full, "an evaluation of the approved version",
                   deadline_s=60)

    @classmethod
    def tearDownClass(cls):
        cls.channel.close()
        cls.plumbd.stop()
        shutil.rmtree(cls.work, ignore_errors=True)

    # -- helpers --

    def chromium(self, url, extra, proxy):
        return chromium(self.browser, url, extra, proxy)

    def load(self, url, ids, shot, served=True, height=HEIGHT):
        """DOM and screenshot of `url` through the recording proxy."""
        proxy = RecordingProxy(self.metrics)
        thread = threading.Thread(target=proxy.serve_forever, daemon=True)
        thread.start()
        try:
            dom = self.chromium(url, ["--dump-dom"], proxy)
            png = os.path.join(self.shots, shot)
            if os.path.exists(png):
                os.remove(png)
            self.chromium(url, [f"--screenshot={png}",
                                f"--window-size={WIDTH},{height}"], proxy)
            seen = proxy.take()
        finally:
            proxy.shutdown()
            proxy.server_close()
        page = [(m, t) for m, t, from_page in seen if from_page]
        outside = [(m, t) for m, t in page if not t.startswith(self.metrics + "/")]
        self.assertEqual(outside, [], f"page requests outside plumbd from {url}")
        # Requests without Fetch Metadata: the browser's own, to the hosts
        # it contacts on a blank page, or plumbd.
        unexplained = [(m, t) for m, t, from_page in seen if not from_page and
                       not t.startswith(self.metrics + "/") and
                       host_of(t) not in self.browser_own]
        self.assertEqual(unexplained, [], f"requests outside plumbd from {url}")
        if served:
            self.assertIn(("GET", self.metrics + urllib.parse.urlsplit(url).path),
                          page, "the proxy never saw the page: fence is off")
        else:
            self.assertEqual(page, [], f"{url} made requests")
        parsed = parse(dom)
        missing = [i for i in ids if i not in parsed.ids]
        self.assertEqual(missing, [], f"charts missing from the DOM of {url}")
        self.assertIn("caution", parsed.ids)
        self.assert_not_blank(png)
        return parsed

    def assert_not_blank(self, png):
        width, height, rows, channels = read_png(png)
        counts = {}
        for line in rows[::2]:
            for x in range(0, width * channels, channels * 2):
                pixel = bytes(line[x:x + 3])
                counts[pixel] = counts.get(pixel, 0) + 1
        total = sum(counts.values())
        most = max(counts.values())
        self.assertGreater(len(counts), 50, f"{png}: too few colours")
        self.assertGreater(1 - most / total, 0.15, f"{png}: mostly background")
        for name, rgb in FILLS.items():
            near = sum(n for p, n in counts.items()
                       if max(abs(p[i] - rgb[i]) for i in range(3)) <= 4)
            self.assertGreater(near, 20, f"{png}: {name} not painted")

    def fetch(self, path):
        with urllib.request.urlopen(f"http://{self.metrics}{path}", timeout=30) as r:
            return r.read().decode()

    def health(self):
        return self.monitor.GetSetHealth(
            monitor_pb2.GetSetHealthRequest(set=SET), timeout=30)

    # -- tests --

    def test_overview_draws_and_stays_home(self):
        parsed = self.load(self.page_url, ["overview"], "page_overview.png",
                           height=700)
        self.assertIn("sets", parsed.ids)

    def test_set_page_numbers_are_get_set_healths(self):
        before = self.health()
        parsed = self.load(f"{self.page_url}sets/{SET}", SET_PAGE_CHARTS,
                           "page_set.png")
        after = self.health()
        # Figures do not move once the records are in; only the time of the
        # evaluation does. (If they had, the comparison below would be moot.)
        b, a = monitor_pb2.SetHealth(), monitor_pb2.SetHealth()
        b.CopyFrom(before)
        a.CopyFrom(after)
        b.ClearField("evaluated_at")
        a.ClearField("evaluated_at")
        self.assertEqual(b, a, "the figures changed while the page loaded")
        for w in before.windows:
            chart = parsed.charts[f"reliability-{w.window}"]
            bins = [d for d in chart if "data-count" in d]
            self.assertEqual(len(bins), len(w.reliability), w.window)
            for got, want in zip(bins, w.reliability):
                self.assertEqual(float(got["data-lower"]), want.lower)
                self.assertEqual(float(got["data-upper"]), want.upper)
                self.assertEqual(int(got["data-count"]), want.count)
                if want.count > 0:
                    self.assertEqual(float(got["data-mean-predicted"]),
                                     want.mean_predicted)
                    self.assertEqual(float(got["data-observed-rate"]),
                                     want.observed_rate)
            self.assertGreater(sum(b.count for b in w.reliability), 0)
            bars = {d["data-feature"]: d for d in
                    parsed.charts[f"stability-{w.window}"] if "data-feature" in d}
            self.assertEqual(set(bars), {f.feature for f in w.features})
            for f in w.features:
                if f.psi.defined:
                    self.assertEqual(float(bars[f.feature]["data-psi"]),
                                     f.psi.value, f.feature)
                else:
                    self.assertNotIn("data-psi", bars[f.feature])
            shares = [d for d in parsed.charts[f"score-{w.window}"]
                      if "data-bin" in d]
            self.assertEqual([float(d["data-baseline"]) for d in shares],
                             list(w.score_shares.baseline))
            self.assertEqual([float(d["data-window"]) for d in shares],
                             list(w.score_shares.window))

    def test_served_pages_name_nothing_outside_plumbd(self):
        for path in ["/", f"/sets/{SET}",
                     f"/sets/{SET}/dossiers/{self.dossier.job}"]:
            self.assertEqual(outside_urls(self.fetch(path)), [], path)
        with open(self.dossier.path) as f:
            self.assertEqual(outside_urls(f.read()), [], self.dossier.path)

    def test_show_and_diff_versions(self):
        detail = self.registry.ShowVersion(
            registry_pb2.ShowVersionRequest(set=SET), timeout=30)
        self.assertEqual(detail.info.version, self.candidate)  # now active
        lines = {l.label: l for l in detail.coefficients}
        # Fitted by plumbd: every fitted column has its standard error.
        self.assertTrue(lines["intercept"].HasField("standard_error"))
        diff = self.registry.DiffVersions(registry_pb2.DiffVersionsRequest(
            set=SET, from_version="2026-12-01.1", to_version=self.candidate),
            timeout=30)
        features = {f.feature: f for f in diff.features}
        # The storm's new building type was learned by the refit.
        added_levels = [c for c in features["building_type"].changes
                        if c.startswith("levels added: ")]
        self.assertEqual(len(added_levels), 1, features["building_type"])
        self.assertIn("locker_bank", added_levels[0])
        added = [c.label for c in diff.coefficients if c.status == "added"]
        self.assertIn("building_type=locker_bank", added)
        self.assertEqual(diff.comparison, self.dossier.dossier.diff.comparison)
        # The dossier's diff is this one, as of the job.
        self.assertEqual(
            [c.label for c in self.dossier.dossier.diff.coefficients],
            [c.label for c in diff.coefficients])

    def test_dossier_from_plumbd_and_from_its_file(self):
        d = self.dossier
        self.assertEqual(d.dossier.result, "proposed")
        self.assertEqual(d.dossier.candidate_version, self.candidate)
        self.assertEqual(d.dossier.trigger, "drift")
        # The approval happened after the job: the trail as it stands now.
        self.assertIn("approved", [e.action for e in d.dossier.trail])
        self.assertTrue(os.path.isfile(d.path))
        served = self.load(f"{self.page_url}sets/{SET}/dossiers/{d.job}",
                           DOSSIER_CHARTS, "dossier_served.png")
        from_file = self.load("file://" + d.path, DOSSIER_CHARTS,
                              "dossier.png", served=False)
        # The holdout reliability diagram holds both versions' bins, as the
        # dossier's data says.
        bins = [x for x in from_file.charts["dossier-reliability"]
                if "data-count" in x]
        want = list(d.dossier.active_holdout.reliability) + \
            list(d.dossier.candidate_holdout.reliability)
        self.assertEqual([int(x["data-count"]) for x in bins],
                         [b.count for b in want])
        self.assertEqual(set(served.ids) & set(DOSSIER_CHARTS),
                         set(DOSSIER_CHARTS))


if __name__ == "__main__":
    unittest.main(verbosity=2)
