#!/usr/bin/env python3
"""Reference values for whole analyses (tests/analysis_reference.rs), written to
analysis_reference.json beside this script.

Each case is the TOML text of a small architecture file. For the fault-free baseline and for
every fault site the script computes the four outcome probabilities

    p_vd = P(V and Det), p_vu = P(V and not Det), p_sd = P(not V and Det), p_sq = P(not V and not Det)

without concord, by two methods that share no decomposition:

* Method "chain" (every case): the file is read by this script's own small reader (Python's
  tomllib), the channel deviations are written x = mu + L z with z standard normal (L the
  Cholesky factor of the random channels; a replaced channel is a constant), and the outcome
  is integrated one variable at a time. The innermost variable is done exactly: for fixed
  outer variables the events only change where one of the linear "atoms" (an output or
  check value crossing a band end, a channel crossing a band end for a median) crosses zero,
  so the line is cut there, each piece is classified by evaluating the output, the checks
  and the detection rule at its midpoint, and the normal masses of the pieces are summed.
  Outer variables (and a uniform amplitude F, as the outermost one) are integrated by
  Gauss-Legendre on pieces cut at every point where the inner structure changes (found by
  eliminating variables between pairs of atoms), so the integrand is analytic on each
  piece. Standard normal variables are cut at +-12 (mass outside below 4e-33). The result
  is compared with the same computation at a lower order (`ORDER_CHECK`) as a convergence
  check.
* Method "second":
  - two channels with a linear output and one check: (output, check) is a bivariate normal;
    P(y in A, d in B) = integral over A of the density of y times P(d in B | y), done with
    mpmath.quad at 30 digits; a uniform amplitude adds an outer mpmath.quad over F
    (Gauss-Legendre with breakpoints; this and the explicit gaussian integral over F below
    run at 20 digits, inside and out, to keep the run to minutes); a known-sigma gaussian fault is integrated explicitly over F (not folded
    into the covariance as the chain method does); a replaced channel leaves one random
    channel, whose intervals are found by hand-written inequalities (mpmath, 30 digits).
  - three independent channels, median output, pairwise difference checks: conditioning on
    which channel is the median and on its value m, the density of the median is
    f_i(m) times the chance that one other channel lies below and one above; the checks then
    depend on the lower channel's value u and the upper channel's value; scipy.integrate
    (quad_vec, tight tolerances, breakpoints at the band ends) over m and u, the upper channel
    exactly by normal CDF differences.

Stored per figure: `value` (the 30-digit mpmath value where it exists, else the chain value)
and `tol`, a reference tolerance: twice the largest disagreement among the methods (and the
chain method's own order check), but at least 1e-15 + 1e-12 |value|.

Versions used for the stored table: Python 3.11.7, SciPy 1.17.1, NumPy 2.4.6, mpmath 1.3.0.

Run: python3 tests/reference/analysis_reference.py   (a few minutes on 2 cores)
"""

import itertools
import json
import math
import os
import platform
import sys
import time
import tomllib

import mpmath
import numpy as np
import scipy
from scipy import integrate, special

OUT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "analysis_reference.json")
FIGS = ("p_vd", "p_vu", "p_sd", "p_sq")
ZCUT = 12.0  # standard normal variables are integrated over [-ZCUT, ZCUT]
ORDER = 24  # Gauss-Legendre nodes per piece
ORDER_CHECK = 16  # lower order for the convergence check
MAX_WIDTH_Z = 0.5  # longest piece in a standard normal variable
MAX_WIDTH_F = 0.05  # longest piece in a uniform amplitude, in units of the smallest sigma

mpmath.mp.dps = 30

# --------------------------------------------------------------------------------------
# Reading an architecture file (own reader; the subset the cases use).
# --------------------------------------------------------------------------------------


def band(tbl):
    """(lower, upper) of a band table: `limit = L` is [-L, L]; a missing side is open."""
    if "limit" in tbl:
        return (-float(tbl["limit"]), float(tbl["limit"]))
    return (float(tbl.get("lower", -math.inf)), float(tbl.get("upper", math.inf)))


