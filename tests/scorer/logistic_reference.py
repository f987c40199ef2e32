"""Writes reference values of the logistic function and its logarithm.

Source: SciPy's scipy.special.expit and scipy.special.log_expit (Debian
python3-scipy). Usage: /usr/bin/python3 logistic_reference.py OUT.json
"""
import json
import sys

import numpy as np
import scipy
from scipy.special import expit, log_expit


def main() -> None:
    xs = np.concatenate([
        np.linspace(-1000.0, 1000.0, 4001),
        np.linspace(-40.0, 40.0, 801),
        np.array([-745.5, -745.0, -744.0, -709.0, -37.0, -1e-8, -1e-300, 0.0,
                  1e-300, 1e-8, 36.7, 37.0, 709.0, 745.0]),
    ])
    out = {
        "source": f"scipy {scipy.__version__} scipy.special.expit/log_expit",
        "x": [float(x) for x in xs],
        "expit": [float(v) for v in expit(xs)],
        "log_expit": [float(v) for v in log_expit(xs)],
        "log_expit_neg": [float(v) for v in log_expit(-xs)],
    }
    with open(sys.argv[1], "w") as f:
        json.dump(out, f)


if __name__ == "__main__":
    main()
