"""Reference for a channel frozen at an arbitrary value beside a shared source and a model
estimate: demo/trubelka_1oo2_plausibility.toml, fault site b_frozen (a polytope engine case
of rank above one whose random rows read one direction).

Channel a = 0.05 + 0.12 e + 0.05 s (own noise e, shared excitation s; a's correlation with b
does not matter once b is replaced); channel b reads F, F uniform on [-40, 40]; the
estimate p = 0.1 + 0.8 u, independent. Output y = (a + F) / 2, safety |y| <= 0.6; checks
|a - F| <= 0.7 and |p - y| <= 3, detection on any. For fixed F and a the estimate's part is
a normal interval; the integral over a is an mpmath.quad with breakpoints where y meets the
safety band or a - F meets the check band; the mean over F an mpmath.quad over a grid of
breakpoints every half standard deviation of a, 16 steps either side of ma, ma +- 2L and
ma +- T (the outer integrand's kinks, at +-2L - ma and ma +- T, lie inside it). 20 digits.
mpmath's own error is not printed: a first run at 30 digits gave p_vd =
0.96990128945430501868866, the same to all 20 digits printed here.

Run: python3 tests/reference/frozen_beside_source_mpmath.py  (mpmath 1.3.0; about 13
minutes on one core). Prints p_vd, p_vu, p_sd.
"""
import mpmath as mp

mp.mp.dps = 20
ma = mp.mpf("0.05")
sa = mp.sqrt(mp.mpf("0.12") ** 2 + mp.mpf("0.05") ** 2)
mp_, sp = mp.mpf("0.1"), mp.mpf("0.8")
L, T, P = mp.mpf("0.6"), mp.mpf("0.7"), mp.mpf(3)


def estimate_fires(y):
    return mp.ncdf((y - P - mp_) / sp) + 1 - mp.ncdf((y + P - mp_) / sp)


def figure_given(a, f, k):
    """p_vd (k = 0), p_vu (1) or p_sd (2) given a and F, the estimate integrated out."""
    y = (a + f) / 2
    violated = abs(y) > L
    if (k == 2) == violated:
        return mp.mpf(0)
    detected = mp.mpf(1) if abs(a - f) > T else estimate_fires(y)
    return 1 - detected if k == 1 else detected


def over_a(f, k):
    lo, hi = ma - 12 * sa, ma + 12 * sa
    cuts = sorted({-2 * L - f, 2 * L - f, f - T, f + T})
    pts = [lo] + [c for c in cuts if lo < c < hi] + [hi]
    return mp.quad(lambda a: mp.npdf(a, ma, sa) * figure_given(a, f, k), pts)


meets = [mp.mpf(x) for x in ("-0.95", "-0.25", "0.25", "0.95")]
extra = [ma + j * sa / 2 + c for j in range(-16, 17) for c in (-2 * L, 2 * L, -T, T, 0)]
points = sorted({mp.mpf(-40), mp.mpf(40), *meets, *[x for x in extra if -40 < x < 40]})
for k, name in enumerate(["p_vd", "p_vu", "p_sd"]):
    print(name, mp.nstr(mp.quad(lambda f: over_a(f, k), points) / 80, 20))