class Model:
    def __init__(self, text):
        doc = tomllib.loads(text)
        self.doc = doc
        self.names = list(doc["channels"].keys())
        n = len(self.names)
        idx = {c: i for i, c in enumerate(self.names)}
        self.idx = idx
        sources = doc.get("sources", {})
        self.src_names = list(sources.keys())
        mu = np.zeros(n)
        d = np.zeros(n)
        g = np.zeros((n, len(self.src_names)))
        for c, t in doc["channels"].items():
            i = idx[c]
            mu[i] = float(t.get("mean", 0.0))
            d[i] = float(t["sigma"])
            for s, gain in t.get("from", {}).items():
                g[i, self.src_names.index(s)] = float(gain)
        r = np.eye(n)
        for corr in doc.get("correlations", []):
            i, j = idx[corr["between"][0]], idx[corr["between"][1]]
            r[i, j] = r[j, i] = float(corr["rho"])
        s_mu = np.array([float(sources[s].get("mean", 0.0)) for s in self.src_names])
        s_sd = np.array([float(sources[s]["sigma"]) for s in self.src_names])
        self.mu = mu + (g @ s_mu if len(self.src_names) else 0.0)
        self.cov = np.diag(d) @ r @ np.diag(d)
        if len(self.src_names):
            self.cov = self.cov + g @ np.diag(s_sd**2) @ g.T
        self.g = g
        out = doc["output"]
        self.out_kind = out["kind"]
        if self.out_kind in ("mean", "median"):
            self.out_of = [idx[c] for c in out["of"]]
        elif self.out_kind in ("weighted", "linear"):
            self.out_w = np.zeros(n)
            for c, w in out["of"].items():
                self.out_w[idx[c]] = float(w)
            self.out_c = float(out.get("constant", 0.0))
        elif self.out_kind == "select":
            self.out_of = [idx[out["of"] if isinstance(out["of"], str) else out["of"][0]]]
        else:
            raise ValueError(self.out_kind)
        # Checks: all linear in the channels here (difference, linear).
        self.checks = []
        for name, t in doc.get("checks", {}).items():
            w = np.zeros(n)
            c0 = 0.0
            if t["kind"] == "difference":
                w[idx[t["of"][0]]] += 1.0
                w[idx[t["of"][1]]] -= 1.0
            elif t["kind"] == "linear":
                for c, wt in t["of"].items():
                    w[idx[c]] += float(wt)
                c0 = float(t.get("constant", 0.0))
            else:
                raise ValueError(t["kind"])
            self.checks.append((name, w, c0, band(t)))
        fires = doc.get("detection", {}).get("fires", "any")
        self.at_least = 1 if fires == "any" else int(fires["at_least"])
        self.safety = band(doc["safety"])
        self.faults = list(doc.get("faults", {}).items())

    # The output as a linear form where it is one (mean, weighted, select, median of two).
    def output_linear(self):
        n = len(self.names)
        if self.out_kind in ("weighted", "linear"):
            return self.out_w, self.out_c
        if self.out_kind == "mean" or (self.out_kind == "median" and len(self.out_of) == 2):
            # Median of an even count is the mean of the middle two: for two, the mean.
            w = np.zeros(n)
            for i in self.out_of:
                w[i] += 1.0 / len(self.out_of)
            return w, 0.0
        if self.out_kind == "select":
            w = np.zeros(n)
            w[self.out_of[0]] = 1.0
            return w, 0.0
        return None

    def output_value(self, x):
        """x: array (..., n). Returns the output deviation."""
        lin = self.output_linear()
        if lin is not None:
            return x @ lin[0] + lin[1]
        assert self.out_kind == "median" and len(self.out_of) % 2 == 1
        return np.median(x[..., self.out_of], axis=-1)

    def outcome_flags(self, x):
        """Violated and detected flags at points x (..., n), with strict bounds."""
        y = self.output_value(x)
        lo, hi = self.safety
        v = (y < lo) | (y > hi)
        count = np.zeros(y.shape, dtype=int)
        for _, w, c0, (clo, chi) in self.checks:
            val = x @ w + c0
            count = count + ((val < clo) | (val > chi)).astype(int)
        det = count >= self.at_least
        return v, det

    def atoms(self):
        """Linear forms (w, c) over x whose sign changes are the only places where the
        outcome can change: value - band end."""
        n = len(self.names)
        out = []
        lo, hi = self.safety
        lin = self.output_linear()
        ends = [e for e in (lo, hi) if math.isfinite(e)]
        if lin is not None:
            for e in ends:
                out.append((lin[0].copy(), lin[1] - e))
        else:
            for i in self.out_of:
                for e in ends:
                    w = np.zeros(n)
                    w[i] = 1.0
                    out.append((w, -e))
        for _, w, c0, (clo, chi) in self.checks:
            for e in (clo, chi):
                if math.isfinite(e):
                    out.append((w.copy(), c0 - e))
        return out

    def fault_direction(self, fault):
        """Add mode: the vector by which the channels move per unit of F."""
        n = len(self.names)
        dvec = np.zeros(n)
        for node, gain in fault["hits"].items():
            if node in self.idx:
                dvec[self.idx[node]] += float(gain)
            else:
                k = self.src_names.index(node)
                dvec += self.g[:, k] * float(gain)
        return dvec


# --------------------------------------------------------------------------------------
# Method "chain": sequential conditioning, exact innermost, piecewise Gauss-Legendre.
# --------------------------------------------------------------------------------------


def interval_mass(a, b):
    """P(a < Z < b) for standard normal Z, elementwise, without cancellation in the tails."""
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    upper = special.ndtr(-a) - special.ndtr(-b)  # good when a, b > 0
    lower = special.ndtr(b) - special.ndtr(a)  # good when a, b < 0
    return np.where(a >= 0.0, upper, lower)


def dedupe(funcs):
    seen = {}
    for f in funcs:
        k = np.argmax(np.abs(f))
        if abs(f[k]) < 1e-14:
            continue
        g = f / f[k]
        key = tuple(np.round(g, 11))
        seen.setdefault(key, g)
    return list(seen.values())


def critical_sets(atom_funcs, nvar):
    """S[k]: affine functions of (v_0..v_k, 1) whose zeros in v_k are breakpoints at level k.
    Each function is an array of length nvar + 1 (coefficients, then the constant)."""
    sets = [None] * nvar
    cur = dedupe(atom_funcs)
    for k in range(nvar - 1, -1, -1):
        sets[k] = [f for f in cur if abs(f[k]) > 1e-14]
        if k == 0:
            break
        nxt = [f for f in cur if abs(f[k]) <= 1e-14]
        with_k = sets[k]
        for f, g in itertools.combinations(with_k, 2):
            h = f / f[k] - g / g[k]
            h[k] = 0.0
            nxt.append(h)
        cur = dedupe(nxt)
    return sets


def gl_nodes(order):
    x, w = np.polynomial.legendre.leggauss(order)
    return x, w


def pieces(lo, hi, cuts, max_width):
    pts = sorted({lo, hi} | {c for c in cuts if lo < c < hi})
    out = []
    for a, b in zip(pts[:-1], pts[1:]):
        m = max(1, int(math.ceil((b - a) / max_width)))
        for j in range(m):
            out.append((a + (b - a) * j / m, a + (b - a) * (j + 1) / m))
    return out


