#!/usr/bin/env python3
"""Numerical edge cases of whole analyses, computed with mpmath at high precision.

Writes tests/reference/edge_cases.json, read by tests/analysis_edge_cases.rs. The script
never calls concord: it writes each architecture file itself and computes its figures from
the model's definitions (docs/architecture-format.md, "Random part" and "Fault sites"; the
figures as README.md "What the figures mean" defines them) by reductions derived below,
each at two working precisions (30 and 50 digits); the stored tolerance is ten times their
disagreement, at least 1e-25 relative.

Reductions (derived by hand, stated per case):
- two channels, mean output y = (a + b) / 2 and difference check d = a - b: (y, d) is a
  bivariate normal; P(y in Y, d in D) = integral over y in Y of pdf(y) P(d in D | y), with
  the conditional normal of d given y (any normal textbook, e.g. Feller Vol. II, III.2);
  when the channels have equal variance y and d are independent and the integral is a
  product of normal probabilities;
- rank one (rho = +1 or -1, or a channel replaced by the amplitude): y and d are affine in
  one standard normal z; the event is an interval of z, found exactly;
- a uniform amplitude: the figure at a fixed amplitude, integrated over the amplitude with
  breakpoints where it changes fast (mpmath tanh-sinh quadrature);
- median of three independent equal channels with a range check: the joint density of the
  order statistics, 6 phi(x1) phi(x2) phi(x3) on x1 < x2 < x3 (David and Nagaraja, Order
  Statistics, 2.2), integrated over the median and the minimum.

Run from the repository root:  python3 tests/reference/edge_cases.py
"""

import json
import os
import sys

import mpmath
from mpmath import mp, mpf

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "edge_cases.json")
FIGURES = ("p_vd", "p_vu", "p_sd", "p_sq")


def Phi(x):
    return mpmath.ncdf(x)


def interval(lo, hi, mean, sd):
    """P(lo <= N(mean, sd^2) <= hi) without cancellation in the tails."""
    if hi <= lo:
        return mpf(0)
    a = (lo - mean) / sd
    b = (hi - mean) / sd
    if a > 0:
        return Phi(-a) - Phi(-b)
    return Phi(b) - Phi(a)


def outside(limit, mean, sd):
    """P(|N(mean, sd^2)| > limit)."""
    return Phi((-limit - mean) / sd) + Phi((mean - limit) / sd)


def four(v_in_sets):
    """Figures from a function (violated, detected) -> probability."""
    return {
        "p_vd": v_in_sets(True, True),
        "p_vu": v_in_sets(True, False),
        "p_sd": v_in_sets(False, True),
        "p_sq": v_in_sets(False, False),
    }


def independent(my, sy, md, sd, L, T):
    """y ~ N(my, sy^2) and d ~ N(md, sd^2) independent; violated |y| > L, detected |d| > T."""
    pv = outside(L, my, sy)
    pd = outside(T, md, sd)
    # complements computed directly, never as 1 - small
    ps = interval(-L, L, my, sy)
    pq = interval(-T, T, md, sd)
    return four(lambda v, det: (pv if v else ps) * (pd if det else pq))


def bivariate(my, md, vy, vd, cyd, L, T):
    """(y, d) bivariate normal; violated |y| > L, detected |d| > T: integral over y."""
    sy = mpmath.sqrt(vy)
    beta = cyd / vy
    sc = mpmath.sqrt(vd - cyd * cyd / vy)

    def cond(y, det):
        m = md + beta * (y - my)
        return outside(T, m, sc) if det else interval(-T, T, m, sc)

    def dens(y):
        return mpmath.npdf(y, my, sy)

    def over(v, det):
        f = lambda y: dens(y) * cond(y, det)
        if v:
            lo = mpmath.quad(f, [-mpmath.inf, -L - 40 * sy, -L - 5 * sy, -L])
            hi = mpmath.quad(f, [L, L + 5 * sy, L + 40 * sy, mpmath.inf])
            return lo + hi
        pts = sorted(set([-L, L] + [x for x in (my - 5 * sy, my, my + 5 * sy) if -L < x < L]))
        return mpmath.quad(f, pts)

    return four(over)


