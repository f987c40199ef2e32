"""A real plumbd for the Python tests, on an ephemeral port.

    with Plumbd() as daemon:             # empty sets dir, fresh ledger
        daemon.load(doc)                 # write the set file, SIGHUP, wait
        client = plumbline.Client(daemon.addr)

Started as tests/daemon/process.cc does: `--listen 127.0.0.1:0
--ready_file F`, a temporary sets directory and ledger. The child gets
SIGKILL when the test process dies (setpriv --pdeathsig), and stop() kills
it even when a test failed. Every wait has a deadline (DEADLINE_S), none is
a timing check.
"""
from __future__ import annotations

import json
import os
import shutil
import signal
import subprocess
import tempfile
import time
from typing import Any, Dict, Optional, Sequence

import plumbline

DEADLINE_S = 30.0


def plumbd_path() -> str:
    return os.environ["PLUMBLINE_PLUMBD"]


def plumbctl_path() -> str:
    return os.environ["PLUMBLINE_PLUMBCTL"]


def poll_until(condition, what: str, deadline_s: float = DEADLINE_S):
    """Calls condition() every 20 ms until it returns a true value, which is
    returned; raises AssertionError after deadline_s."""
    give_up = time.monotonic() + deadline_s
    while True:
        value = condition()
        if value:
            return value
        if time.monotonic() > give_up:
            raise AssertionError(f"gave up after {deadline_s:.0f} s waiting for {what}")
        time.sleep(0.02)


class Plumbd:
    def __init__(self, config: Optional[Dict[str, Any]] = None,
                 sets: Sequence[Dict[str, Any]] = ()):
        self.dir = tempfile.mkdtemp(prefix="plumbline-python-test-")
        self.sets_dir = os.path.join(self.dir, "sets")
        os.mkdir(self.sets_dir)
        self.log_path = os.path.join(self.dir, "plumbd.log")
        self._config = config
        self._initial_sets = list(sets)
        self.proc: Optional[subprocess.Popen] = None
        self.addr = ""
        # The token load() lists the sets with (a daemon with access control).
        self.token = ""

    def __enter__(self) -> "Plumbd":
        self.start()
        return self

    def __exit__(self, *exc) -> None:
        self.stop()

    def start(self) -> None:
        for doc in self._initial_sets:
            self._write(doc)
        ready = os.path.join(self.dir, "plumbd.ready")
        argv = ["setpriv", "--pdeathsig", "KILL", plumbd_path(),
                "--listen", "127.0.0.1:0", "--ready_file", ready,
                "--sets", self.sets_dir,
                "--ledger", os.path.join(self.dir, "var", "ledger.db")]
        if self._config is not None:
            path = os.path.join(self.dir, "plumbd.json")
            with open(path, "w") as f:
                json.dump(self._config, f)
            argv += ["--config", path]
        log = open(self.log_path, "wb")
        try:
            self.proc = subprocess.Popen(argv, cwd=self.dir, stdin=subprocess.DEVNULL,
                                         stdout=log, stderr=subprocess.STDOUT)
        finally:
            log.close()
        try:
            poll_until(lambda: self.proc.poll() is not None or os.path.exists(ready),
                       "plumbd to write its ready file")
            if self.proc.poll() is not None:
                raise AssertionError(f"plumbd exited with {self.proc.returncode}; "
                                     f"its log:\n{self.log()}")
        except BaseException:
            self.stop()
            raise
        with open(ready) as f:
            self.addr = f.read().strip()

    def stop(self) -> None:
        if self.proc is not None and self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
            try:
                self.proc.wait(timeout=DEADLINE_S)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()
        shutil.rmtree(self.dir, ignore_errors=True)

    def log(self) -> str:
        try:
            with open(self.log_path, errors="replace") as f:
                return f.read()
        except OSError:
            return ""

    def _write(self, doc: Dict[str, Any]) -> str:
        path = os.path.join(self.sets_dir, f"{doc['name']}.json")
        with open(path + ".tmp", "w") as f:
            json.dump(doc, f, indent=1)
        os.replace(path + ".tmp", path)
        return path

    def load(self, doc: Dict[str, Any]) -> None:
        """Writes the set file, sends SIGHUP and waits until plumbd serves
        that version (the assertion names plumbd's log if it refused it)."""
        self._write(doc)
        self.proc.send_signal(signal.SIGHUP)
        client = plumbline.Client(self.addr, token=self.token)
        try:
            def serving():
                return any(s.name == doc["name"] and s.version == doc["version"]
                           for s in client.sets())
            try:
                poll_until(serving, f"plumbd to serve {doc['name']} {doc['version']}")
            except AssertionError as e:
                raise AssertionError(f"{e}; plumbd's log:\n{self.log()}") from None
        finally:
            client.close()