class Chain:
    """Integrates the four outcomes over variables v = (F?, z_1..z_r).

    x = base + A v (affine), F (if present) uniform on [flo, fhi], z standard normal."""

    def __init__(self, model, base, amat, uniform=None, f_scale=1.0):
        self.model = model
        self.base = base
        self.amat = amat  # n x nvar
        self.nvar = amat.shape[1]
        self.uniform = uniform
        self.f_scale = f_scale
        funcs = []
        for w, c in model.atoms():
            coef = w @ amat
            funcs.append(np.concatenate([coef, [w @ base + c]]))
        self.sets = critical_sets(funcs, self.nvar)

    def range_of(self, k):
        if k == 0 and self.uniform is not None:
            return self.uniform
        return (-ZCUT, ZCUT)

    def weight_of(self, k, v):
        if k == 0 and self.uniform is not None:
            return np.full_like(v, 1.0 / (self.uniform[1] - self.uniform[0]))
        return np.exp(-0.5 * v * v) / math.sqrt(2.0 * math.pi)

    def width_of(self, k):
        if k == 0 and self.uniform is not None:
            return MAX_WIDTH_F * self.f_scale
        return MAX_WIDTH_Z

    def cuts(self, k, prefix):
        """Breakpoints of level k given the fixed values of v_0..v_{k-1}."""
        out = []
        for f in self.sets[k]:
            rest = f[-1] + (f[:k] @ prefix if k else 0.0)
            out.append(-rest / f[k])
        return out

    def innermost(self, prefix_rows):
        """Exact integral over the last variable; prefix_rows: (N, nvar - 1). Returns (N, 4)."""
        k = self.nvar - 1
        n_rows = prefix_rows.shape[0]
        if self.uniform is not None and k == 0:
            raise ValueError("uniform amplitude needs a random variable inside it")
        fs = self.sets[k]
        if fs:
            coef = np.array([f[k] for f in fs])
            rest = np.array([f[-1] for f in fs])[None, :] + prefix_rows @ np.array(
                [f[:k] for f in fs]
            ).T
            bps = -rest / coef[None, :]
            bps = np.clip(bps, -40.0, 40.0)
        else:
            bps = np.zeros((n_rows, 0))
        edges = np.concatenate(
            [np.full((n_rows, 1), -40.0), np.sort(bps, axis=1), np.full((n_rows, 1), 40.0)], axis=1
        )
        a, b = edges[:, :-1], edges[:, 1:]
        mid = 0.5 * (a + b)
        mass = interval_mass(a, b)
        v = np.concatenate(
            [np.repeat(prefix_rows[:, None, :], mid.shape[1], axis=1), mid[:, :, None]], axis=2
        )
        x = self.base + v @ self.amat.T
        viol, det = self.model.outcome_flags(x)
        res = np.zeros((n_rows, 4))
        for j, (fv, fd) in enumerate(((1, 1), (1, 0), (0, 1), (0, 0))):
            sel = (viol == bool(fv)) & (det == bool(fd)) & (b > a)
            res[:, j] = np.sum(np.where(sel, mass, 0.0), axis=1)
        return res

    def level(self, k, prefix, order):
        """Integral over v_k.. given v_0..v_{k-1} = prefix (1-D array)."""
        if k == self.nvar - 1:
            return self.innermost(prefix[None, :])[0]
        lo, hi = self.range_of(k)
        xg, wg = gl_nodes(order)
        total = np.zeros(4)
        ps = pieces(lo, hi, self.cuts(k, prefix), self.width_of(k))
        if k == self.nvar - 2:
            nodes = []
            weights = []
            for a, b in ps:
                h = 0.5 * (b - a)
                t = 0.5 * (a + b) + h * xg
                nodes.append(t)
                weights.append(h * wg * self.weight_of(k, t))
            t = np.concatenate(nodes)
            wt = np.concatenate(weights)
            rows = np.concatenate([np.repeat(prefix[None, :], len(t), axis=0), t[:, None]], axis=1)
            vals = self.innermost(rows)
            return wt @ vals
        for a, b in ps:
            h = 0.5 * (b - a)
            t = 0.5 * (a + b) + h * xg
            wt = h * wg * self.weight_of(k, t)
            for tj, wj in zip(t, wt):
                total += wj * self.level(k + 1, np.append(prefix, tj), order)
        return total

    def run(self, order=ORDER):
        return self.level(0, np.zeros(0), order)


def chain_scenario(model, mu, cov, replaced=None, add_dir=None, uniform=None):
    """Builds the chain integrator for one gaussian scenario (replaced channel: constant held
    in mu with no noise; add_dir with uniform: F is an extra outermost variable)."""
    n = len(mu)
    rand = [i for i in range(n) if cov[i, i] > 0.0]
    sub = cov[np.ix_(rand, rand)]
    lchol = np.linalg.cholesky(sub)
    r = len(rand)
    extra = 1 if uniform is not None else 0
    amat = np.zeros((n, r + extra))
    for a_i, i in enumerate(rand):
        amat[i, extra:] = lchol[a_i]
    if uniform is not None:
        amat[:, 0] = add_dir
    f_scale = min(math.sqrt(cov[i, i]) for i in rand)
    return Chain(model, mu.copy(), amat, uniform, f_scale)


def uniform_range(model, amp):
    """[a, b] of a uniform amplitude; "full_scale" is the file's full_scale as written."""
    u = amp["uniform"]
    if u == "full_scale":
        u = model.doc["full_scale"]
    return float(u[0]), float(u[1])


def replaced_cov(cov, i):
    c = cov.copy()
    c[i, :] = 0.0
    c[:, i] = 0.0
    return c


def chain_site(model, fault, order=ORDER):
    """The four figures of one fault site (or the baseline for fault None)."""
    mu, cov = model.mu, model.cov
    if fault is None:
        return chain_scenario(model, mu, cov).run(order)
    amp = fault["amplitude"]
    mode = fault.get("mode", "add")
    if mode == "replace":
        (node, gain) = next(iter(fault["hits"].items()))
        i = model.idx[node]
        gain = float(gain)
        c = replaced_cov(cov, i)
        if "points" in amp:
            tot = np.zeros(4)
            for val, wt in amp["points"]:
                m = mu.copy()
                m[i] = gain * float(val)
                tot += float(wt) * chain_scenario(model, m, c).run(order)
            return tot
        if "uniform" in amp:
            lo, hi = uniform_range(model, amp)
            m = mu.copy()
            m[i] = 0.0
            dvec = np.zeros(len(mu))
            dvec[i] = gain
            return chain_scenario(model, m, c, add_dir=dvec, uniform=(float(lo), float(hi))).run(
                order
            )
        if "gaussian" in amp:
            gs = amp["gaussian"]
            m = mu.copy()
            m[i] = gain * float(gs.get("mean", 0.0))
            c[i, i] = (gain * float(gs["sigma"])) ** 2
            return chain_scenario(model, m, c).run(order)
        raise ValueError(amp)
    dvec = model.fault_direction(fault)
    if "points" in amp:
        tot = np.zeros(4)
        for val, wt in amp["points"]:
            tot += float(wt) * chain_scenario(model, mu + dvec * float(val), cov).run(order)
        return tot
    if "uniform" in amp:
        lo, hi = uniform_range(model, amp)
        return chain_scenario(model, mu, cov, add_dir=dvec, uniform=(float(lo), float(hi))).run(
            order
        )
    if "gaussian" in amp:
        gs = amp["gaussian"]
        s = float(gs["sigma"])
        m = mu + dvec * float(gs.get("mean", 0.0))
        return chain_scenario(model, m, cov + s * s * np.outer(dvec, dvec)).run(order)
    raise ValueError(amp)


