#!/usr/bin/env python3
"""Reference values of the standard normal distribution for tests/prob_normal.rs.

Generated with mpmath 1.3.0 at 50 significant digits (mp.dps = 50); each value is printed
to 30 significant digits. Every argument is a double written with Python's repr, so the
test reads back exactly the number that mpmath used.

Writes, beside this script:
  normal_cdf.csv       x, cdf = Phi(x), sf = 1 - Phi(x), pdf = phi(x), log_cdf = ln Phi(x)
                       (as log1p(-(1 - Phi(x))) for x > 0)
  normal_quantile.csv  p, x with Phi(x) = p (Newton's method on ln Phi at 50 digits)
  normal_interval.csv  a, b, P(a < Z < b) (as Phi(b) - Phi(a) at 50 digits, or the
                       difference of the upper tails where a > 0, with 50 digits kept)

Run: python3 tests/reference/normal_mpmath.py
"""
import os
import random
import statistics

import mpmath as mp

mp.mp.dps = 50
HERE = os.path.dirname(os.path.abspath(__file__))


def s(v):
    return mp.nstr(v, 30, min_fixed=1, max_fixed=0)


def cdf_points():
    xs = set()
    # the grid from -38 to 38 in steps of 0.05 (not multiples of 1/16, so the split of
    # the exponential is exercised), and 1000 seeded random points on the same range
    xs.update(-38.0 + i * 0.05 for i in range(0, 1521))
    rng = random.Random(20240601)
    xs.update(rng.uniform(-38.0, 38.0) for _ in range(1000))
    # both sides of Cody's switch points (u = 0.46875 and u = 4, with u = x / sqrt 2)
    for u in (0.46875, 4.0):
        x = float(mp.mpf(u) * mp.sqrt(2))
        for d in (-1e-12, -1e-15, 0.0, 1e-15, 1e-12):
            xs.update((x + d, -(x + d)))
    # near zero, and far below the underflow (only ln Phi is then meaningful)
    xs.update((0.0, 1e-300, -1e-300, 1e-10, -1e-10, 1e-3, -1e-3))
    xs.update(-(10.0 ** (k / 4)) for k in range(7, 25))
    return sorted(xs)


def quantile_points():
    ps = set()
    ps.update(10.0 ** (-k / 4) for k in range(4, 1201))  # 0.1 down to 1e-300
    ps.update(1.0 - 10.0 ** (-k / 4) for k in range(4, 65))  # up to 1 - 1e-16
    ps.update(i / 1000 for i in range(1, 1000))
    ps.update(0.5 + 10.0 ** -k for k in range(1, 17))
    ps.update(0.5 - 10.0 ** -k for k in range(1, 17))
    ps.update((0.075, 0.925, 0.07499999999999999, 0.925000000000001))
    rng = random.Random(20240602)
    ps.update(rng.random() for _ in range(500))
    return sorted(p for p in ps if 0.0 < p < 1.0)


def quantile(p):
    p = mp.mpf(p)
    if p > 0.5:
        return -quantile(1 - p)
    x = mp.mpf(statistics.NormalDist().inv_cdf(float(p)))
    target = mp.log(p)
    for _ in range(100):
        step = (mp.log(mp.ncdf(x)) - target) * mp.ncdf(x) / mp.npdf(x)
        x -= step
        if abs(step) <= abs(x) * mp.mpf(10) ** -45 + mp.mpf(10) ** -300:
            break
    else:
        raise RuntimeError(f"no convergence at p = {p}")
    return x


def interval_points():
    rng = random.Random(20240603)
    pairs = []
    ends = [-40.0, -37.0, -20.0, -8.5, -5.0, -2.0, -1.0, -0.3, -1e-8, 0.0, 1e-9, 0.25,
            0.7, 1.5, 3.0, 6.0, 12.0, 30.0, 38.0]
    for a in ends:
        for b in ends:
            if a < b:
                pairs.append((a, b))
    # narrow intervals (relative accuracy of a tiny difference), in both tails and at 0
    for c in (-30.0, -6.0, -1.0, -1e-3, 0.0, 1e-7, 0.5, 2.0, 9.0, 25.0):
        for w in (1e-12, 1e-8, 1e-4, 1e-2, 0.2, 0.9):
            pairs.append((c, c + w))
            pairs.append((c - w / 2, c + w / 2))
    for _ in range(400):
        a = rng.uniform(-10.0, 10.0)
        pairs.append((a, a + rng.expovariate(1.0)))
    return pairs


def interval(a, b):
    a, b = mp.mpf(a), mp.mpf(b)
    if a > 0:
        return mp.ncdf(-a) - mp.ncdf(-b)
    return mp.ncdf(b) - mp.ncdf(a)


with open(os.path.join(HERE, "normal_interval.csv"), "w") as f:
    f.write("a,b,p\n")
    for a, b in interval_points():
        f.write(f"{a!r},{b!r},{s(interval(a, b))}\n")

with open(os.path.join(HERE, "normal_cdf.csv"), "w") as f:
    f.write("x,cdf,sf,pdf,log_cdf\n")
    for x in cdf_points():
        m = mp.mpf(x)
        c, t = mp.ncdf(m), mp.ncdf(-m)
        # ln Phi as log1p(-(1 - Phi)) for x > 0: Phi rounds to 1 within 50 digits there
        log_c = mp.log(c) if x <= 0 else mp.log1p(-t)
        f.write(f"{x!r},{s(c)},{s(t)},{s(mp.npdf(m))},{s(log_c)}\n")

with open(os.path.join(HERE, "normal_quantile.csv"), "w") as f:
    f.write("p,x\n")
    for p in quantile_points():
        f.write(f"{p!r},{s(quantile(p))}\n")
