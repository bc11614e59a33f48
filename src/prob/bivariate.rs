//! The standard bivariate normal distribution: orthant and rectangle probabilities.
//!
//! `X, Y` are standard normal with correlation `rho` in `[-1, 1]`. Everything is built on
//! the upper orthant `U(h, k) = P(X > h, Y > k)`; the lower orthant is `U(-h, -k)`.
//!
//! # Method
//!
//! Genz (2004), Statistics and Computing 14:251-260, refining Drezner and Wesolowsky
//! (1990), J. Stat. Comput. Simul. 35:101-107; stated accuracy about `1e-15` absolute.
//!
//! - `|rho| <= 0.925`: Plackett's identity `dU/drho = phi2(h, k; rho)` integrated from
//!   `rho = 0` with `rho = sin(theta)` gives
//!   `U = Phi(-h) Phi(-k) + 1/(2 pi) * integral over theta in [0, asin rho] of
//!   exp(-(h^2 + k^2 - 2 h k sin theta) / (2 cos^2 theta))`,
//!   by 20-point Gauss–Legendre ([`crate::prob::legendre`]; Genz uses 6 and 12 points
//!   below `|rho|` = 0.3 and 0.75, which keep 1e-15 absolute but not the tails relative). The exponent is evaluated as
//!   `(h - k)^2 / (2 cos^2) + h k / (1 + sin)` when `h k >= 0` and as
//!   `(h + k)^2 / (2 cos^2) - h k / (1 - sin)` otherwise: two terms of one sign, so no
//!   cancellation where `h` and `k` are large.
//! - `|rho| > 0.925`: the same identity integrated down from `rho = 1` (for `rho < 0`
//!   from `rho = -1`, after `Y -> -Y`). With `x = sqrt(1 - s^2)`, `a = sqrt(1 - rho^2)`,
//!   `b = |h - k|`: `U(h, k, rho) = Phi(-max(h, k)) - T` with
//!   `T = 1/(2 pi) * integral over x in [0, a] of exp(-b^2/(2 x^2)) exp(-h k/(1 + s)) / s`,
//!   `s = sqrt(1 - x^2)`. The factor `exp(-h k/(1+s))/s` is replaced by its expansion
//!   `exp(-h k/2) (1 + c x^2 + c d x^4)`, `c = (4 - h k)/8`, `d = (12 - h k)/16`, which
//!   integrates in closed form (terms in `exp(-b^2/(2 a^2))` and `Phi(-b/a)`); the 20-point
//!   rule integrates the smooth remainder. Here the closed form is arranged with the Mills
//!   ratio ([`normal::mills_ratio`]) so that no exponential can overflow.
//! - `rho = 0, 1, -1`: exact, `Phi(-h) Phi(-k)`, `Phi(-max(h, k))` and `P(h < X < -k)`.
//!
//! # Accuracy (measured in `tests/prob_bivariate.rs`)
//!
//! Against mpmath (35 digits) on a grid of limits from -8 to 8 and 23 correlations
//! including `+-(1 - 1e-10)`: absolute error at most `2.2e-16`; against the owens-t and
//! mv-norm crates `2.2e-16`. Relative accuracy in the tails: where every term is positive
//! — `0 <= rho <= 0.925`, and `rho < -0.925` — the measured relative error is at most
//! `7.3e-14` for values above `1e-12` (`1.3e-16` for `P(X > 5, Y > 5)`, `rho = 0.5`);
//! far below, for `|rho| > 0.925`, the closed form of the expansion is a difference of
//! nearly equal parts (4e-11 relative at 1e-92, `b / a = 20`), and the bound scales with
//! those parts, not with the value;
//! where the result is a small difference (`-0.925 <= rho < 0` with both limits in the
//! upper tail, or `rho > 0.925` with one limit far beyond the other) only the absolute
//! accuracy
//! holds. The error bounds of [`rectangle_estimate`] follow these cases.

use crate::prob::Estimate;
use crate::prob::legendre::{self, Rule};
use crate::prob::normal;
use crate::prob::tolerance;