# --------------------------------------------------------------------------------------
# Method "second", two channels: (output, check) bivariate, mpmath at 30 digits.
# --------------------------------------------------------------------------------------

MPINF = mpmath.inf


def mp_ncdf(x):
    return mpmath.ncdf(x)


def mp_interval(a, b, m, s):
    """P(a < N(m, s^2) < b), a <= b, with the tail that does not cancel."""
    za = (a - m) / s if a != -MPINF else -MPINF
    zb = (b - m) / s if b != MPINF else MPINF
    if za >= 0:
        return mp_ncdf(-za) - mp_ncdf(-zb)
    return mp_ncdf(zb) - mp_ncdf(za)


def mp_sets(lo, hi):
    """(inside, outside) of a band as lists of intervals."""
    lo = MPINF * -1 if lo == -math.inf else mpmath.mpf(lo)
    hi = MPINF if hi == math.inf else mpmath.mpf(hi)
    inside = [(lo, hi)]
    outside = []
    if lo != -MPINF:
        outside.append((-MPINF, lo))
    if hi != MPINF:
        outside.append((hi, MPINF))
    return inside, outside


def bivariate_figures(my, md, vy, vd, cyd, safety, chk, extra_breaks=()):
    """Four figures for (y, d) bivariate normal: integral over y of phi_y P(d | y)."""
    my, md, vy, vd, cyd = (mpmath.mpf(t) for t in (my, md, vy, vd, cyd))
    sy = mpmath.sqrt(vy)
    beta = cyd / vy
    sc = mpmath.sqrt(vd - cyd * cyd / vy)
    y_in, y_out = mp_sets(*safety)
    d_in, d_out = mp_sets(*chk)

    def pair(ys, ds):
        tot = mpmath.mpf(0)
        for ya, yb in ys:
            for da, db in ds:

                def f(t):
                    dens = mpmath.npdf(t, my, sy)
                    return dens * mp_interval(da, db, md + beta * (t - my), sc)

                pts = [ya] + sorted(
                    {
                        mpmath.mpf(p)
                        for p in [my - 8 * sy, my, my + 8 * sy, *extra_breaks]
                        if (ya == -MPINF or p > ya) and (yb == MPINF or p < yb)
                    }
                ) + [yb]
                tot += mpmath.quad(f, pts)
        return tot

    return [pair(y_out, d_out), pair(y_out, d_in), pair(y_in, d_out), pair(y_in, d_in)]


def second_two_channel(model, fault):
    lin = model.output_linear()
    assert lin is not None and len(model.checks) == 1
    wy, cy = lin
    _, wd, cd, chk = model.checks[0]
    mu, cov = model.mu, model.cov

    def figs(m, c):
        return bivariate_figures(
            wy @ m + cy, wd @ m + cd, wy @ c @ wy, wd @ c @ wd, wy @ c @ wd, model.safety, chk
        )

    if fault is None:
        return figs(mu, cov)
    amp = fault["amplitude"]
    if fault.get("mode", "add") == "replace":
        return second_replace(model, fault)
    dvec = model.fault_direction(fault)
    if "points" in amp:
        tot = [mpmath.mpf(0)] * 4
        for val, wt in amp["points"]:
            r = figs(mu + dvec * float(val), cov)
            tot = [t + mpmath.mpf(wt) * q for t, q in zip(tot, r)]
        return tot
    gy, gd = wy @ dvec, wd @ dvec
    if "gaussian" in amp:
        # Integrate over F explicitly (the chain method folds it into the covariance).
        gs = amp["gaussian"]
        fm, fs = mpmath.mpf(gs.get("mean", 0.0)), mpmath.mpf(gs["sigma"])
        @memo_figures
        def at_f(f):
            ff = float(f)
            return bivariate_figures(
                wy @ mu + cy + gy * ff,
                wd @ mu + cd + gd * ff,
                wy @ cov @ wy,
                wd @ cov @ wd,
                wy @ cov @ wd,
                model.safety,
                chk,
            )

        out = [lambda f, j=j: mpmath.npdf(f, fm, fs) * at_f(f)[j] for j in range(4)]
        return quad_vector_over_f(out, [fm - 12 * fs, fm + 12 * fs], fault_breaks(model, dvec, mu))
    if "uniform" in amp:
        lo, hi = uniform_range(model, amp)

        @memo_figures
        def at_f(f):
            ff = float(f)
            return bivariate_figures(
                wy @ mu + cy + gy * ff,
                wd @ mu + cd + gd * ff,
                wy @ cov @ wy,
                wd @ cov @ wd,
                wy @ cov @ wd,
                model.safety,
                chk,
            )

        fns = [lambda f, j=j: at_f(f)[j] / (hi - lo) for j in range(4)]
        return quad_vector_over_f(fns, [lo, hi], fault_breaks(model, dvec, mu))
    raise ValueError(amp)


def fault_breaks(model, dvec, mu):
    """F values where the mean of the output or of the check crosses a band end."""
    lin = model.output_linear()
    wy, cy = lin
    _, wd, cd, chk = model.checks[0]
    out = []
    for w, c, (lo, hi) in ((wy, cy, model.safety), (wd, cd, chk)):
        g = w @ dvec
        if abs(g) > 1e-14:
            for e in (lo, hi):
                if math.isfinite(e):
                    out.append((e - c - w @ mu) / g)
    return out


