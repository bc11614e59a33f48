#!/usr/bin/env python3
"""Reference values of the standard bivariate normal for tests/prob_bivariate.rs.

Generated with mpmath 1.3.0 at 35 significant digits (mp.dps = 35); values are printed
to 30 digits. X, Y are standard normal with correlation rho, s = sqrt(1 - rho^2).

Orthants, P(X < h, Y < k) = U(-h, -k) with U(h, k) = P(X > h, Y > k), from Plackett's
identity dU/drho = phi2(h, k; rho) integrated in theta (rho = sin theta) by mp.quad from
the end where every term is positive:
    rho >= 0: U = Phi(-h) Phi(-k) + 1/(2 pi) * integral over [0, asin rho] of g,
    rho < 0:  U = max(0, Phi(-h) - Phi(k)) + 1/(2 pi) * integral over [-pi/2, asin rho] of g,
    g(theta) = exp(-(h^2 + k^2 - 2 h k sin theta) / (2 cos^2 theta)),
so that tail values keep their relative precision. Every 5th orthant is computed by an independent formula (conditioning on X):
    P(l1 < X < u1, l2 < Y < u2)
        = integral over l1 < x < u1 of phi(x) P((l2 - rho x)/s < Z < (u2 - rho x)/s) dx
by mp.quad with breakpoints around x = l2 / rho and u2 / rho, where the conditional
probability changes within a width of s / |rho|; the script stops if an orthant's two
values differ by more than 1e-25 (absolute) + 1e-20 (relative).

Known limit: values far below 1e-12 are confirmed to the 1e-25 absolute level only. For
tiny tail values near rho = +-1 (e.g. P(X < -0.6, Y < 0.35) for rho = -0.9999, 8.8e-74)
mp.quad on the plain segment was found wrong by up to 1e-3 relative (the integrand is
concentrated in a tiny part of the segment), so tests/prob_bivariate.rs uses this table
for relative checks only where the value exceeds 1e-12.

Writes, beside this script:
  bivariate_orthant.csv    h, k, rho, P(X < h, Y < k)

Run: python3 tests/reference/bivariate_mpmath.py   (about ten minutes)
"""
import os
import random

import mpmath as mp

mp.mp.dps = 35
HERE = os.path.dirname(os.path.abspath(__file__))


def s30(v):
    return mp.nstr(v, 30, min_fixed=1, max_fixed=0)


def normal_interval(a, b):
    """P(a < Z < b) from the tail that keeps relative precision."""
    if b <= a:
        return mp.mpf(0)
    if a >= 0:
        return mp.ncdf(-a) - mp.ncdf(-b)
    if b <= 0:
        return mp.ncdf(b) - mp.ncdf(a)
    return 1 - mp.ncdf(a) - mp.ncdf(-b)


def breakpoints(lo, hi, rho, ends):
    """Points in [lo, hi] where the conditional probability changes quickly."""
    pts = {lo, hi}
    s = mp.sqrt((1 - rho) * (1 + rho))
    if rho != 0:
        w = s / abs(rho)
        for e in ends:
            x0 = e / rho
            for j in (-16, -8, -4, -2, -1, 0, 1, 2, 4, 8, 16):
                pts.add(x0 + j * w)
    for x in (-2, 0, 2):
        pts.add(mp.mpf(x))
    return sorted(p for p in pts if lo <= p <= hi)


def rect(l1, u1, l2, u2, rho):
    """The rectangle by conditioning on X."""
    rho = mp.mpf(rho)
    s = mp.sqrt((1 - rho) * (1 + rho))
    l1, u1, l2, u2 = (mp.mpf(v) for v in (l1, u1, l2, u2))

    def f(x):
        return mp.npdf(x) * normal_interval((l2 - rho * x) / s, (u2 - rho * x) / s)

    ends = [v for v in (l2, u2) if mp.isfinite(v)]
    return mp.quad(f, breakpoints(l1, u1, rho, ends))


def lower_by_conditioning(h, k, rho):
    return rect(-mp.inf, h, -mp.inf, k, rho)


def upper_by_theta(h, k, rho):
    """U(h, k) by Plackett's identity from the end where every term is positive."""
    h, k, rho = mp.mpf(h), mp.mpf(k), mp.mpf(rho)
    d2, s2, hk = (h - k) ** 2, (h + k) ** 2, h * k

    def g(t):
        # h^2 + k^2 - 2 h k sin = (h - k)^2 + 2 h k (1 - sin) = (h + k)^2 - 2 h k (1 + sin):
        # the form whose denominator 1 -+ sin stays away from 0 on the range of theta
        sn, c2 = mp.sin(t), mp.cos(t) ** 2
        if t >= 0:
            return mp.exp(-d2 / (2 * c2) - hk / (1 + sn)) if d2 > 0 else mp.exp(-hk / (1 + sn))
        if c2 == 0:
            return mp.exp(hk / 2) if s2 == 0 else mp.mpf(0)
        return mp.exp(-s2 / (2 * c2) + hk / (1 - sn))

    if rho >= 0:
        start, base = 0, mp.ncdf(-h) * mp.ncdf(-k)
    else:
        start, base = -mp.pi / 2, max(mp.mpf(0), mp.ncdf(-h) - mp.ncdf(k))
    return base + mp.quad(g, [start, mp.asin(rho)]) / (2 * mp.pi)


def checked(h, k, rho, check):
    v = upper_by_theta(-h, -k, rho)
    if check:
        w = lower_by_conditioning(h, k, rho)
        if abs(v - w) > mp.mpf(10) ** -25 + mp.mpf(10) ** -20 * abs(v):
            raise RuntimeError(f"h={h} k={k} rho={rho}: {v} vs {w}")
    return v


LIMITS = [-8.0, -5.0, -3.0, -1.7, -0.6, 0.0, 0.35, 1.0, 2.2, 3.5, 5.0, 8.0]
RHOS = [-1 + 1e-10, -0.9999, -0.995, -0.95, -0.926, -0.924, -0.8, -0.74, -0.5, -0.3, -0.1,
        0.05, 0.2, 0.3, 0.6, 0.76, 0.9, 0.924, 0.926, 0.97, 0.999, 0.99999, 1 - 1e-10]
# tails where relative accuracy is expected: P(X > t, Y > u) = P(X < -t, Y < -u)
TAILS = [(-5.0, -5.0, 0.5), (-8.0, -8.0, 0.5), (-10.0, -10.0, 0.5), (-6.0, -5.0, 0.9),
         (-5.0, -5.0, 0.0), (-20.0, -20.0, 0.3), (-5.0, -5.0, 0.95), (-10.0, -12.0, 0.99),
         (-7.0, -6.0, -0.97), (-4.0, -3.0, -0.999), (-30.0, -30.0, 0.8), (-37.0, 0.0, 0.5)]

with open(os.path.join(HERE, "bivariate_orthant.csv"), "w") as out:
    out.write("h,k,rho,lower_orthant\n")
    index = 0
    for rho in RHOS:
        for h in LIMITS:
            for k in LIMITS:
                v = checked(h, k, rho, index % 5 == 0)
                out.write(f"{h!r},{k!r},{rho!r},{s30(v)}\n")
                index += 1
        out.flush()
        print(f"rho = {rho} done", flush=True)
    for h, k, rho in TAILS:
        out.write(f"{h!r},{k!r},{rho!r},{s30(checked(h, k, rho, True))}\n")