/// `1 / (2 pi)`.
const INV_2PI: f64 = 0.159_154_943_091_895_335_768_883_763_372_514_4;

/// Genz's (2004) switch from the `theta` integral to the expansion about `|rho| = 1`.
const STRONG_RHO: f64 = 0.925;

/// A node of the expansion integral with `-b^2/(2 x^2)` below this contributes nothing:
/// `b^2 >= 4|hk|` when `hk < 0` and `x^2 < 0.15`, so its other exponent `|hk|` is at most
/// a fourteenth of this, and both of its terms are below `exp(-900)`, zero in double.
const UNDERFLOW_EXPONENT: f64 = -1000.0;

/// At most 20 nodes per rule.
const MAX_NODES: usize = 20;

/// How many laws each thread remembers (see [`remembered`]).
const RECENT_LAWS: usize = 8;

/// The key part of a law made by [`StandardBivariate::new`] (no complement given): the bits
/// of a NaN that `f64::to_bits` of a computed complement does not produce in practice, and
/// which would in any case build the same law (a NaN complement falls back to `new`).
const NO_COMPLEMENT: u64 = u64::MAX;

/// Laws recently made on this thread, by the bits of their arguments, oldest replaced first.
#[derive(Default)]
struct RecentLaws {
    entries: Vec<((u64, u64), StandardBivariate)>,
    next: usize,
}

thread_local! {
    static RECENT: std::cell::RefCell<RecentLaws> = std::cell::RefCell::new(RecentLaws::default());
}

/// The law for `key`, remembered from a recent call on this thread or made by `make`.
/// Making one costs an arcsine and 20 sines (or 20 square roots), and the engine asks for
/// the same correlation over and over: the same two rows at every point of an integral
/// over a shifted mean (a uniform amplitude, the constant terms of a confirmation
/// interval). A law is a function of its arguments alone, so the remembered law is the one
/// that would be made, bit for bit.
fn remembered(key: (u64, u64), make: impl FnOnce() -> StandardBivariate) -> StandardBivariate {
    let found = RECENT.with(|recent| {
        recent
            .borrow()
            .entries
            .iter()
            .find(|(k, _)| *k == key)
            .map(|(_, law)| law.clone())
    });
    if let Some(law) = found {
        return law;
    }
    let law = make();
    RECENT.with(|recent| {
        let mut recent = recent.borrow_mut();
        if recent.entries.len() < RECENT_LAWS {
            recent.entries.push((key, law.clone()));
        } else {
            let slot = recent.next;
            recent.entries[slot] = (key, law.clone());
            recent.next = (slot + 1) % RECENT_LAWS;
        }
    });
    law
}

/// The standard bivariate normal distribution with one correlation, prepared for repeated
/// evaluation: the quadrature nodes that depend on `rho` only are computed once.
#[derive(Debug, Clone)]
pub struct StandardBivariate {
    rho: f64,
    method: Method,
}

#[derive(Debug, Clone)]
enum Method {
    /// `rho` is NaN or outside `[-1, 1]`.
    Invalid,
    Independent,
    /// `rho = 1`: `Y = X`.
    Comonotone,
    /// `rho = -1`: `Y = -X`.
    Countermonotone,
    Moderate(Moderate),
    Strong(Strong),
}

/// Nodes of the `theta` integral for `0 < |rho| <= 0.925`.
#[derive(Debug, Clone)]
struct Moderate {
    n: usize,
    /// `w_i asin(rho) / (4 pi)`: Gauss–Legendre weight times the half length times `1/(2 pi)`.
    weight: [f64; MAX_NODES],
    /// `1 / (2 cos^2 theta_i)`.
    half_sec2: [f64; MAX_NODES],
    /// `1 / (1 + sin theta_i)`.
    inv_one_plus_sin: [f64; MAX_NODES],
    /// `1 / (1 - sin theta_i)`.
    inv_one_minus_sin: [f64; MAX_NODES],
}

