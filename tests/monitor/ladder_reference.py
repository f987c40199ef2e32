"""Writes reference values for the updating ladder (monitor/updating_ladder.h).

Usage: /usr/bin/python3 ladder_reference.py OUT.json

Every number comes from Debian's python3-statsmodels, python3-scipy and
python3-numpy, named per field below, independently of the C++ code:
  rung1   statsmodels GLM(y, ones, family=Binomial(), offset=z).fit():
          intercept (params[0]) and llf
  rung2   statsmodels Logit(y, [1, z]).fit(): intercept, slope, llf
  rung3   scipy.optimize.minimize (method "trust-exact", analytic gradient
          and Hessian, gtol 1e-12) of
              -sum l_i(b0 + x_i . b) + lambda/2 ||b - prior||^2
          at a fixed lambda: intercept, coefficients, unpenalised ll
  cv      the same minimiser on every fold (row i in fold i mod 5, the
          fold's lambda scaled by its share of rows), the held-out
          log-likelihood summed per grid value, the argmax lambda
  rung4   statsmodels Logit(y, [1, x]).fit(): llf
  lr      scipy.stats.chi2.sf(2 (ll_rung - ll_active), df) per rung, with
          ll_active from scipy.special.log_expit on the active log-odds
  chi2    scipy.stats.chi2.sf on a grid of (x, df), fractional df included
The data: seeded numpy draws, an active model and labels drawn from a
changed one (intercept shift, a slope on the log-odds, one coefficient).
"""
import json
import sys

import numpy as np
import scipy
import statsmodels
import statsmodels.api as sm
from scipy.optimize import minimize
from scipy.special import expit, log_expit
from scipy.stats import chi2


def floats(a):
    return [float(v) for v in np.asarray(a, dtype=float).ravel()]


def loglik(z, y):
    return float(np.sum(np.where(y == 1, log_expit(z), log_expit(-z))))


def ridge(x, y, b0, prior, lam):
    d = x.shape[1]
    xa = np.hstack([np.ones((x.shape[0], 1)), x])
    pen = np.concatenate([[0.0], np.full(d, lam)])
    centre = np.concatenate([[0.0], prior])

    def f(t):
        z = xa @ t
        return -loglik(z, y) + 0.5 * np.sum(pen * (t - centre) ** 2)

    def g(t):
        p = expit(xa @ t)
        return -(xa.T @ (y - p)) + pen * (t - centre)

    def h(t):
        p = expit(xa @ t)
        return (xa.T * (p * (1 - p))) @ xa + np.diag(pen)

    r = minimize(f, np.concatenate([[b0], prior]), jac=g, hess=h,
                 method="trust-exact", options={"gtol": 1e-12})
    t = r.x
    return t[0], t[1:], loglik(xa @ t, y)


def case(rng, name, n, shift, slope, changed):
    d = 4
    prior = np.array([0.8, -0.5, 0.3, 0.6])
    b0 = -1.0
    x = rng.normal(size=(n, d))
    z = b0 + x @ prior
    true = prior.copy()
    true[changed[0]] += changed[1]
    zt = shift + slope * (b0 + x @ true)
    y = (rng.random(n) < expit(zt)).astype(int)

    r1 = sm.GLM(y, np.ones((n, 1)), family=sm.families.Binomial(),
                offset=z).fit(tol=1e-14)
    r2 = sm.Logit(y, sm.add_constant(z)).fit(disp=0, tol=1e-14)
    r4 = sm.Logit(y, sm.add_constant(x)).fit(disp=0, tol=1e-14)
    lam = 0.05 * n
    i3, c3, ll3 = ridge(x, y, b0, prior, lam)

    folds = 5
    grid = [n * 10 ** (k / 2) for k in range(-8, 3)]
    cv = []
    for g in grid:
        total = 0.0
        for f in range(folds):
            test = np.arange(n) % folds == f
            train = ~test
            fl = g * train.sum() / n
            bi, bc, _ = ridge(x[train], y[train], b0, prior, fl)
            total += loglik(bi + x[test] @ bc, y[test])
        cv.append(total)
    best = int(np.argmax(cv))

    ll0 = loglik(z, y)
    lls = [float(r1.llf), float(r2.llf), float(ll3), float(r4.llf)]
    dfs = [1, 2, d + 1, d + 1]
    return {
        "name": name,
        "x": floats(x), "rows": n, "cols": d,
        "labels": [int(v) for v in y],
        "log_odds": floats(z),
        "prior_intercept": b0, "prior": floats(prior),
        "active_ll": ll0,
        "rung1_intercept": float(r1.params[0]), "rung1_ll": float(r1.llf),
        "rung2_intercept": float(r2.params[0]),
        "rung2_slope": float(r2.params[1]), "rung2_ll": float(r2.llf),
        "rung3_lambda": lam, "rung3_intercept": float(i3),
        "rung3_coefficients": floats(c3), "rung3_ll": float(ll3),
        "rung4_ll": float(r4.llf),
        "cv_grid": floats(grid), "cv_ll": floats(cv),
        "cv_lambda": float(grid[best]),
        "lr_statistic": [max(0.0, 2 * (ll - ll0)) for ll in lls],
        "lr_df": dfs,
        "lr_p": [float(chi2.sf(max(0.0, 2 * (ll - ll0)), df))
                 for ll, df in zip(lls, dfs)],
    }


def main():
    rng = np.random.default_rng(20)
    cases = [
        case(rng, "intercept_shift", 1500, 0.6, 1.0, (0, 0.0)),
        case(rng, "slope", 1500, 0.0, 0.6, (0, 0.0)),
        case(rng, "one_coefficient", 1500, 0.0, 1.0, (2, -0.9)),
    ]
    xs, dfs, sfs = [], [], []
    for df in [0.5, 1, 2, 3, 4.5, 5, 9, 30]:
        for x in [0.0, 0.01, 0.5, 1, 3.84, 7, 15, 40, 120]:
            xs.append(x)
            dfs.append(df)
            sfs.append(float(chi2.sf(x, df)))
    out = {
        "versions": {"numpy": np.__version__, "scipy": scipy.__version__,
                     "statsmodels": statsmodels.__version__},
        "cases": cases,
        "chi2": {"x": xs, "df": dfs, "sf": sfs},
    }
    with open(sys.argv[1], "w") as f:
        json.dump(out, f)


if __name__ == "__main__":
    main()