def rank_one(y0, y1, d0, d1, L, T):
    """y = y0 + y1 z, d = d0 + d1 z with z standard normal: exact intervals of z."""

    def z_set(c0, c1, limit, inside):
        # returns a list of z intervals where |c0 + c1 z| <= limit (inside) or > limit
        inf = mpmath.inf
        if c1 == 0:
            ok = abs(c0) <= limit
            return [(-inf, inf)] if ok == inside else []
        a = (-limit - c0) / c1
        b = (limit - c0) / c1
        lo, hi = min(a, b), max(a, b)
        return [(lo, hi)] if inside else [(-inf, lo), (hi, inf)]

    def prob(v, det):
        ys = z_set(y0, y1, L, not v)
        ds = z_set(d0, d1, T, not det)
        total = mpf(0)
        for a, b in ys:
            for c, e in ds:
                lo, hi = max(a, c), min(b, e)
                if hi > lo:
                    total += interval(lo, hi, 0, 1)
        return total

    return four(prob)


def median_range(sigma, L, T):
    """Median of three iid N(0, sigma^2), range check max - min > T, safety |median| > L.

    Only the baseline residual p_vu = P(|median| > L, range <= T) is computed:
    by symmetry 2 P(median > L, range <= T) = 2 * 6 * integral over m > L of phi(m)
    integral over x1 in [m - T, m] of phi(x1) (Phi(x1 + T) - Phi(m)) (standardised).
    """
    l, t = L / sigma, T / sigma

    def inner(m):
        f = lambda x1: mpmath.npdf(x1) * (Phi(x1 + t) - Phi(m))
        return mpmath.quad(f, [m - t, m])

    g = lambda m: mpmath.npdf(m) * inner(m)
    return 12 * mpmath.quad(g, [l, l + 1, l + 3, l + 10])


def uniform_add_independent(s, L, T, lo, hi):
    """Two independent channels of sigma s, mean output, difference check, a fault F uniform
    on [lo, hi] added to channel a: at fixed F, y ~ N(F/2, s^2/2) and d ~ N(F, 2 s^2) are
    independent; then averaged over F."""
    sy, sd = s / mpmath.sqrt(2), s * mpmath.sqrt(2)
    breaks = sorted(set([lo, hi] + [x for x in (-2 * L - 40, -2 * L, -T - 20, -T, 0, T,
                                                 T + 20, 2 * L, 2 * L + 40) if lo < x < hi]))

    def fig(name):
        f = lambda F: independent(F / 2, sy, F, sd, L, T)[name]
        return mpmath.quad(f, breaks) / (hi - lo)

    return {k: fig(k) for k in FIGURES}


def uniform_replace_b(sa, L, T, lo, hi):
    """Channel b replaced by F uniform on [lo, hi], channel a ~ N(0, sa^2): at fixed F,
    y = (a + F) / 2 and d = a - F are affine in a (rank one); averaged over F."""
    # the integrand changes over the noise scale near |F| = 2 L and |F| = T: breakpoints
    # every half sigma there (fewer gave a 1e-6 relative error at 30 digits)
    near = [mpf(k) / 2 for k in range(-2 * int(2 * L + 20), 2 * int(2 * L + 20) + 1)]
    breaks = sorted(set([lo, hi, -mpf(1000), mpf(1000)] + [x for x in near if lo < x < hi]))

    def fig(name):
        f = lambda F: rank_one(F / 2, sa / 2, -F, sa, L, T)[name]
        return mpmath.quad(f, breaks) / (hi - lo)

    return {k: fig(k) for k in FIGURES}


def uniform_add_narrow(s, L, T, lo, hi):
    """As uniform_add_independent, for a noise far below the amplitude range: the figures
    change only within a few noise widths of the steps at F = +-T (check) and F = +-2 L
    (safety), so the range is cut there, every quarter sigma of the difference over twelve
    sigmas either side, and the flat stretches between are integrated on their own."""
    sy, sd = s / mpmath.sqrt(2), s * mpmath.sqrt(2)
    near = []
    for step in (-2 * L, -T, T, 2 * L):
        near += [step + k * sd / 4 for k in range(-48, 49)]
    breaks = sorted(set([lo, hi] + [x for x in near if lo < x < hi]))

    def fig(name):
        f = lambda F: independent(F / 2, sy, F, sd, L, T)[name]
        return mpmath.quad(f, breaks) / (hi - lo)

    return {k: fig(k) for k in FIGURES}