/// Nodes of the integral about `|rho| = 1` for `0.925 < |rho| < 1`.
#[derive(Debug, Clone)]
struct Strong {
    /// `a = sqrt(1 - rho^2)` and its square.
    a: f64,
    a2: f64,
    /// `w_i a / 2`.
    weight: [f64; MAX_NODES],
    /// `x_i^2` for the nodes `x_i` on `[0, a]`.
    x2: [f64; MAX_NODES],
    /// `1 / (2 x_i^2)`.
    inv_2x2: [f64; MAX_NODES],
    /// `1 / s_i` with `s_i = sqrt(1 - x_i^2)`.
    inv_s: [f64; MAX_NODES],
    /// `1 / (1 + s_i)`.
    inv_one_plus_s: [f64; MAX_NODES],
}

/// An upper-orthant value with the size of the largest quantity that entered it, which
/// scales its rounding and quadrature error.
#[derive(Debug, Clone, Copy)]
struct Term {
    value: f64,
    scale: f64,
    /// An absolute error floor: nonzero where the value is a difference of larger terms
    /// (the quadrature error is then not relative to the value or its scale).
    floor: f64,
}

impl Term {
    fn exact(value: f64) -> Self {
        Term {
            value,
            scale: 0.0,
            floor: 0.0,
        }
    }
    fn nan() -> Self {
        Term {
            value: f64::NAN,
            scale: f64::NAN,
            floor: f64::NAN,
        }
    }
}

impl StandardBivariate {
    /// The distribution with correlation `rho`. A `rho` outside `[-1, 1]` by no more than
    /// [`tolerance::CORRELATION_SLACK`] (rounding in a computed correlation) is clamped to
    /// the nearest end; any other `rho` outside `[-1, 1]`, or NaN, makes every probability
    /// NaN.
    pub fn new(rho: f64) -> Self {
        remembered((rho.to_bits(), NO_COMPLEMENT), || Self::build(rho))
    }

    /// [`Self::new`] without the memory of recent laws.
    fn build(rho: f64) -> Self {
        let method = if rho.is_nan() || rho.abs() > 1.0 + tolerance::CORRELATION_SLACK {
            Method::Invalid
        } else if rho >= 1.0 {
            Method::Comonotone
        } else if rho <= -1.0 {
            Method::Countermonotone
        } else if rho == 0.0 {
            Method::Independent
        } else if rho.abs() <= STRONG_RHO {
            Method::Moderate(Moderate::new(rho))
        } else {
            Method::Strong(Strong::new(rho.abs()))
        };
        let rho = if rho.is_nan() {
            rho
        } else {
            rho.clamp(-1.0, 1.0)
        };
        StandardBivariate { rho, method }
    }

    /// The distribution with correlation `rho` when the caller also knows
    /// `complement = sqrt(1 - rho^2)` to full relative precision (the sine of the angle
    /// between two directions, `1 / sqrt(1 + c^2)` for the slope `c` of a strip).
    ///
    /// Near `|rho| = 1` the complement cannot be recovered from a rounded `rho`: at
    /// `1 - rho = 5e-13` one rounding of `rho` moves `1 - rho^2` by 2e-4 relative, and the
    /// rectangles of the nearly degenerate law (whose mass spreads over a band of width
    /// `complement` about the diagonal) move by about `phi * complement * 1e-4`. Given here,
    /// the integral about `|rho| = 1` uses it directly, and `rho` only for its sign; a
    /// positive complement keeps that integral even where `rho` has rounded to `+-1`.
    /// A complement that is zero, NaN or not below 1 falls back to [`Self::new`].
    pub fn with_complement(rho: f64, complement: f64) -> Self {
        remembered((rho.to_bits(), complement.to_bits()), || {
            Self::build_with_complement(rho, complement)
        })
    }

    /// [`Self::with_complement`] without the memory of recent laws.
    fn build_with_complement(rho: f64, complement: f64) -> Self {
        let strong = rho.is_finite()
            && rho.abs() > STRONG_RHO
            && rho.abs() <= 1.0 + tolerance::CORRELATION_SLACK
            && complement > 0.0
            && complement < 1.0;
        if !strong {
            return Self::build(rho);
        }
        StandardBivariate {
            rho: rho.clamp(-1.0, 1.0),
            method: Method::Strong(Strong::from_complement(complement)),
        }
    }

