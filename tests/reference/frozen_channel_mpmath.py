"""Reference for a channel frozen at an arbitrary value (uniform amplitude, replace mode) in
the two-channel example architectures/plovrant_swa2_mean.toml, fault site b_frozen.

Channel a = 0.15 + 0.5 z (z standard normal); channel b reads F, F uniform on [-540, 540].
Output y = (a + F) / 2, safety |y| <= 2; check |a - F| <= 2.5 (fires outside). For a fixed F
each outcome is a union of intervals of a, integrated with the normal CDF; the mean over F is
an mpmath.quad at 30 digits with breakpoints every 0.25 over [-20, 20].

Run: python3 tests/reference/frozen_channel_mpmath.py  (mpmath 1.3.0). Prints p_vu, p_vd.
"""
import mpmath as mp

mp.mp.dps = 30
m, s = mp.mpf("0.15"), mp.mpf("0.5")
inf = mp.inf


def prob(lo, hi):
    return (mp.ncdf((hi - m) / s) - mp.ncdf((lo - m) / s)) if hi > lo else mp.mpf(0)


def meet(u, v):
    return (max(u[0], v[0]), min(u[1], v[1]))


def violated(f):
    return [(4 - f, inf), (-inf, -4 - f)]


def p_vu(f):
    quiet = (f - 2.5, f + 2.5)
    return sum(prob(*meet(v, quiet)) for v in violated(f))


def p_vd(f):
    fired = [(f + 2.5, inf), (-inf, f - 2.5)]
    return sum(prob(*meet(v, d)) for v in violated(f) for d in fired)


points = sorted(set([-540, 540] + [x / 4 for x in range(-80, 81)]))
print(mp.nstr(mp.quad(p_vu, points) / 1080, 20), mp.nstr(mp.quad(p_vd, points) / 1080, 20))