def memo_figures(fn):
    """The four figures at one F, computed once for the four integrals over F."""
    cache = {}

    def at(f):
        key = mpmath.nstr(f, 25)
        if key not in cache:
            cache[key] = fn(f)
        return cache[key]

    return at


def quad_vector_over_f(fns, rng, breaks):
    lo, hi = rng
    pts = sorted({mpmath.mpf(lo), mpmath.mpf(hi)} | {mpmath.mpf(b) for b in breaks if lo < b < hi})
    # Each piece is cut in four so that every piece is short against the noise.
    fine = []
    for a, b in zip(pts[:-1], pts[1:]):
        fine += [a + (b - a) * k / 4 for k in range(4)]
    fine.append(pts[-1])
    old = mpmath.mp.dps
    mpmath.mp.dps = 20  # the inner integrals are at 20 digits here to keep the run short
    try:
        # Gauss-Legendre: the integrand is analytic on each piece (kinks at the breaks).
        return [mpmath.quad(f, fine, method="gauss-legendre") for f in fns]
    finally:
        mpmath.mp.dps = old


def second_replace(model, fault):
    """Two channels, one replaced by gain*F: only the other channel b is random. With the
    output and the check linear, each event is an interval of b, written out by hand."""
    lin = model.output_linear()
    wy, cy = lin
    _, wd, cd, chk = model.checks[0]
    (node, gain) = next(iter(fault["hits"].items()))
    i = model.idx[node]
    j = 1 - i
    gain = float(gain)
    mb, sb = mpmath.mpf(model.mu[j]), mpmath.sqrt(mpmath.mpf(model.cov[j, j]))

    def interval_of_b(w, c, band_, a_val):
        """{b: lo <= w_i a + w_j b + c <= hi} as (lo_b, hi_b); w_j != 0 here."""
        lo, hi = band_
        base = mpmath.mpf(w[i]) * a_val + mpmath.mpf(c)
        wj = mpmath.mpf(w[j])
        ends = []
        for e in (lo, hi):
            ends.append(None if not math.isfinite(e) else (mpmath.mpf(e) - base) / wj)
        if wj > 0:
            return (ends[0] if ends[0] is not None else -MPINF, ends[1] if ends[1] is not None else MPINF)
        return (ends[1] if ends[1] is not None else -MPINF, ends[0] if ends[0] is not None else MPINF)

    def prob(intervals):
        tot = mpmath.mpf(0)
        for a, b in intervals:
            if b > a:
                tot += mp_interval(a, b, mb, sb)
        return tot

    def complement(iv):
        a, b = iv
        out = []
        if a != -MPINF:
            out.append((-MPINF, a))
        if b != MPINF:
            out.append((b, MPINF))
        return out

    def intersect(xs, ys):
        out = []
        for a, b in xs:
            for c, d in ys:
                lo, hi = max(a, c), min(b, d)
                if hi > lo:
                    out.append((lo, hi))
        return out

    def figs_at(fval):
        a_val = mpmath.mpf(gain) * fval
        y_in = interval_of_b(wy, cy, model.safety, a_val)
        d_in = interval_of_b(wd, cd, chk, a_val)
        yi, yo = [y_in], complement(y_in)
        di, do = [d_in], complement(d_in)
        return [
            prob(intersect(yo, do)),
            prob(intersect(yo, di)),
            prob(intersect(yi, do)),
            prob(intersect(yi, di)),
        ]

    amp = fault["amplitude"]
    if "points" in amp:
        tot = [mpmath.mpf(0)] * 4
        for val, wt in amp["points"]:
            r = figs_at(mpmath.mpf(val))
            tot = [t + mpmath.mpf(wt) * q for t, q in zip(tot, r)]
        return tot
    if "uniform" in amp:
        lo, hi = uniform_range(model, amp)
        # The b-interval ends are linear in F; the integrand has kinks where two ends meet.
        # Ends: b = (e - w_i g F - c) / w_j for each band end e of output and check.
        lines = []
        for w, c, (blo, bhi) in ((wy, cy, model.safety), (wd, cd, chk)):
            for e in (blo, bhi):
                if math.isfinite(e):
                    lines.append(((e - c) / w[j], -w[i] * gain / w[j]))
        breaks = []
        for (c1, s1), (c2, s2) in itertools.combinations(lines, 2):
            if abs(s1 - s2) > 1e-14:
                breaks.append((c2 - c1) / (s1 - s2))
        at_f = memo_figures(figs_at)
        fns = [lambda f, k=k: at_f(f)[k] / (hi - lo) for k in range(4)]
        return quad_vector_over_f(fns, [lo, hi], breaks)
    raise ValueError(amp)


# --------------------------------------------------------------------------------------
# Method "second", three independent channels with a median output and difference checks.
# --------------------------------------------------------------------------------------


def second_median3(model, fault):
    """Conditioning on the median channel i and its value m, the lower channel's value u;
    the upper channel exactly. Channels must be independent (no sources, no correlations)."""
    n = len(model.names)
    assert n == 3 and model.out_kind == "median" and not model.src_names
    assert np.allclose(model.cov, np.diag(np.diag(model.cov)))
    mu = model.mu.copy()
    sd = np.sqrt(np.diag(model.cov))
    if fault is None:
        return median3_figures(model, [("n", mu[k], sd[k]) for k in range(3)])
    amp = fault["amplitude"]
    mode = fault.get("mode", "add")
    (node, gain) = next(iter(fault["hits"].items()))
    assert len(fault["hits"]) == 1
    i = model.idx[node]
    gain = float(gain)
    if "points" in amp:
        tot = np.zeros(4)
        for val, wt in amp["points"]:
            ch = [("n", mu[k], sd[k]) for k in range(3)]
            if mode == "replace":
                ch[i] = ("p", gain * float(val), 0.0)
            else:
                ch[i] = ("n", mu[i] + gain * float(val), sd[i])
            tot += float(wt) * median3_figures(model, ch)
        return tot
    if "gaussian" in amp:
        gs = amp["gaussian"]
        ch = [("n", mu[k], sd[k]) for k in range(3)]
        fm, fs = float(gs.get("mean", 0.0)), float(gs["sigma"])
        if mode == "replace":
            ch[i] = ("n", gain * fm, abs(gain) * fs)
        else:
            ch[i] = ("n", mu[i] + gain * fm, math.hypot(sd[i], gain * fs))
        return median3_figures(model, ch)
    raise ValueError(amp)