    /// The correlation (after clamping).
    pub fn rho(&self) -> f64 {
        self.rho
    }

    /// `P(X > h, Y > k)`; `h`, `k` may be infinite; NaN if either is NaN.
    pub fn upper_orthant(&self, h: f64, k: f64) -> f64 {
        self.upper(h, k, normal::sf(h), normal::sf(k), false).value
    }

    /// `P(X <= h, Y <= k)`; `h`, `k` may be infinite; NaN if either is NaN.
    pub fn lower_orthant(&self, h: f64, k: f64) -> f64 {
        self.upper(-h, -k, normal::cdf(h), normal::cdf(k), false)
            .value
    }

    /// `P(l1 < X < u1, l2 < Y < u2)` for `lower = [l1, l2]`, `upper = [u1, u2]`; 0 for an
    /// empty rectangle; ends may be infinite; NaN if any end is NaN. See [`rectangle`].
    pub fn rectangle(&self, lower: [f64; 2], upper: [f64; 2]) -> f64 {
        self.rectangle_estimate(lower, upper).value
    }

    /// [`rectangle`](Self::rectangle) with a bound on its numerical error.
    pub fn rectangle_estimate(&self, lower: [f64; 2], upper: [f64; 2]) -> Estimate {
        let [mut l1, mut l2] = lower;
        let [mut u1, mut u2] = upper;
        if [l1, l2, u1, u2].iter().any(|v| v.is_nan()) || matches!(self.method, Method::Invalid) {
            return Estimate {
                value: f64::NAN,
                error: f64::NAN,
            };
        }
        if u1 <= l1 || u2 <= l2 {
            return Estimate::zero();
        }
        let whole = |l: f64, u: f64| l == f64::NEG_INFINITY && u == f64::INFINITY;
        if whole(l1, u1) {
            return Estimate::exact(normal::interval(l2, u2));
        }
        if whole(l2, u2) {
            return Estimate::exact(normal::interval(l1, u1));
        }
        match self.method {
            Method::Comonotone => {
                return Estimate::exact(normal::interval(l1.max(l2), u1.min(u2)));
            }
            Method::Countermonotone => {
                return Estimate::exact(normal::interval(l1.max(-u2), u1.min(-l2)));
            }
            Method::Independent => {
                return Estimate::exact(normal::interval(l1, u1) * normal::interval(l2, u2));
            }
            _ => {}
        }
        // Reflect each axis so that its interval lies mostly on the positive side: the
        // corner terms are then upper-orthant probabilities no larger than needed, and a
        // rectangle in a tail is a combination of small tail terms, not of terms near 1.
        let mut negate = false;
        if l1 + u1 < 0.0 {
            (l1, u1) = (-u1, -l1);
            negate = !negate;
        }
        if l2 + u2 < 0.0 {
            (l2, u2) = (-u2, -l2);
            negate = !negate;
        }
        let (sl1, su1, sl2, su2) = (
            normal::sf(l1),
            normal::sf(u1),
            normal::sf(l2),
            normal::sf(u2),
        );
        let a = self.upper(l1, l2, sl1, sl2, negate);
        let b = self.upper(u1, l2, su1, sl2, negate);
        let c = self.upper(l1, u2, sl1, su2, negate);
        let d = self.upper(u1, u2, su1, su2, negate);
        // (a - b) and (c - d) are P(l1 < X < u1, Y > l2) and P(l1 < X < u1, Y > u2).
        let value = (a.value - b.value) - (c.value - d.value);
        // the marginal intervals bound the rectangle (with their own rounding as slack)
        let cap = (sl1 - su1).min(sl2 - su2) + 4.0 * f64::EPSILON * sl1.max(sl2);
        let error = tolerance::BIVARIATE_ORTHANT_REL * (a.scale + b.scale + c.scale + d.scale)
            + (a.floor + b.floor + c.floor + d.floor)
            + tolerance::ROUNDING_REL * value.abs();
        Estimate {
            value: value.clamp(0.0, cap),
            error,
        }
    }