def two_channel_file(name, sa, sb, rho, T, L, faults="", full_scale=None, output=None):
    fs = "" if full_scale is None else f"full_scale = [{full_scale[0]!r}, {full_scale[1]!r}]\n"
    out = output or 'kind = "mean"\nof = ["a", "b"]'
    corr = "" if rho is None else f'\n[[correlations]]\nbetween = ["a", "b"]\nrho = {rho!r}\n'
    return (f'name = "{name}"\nunit = "mm"\n{fs}\n'
            f"[channels.a]\nmean = 0.0\nsigma = {sa!r}\n\n"
            f"[channels.b]\nmean = 0.0\nsigma = {sb!r}\n{corr}\n"
            f"[output]\n{out}\n\n"
            f'[checks.ab]\nkind = "difference"\nof = ["a", "b"]\nlimit = {T!r}\n\n'
            f"[safety]\nlimit = {L!r}\n{faults}")


def points_fault(name, channel, f):
    return (f'\n[faults.{name}]\nfit = 10.0\nhits = {{ {channel} = 1.0 }}\nmode = "add"\n'
            f"amplitude = {{ points = [[{f!r}, 1.0]] }}\n")


def cases():
    """Each case: name, what it tests, the file, and a function giving its figures per
    scenario (evaluated at the current mpmath precision). Every function takes its numbers
    as default arguments, bound when it is defined."""
    out = []

    # 1. DC above 99.9999 %: a gaussian fault of sigma 10 on channel a, noise 0.5, check
    #    at 1.0, safety at 3.0: an undetected violation needs the other channel's own noise
    #    beyond 2.5 = 5 sigma, so 1 - DC is about 1e-7.
    s, sf, T, L = 0.5, 10.0, 1.0, 3.0
    faults = ("\n[faults.a_gauss]\nfit = 10.0\nhits = { a = 1.0 }\nmode = \"add\"\n"
              f"amplitude = {{ gaussian = {{ mean = 0.0, sigma = {sf!r} }} }}\n")

    def dc_high(s=s, sf=sf, T=T, L=L):
        va, vb = mpf(s) ** 2 + mpf(sf) ** 2, mpf(s) ** 2
        fig = bivariate(0, 0, (va + vb) / 4, va + vb, (va - vb) / 2, mpf(L), mpf(T))
        return {"a_gauss": fig}

    out.append(("dc_above_99_9999", "DC above 99.9999 % (1 - DC about 1e-7) from a "
                "gaussian fault; bivariate conditional integral",
                two_channel_file("dc above 99.9999 %", s, s, None, T, L, faults), dc_high))

    # 2. Residual probabilities near 1e-12, two channels (exact path).
    s, T, L = 1.0, 3.0, 5.04

    def tiny2(s=s, T=T, L=L):
        sy, sd = mpf(s) / mpmath.sqrt(2), mpf(s) * mpmath.sqrt(2)
        return {"baseline": independent(0, sy, 0, sd, mpf(L), mpf(T))}

    out.append(("residual_1e-12_two_channels", "baseline residual about 1e-12, two "
                "independent channels; product of normal probabilities",
                two_channel_file("residual near 1e-12", s, s, None, T, L), tiny2))

    # 3. Residual near 1e-12 with three channels, median output, range check.
    s3, T3, L3 = 1.0, 3.0, 4.6
    three = (f'name = "median of three, residual near 1e-12"\nunit = "mm"\n\n'
             + "".join(f"[channels.{c}]\nmean = 0.0\nsigma = {s3!r}\n\n" for c in "abc")
             + '[output]\nkind = "median"\nof = ["a", "b", "c"]\n\n'
             + f'[checks.range]\nkind = "range"\nof = ["a", "b", "c"]\nlimit = {T3!r}\n\n'
             + f"[safety]\nlimit = {L3!r}\n")

    def tiny3(s3=s3, T3=T3, L3=L3):
        return {"baseline": {"p_vu": median_range(mpf(s3), mpf(L3), mpf(T3))}}

    out.append(("residual_1e-12_median_of_three", "baseline residual about 1e-12 of a "
                "median of three with a range check; order-statistics density",
                three, tiny3))

    # 4. Sigmas from 1e-6 to 1e6 in one file: the output is channel a (sigma 1e-6), the
    #    check compares it with b (sigma 1e6); a fixed offset of 5e-6 on a.
    sa, sb, T, L, f = 1e-6, 1e6, 1e6, 3e-6, 5e-6
    span = two_channel_file("sigmas from 1e-6 to 1e6", sa, sb, None, T, L,
                            points_fault("a_offset", "a", f), output='kind = "select"\nof = "a"')

    def sigma_span(sa=sa, sb=sb, T=T, L=L, f=f):
        va, vb = mpf(sa) ** 2, mpf(sb) ** 2
        res = {}
        for name, m in (("baseline", 0), ("a_offset", mpf(f))):
            # y = a, d = a - b: var y = va, var d = va + vb, cov = va
            res[name] = bivariate(m, m, va, va + vb, va, mpf(L), mpf(T))
        return res

    out.append(("sigma_span_1e-6_to_1e6", "sigmas 1e-6 and 1e6 in one file (12 orders "
                "of magnitude); bivariate conditional integral", span, sigma_span))

    # 5. rho = +1 with unequal sigmas (rank one), and with equal sigmas (the difference has
    #    no noise at all: the check is deterministic).
    sa, sb, T, L = 0.5, 0.8, 0.2, 1.0
    faults = points_fault("a_small", "a", 0.1) + points_fault("a_large", "a", 3.0)

    def rho_plus_unequal(sa=sa, sb=sb, T=T, L=L):
        res = {}
        for name, F in (("baseline", 0), ("a_small", mpf("0.1")), ("a_large", mpf(3))):
            # a = sa z + F, b = sb z: y = F/2 + (sa + sb)/2 z, d = F + (sa - sb) z
            res[name] = rank_one(F / 2, (mpf(sa) + mpf(sb)) / 2, F, mpf(sa) - mpf(sb),
                                 mpf(L), mpf(T))
        return res

    out.append(("rho_plus_one_unequal", "rho = +1, sigmas 0.5 and 0.8: one random "
                "direction; exact intervals", two_channel_file(
                    "rho +1, unequal sigmas", sa, sb, 1.0, T, L, faults), rho_plus_unequal))

    s, T, L = 0.5, 1.0, 1.0
    faults = points_fault("a_small", "a", 0.5) + points_fault("a_large", "a", 3.0)

    def rho_plus_equal(s=s, T=T, L=L):
        res = {}
        for name, F in (("baseline", 0), ("a_small", mpf("0.5")), ("a_large", mpf(3))):
            res[name] = rank_one(F / 2, mpf(s), F, mpf(0), mpf(L), mpf(T))
        return res

    out.append(("rho_plus_one_equal", "rho = +1, equal sigmas: the difference check has "
                "no noise (deterministic)", two_channel_file(
                    "rho +1, equal sigmas", s, s, 1.0, T, L, faults), rho_plus_equal))

    # 6. rho = -1, equal sigmas: the mean output has no noise at all.
    s, T, L = 0.5, 1.0, 1.0
    faults = points_fault("a_small", "a", 1.0) + points_fault("a_large", "a", 3.0)

    def rho_minus(s=s, T=T, L=L):
        res = {}
        for name, F in (("baseline", 0), ("a_small", mpf(1)), ("a_large", mpf(3))):
            # a = s z + F, b = -s z: y = F/2, d = F + 2 s z
            res[name] = rank_one(F / 2, mpf(0), F, 2 * mpf(s), mpf(L), mpf(T))
        return res

    out.append(("rho_minus_one", "rho = -1, equal sigmas: the mean output has no noise "
                "(deterministic)", two_channel_file("rho -1", s, s, -1.0, T, L, faults),
                rho_minus))

    # 7. Limits far in the tails: safety limit at 28 and 42 output sigmas.
    for L, tag in ((20.0, "28_sigma"), (30.0, "42_sigma")):
        s, T = 1.0, 3.0

        def far(L=L, s=s, T=T):
            sy, sd = mpf(s) / mpmath.sqrt(2), mpf(s) * mpmath.sqrt(2)
            return {"baseline": independent(0, sy, 0, sd, mpf(L), mpf(T))}

        out.append((f"far_tail_{tag}", f"safety limit {L} with output sigma 0.707 "
                    f"({tag.replace('_', ' ')}); product of normal probabilities",
                    two_channel_file(f"far tail {tag}", s, s, None, T, L), far))

    # 8. Full scale a million times the noise: uniform amplitudes over [-1e6, 1e6].
    s, T, L, fs = 1.0, 3.0, 2.0, 1e6
    faults = ("\n[faults.a_wander]\nfit = 10.0\nhits = { a = 1.0 }\nmode = \"add\"\n"
              "amplitude = { uniform = \"full_scale\" }\n"
              "\n[faults.b_frozen]\nfit = 10.0\nhits = { b = 1.0 }\nmode = \"replace\"\n"
              "amplitude = { uniform = \"full_scale\" }\n")

    def full_scale(s=s, T=T, L=L, fs=fs):
        return {
            "a_wander": uniform_add_independent(mpf(s), mpf(L), mpf(T), -mpf(fs), mpf(fs)),
            "b_frozen": uniform_replace_b(mpf(s), mpf(L), mpf(T), -mpf(fs), mpf(fs)),
        }

    out.append(("full_scale_1e6_noise", "full scale [-1e6, 1e6] with noise sigma 1: "
                "uniform amplitudes added and replacing; quadrature over the amplitude",
                two_channel_file("full scale a million times the noise", s, s, None, T, L,
                                 faults, full_scale=(-fs, fs)), full_scale))

    # 9. A step of noise width 1e-6 in an amplitude range of 2e5 (sigmas eleven decades
    #    below the range): the check fires past F = 0.01 and the output violates past
    #    F = 0.04, each over about a micrometre.
    s, T, L, lo, hi = 1e-6, 0.01, 0.02, 0.0, 2e5
    faults = ("\n[faults.a_creep]\nfit = 10.0\nhits = { a = 1.0 }\nmode = \"add\"\n"
              f"amplitude = {{ uniform = [{lo!r}, {hi!r}] }}\n")

    def narrow(s=s, T=T, L=L, lo=lo, hi=hi):
        return {"a_creep": uniform_add_narrow(mpf(s), mpf(L), mpf(T), mpf(lo), mpf(hi))}

    out.append(("uniform_steps_of_noise_width", "uniform amplitude over [0, 2e5] with noise "
                "sigma 1e-6: steps a micrometre wide at F = 0.01 and 0.04",
                two_channel_file("steps of noise width", s, s, None, T, L, faults), narrow))
    return out


def main():
    table = {
        "generator": "tests/reference/edge_cases.py",
        "versions": {"python": sys.version.split()[0], "mpmath": mpmath.__version__},
        "note": "value: mpmath at 50 digits; tol: ten times the disagreement with 30 digits, "
                "at least 1e-25 relative",
        "cases": [],
    }
    for name, covers, toml, compute in cases():
        mp.dps = 30
        low = compute()
        mp.dps = 50
        high = compute()
        results = []
        for scenario, figs in high.items():
            entry = {"site": scenario}
            for k, v in figs.items():
                diff = abs(v - low[scenario][k])
                tol = max(10 * diff, mpf("1e-25") * abs(v))
                entry[k] = {"value": float(v), "tol": float(tol), "digits": mpmath.nstr(v, 25)}
            results.append(entry)
        table["cases"].append({"name": name, "covers": covers, "toml": toml,
                               "results": results})
        print(name, [(r["site"], {k: r[k]["digits"] for k in r if k != "site"})
                     for r in results])
    mp.dps = 15
    with open(OUT, "w") as f:
        json.dump(table, f, indent=1)
        f.write("\n")
    print(f"wrote {OUT}")


if __name__ == "__main__":
    main()