def median3_figures(model, ch):
    """ch[k] = ("n", mean, sigma) or ("p", value, 0). Returns the four figures."""
    lo, hi = model.safety
    checks = []  # (p, q, lo, hi): value x_p - x_q
    for _, w, c0, (clo, chi) in model.checks:
        p = int(np.argmax(w))
        q = int(np.argmin(w))
        assert w[p] == 1.0 and w[q] == -1.0 and c0 == 0.0
        checks.append((p, q, clo, chi))
    need = model.at_least

    def cdf(k, t):
        kind, m, s = ch[k]
        if kind == "p":
            return 1.0 if t > m else 0.0
        return special.ndtr((t - m) / s)

    def mass(k, a, b):
        kind, m, s = ch[k]
        if b <= a:
            return 0.0
        if kind == "p":
            return 1.0 if a < m < b else 0.0
        return float(interval_mass((a - m) / s, (b - m) / s))

    def pdf(k, t):
        _, m, s = ch[k]
        return math.exp(-0.5 * ((t - m) / s) ** 2) / (s * math.sqrt(2 * math.pi))

    def fires(vals, c):
        p, q, clo, chi = c
        v = vals[p] - vals[q]
        return v < clo or v > chi

    def inner(i, j, k, m, u):
        """Median i at m, lower j at u (< m): integrate the upper channel k over (m, inf)
        exactly. Returns the four figures' conditional masses."""
        viol = m < lo or m > hi
        # Breakpoints in x_k: m, and where checks with k cross their band ends.
        bps = [m]
        for c in checks:
            p, q, clo, chi = c
            if k in (p, q):
                other = i if i in (p, q) else j
                val_other = m if other == i else u
                for e in (clo, chi):
                    if math.isfinite(e):
                        bps.append(val_other + e if p == k else val_other - e)
        bps = sorted(b for b in set(bps) if b >= m)
        edges = bps + [math.inf]
        res = np.zeros(4)
        for a, b in zip(edges[:-1], edges[1:]):
            if b <= a:
                continue
            t = a + 1.0 if b == math.inf else 0.5 * (a + b)
            vals = [0.0, 0.0, 0.0]
            vals[i], vals[j], vals[k] = m, u, t
            nf = sum(fires(vals, c) for c in checks)
            det = nf >= need
            idx = (0 if det else 1) if viol else (2 if det else 3)
            res[idx] += mass(k, a, b)
        return res

    def middle(i, j, k, m):
        """Integrate the lower channel j over (-inf, m)."""
        kind_j, mj, sj = ch[j]
        if kind_j == "p":
            return inner(i, j, k, m, mj) if mj < m else np.zeros(4)
        pts = []
        for c in checks:
            p, q, clo, chi = c
            for e in (clo, chi):
                if not math.isfinite(e):
                    continue
                if {p, q} == {i, j}:
                    pts.append(m - e if p == i else m + e)
                if {p, q} == {j, k}:
                    # x_k breakpoints from (j, k) meet those from (i, k) and m
                    for c2 in checks:
                        p2, q2, clo2, chi2 = c2
                        if {p2, q2} == {i, k}:
                            for e2 in (clo2, chi2):
                                if math.isfinite(e2):
                                    xk = m + e2 if p2 == k else m - e2
                                    pts.append(xk - e if p == k else xk + e)
                    pts.append(m - e if p == k else m + e)
                    if ch[k][0] == "p":
                        pts.append(ch[k][1] - e if p == k else ch[k][1] + e)
        lo_u = mj - 12 * sj
        if lo_u >= m:
            return np.zeros(4)
        pts = sorted({p for p in pts if lo_u < p < m})
        edges = [lo_u] + pts + [m]
        tot = np.zeros(4)
        for a, b in zip(edges[:-1], edges[1:]):
            r, _ = integrate.quad_vec(
                lambda u: pdf(j, u) * inner(i, j, k, m, u), a, b, epsabs=1e-15, epsrel=1e-12
            )
            tot += r
        return tot

    total = np.zeros(4)
    for i in range(3):
        for j, k in ((x, y) for x in range(3) for y in range(3) if len({i, x, y}) == 3):
            kind_i, mi, si = ch[i]
            if kind_i == "p":
                total += middle(i, j, k, mi)
                continue
            pts = [e for e in (lo, hi) if math.isfinite(e)]
            for other in (j, k):
                if ch[other][0] == "p":
                    pts.append(ch[other][1])
                    for c in checks:
                        pts += [ch[other][1] + e for e in c[2:] if math.isfinite(e)]
                        pts += [ch[other][1] - e for e in c[2:] if math.isfinite(e)]
            pts = [p for p in set(pts) if mi - 12 * si < p < mi + 12 * si]
            edges = [mi - 12 * si] + sorted(pts) + [mi + 12 * si]
            for a, b in zip(edges[:-1], edges[1:]):
                r, _ = integrate.quad_vec(
                    lambda m: pdf(i, m) * middle(i, j, k, m), a, b, epsabs=1e-15, epsrel=1e-12
                )
                total += r
    return total


# --------------------------------------------------------------------------------------
# The cases.
# --------------------------------------------------------------------------------------

CASES = []


def case(name, covers, text):
    CASES.append({"name": name, "covers": covers, "toml": text.strip() + "\n"})


