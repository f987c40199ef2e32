"""Writes the reference fits the maximum-likelihood fitter is checked against.

Usage: /usr/bin/python3 fit_reference.py OUT.json

Sections of OUT.json (matrices are flattened row-major with "rows"/"cols"):
  spector        statsmodels Logit on statsmodels.datasets.spector (Spector &
                 Mazzeo 1980; the fit is tabulated in Greene, Econometric
                 Analysis): GRADE ~ 1 + GPA + TUCE + PSI, Newton, tol 1e-12.
  weighted       statsmodels GLM(Binomial, freq_weights=w) on the same data
                 with integer weights w_i = 1 + (i mod 3).
  overshoot      statsmodels Logit (Newton, tol 1e-12) on OVERSHOOT_ROWS, a
                 small invented data set with heavy-tailed columns (seeded
                 Cauchy draws) on which one full Newton step of Plumbline's
                 fitter lowers the log-likelihood, so step halving runs.
  breast_cancer  scikit-learn LogisticRegression(penalty="l2", C=c,
                 solver="newton-cholesky", tol=1e-12) on
                 sklearn.datasets.load_breast_cancer standardised with
                 StandardScaler, for several C. (lbfgs at tol=1e-12 stops
                 1e-4 to 1e-1 relative away from this optimum, so the
                 Newton solver is the reference.)
Everything comes from Debian's python3-statsmodels and python3-sklearn.
"""
import json
import sys

import numpy as np
import sklearn
import statsmodels
import statsmodels.api as sm
from sklearn.datasets import load_breast_cancer
from sklearn.linear_model import LogisticRegression
from sklearn.preprocessing import StandardScaler

C_VALUES = [0.01, 0.1, 1.0, 10.0]

# x1, x2, x3, label.
OVERSHOOT_ROWS = [
    (0.57264442165643892, 2.1422998497075074, -1.9480734740676364, 1),
    (4.5327373781224178, -4.3506868540695889, 0.44529369377870803, 1),
    (0.52511600436388051, -1.0323277899730865, 10.16064478816652, 1),
    (1.4876258309195018, 18.275921502402195, 2.4243085158821844, 1),
    (0.30542602565268734, -0.3323577552372165, -0.4340601609764248, 0),
    (0.84627707479788972, -0.83725531747752402, 0.34385123333027845, 1),
    (-0.27956125022603995, -118.66250098509752, 17.636068965022478, 0),
    (-0.12720851238422154, -0.091530844482136081, -4.1217863524263425, 0),
    (-0.41896496092557528, 2.8482986657829708, 4.6255940421885917, 1),
    (5.0222071504014929, -1.0446851044542591, 0.18856959388068198, 1),
    (1.0838671451993032, 0.52361960445989486, 0.45354948322719357, 1),
    (2.5555153101830306, 1.7908498245038174, 0.31711246192843978, 1),
    (1.3116240042172631, -1.233070847996623, 0.44679923108326675, 0),
    (0.85078570783217877, -4.608068904565541, -0.42736670717961966, 0),
    (-1.142720800975479, -2.5031495823777186, -1.4282329787780921, 0),
    (-1.012209938142238, 1.2811323137027431, 0.46401758642830698, 1),
    (-3.750496164273784, 0.18014060072629198, 10.311309266088546, 1),
    (-0.35806395946784675, 5.085775332576417, 2.5788180264300751, 1),
    (0.52591890870562918, -1.3178428956164925, 9.7986251453316111, 1),
    (-1.3523750184558108, 0.20461409790960991, -3.0047311266782546, 0),
    (0.68789507072502332, -2.5087223902416449, 1.1450545460844448, 0),
    (2.9826166729722909, -0.2707322276207571, 0.2706087500830005, 1),
    (-0.11365068984855371, -0.39233429219960692, -0.53103123878520031, 0),
    (1.5441554679820859, 0.25537000924531666, -0.23995984785053923, 1),
    (7.7184286069191801, 13.666182005028112, 0.54210762237237164, 1),
    (-1.0615036007299603, -5.5538484895229123, 0.35541941771736901, 0),
]


def floats(a):
    return [float(v) for v in np.ravel(a)]


def spector():
    data = sm.datasets.spector.load_pandas()
    x = data.exog[["GPA", "TUCE", "PSI"]].to_numpy(dtype=float)
    y = data.endog.to_numpy(dtype=float)
    fit = sm.Logit(y, sm.add_constant(x)).fit(method="newton", tol=1e-12,
                                              maxiter=100, disp=0)
    return x, y, {
        "rows": x.shape[0], "cols": x.shape[1],
        "names": ["GPA", "TUCE", "PSI"],
        "x": floats(x), "y": floats(y),
        "params": floats(fit.params), "bse": floats(fit.bse),
        "z": floats(fit.tvalues), "p": floats(fit.pvalues),
        "llf": float(fit.llf), "llnull": float(fit.llnull),
        "prsquared": float(fit.prsquared), "aic": float(fit.aic),
        "iterations": int(fit.mle_retvals["iterations"]),
    }


def weighted(x, y):
    w = 1.0 + (np.arange(len(y)) % 3)
    fit = sm.GLM(y, sm.add_constant(x), family=sm.families.Binomial(),
                 freq_weights=w).fit(method="IRLS", tol=1e-14, maxiter=100)
    return {
        "w": floats(w), "params": floats(fit.params), "bse": floats(fit.bse),
        "llf": float(fit.llf),
    }


def overshoot():
    a = np.array(OVERSHOOT_ROWS, dtype=float)
    x, y = a[:, :3], a[:, 3]
    with np.errstate(over="ignore"):  # statsmodels' exp overflows, harmlessly
        fit = sm.Logit(y, sm.add_constant(x)).fit(method="newton", tol=1e-12,
                                                  maxiter=200, disp=0)
    return {"rows": x.shape[0], "cols": x.shape[1], "x": floats(x),
            "y": floats(y), "params": floats(fit.params),
            "bse": floats(fit.bse), "llf": float(fit.llf)}


def breast_cancer():
    data = load_breast_cancer()
    x = StandardScaler().fit_transform(data.data)
    y = data.target.astype(float)
    fits = []
    for c in C_VALUES:
        model = LogisticRegression(penalty="l2", C=c, tol=1e-12,
                                   max_iter=100000, solver="newton-cholesky")
        model.fit(x, y)
        fits.append({"C": c, "coef": floats(model.coef_[0]),
                     "intercept": float(model.intercept_[0]),
                     "n_iter": int(model.n_iter_[0])})
    return {"rows": x.shape[0], "cols": x.shape[1], "x": floats(x),
            "y": floats(y), "fits": fits}


def main():
    x, y, spector_ref = spector()
    out = {
        "source": f"statsmodels {statsmodels.__version__}, scikit-learn "
                  f"{sklearn.__version__}, numpy {np.__version__}",
        "spector": spector_ref,
        "weighted": weighted(x, y),
        "overshoot": overshoot(),
        "breast_cancer": breast_cancer(),
    }
    with open(sys.argv[1], "w") as f:
        json.dump(out, f)


if __name__ == "__main__":
    main()