    /// `P(X > h, Y > k)` with its scale; `sh = Phi(-h)`, `sk = Phi(-k)` given by the caller
    /// (shared between the corners of a rectangle). With `negate`, for correlation `-rho`.
    fn upper(&self, h: f64, k: f64, sh: f64, sk: f64, negate: bool) -> Term {
        if h.is_nan() || k.is_nan() {
            return Term::nan();
        }
        // Limits beyond +-UNDERFLOW_X: the neglected probability is below every double.
        let cut = normal::UNDERFLOW_X;
        if h >= cut || k >= cut {
            return Term::exact(0.0);
        }
        if h <= -cut {
            return Term::exact(sk);
        }
        if k <= -cut {
            return Term::exact(sh);
        }
        let term = match &self.method {
            Method::Invalid => Term::nan(),
            Method::Independent => Term::exact(sh * sk),
            Method::Comonotone if !negate => Term::exact(if h >= k { sh } else { sk }),
            Method::Countermonotone if negate => Term::exact(if h >= k { sh } else { sk }),
            Method::Comonotone | Method::Countermonotone => Term::exact(normal::interval(h, -k)),
            Method::Moderate(m) => m.upper(h, k, sh * sk, negate),
            Method::Strong(s) => {
                let positive = (self.rho > 0.0) != negate;
                // The scale is that of the parts of `t` before they cancel (see
                // `Strong::integral`), so that a tiny `t` does not claim more relative
                // accuracy than its parts carry.
                if positive {
                    let (t, magnitude) = s.integral(h, k);
                    let top = if h >= k { sh } else { sk };
                    Term {
                        value: top - t,
                        scale: top + magnitude,
                        floor: tolerance::BIVARIATE_ORTHANT_ABS,
                    }
                } else {
                    let (t, magnitude) = s.integral(h, -k);
                    let gap = if h + k >= 0.0 {
                        0.0
                    } else {
                        normal::interval(h, -k)
                    };
                    Term {
                        value: gap + t,
                        scale: gap + magnitude,
                        floor: 0.0,
                    }
                }
            }
        };
        Term {
            value: term.value.clamp(0.0, 1.0),
            ..term
        }
    }
}

impl Moderate {
    fn new(rho: f64) -> Self {
        // Genz's 6 and 12 points (|rho| < 0.3, < 0.75) reach 1e-15 absolute but only
        // 2.4e-12 relative in the tails (P(X > 5, Y > 5), rho = 0.2, against mpmath): the
        // 20-point rule throughout keeps the tails relative.
        let rule: Rule = legendre::RULE_20;
        let asr = rho.asin();
        let mut m = Moderate {
            n: rule.points(),
            weight: [0.0; MAX_NODES],
            half_sec2: [0.0; MAX_NODES],
            inv_one_plus_sin: [0.0; MAX_NODES],
            inv_one_minus_sin: [0.0; MAX_NODES],
        };
        let mut i = 0;
        for (x, w) in rule.nodes.iter().zip(rule.weights) {
            for t in [1.0 - x, 1.0 + x] {
                let sn = (0.5 * asr * t).sin();
                let (p, q) = (1.0 + sn, 1.0 - sn);
                let inv_cos2 = 1.0 / (p * q);
                m.weight[i] = w * asr * 0.5 * INV_2PI;
                m.half_sec2[i] = 0.5 * inv_cos2;
                m.inv_one_plus_sin[i] = q * inv_cos2;
                m.inv_one_minus_sin[i] = p * inv_cos2;
                i += 1;
            }
        }
        m
    }