case(
    "correlated_unequal_points_and_gaussian",
    "two correlated channels with unequal sigmas and systematic means; points amplitude; "
    "known-sigma gaussian fault with a mean and a negative gain",
    """
name = "correlated pair, unequal noise"
unit = "mm"

[channels.a]
mean = 0.1
sigma = 0.5

[channels.b]
mean = -0.2
sigma = 0.8

[[correlations]]
between = ["a", "b"]
rho = 0.4

[output]
kind = "mean"
of = ["a", "b"]

[checks.ab]
kind = "difference"
of = ["a", "b"]
limit = 1.5

[safety]
limit = 2.0

[faults.a_offset]
fit = 10.0
hits = { a = 1.0 }
mode = "add"
amplitude = { points = [[3.0, 0.5], [-2.5, 0.3], [6.0, 0.2]] }

[faults.b_gain]
fit = 4.0
hits = { b = -1.5 }
mode = "add"
amplitude = { gaussian = { mean = 0.5, sigma = 2.0 } }
""",
)

case(
    "asymmetric_bands_weighted_uniform",
    "weighted output, asymmetric safety band (lower/upper), asymmetric check band, negative "
    "correlation, uniform fault amplitude on one channel",
    """
name = "weighted pair, asymmetric bands"
unit = "V"

[channels.a]
mean = 0.05
sigma = 0.4

[channels.b]
mean = 0.0
sigma = 0.6

[[correlations]]
between = ["a", "b"]
rho = -0.3

[output]
kind = "weighted"
of = { a = 0.7, b = 0.3 }

[checks.ba]
kind = "difference"
of = ["b", "a"]
lower = -1.0
upper = 2.0

[safety]
lower = -1.5
upper = 2.5

[faults.a_wander]
fit = 7.0
hits = { a = 1.0 }
mode = "add"
amplitude = { uniform = [-8.0, 8.0] }
""",
)

case(
    "one_sided_bands_median_of_two",
    "median of two channels (the mean of the middle two), one-sided safety band (upper only), "
    "one-sided check band (lower only), points fault with a gain",
    """
name = "median of two, one-sided bands"
unit = "bar"

[channels.p1]
mean = 0.0
sigma = 0.3

[channels.p2]
mean = 0.1
sigma = 0.35

[[correlations]]
between = ["p1", "p2"]
rho = 0.6

[output]
kind = "median"
of = ["p1", "p2"]

[checks.low]
kind = "difference"
of = ["p2", "p1"]
lower = -0.9

[safety]
upper = 1.0

[faults.p1_high]
fit = 2.0
hits = { p1 = 2.0 }
mode = "add"
amplitude = { points = [[0.6, 0.25], [1.1, 0.5], [2.0, 0.25]] }
""",
)

case(
    "replace_stuck_points",
    "replace mode: a channel stuck at points (its mean and noise gone), with a gain; the "
    "other channel has a systematic mean and a shared source",
    """
name = "stuck channel, points"
unit = "degC"

[sources.supply]
mean = 0.05
sigma = 0.2

[channels.t1]
mean = 0.2
sigma = 0.5
from = { supply = 1.0 }

[channels.t2]
mean = -0.1
sigma = 0.4
from = { supply = 0.8 }

[output]
kind = "mean"
of = ["t1", "t2"]

[checks.d]
kind = "difference"
of = ["t1", "t2"]
limit = 1.2

[safety]
limit = 1.5

[faults.t1_stuck]
fit = 3.0
hits = { t1 = 0.5 }
mode = "replace"
amplitude = { points = [[2.4, 0.4], [-3.0, 0.35], [0.8, 0.25]] }
""",
)

case(
    "replace_stuck_uniform",
    "replace mode with a uniform amplitude: the channel reads F, F uniform on [-6, 5]",
    """
name = "stuck channel, uniform"
unit = "degC"

[channels.t1]
mean = 0.2
sigma = 0.5

[channels.t2]
mean = -0.1
sigma = 0.4

[[correlations]]
between = ["t1", "t2"]
rho = 0.25

[output]
kind = "mean"
of = ["t1", "t2"]

[checks.d]
kind = "difference"
of = ["t1", "t2"]
lower = -1.0
upper = 1.4

[safety]
limit = 1.5

[faults.t2_stuck]
fit = 3.0
hits = { t2 = 1.0 }
mode = "replace"
amplitude = { uniform = [-6.0, 5.0] }
""",
)

case(
    "common_cause_shared_source",
    "common-cause faults on a shared source that feeds both channels with gain 1: the "
    "difference check cannot see a fault that moves both channels equally, so the check "
    "fires only as often as without the fault and dc is near zero by construction; points, "
    "known-sigma gaussian and uniform amplitudes",
    """
name = "shared reference, common cause"
unit = "mV"
full_scale = [-10.0, 10.0]

[sources.vref]
mean = 0.0
sigma = 0.15

[channels.a]
mean = 0.05
sigma = 0.3
from = { vref = 1.0 }

[channels.b]
mean = -0.05
sigma = 0.35
from = { vref = 1.0 }

[[correlations]]
between = ["a", "b"]
rho = 0.2

[output]
kind = "mean"
of = ["a", "b"]

[checks.ab]
kind = "difference"
of = ["a", "b"]
limit = 1.0

[safety]
limit = 1.2

[faults.vref_step]
fit = 5.0
hits = { vref = 1.0 }
mode = "add"
amplitude = { points = [[1.0, 0.5], [-2.0, 0.5]] }

[faults.vref_noise]
fit = 5.0
hits = { vref = 1.0 }
mode = "add"
amplitude = { gaussian = { mean = 0.0, sigma = 1.3 } }

[faults.vref_drift]
fit = 2.0
hits = { vref = 1.0 }
mode = "add"
amplitude = { uniform = "full_scale" }
""",
)

case(
    "small_residual",
    "tight noise far inside the safety band: the baseline residual p_vu is about 1e-8 and the "
    "fault's residual about 1e-7, to test relative accuracy of small figures",
    """
name = "small residuals"
unit = "mm"

[channels.a]
mean = 0.0
sigma = 0.2

[channels.b]
mean = 0.02
sigma = 0.25

[[correlations]]
between = ["a", "b"]
rho = 0.5

[output]
kind = "mean"
of = ["a", "b"]

[checks.ab]
kind = "difference"
of = ["a", "b"]
limit = 0.9

[safety]
limit = 1.1

[faults.a_jump]
fit = 1.0
hits = { a = 1.0 }
mode = "add"
amplitude = { points = [[2.1, 1.0]] }
""",
)

