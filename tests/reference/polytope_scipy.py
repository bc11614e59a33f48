#!/usr/bin/env python3
"""Reference values for tests/prob_polytope.rs, written to polytope_scipy.json.

Two independent sources:

* "scipy": rectangle probabilities P(lower < X < upper), X ~ N(mean, cov), from
  scipy.stats.multivariate_normal.cdf (SciPy 1.17.1; Genz's randomised lattice method as
  implemented in SciPy) with abseps = releps = 1e-10 and a large maxpts. SciPy reports no
  error with the value, so each case is run with six seeds (three proved too few: one
  6-D case's range understated its error); `value` is their mean and
  `tol` is twice their range plus 1e-10 (SciPy's absolute target).
* "mpmath": one-factor correlation X_i = l_i T + sqrt(1 - l_i^2) E_i (corr l_i l_j) reduces
  the rectangle probability to the 1-D integral
      int phi(t) prod_i [Phi((u_i - l_i t)/s_i) - Phi((l_i - l_i t)/s_i)] dt
  (conditioning on the common factor T), done with mpmath 1.3.0 at 40 digits; `tol` is a
  relative 1e-20 (the quadrature is checked by doubling the precision).

Run: python3 tests/reference/polytope_scipy.py  (a few minutes on 2 cores).
"""

import json
import os

import mpmath
import numpy as np
import scipy
from scipy.stats import multivariate_normal

OUT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "polytope_scipy.json")


def jnum(x):
    """JSON has no infinities: encode them as strings."""
    if np.isinf(x):
        return "inf" if x > 0 else "-inf"
    return float(x)


def random_correlation(rng, n, k):
    """A correlation matrix from k random factors plus noise (full rank)."""
    b = rng.normal(size=(n, k))
    s = b @ b.T + np.diag(rng.uniform(0.2, 1.0, size=n))
    d = np.sqrt(np.diag(s))
    return s / d[:, None] / d[None, :]


def scipy_cases():
    rng = np.random.default_rng(20240917)
    cases = []
    spec = [(3, 2), (3, 1), (4, 2), (4, 3), (5, 2), (5, 4), (6, 3), (6, 2), (7, 3), (8, 4)]
    for idx, (n, k) in enumerate(spec):
        corr = random_correlation(rng, n, k)
        sig = rng.uniform(0.5, 2.0, size=n)
        cov = corr * sig[:, None] * sig[None, :]
        mean = rng.normal(scale=0.5, size=n)
        lower = mean + sig * rng.uniform(-2.5, 0.0, size=n)
        upper = lower + sig * rng.uniform(0.8, 3.5, size=n)
        # Some one-sided ends.
        for i in range(n):
            t = rng.uniform()
            if t < 0.2:
                lower[i] = -np.inf
            elif t < 0.35:
                upper[i] = np.inf
        maxpts = 20_000_000
        vals = [
            float(
                multivariate_normal.cdf(
                    upper, mean=mean, cov=cov, lower_limit=lower, abseps=1e-10,
                    releps=1e-10, maxpts=maxpts, rng=np.random.default_rng(seed),
                )
            )
            for seed in (1, 2, 3, 4, 5, 6)
        ]
        cases.append({
            "name": f"scipy_rect_{idx}_n{n}",
            "source": f"scipy.stats.multivariate_normal.cdf, SciPy {scipy.__version__}",
            "mean": [float(v) for v in mean],
            "cov": [[float(v) for v in row] for row in cov],
            "lower": [jnum(v) for v in lower],
            "upper": [jnum(v) for v in upper],
            "value": float(np.mean(vals)),
            "tol": 2.0 * (max(vals) - min(vals)) + 1e-10,
            "rel": False,
        })
    return cases


def one_factor_value(loads, lower, upper, dps):
    mpmath.mp.dps = dps
    loads = [mpmath.mpf(v) for v in loads]
    s = [mpmath.sqrt(1 - v * v) for v in loads]

    def interval(a, b):
        # P(a < Z < b) from the tail that does not cancel.
        if a >= 0:
            return mpmath.ncdf(-a) - mpmath.ncdf(-b)
        return mpmath.ncdf(b) - mpmath.ncdf(a)

    def f(t):
        p = mpmath.npdf(t)
        for li, si, lo, hi in zip(loads, s, lower, upper):
            a = (lo - li * t) / si if np.isfinite(lo) else -mpmath.inf
            b = (hi - li * t) / si if np.isfinite(hi) else mpmath.inf
            p *= interval(a, b)
        return p

    pts = [-mpmath.inf, -12, -8, -6, -4, -2, 0, 2, 4, 6, 8, 12, mpmath.inf]
    return mpmath.quad(f, pts, maxdegree=10)


def mpmath_cases():
    rng = np.random.default_rng(77)
    cases = []
    specs = []
    # General rectangles, n = 3..8.
    for n in (3, 4, 6, 8):
        loads = rng.uniform(-0.8, 0.9, size=n)
        lower = rng.uniform(-2.0, 0.5, size=n)
        upper = lower + rng.uniform(0.5, 3.0, size=n)
        specs.append((f"onefactor_rect_n{n}", loads, lower, upper))
    # Tails: P(all X_i > h), probabilities 1e-8 .. 1e-12.
    for n, rho, h in ((3, 0.3, 3.6), (4, 0.5, 3.5), (5, 0.2, 2.8), (6, 0.6, 3.7), (4, 0.1, 3.3)):
        loads = np.full(n, np.sqrt(rho))
        specs.append((f"onefactor_tail_n{n}_h{h}", loads, np.full(n, h), np.full(n, np.inf)))
    # A lower-tail box with unequal loadings.
    loads = np.array([0.7, 0.5, 0.6, 0.4, 0.8])
    specs.append(("onefactor_lowerbox_n5", loads, np.full(5, -np.inf), np.array([-2.5, -2.0, -2.2, -1.8, -2.6])))
    for name, loads, lower, upper in specs:
        v = one_factor_value(loads, lower, upper, 40)
        v2 = one_factor_value(loads, lower, upper, 60)
        assert abs(v - v2) <= mpmath.mpf("1e-25") * abs(v2), name
        n = len(loads)
        corr = np.outer(loads, loads)
        np.fill_diagonal(corr, 1.0)
        cases.append({
            "name": name,
            "source": "mpmath 1.3.0 one-factor 1-D reduction (40 digits)",
            "mean": [0.0] * n,
            "cov": [[float(v) for v in row] for row in corr],
            "lower": [jnum(v) for v in lower],
            "upper": [jnum(v) for v in upper],
            "value": float(v2),
            "tol": 1e-20 * float(v2),
            "rel": True,
        })
    return cases


def main():
    cases = mpmath_cases() + scipy_cases()
    with open(OUT, "w") as f:
        json.dump({
            "generator": "tests/reference/polytope_scipy.py",
            "scipy": scipy.__version__,
            "mpmath": mpmath.__version__,
            "cases": cases,
        }, f, indent=1)
    print(f"wrote {len(cases)} cases to {OUT}")


if __name__ == "__main__":
    main()