    /// `U(h, k)` for finite `h`, `k`; `product = Phi(-h) Phi(-k)`. With `negate`, for
    /// `-rho`: the nodes `theta -> -theta` swap `1 + sin` with `1 - sin`.
    fn upper(&self, h: f64, k: f64, product: f64, negate: bool) -> Term {
        let hk = h * k;
        let (inv_plus, inv_minus) = if negate {
            (&self.inv_one_minus_sin, &self.inv_one_plus_sin)
        } else {
            (&self.inv_one_plus_sin, &self.inv_one_minus_sin)
        };
        let n = self.n;
        let nodes = self.weight[..n].iter().zip(&self.half_sec2[..n]);
        let mut sum = 0.0;
        if hk >= 0.0 {
            let d2 = (h - k) * (h - k);
            for ((w, hs), q) in nodes.zip(&inv_plus[..n]) {
                sum += w * (-(d2 * hs + hk * q)).exp();
            }
        } else {
            let s2 = (h + k) * (h + k);
            for ((w, hs), q) in nodes.zip(&inv_minus[..n]) {
                sum += w * (-(s2 * hs - hk * q)).exp();
            }
        }
        if negate {
            sum = -sum;
        }
        Term {
            value: product + sum,
            scale: product + sum.abs(),
            floor: if sum < 0.0 {
                tolerance::BIVARIATE_ORTHANT_ABS
            } else {
                0.0
            },
        }
    }
}

impl Strong {
    /// For `r = |rho|` in `(0.925, 1)`.
    fn new(r: f64) -> Self {
        Self::from_complement(((1.0 - r) * (1.0 + r)).sqrt())
    }

    /// For `a = sqrt(1 - rho^2)` in `(0, sqrt(1 - 0.925^2))`.
    fn from_complement(a: f64) -> Self {
        let a2 = a * a;
        let rule = legendre::RULE_20;
        let mut s = Strong {
            a,
            a2,
            weight: [0.0; MAX_NODES],
            x2: [0.0; MAX_NODES],
            inv_2x2: [0.0; MAX_NODES],
            inv_s: [0.0; MAX_NODES],
            inv_one_plus_s: [0.0; MAX_NODES],
        };
        let mut i = 0;
        for (t, w) in rule.nodes.iter().zip(rule.weights) {
            for u in [1.0 - t, 1.0 + t] {
                let x = 0.5 * a * u;
                let x2 = x * x;
                let sq = ((1.0 - x) * (1.0 + x)).sqrt();
                s.weight[i] = 0.5 * a * w;
                s.x2[i] = x2;
                s.inv_2x2[i] = 0.5 / x2;
                s.inv_s[i] = 1.0 / sq;
                s.inv_one_plus_s[i] = 1.0 / (1.0 + sq);
                i += 1;
            }
        }
        s
    }