case(
    "three_median_any",
    "three independent channels with unequal sigmas and means, median output, three pairwise "
    "difference checks (one asymmetric), detection any; points fault on one channel",
    """
name = "three channels, median, any check"
unit = "deg"

[channels.a]
mean = 0.1
sigma = 0.5

[channels.b]
mean = 0.0
sigma = 0.6

[channels.c]
mean = -0.15
sigma = 0.4

[output]
kind = "median"
of = ["a", "b", "c"]

[checks.ab]
kind = "difference"
of = ["a", "b"]
limit = 1.8

[checks.bc]
kind = "difference"
of = ["b", "c"]
lower = -1.5
upper = 2.0

[checks.ac]
kind = "difference"
of = ["a", "c"]
limit = 1.8

[safety]
limit = 1.2

[faults.a_offset]
fit = 8.0
hits = { a = 1.0 }
mode = "add"
amplitude = { points = [[2.5, 0.6], [-4.0, 0.4]] }
""",
)

case(
    "three_median_at_least_two",
    "three independent channels, median output, pairwise difference checks, detection at "
    "least 2 of 3; known-sigma gaussian fault on one channel and a channel stuck at points "
    "(replace)",
    """
name = "three channels, median, two of three checks"
unit = "deg"

[channels.a]
mean = 0.1
sigma = 0.5

[channels.b]
mean = -0.05
sigma = 0.45

[channels.c]
mean = 0.0
sigma = 0.35

[output]
kind = "median"
of = ["a", "b", "c"]

[checks.ab]
kind = "difference"
of = ["a", "b"]
limit = 1.6

[checks.bc]
kind = "difference"
of = ["b", "c"]
limit = 1.6

[checks.ac]
kind = "difference"
of = ["a", "c"]
limit = 1.6

[detection]
fires = { at_least = 2 }

[safety]
limit = 1.0

[faults.b_noise]
fit = 10.0
hits = { b = 1.0 }
mode = "add"
amplitude = { gaussian = { mean = 0.0, sigma = 3.0 } }

[faults.c_stuck]
fit = 6.0
hits = { c = 1.0 }
mode = "replace"
amplitude = { points = [[0.0, 0.5], [1.4, 0.3], [-2.2, 0.2]] }
""",
)


# --------------------------------------------------------------------------------------
# Driver.
# --------------------------------------------------------------------------------------


def second(model, fault):
    if len(model.names) == 2:
        return [float(v) for v in second_two_channel(model, fault)], "mpmath"
    return list(second_median3(model, fault)), "scipy"


def main():
    only = sys.argv[1:]
    versions = {
        "python": platform.python_version(),
        "scipy": scipy.__version__,
        "numpy": np.__version__,
        "mpmath": mpmath.__version__,
    }
    out_cases = []
    worst = 0.0
    # Optional cache of finished sites (keyed by the case text and site), so that an
    # interrupted run can resume: ANALYSIS_REFERENCE_CACHE=/tmp/some.json
    cache_path = os.environ.get("ANALYSIS_REFERENCE_CACHE")
    cache = {}
    if cache_path and os.path.exists(cache_path):
        with open(cache_path) as f:
            cache = json.load(f)
    for c in CASES:
        if only and c["name"] not in only:
            continue
        model = Model(c["toml"])
        entries = [("baseline", None)] + [(n, f) for n, f in model.faults]
        results = []
        for site, fault in entries:
            t0 = time.time()
            key = f"{c['toml']}//{site}"
            if key in cache:
                ch, ch_lo, sec, sec_kind = cache[key]
            else:
                ch = [float(v) for v in chain_site(model, fault)]
                ch_lo = [float(v) for v in chain_site(model, fault, ORDER_CHECK)]
                sec, sec_kind = second(model, fault)
                cache[key] = (ch, ch_lo, [float(v) for v in sec], sec_kind)
                if cache_path:
                    with open(cache_path, "w") as f:
                        json.dump(cache, f)
            figs = {}
            for j, key in enumerate(FIGS):
                spread = max(abs(ch[j] - sec[j]), abs(ch[j] - ch_lo[j]))
                value = sec[j] if sec_kind == "mpmath" else ch[j]
                tol = max(2.0 * spread, 1e-15 + 1e-12 * abs(value))
                worst = max(worst, spread)
                figs[key] = {
                    "value": value,
                    "tol": tol,
                    "chain": float(ch[j]),
                    "second": float(sec[j]),
                }
            total = sum(figs[k]["value"] for k in FIGS)
            print(
                f"{c['name']:40s} {site:12s} "
                + " ".join(f"{k}={figs[k]['value']:.12e}(±{figs[k]['tol']:.1e})" for k in FIGS)
                + f" sum-1={total - 1:.1e} [{time.time() - t0:.1f}s]",
                flush=True,
            )
            results.append({"site": site, **figs})
        out_cases.append(
            {
                "name": c["name"],
                "covers": c["covers"],
                "second_method": "mpmath 30 digits (bivariate conditional)"
                if len(model.names) == 2
                else "scipy quad_vec (median conditioning)",
                "toml": c["toml"],
                "results": results,
            }
        )
    print(f"largest disagreement between methods: {worst:.3e}")
    doc = {
        "generator": "tests/reference/analysis_reference.py",
        "versions": versions,
        "figures": list(FIGS),
        "note": "value: mpmath 30-digit bivariate conditional integral for two channels, "
        "sequential-conditioning Gauss-Legendre (chain) for three; tol: twice the largest "
        "disagreement between the two methods and the chain method's order check, at least "
        "1e-15 + 1e-12 |value|",
        "cases": out_cases,
    }
    # A run restricted to named cases writes beside the table, never over it.
    with open(OUT + ".partial" if only else OUT, "w") as f:
        json.dump(doc, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
