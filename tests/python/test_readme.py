"""The README's "From Python" example, run as written against a real plumbd.

The first python block fits and exports into ./sets (run in the daemon's
directory); plumbd then starts on those sets; the second block runs with the
README's address replaced by the ephemeral one. Checked afterwards: the
scores equal scikit-learn's predict_proba within 1e-12 (reference:
scikit-learn, same run), and the outcomes were accepted.
"""
from __future__ import annotations

import contextlib
import io
import os
import re
import unittest

import numpy as np

from plumbd_process import Plumbd

README_ADDR = "127.0.0.1:7390"


def python_blocks(readme: str):
    section = readme.split("### From Python", 1)[1].split("\n### ", 1)[0]
    return re.findall(r"```python\n(.*?)```", section, flags=re.S)


class ReadmeExample(unittest.TestCase):
    def test_from_python(self):
        with open(os.environ["PLUMBLINE_README"]) as f:
            blocks = python_blocks(f.read())
        self.assertEqual(len(blocks), 2, "the section has two python blocks")
        self.assertIn(README_ADDR, blocks[1])
        daemon = Plumbd()
        self.addCleanup(daemon.stop)
        namespace = {}
        here = os.getcwd()
        os.chdir(daemon.dir)
        self.addCleanup(os.chdir, here)
        exec(compile(blocks[0], "README.md (block 1)", "exec"), namespace)
        daemon.start()
        out = io.StringIO()
        with contextlib.redirect_stdout(out):
            exec(compile(blocks[1].replace(README_ADDR, daemon.addr),
                         "README.md (block 2)", "exec"), namespace)
        namespace["client"].close()
        model, X = namespace["model"], namespace["X"]
        got = np.array(namespace["scores"].probabilities)
        self.assertLessEqual(float(np.max(np.abs(got - model.predict_proba(X)[:, 1]))),
                             1e-12)
        self.assertEqual(len(namespace["one"].reasons), 3)
        self.assertEqual(out.getvalue().splitlines()[-1], "steady")


if __name__ == "__main__":
    unittest.main()
