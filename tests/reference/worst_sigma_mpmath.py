"""Reference for the worst case over an unknown fault spread: architectures/plovrant_swa2_mean.toml,
fault site a_drift (channel a gains F ~ N(0, sigma^2), sigma unknown).

Channels a = 0.15 + e_a + F and b = -0.10 + e_b, own noise sigmas 0.50 and 0.55 with
correlation 0.1. Output y = (a + b) / 2, safety |y| <= 2; check |a - b| <= 2.5. For a given
sigma, (y, d = a - b) is bivariate normal (means 0.025 and 0.25; var y = (0.6075 + s^2) / 4,
var d = 0.4975 + s^2, cov = (s^2 - 0.0525) / 2), so the residual is

    p_vu(s) = integral over |d| <= 2.5 of pdf(d) * P(|y| > 2 | d) dd,

the conditional law of y given d normal (the textbook conditional of a bivariate normal).
mpmath.quad at 40 digits. The worst sigma maximises p_vu over sigma: golden-section search
on log sigma down to a bracket of 1e-14, then p_vu at its centre. Prints the worst sigma and
the largest residual.

Run: python3 tests/reference/worst_sigma_mpmath.py  (mpmath 1.3.0; a few seconds).
"""
import mpmath as mp

mp.mp.dps = 40
my, md = mp.mpf("0.025"), mp.mpf("0.25")
L, T = mp.mpf(2), mp.mpf("2.5")


def residual(s):
    vy = (mp.mpf("0.6075") + s * s) / 4
    vd = mp.mpf("0.4975") + s * s
    c = (s * s - mp.mpf("0.0525")) / 2
    sd = mp.sqrt(vd)
    cond_sd = mp.sqrt(vy - c * c / vd)

    def inner(d):
        m = my + c / vd * (d - md)
        outside = 1 - mp.ncdf((L - m) / cond_sd) + mp.ncdf((-L - m) / cond_sd)
        return mp.npdf(d, md, sd) * outside

    return mp.quad(inner, [-T, md, T])


lo, hi = mp.log(mp.mpf("0.5")), mp.log(mp.mpf(20))
g = (mp.sqrt(5) - 1) / 2
x1, x2 = hi - g * (hi - lo), lo + g * (hi - lo)
f1, f2 = residual(mp.exp(x1)), residual(mp.exp(x2))
while hi - lo > mp.mpf("1e-14"):
    if f1 > f2:
        hi, x2, f2 = x2, x1, f1
        x1 = hi - g * (hi - lo)
        f1 = residual(mp.exp(x1))
    else:
        lo, x1, f1 = x1, x2, f2
        x2 = lo + g * (hi - lo)
        f2 = residual(mp.exp(x2))
s = mp.exp((lo + hi) / 2)
print("worst_sigma", mp.nstr(s, 20))
print("p_vu", mp.nstr(residual(s), 25))
