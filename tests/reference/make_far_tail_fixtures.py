"""Far-tail reference values for the chi-square, Beta and F laws.

Writes tests/fixtures/far_tails.json. Every value is computed with mpmath
at 60 significant digits (mp.dps = 60), always integrating the smaller tail
from the edge of the support (regularized betainc from 0, gammainc from 0 or
to infinity), so no value is formed as 1 - (something close to 1). The
cases stress moderate shapes (half degrees of freedom between 5 and 100)
far into both tails, down to probabilities near 1e-300, where a prefactor
written around the distribution's centre must not cancel.

Run: python tests/reference/make_far_tail_fixtures.py (needs mpmath).
"""
import json
import os
import platform

import mpmath as mp

mp.mp.dps = 60


def f2s(v):
    return float(mp.mpf(v))


def beta_tails(a, b, x, y):
    """(cdf, sf) of Beta(a, b) at the pair (x, y = 1 - x), each from its edge."""
    a, b = mp.mpf(a), mp.mpf(b)
    cdf = mp.betainc(a, b, 0, mp.mpf(x), regularized=True)
    sf = mp.betainc(b, a, 0, mp.mpf(y), regularized=True)
    return cdf, sf


def f_tails(d1, d2, x):
    d1, d2, x = mp.mpf(d1), mp.mpf(d2), mp.mpf(x)
    g = d1 * x
    lower_arg = g / (g + d2)
    upper_arg = d2 / (g + d2)
    return (mp.betainc(d1 / 2, d2 / 2, 0, lower_arg, regularized=True),
            mp.betainc(d2 / 2, d1 / 2, 0, upper_arg, regularized=True))


def chi2_tails(k, x):
    k, x = mp.mpf(k), mp.mpf(x)
    return (mp.gammainc(k / 2, 0, x / 2, regularized=True),
            mp.gammainc(k / 2, x / 2, mp.inf, regularized=True))


def solve_log(fun, target, lo, hi):
    """x in [e^lo, e^hi] with fun(x) = target for a decreasing fun, by
    bisection in ln x (300 steps: far below double precision)."""
    lo, hi = mp.mpf(lo), mp.mpf(hi)
    lt = mp.log(target)
    for _ in range(300):
        mid = (lo + hi) / 2
        if mp.log(fun(mp.exp(mid))) > lt:
            lo = mid
        else:
            hi = mid
    return mp.exp((lo + hi) / 2)


cases = []
quantiles = []

# Beta with moderate shapes, far lower tail (x -> 0) and far upper tail
# (y = 1 - x -> 0).
for (a, b) in [(5, 5), (10, 21), (10.5, 40), (25, 25), (50, 7.5), (100, 100), (5.5, 100)]:
    for x in ["1e-3", "1e-8", "1e-20", "1e-40", "1e-80"]:
        xf = float(x)
        y = 1 - mp.mpf(xf)
        cdf, sf = beta_tails(a, b, xf, y)
        if cdf > mp.mpf("1e-305"):
            cases.append({"dist": "beta", "params": [a, b], "x": xf, "y": f2s(y),
                          "cdf": f2s(cdf), "sf": f2s(sf)})
    for y in ["1e-3", "1e-8", "1e-20", "1e-40", "1e-80"]:
        yf = float(y)
        x = 1 - mp.mpf(yf)
        cdf, sf = beta_tails(a, b, x, yf)
        if sf > mp.mpf("1e-305"):
            cases.append({"dist": "beta", "params": [a, b], "x": f2s(x), "y": yf,
                          "cdf": f2s(cdf), "sf": f2s(sf)})

# F with moderate degrees of freedom: huge x (upper tail) and tiny x (lower).
for (d1, d2) in [(20, 42), (20, 20), (30, 30), (10, 200), (40, 12), (12, 60)]:
    for x in ["1e3", "1e6", "1e10", "1e16", "1e17", "1e25", "1e-4", "1e-10", "1e-20"]:
        xf = float(x)
        cdf, sf = f_tails(d1, d2, xf)
        if min(cdf, sf) > mp.mpf("1e-305"):
            cases.append({"dist": "f", "params": [d1, d2], "x": xf, "cdf": f2s(cdf), "sf": f2s(sf)})

# Chi-square with moderate degrees of freedom.
for k in [10, 21, 40, 101, 200]:
    for x in ["1e-20", "1e-10", "1e-5", "0.1", "300", "1000", "1300"]:
        xf = float(x)
        cdf, sf = chi2_tails(k, xf)
        if min(cdf, sf) > mp.mpf("1e-305"):
            cases.append({"dist": "chi2", "params": [k], "x": xf, "cdf": f2s(cdf), "sf": f2s(sf)})

# Upper quantiles at 1e-300 (and a few other far levels).
for (d1, d2) in [(30, 30), (20, 42), (10, 200), (12, 60)]:
    for alpha in ["1e-300", "1e-200", "1e-100"]:
        q = solve_log(lambda x: f_tails(d1, d2, x)[1], mp.mpf(alpha), -10, 700)
        quantiles.append({"dist": "f", "params": [d1, d2], "alpha": float(alpha), "isf": f2s(q)})
for k in [10, 21, 101]:
    for alpha in ["1e-300", "1e-100"]:
        q = solve_log(lambda x: chi2_tails(k, x)[1], mp.mpf(alpha), -10, 10)
        quantiles.append({"dist": "chi2", "params": [k], "alpha": float(alpha), "isf": f2s(q)})
for (a, b) in [(10, 21), (25, 25), (5.5, 100)]:
    for alpha in ["1e-300", "1e-100"]:
        # Upper quantile of Beta: solve in y = 1 - x (sf increases with y).
        fun = lambda yv: 1 / beta_tails(a, b, 1 - yv, yv)[1]
        y = solve_log(fun, 1 / mp.mpf(alpha), -700, 0)
        quantiles.append({"dist": "beta", "params": [a, b], "alpha": float(alpha),
                          "isf_complement": f2s(y)})
# In-sample cutoff near alpha -> 1: Beta(0.5, 19) upper quantile at
# 0.999999 is tiny; its value itself is the reference.
for (a, b, alpha) in [(0.5, 19, 0.999999), (1.5, 10, 0.9999999999), (3, 27, 0.999)]:
    fun = lambda xv: beta_tails(a, b, xv, 1 - xv)[0]
    # cdf increases with x: solve 1/cdf decreasing.
    x = solve_log(lambda xv: 1 / fun(xv), 1 / (1 - mp.mpf(alpha)), -700, 0)
    quantiles.append({"dist": "beta", "params": [a, b], "alpha": alpha, "isf": f2s(x)})

out = {
    "provenance": {
        "script": "tests/reference/make_far_tail_fixtures.py",
        "versions": {"python": platform.python_version(), "mpmath": mp.__version__},
        "method": __doc__.strip(),
    },
    "cases": cases,
    "quantiles": quantiles,
}
path = os.path.join(os.path.dirname(__file__), "..", "fixtures", "far_tails.json")
with open(path, "w") as fh:
    json.dump(out, fh, indent=1)
print(f"wrote {len(cases)} cases and {len(quantiles)} quantiles to {os.path.normpath(path)}")