    /// `T = integral over s in [r, 1] of phi2(h, k; s) ds` for finite `h`, `k`, `r = |rho|`:
    /// the closed form of the expansion plus the quadrature of the remainder; with the sum of
    /// the magnitudes of its parts. For `b / a` large the closed form is a difference of
    /// two nearly equal terms (`a - b R(b / a)` is about `a^3 / b^2`), and the relative
    /// error of `T` is that of its parts times their ratio to `T` (measured: 8e-12 relative
    /// at `b / a = 20`, a value of 1e-92): the error bound scales with the magnitude, not
    /// with `T`.
    fn integral(&self, h: f64, k: f64) -> (f64, f64) {
        let (a, a2) = (self.a, self.a2);
        let hk = h * k;
        let b = (h - k).abs();
        let b2 = b * b;
        let c = (4.0 - hk) / 8.0;
        let d = (12.0 - hk) / 16.0;
        // exp(-hk/2) * integral over [0, a] of exp(-b^2/(2x^2)) (1 + c x^2 + c d x^4) dx
        // = exp(-(b^2/a^2 + hk)/2) [a (1 - c (b^2 - a^2)(1 - d b^2/5)/3 + c d a^4/5)
        //   - b R(b/a) (1 - c b^2 (1 - d b^2/5)/3)],  R the Mills ratio;
        // the exponent is never positive (b^2 >= 4|hk| when hk < 0, and a^2 < 0.15).
        let outer = (-0.5 * (b2 / a2 + hk)).exp();
        let poly_a = a * (1.0 - c * (b2 - a2) * (1.0 - d * b2 / 5.0) / 3.0 + c * d * a2 * a2 / 5.0);
        let poly_b = if b > 0.0 {
            b * normal::mills_ratio(b / a) * (1.0 - c * b2 * (1.0 - d * b2 / 5.0) / 3.0)
        } else {
            0.0
        };
        let closed = outer * (poly_a - poly_b);
        let mut magnitude = outer * (poly_a.abs() + poly_b.abs());
        // the remainder exp(-b^2/(2x^2)) [exp(-hk/(1+s))/s - exp(-hk/2)(1 + c x^2 + c d x^4)],
        // each exponential formed as one (never positive) exponent
        let mut rest = 0.0;
        for i in 0..MAX_NODES {
            let x2 = self.x2[i];
            let e0 = -b2 * self.inv_2x2[i];
            if e0 < UNDERFLOW_EXPONENT {
                // both terms are zero in double precision
                continue;
            }
            let exact = (e0 - hk * self.inv_one_plus_s[i]).exp() * self.inv_s[i];
            let series = (e0 - 0.5 * hk).exp() * (1.0 + c * x2 * (1.0 + d * x2));
            rest += self.weight[i] * (exact - series);
            magnitude += self.weight[i] * (exact.abs() + series.abs());
        }
        ((closed + rest) * INV_2PI, magnitude * INV_2PI)
    }
}

/// `P(X <= h, Y <= k)` for standard normal `X, Y` with correlation `rho` in `[-1, 1]`;
/// `h`, `k` may be infinite. NaN for NaN input or `rho` outside `[-1, 1]` (beyond
/// [`tolerance::CORRELATION_SLACK`]). Genz (2004); see the module notes for the accuracy.
/// For many calls with one `rho`, [`StandardBivariate`] saves the set-up.
pub fn lower_orthant(h: f64, k: f64, rho: f64) -> f64 {
    StandardBivariate::new(rho).lower_orthant(h, k)
}

/// `P(X > h, Y > k)`, the mirror image of [`lower_orthant`] (`U(h, k) = L(-h, -k)`).
pub fn upper_orthant(h: f64, k: f64, rho: f64) -> f64 {
    StandardBivariate::new(rho).upper_orthant(h, k)
}

/// `P(l1 < X < u1, l2 < Y < u2)` for `lower = [l1, l2]`, `upper = [u1, u2]`; 0 for an
/// empty rectangle; ends may be infinite; NaN for NaN input or `rho` outside `[-1, 1]`.
///
/// Never formed from terms near 1: each axis is first reflected (`X -> -X`, which flips
/// the sign of `rho`) so that its interval lies mostly on the positive side; then the
/// rectangle is `U(l1,l2) - U(u1,l2) - U(l1,u2) + U(u1,u2)` with upper orthants `U`, which
/// are small tail probabilities when the rectangle is in a tail; corners at infinity
/// vanish without computation. `rho = 0, +-1` and an axis that is the whole line reduce to
/// exact one-dimensional intervals.
pub fn rectangle(lower: [f64; 2], upper: [f64; 2], rho: f64) -> f64 {
    StandardBivariate::new(rho).rectangle(lower, upper)
}

/// [`rectangle`] with a bound on its numerical error: for each corner term
/// `BIVARIATE_ORTHANT_REL` times the largest quantity that entered it (the product
/// `Phi(-h) Phi(-k)` and the integral for `|rho| <= 0.925`, the leading tail probability and
/// the integral beyond), plus `BIVARIATE_ORTHANT_ABS` for a term that is a difference
/// (negative `rho` up to 0.925 in size, `rho > 0.925`): the bound is relative where the
/// result is a sum of positive terms and absolute where it is a difference.
pub fn rectangle_estimate(lower: [f64; 2], upper: [f64; 2], rho: f64) -> Estimate {
    StandardBivariate::new(rho).rectangle_estimate(lower, upper)
}
