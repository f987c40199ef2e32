#!/usr/bin/env python3
"""ctest layout.*: the tree keeps the dependency graph DEVELOPERS.md draws.

  include_graph_test.py ROOT PLUMBCTL PLUMBD

- The real tree has no include or link edge the graph does not allow.
- A fixture tree (a copy of the real one, in a temp dir) with one upward
  include added, one sideways include, a monitor/ file including SQLite, a
  CMake link that skips the graph and a graph with a cycle: each is
  reported, so the check itself cannot silently pass.
- plumbctl links neither libsqlite3 nor libprometheus nor libcivetweb (ldd);
  plumbd links all three (so the ldd check sees real libraries), and not
  prometheus-cpp's pull library.
"""
import os
import re
import shutil
import subprocess
import sys
import tempfile
import unittest

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import include_graph  # noqa: E402

ROOT, PLUMBCTL, PLUMBD = sys.argv[1:4]
del sys.argv[1:4]


class RealTree(unittest.TestCase):
    def test_no_edge_outside_the_graph(self):
        problems = include_graph.check_tree(ROOT)
        self.assertEqual(problems, [], "\n".join(problems))

    def test_every_daemon_folder_is_a_library_of_the_graph(self):
        graph = include_graph.parse_graph(
            open(os.path.join(ROOT, "DEVELOPERS.md"), encoding="utf-8").read())
        parts = {f"daemon/{d}" for d in os.listdir(os.path.join(ROOT, "daemon"))
                 if os.path.isdir(os.path.join(ROOT, "daemon", d))}
        self.assertEqual(parts, {g for g in graph if g.startswith("daemon/")})


class FixtureTree(unittest.TestCase):
    """Copies of the real sources with one bad edge each."""

    def setUp(self):
        self.tmp = tempfile.mkdtemp(prefix="include_graph_")
        for top in ("scorer", "monitor", "daemon"):
            shutil.copytree(os.path.join(ROOT, top), os.path.join(self.tmp, top))
        shutil.copy(os.path.join(ROOT, "DEVELOPERS.md"), self.tmp)

    def tearDown(self):
        shutil.rmtree(self.tmp)

    def append(self, rel, text):
        with open(os.path.join(self.tmp, rel), "a", encoding="utf-8") as f:
            f.write(text)

    def problems(self):
        return include_graph.check_tree(self.tmp)

    def test_the_copy_is_clean(self):
        self.assertEqual(self.problems(), [])

    def test_an_upward_include_is_reported(self):
        self.append("daemon/util/files.h", '#include "daemon/ledger/ledger.h"\n')
        self.assertIn("daemon/util/files.h: includes daemon/ledger/ledger.h: "
                      "daemon/util may not depend on daemon/ledger",
                      self.problems())

    def test_a_sideways_include_is_reported(self):
        self.append("daemon/cli/client.cc", '#include "daemon/ledger/ledger.h"\n')
        self.assertIn("daemon/cli/client.cc: includes daemon/ledger/ledger.h: "
                      "daemon/cli may not depend on daemon/ledger",
                      self.problems())

    def test_a_pure_library_including_io_is_reported(self):
        self.append("monitor/auc.cc", "#include <sqlite3.h>\n")
        self.append("scorer/fit.cc", '#include "daemon/util/files.h"\n')
        problems = self.problems()
        self.assertIn("monitor/auc.cc: includes sqlite3.h: monitor may not use "
                      "sqlite", problems)
        self.assertIn("scorer/fit.cc: includes daemon/util/files.h: scorer may "
                      "not depend on daemon/util", problems)

    def test_a_link_outside_the_graph_is_reported(self):
        path = os.path.join(self.tmp, "daemon/csv/CMakeLists.txt")
        text = open(path, encoding="utf-8").read()
        with open(path, "w", encoding="utf-8") as f:
            f.write(text.replace("PUBLIC plumbline_scorer",
                                 "PUBLIC plumbline_ledger plumbline_scorer"))
        self.assertIn("daemon/csv/CMakeLists.txt: links daemon/ledger, which "
                      "the graph does not allow", self.problems())

    def test_a_cycle_or_a_cli_reaching_sqlite_is_reported(self):
        path = os.path.join(self.tmp, "DEVELOPERS.md")
        text = open(path, encoding="utf-8").read()
        text = re.sub(r"^daemon/util\s*:", "daemon/util : daemon/cli", text,
                      flags=re.M)
        text = re.sub(r"^daemon/cli\s*:", "daemon/cli : daemon/ledger", text,
                      flags=re.M)
        with open(path, "w", encoding="utf-8") as f:
            f.write(text)
        problems = self.problems()
        self.assertIn("graph: daemon/util depends on itself through a cycle",
                      problems)
        self.assertIn("graph: daemon/cli reaches sqlite through daemon/ledger",
                      problems)

    def test_a_folder_outside_the_graph_is_reported(self):
        os.mkdir(os.path.join(self.tmp, "daemon/stray"))
        self.append("daemon/stray/x.h", "\n")
        self.assertIn("daemon/stray/x.h: in no library of the graph (draw it "
                      "in DEVELOPERS.md first)", self.problems())


class Binaries(unittest.TestCase):
    def libraries(self, binary):
        out = subprocess.run(["ldd", binary], check=True, capture_output=True,
                             text=True).stdout
        return [line.split()[0] for line in out.splitlines() if line.strip()]

    def test_plumbctl_links_no_sqlite_and_no_prometheus(self):
        libs = self.libraries(PLUMBCTL)
        self.assertFalse([l for l in libs if "sqlite" in l or "prometheus" in l
                          or "civetweb" in l], libs)

    def test_plumbd_links_both(self):
        libs = " ".join(self.libraries(PLUMBD))
        self.assertIn("libsqlite3", libs)
        self.assertIn("libprometheus", libs)
        # One HTTP server: civetweb itself, not also the copy prometheus-cpp's
        # pull library would bring (its Exposer is no longer used).
        self.assertIn("libcivetweb", libs)
        self.assertNotIn("libprometheus-cpp-pull", libs)


if __name__ == "__main__":
    unittest.main(verbosity=2)
