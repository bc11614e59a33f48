//! Order statistics and agreement checks of channels that are independent once a few
//! shared terms are fixed: the polynomial-cost path for redundant chains.
//!
//! The channel deviations are `x_i = mean_i + sum_k shared[k][i] z_k + own_sd_i e_i` with
//! `z` (at most [`MAX_SHARED_TERMS`] of them) and `e` independent standard normals. Given
//! `z` the channels are independent normals, and the figures of a redundant chain become
//! counts and one-dimensional integrals (common practice in the theory of order
//! statistics; David and Nagaraja 2003, Order Statistics, 3rd ed., sections 2.1 and 2.4):
//!
//! - the output `y`, the `k`-th smallest of the channels `O`: `y < lo` exactly when at
//!   least `k` of them read below `lo`, and `y > hi` exactly when at least `|O| - k + 1`
//!   read above `hi`. The count of independent channels on one side is Poisson-binomial,
//!   summed by the usual dynamic programme over channels in `O(|O| k)` work;
//! - a range check `max - min <= T` over a set `S` passes exactly when one member (the
//!   smallest, at `u`) has every other member in `[u, u + T]`:
//!   `P = sum_i int f_i(u) prod_{j != i} P(u <= x_j <= u + T) du` (David and Nagaraja,
//!   eq. 2.4.1 for the range). Jointly with the output count, the product becomes a
//!   polynomial in a counting variable; a second variable marks which member is the
//!   smallest, so the sum over `i` costs one programme, not `|S|`;
//! - difference checks that all involve one centre channel `c` (a star: `x_a - x_b` in a
//!   band, `c` one of `a`, `b`) pass exactly when, given `x_c = u`, every other checked
//!   channel lies in its own interval around `u`: the same programme with `c` as the only
//!   pivot.
//!
//! A figure then costs `O(N^2)` per point of a one-dimensional integral over `u`, inside
//! an integral over the shared terms; both are adaptive Gauss–Kronrod rules
//! ([`crate::prob::vector_quadrature`]) over windows of [`WINDOW_SIGMAS`] standard
//! deviations, whose truncated mass (at most `2 Phi(-9)` per window, 2.3e-19) is added to
//! the error bound. A channel without noise of its own (a replaced channel, a sigma of
//! zero) is a point mass: its pivot term is an atom and its steps are breakpoints; at most
//! one such channel is accepted, since two could tie, which the counting ignores.
//!
//! The residual `p_vu` is integrated directly; the detected figures are differences of
//! integrals at each point of the shared terms (never of the final figures), with their
//! bounds added.

use super::error::ProbError;
use super::estimate::Estimate;
use super::normal;
use super::tolerance::ROUNDING_REL;
use super::vector_quadrature::{VectorPoint, VectorTolerance, integrate};

mod paired;
mod weighted;

pub use weighted::WeightedSum;

/// Most shared terms integrated over (the dimension of the outer integral). Two nested
/// adaptive rules were measured at 20 to 70 s per scenario on three channels (each inner
/// rule's error bound is an integrand error of the outer one, which bisection cannot
/// shrink), so a scenario with two or more goes to the polytope engine.
pub const MAX_SHARED_TERMS: usize = 1;

/// Half-width, in standard deviations, of the window integrated over for each normal
/// variable: the mass outside is `2 Phi(-9)`, 2.26e-19 (mpmath 1.3.0: `Phi(-9) =
/// 1.1285884e-19`), and that is added to the error bound of every figure.
pub const WINDOW_SIGMAS: f64 = 9.0;

/// `2 Phi(-WINDOW_SIGMAS)` rounded up: the mass outside one window.
const WINDOW_TAIL: f64 = 2.3e-19;

/// Channels independent once the shared terms are fixed (see the module notes).
#[derive(Debug, Clone, PartialEq)]
pub struct SharedGaussian {
    /// Mean of each channel.
    pub mean: Vec<f64>,
    /// Standard deviation of each channel's own independent part (0: no noise of its own).
    pub own_sd: Vec<f64>,
    /// Gains of each shared standard-normal term, one vector of channel gains per term.
    pub shared: Vec<Vec<f64>>,
    /// A channel that is uniform on `[lower, upper]` instead (a replaced channel whose
    /// amplitude is uniform): its mean, own deviation and gains are ignored.
    pub uniform: Option<(usize, f64, f64)>,
}

/// The output: the `k`-th smallest (1-based) of the channels `of`, or the mean of the
/// `k`-th and the `(k+1)`-th (the median of an even count).
#[derive(Debug, Clone, PartialEq)]
pub struct Rank {
    /// Channel indices.
    pub of: Vec<usize>,
    /// Which order statistic: 1 is the minimum, `of.len()` the maximum.
    pub k: usize,
    /// Whether the output is the mean of the `k`-th and `(k+1)`-th smallest.
    pub paired: bool,
}

impl Rank {
    /// The `k`-th smallest of `of`.
    pub fn single(of: Vec<usize>, k: usize) -> Rank {
        Rank {
            of,
            k,
            paired: false,
        }
    }

    /// The median of `of`: the middle channel of an odd count, the mean of the middle two
    /// of an even one.
    pub fn median(of: Vec<usize>) -> Rank {
        let n = of.len();
        Rank {
            of,
            k: n.div_ceil(2),
            paired: n.is_multiple_of(2),
        }
    }
}

/// What the output is.
#[derive(Debug, Clone, PartialEq)]
pub enum Output {
    /// An order statistic of channels (or the mean of two neighbouring ones).
    Order(Rank),
    /// A weighted sum of channels (see [`weighted`]).
    Weighted(WeightedSum),
}

impl From<Rank> for Output {
    fn from(rank: Rank) -> Output {
        Output::Order(rank)
    }
}

/// One difference check: passes while `lower <= x_a - x_b <= upper`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Difference {
    pub a: usize,
    pub b: usize,
    pub lower: f64,
    pub upper: f64,
}

/// Where the checks all pass (none fires).
#[derive(Debug, Clone, PartialEq)]
pub enum Agreement {
    /// No checks: never detected.
    Always,
    /// One range check: passes while `max - min <= limit` over the channels `of`.
    Range { of: Vec<usize>, limit: f64 },
    /// Difference checks sharing one channel (see [`Agreement::centre`]).
    Differences(Vec<Difference>),
}

impl Agreement {
    /// The channels common to every difference check (empty for other kinds): the
    /// candidates for the centre of a star.
    pub fn common_channels(&self) -> Vec<usize> {
        let Agreement::Differences(list) = self else {
            return Vec::new();
        };
        let Some(first) = list.first() else {
            return Vec::new();
        };
        let mut common = vec![first.a, first.b];
        common.retain(|c| list.iter().all(|d| d.a == *c || d.b == *c));
        common.dedup();
        common
    }
}

/// A check of one channel against fixed limits: passes while `lower <= x <= upper`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ChannelBand {
    pub channel: usize,
    pub lower: f64,
    pub upper: f64,
}

/// What is asked: the output, the safety band (violated when `y < lower` or `y > upper`)
/// and where the checks pass: the agreement of the channels with one another and every
/// channel within its own bands (detection on any check firing).
#[derive(Debug, Clone, PartialEq)]
pub struct Question {
    pub output: Output,
    pub safe_lower: f64,
    pub safe_upper: f64,
    pub agreement: Agreement,
    pub bands: Vec<ChannelBand>,
    /// Firing checks a detection needs (1: any check). Above 1 only for checks of single
    /// channels against fixed limits, one per channel, with no agreement check: the count
    /// of firing checks is then one more Poisson-binomial count (see `counted_tails`).
    pub detection_needed: usize,
}

impl Question {
    /// The band each channel's own checks confine it to (their intersection), by channel.
    fn channel_bands(&self, n: usize) -> Vec<Option<(f64, f64)>> {
        let mut out = vec![None; n];
        for b in &self.bands {
            if let Some(slot) = out.get_mut(b.channel) {
                let (lo, hi) = slot.unwrap_or((f64::NEG_INFINITY, f64::INFINITY));
                *slot = Some((lo.max(b.lower), hi.min(b.upper)));
            }
        }
        out
    }
}

/// The four outcome probabilities with their error bounds.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Figures {
    /// `P(violated and detected)`.
    pub violated_detected: Estimate,
    /// `P(violated and not detected)`: the residual.
    pub violated_undetected: Estimate,
    /// `P(not violated and detected)`.
    pub safe_detected: Estimate,
    /// `P(not violated and not detected)`.
    pub safe_quiet: Estimate,
    /// Evaluations of the per-point programme (for benchmarks and notes).
    pub evaluations: usize,
    /// Whether every integral met its tolerance (otherwise the bounds are larger than
    /// asked, but still bounds).
    pub converged: bool,
}

/// Accuracy asked of every figure: `max(abs, rel * value)`, and the interval budget of
/// each adaptive integral.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Accuracy {
    pub abs: f64,
    pub rel: f64,
    pub max_intervals: usize,
}

/// Why a case does not fit this method (the caller uses the general engine instead).
pub fn unsupported_reason(g: &SharedGaussian, q: &Question) -> Option<String> {
    if q.detection_needed > 1
        && let Some(reason) = counted_detection_unfit(q)
    {
        return Some(reason);
    }
    match &q.output {
        Output::Order(_) if g.shared.len() > MAX_SHARED_TERMS => {
            return Some(format!(
                "{} shared terms, more than the {MAX_SHARED_TERMS} this method integrates over",
                g.shared.len()
            ));
        }
        Output::Order(rank)
            if rank.paired && !q.bands.is_empty() && q.agreement != Agreement::Always =>
        {
            // Measured at 13 s for one scenario of four channels (the steps of the bands in
            // both nested integrals): the polytope engine is faster there.
            return Some(
                "the median of an even count with both own bands and an agreement check".into(),
            );
        }
        Output::Order(_) => {}
        Output::Weighted(sum) => {
            if let Err(reason) = weighted::split(g, q, sum) {
                return Some(reason);
            }
        }
    }
    let uniform = g.uniform.map(|u| u.0);
    let point_masses = (0..g.own_sd.len())
        .filter(|j| g.own_sd[*j] == 0.0 && Some(*j) != uniform)
        .count();
    if point_masses > 1 {
        return Some(format!(
            "{point_masses} channels without noise of their own, which could tie"
        ));
    }
    if matches!(q.agreement, Agreement::Differences(_)) && q.agreement.common_channels().is_empty()
    {
        return Some("difference checks that do not share one channel".into());
    }
    None
}

/// Why a detection on `k >= 2` firing checks is not counted here, if it is not: the count
/// of firing checks is taken over checks of single channels, one per channel, beside an
/// order statistic without agreement checks.
fn counted_detection_unfit(q: &Question) -> Option<String> {
    let k = q.detection_needed;
    if q.agreement != Agreement::Always {
        return Some(format!(
            "detection on {k} firing checks together with a range or difference check"
        ));
    }
    match &q.output {
        Output::Order(_) => {}
        Output::Weighted(_) => {
            return Some(format!(
                "detection on {k} firing checks with a weighted-sum output"
            ));
        }
    }
    let mut seen: Vec<usize> = q.bands.iter().map(|b| b.channel).collect();
    seen.sort_unstable();
    if seen.windows(2).any(|w| w[0] == w[1]) {
        return Some(format!(
            "detection on {k} firing checks with two checks of one channel"
        ));
    }
    None
}

/// The four figures of `q` for the channels `g`.
///
/// # Errors
/// [`ProbError::InvalidArgument`] for an unsupported case (see [`unsupported_reason`]) or
/// indices out of range, [`ProbError::NonFinite`] for non-finite inputs.
pub fn figures(
    g: &SharedGaussian,
    q: &Question,
    accuracy: &Accuracy,
) -> Result<Figures, ProbError> {
    validate(g, q)?;
    if let Some(reason) = unsupported_reason(g, q) {
        return Err(ProbError::InvalidArgument(reason));
    }
    // The terms integrated over, the own noises, and (for a weighted sum) the output
    // variance of the terms that cancel from the checks.
    let (outer, own_sd, output_variance) = match &q.output {
        Output::Order(_) => (g.shared.clone(), g.own_sd.clone(), 0.0),
        Output::Weighted(sum) => {
            let split = weighted::split(g, q, sum).map_err(ProbError::InvalidArgument)?;
            (split.outer, split.own_sd, split.output_variance)
        }
    };
    let bands = q.channel_bands(g.mean.len());
    let d = outer.len();
    let mut evaluations = 0usize;
    let mut converged = true;
    let inner_accuracy = Accuracy {
        abs: accuracy.abs / 8.0,
        rel: accuracy.rel / 8.0,
        ..*accuracy
    };
    let mut at = |z: &[f64]| -> Result<VectorPoint<4>, ProbError> {
        let mut mean = g.mean.clone();
        for (column, zk) in outer.iter().zip(z) {
            for (m, c) in mean.iter_mut().zip(column) {
                *m += c * zk;
            }
        }
        let cond = Conditional {
            mean: &mean,
            sd: &own_sd,
            uniform: g.uniform,
            band: &bands,
        };
        let r = match &q.output {
            Output::Order(rank) => conditional_figures(&cond, q, rank, &inner_accuracy)?,
            Output::Weighted(sum) => {
                weighted::point(&cond, q, sum, output_variance, &inner_accuracy)?
            }
        };
        evaluations += r.evaluations;
        converged &= r.converged;
        Ok(r.point)
    };
    let (value, error) = match d {
        0 => at(&[])?,
        1 => {
            let tol = outer_tolerance(accuracy, 2.0);
            let r = integrate(
                |z| {
                    let (v, e) = at(&[z])?;
                    let w = normal::pdf(z);
                    Ok((v.map(|x| w * x), e.map(|x| w * x)))
                },
                -WINDOW_SIGMAS,
                WINDOW_SIGMAS,
                &[0.0],
                &tol,
            )?;
            converged &= r.converged;
            (r.value, r.error.map(|e| e + WINDOW_TAIL))
        }
        _ => {
            return Err(ProbError::InvalidArgument(format!(
                "{d} shared terms, more than {MAX_SHARED_TERMS}"
            )));
        }
    };
    let make = |i: usize| Estimate::new(value[i].clamp(0.0, 1.0), error[i]);
    Ok(Figures {
        violated_detected: make(0),
        violated_undetected: make(1),
        safe_detected: make(2),
        safe_quiet: make(3),
        evaluations,
        converged,
    })
}

/// The tolerance of an integral over a shared term: relative on all four figures.
fn outer_tolerance(accuracy: &Accuracy, share: f64) -> VectorTolerance<4> {
    VectorTolerance {
        abs: accuracy.abs / share,
        rel: [accuracy.rel / share; 4],
        max_intervals: accuracy.max_intervals,
    }
}

fn validate(g: &SharedGaussian, q: &Question) -> Result<(), ProbError> {
    let n = g.mean.len();
    if g.own_sd.len() != n {
        return Err(ProbError::DimensionMismatch {
            what: "own standard deviations".into(),
            expected: n,
            found: g.own_sd.len(),
        });
    }
    for column in &g.shared {
        if column.len() != n {
            return Err(ProbError::DimensionMismatch {
                what: "gains of a shared term".into(),
                expected: n,
                found: column.len(),
            });
        }
        for c in column {
            finite("gain of a shared term", *c)?;
        }
    }
    for (m, s) in g.mean.iter().zip(&g.own_sd) {
        finite("channel mean", *m)?;
        finite("own standard deviation", *s)?;
        if *s < 0.0 {
            return Err(ProbError::InvalidArgument(format!(
                "own standard deviation {s} is negative"
            )));
        }
    }
    for v in [q.safe_lower, q.safe_upper] {
        if v.is_nan() {
            return Err(ProbError::NonFinite {
                what: "safety band end".into(),
                value: v,
            });
        }
    }
    let in_range = |i: &usize| *i < n;
    match &q.output {
        Output::Order(rank) => {
            let last = rank.k + usize::from(rank.paired);
            if rank.of.is_empty()
                || !rank.of.iter().all(in_range)
                || rank.k == 0
                || last > rank.of.len()
            {
                return Err(ProbError::InvalidArgument(format!(
                    "order statistic {} of {} channels (indices {:?}) for {n} channels",
                    rank.k,
                    rank.of.len(),
                    rank.of
                )));
            }
        }
        Output::Weighted(sum) => {
            if sum.weights.len() != n {
                return Err(ProbError::DimensionMismatch {
                    what: "output weights".into(),
                    expected: n,
                    found: sum.weights.len(),
                });
            }
            for w in &sum.weights {
                finite("output weight", *w)?;
            }
            finite("output constant", sum.constant)?;
        }
    }
    for b in &q.bands {
        if !in_range(&b.channel) || b.lower.is_nan() || b.upper.is_nan() {
            return Err(ProbError::InvalidArgument(format!(
                "band [{}, {}] of channel {}",
                b.lower, b.upper, b.channel
            )));
        }
    }
    match &q.agreement {
        Agreement::Always => {}
        Agreement::Range { of, limit } => {
            if of.len() < 2 || !of.iter().all(in_range) || limit.is_nan() {
                return Err(ProbError::InvalidArgument(format!(
                    "range check over channels {of:?} with limit {limit}"
                )));
            }
        }
        Agreement::Differences(list) => {
            for d in list {
                if !in_range(&d.a)
                    || !in_range(&d.b)
                    || d.a == d.b
                    || d.lower.is_nan()
                    || d.upper.is_nan()
                {
                    return Err(ProbError::InvalidArgument(format!(
                        "difference check between channels {} and {}",
                        d.a, d.b
                    )));
                }
            }
        }
    }
    Ok(())
}

fn finite(what: &str, v: f64) -> Result<(), ProbError> {
    if v.is_finite() {
        Ok(())
    } else {
        Err(ProbError::NonFinite {
            what: what.into(),
            value: v,
        })
    }
}

/// Independent channels: the conditional means and own standard deviations, the channel
/// that is uniform, if any, and the band each channel's own checks confine it to.
#[derive(Clone, Copy)]
struct Conditional<'a> {
    mean: &'a [f64],
    sd: &'a [f64],
    uniform: Option<(usize, f64, f64)>,
    band: &'a [Option<(f64, f64)>],
}

impl Conditional<'_> {
    /// Where channel `j` must lie for every check to pass: its own band, cut with the
    /// interval `relative` (shifted by the pivot `u`) an agreement gives it; `None` when
    /// nothing confines it.
    fn confined(&self, j: usize, relative: Option<(f64, f64)>, u: f64) -> Option<(f64, f64)> {
        let own = self.band.get(j).copied().flatten();
        match (relative, own) {
            (None, None) => None,
            (Some((a, b)), None) => Some((u + a, u + b)),
            (None, Some(band)) => Some(band),
            (Some((a, b)), Some((l, h))) => Some(((u + a).max(l), (u + b).min(h))),
        }
    }

    /// Whether channel `j` sitting at `u` passes its own band.
    fn band_admits(&self, j: usize, u: f64) -> bool {
        self.band
            .get(j)
            .copied()
            .flatten()
            .is_none_or(|(l, h)| l <= u && u <= h)
    }

    fn uniform_of(&self, j: usize) -> Option<(f64, f64)> {
        self.uniform
            .and_then(|(i, a, b)| (i == j).then_some((a, b)))
    }

    /// Whether channel `j` is a point mass (no spread of its own).
    fn is_point(&self, j: usize) -> bool {
        self.uniform_of(j).is_none() && self.sd[j] == 0.0
    }

    /// `P(a <= x_j <= b)`.
    fn between(&self, j: usize, a: f64, b: f64) -> f64 {
        if let Some((lo, hi)) = self.uniform_of(j) {
            if hi <= lo {
                return f64::from(u8::from(a <= lo && lo <= b));
            }
            let overlap = b.min(hi) - a.max(lo);
            return (overlap / (hi - lo)).clamp(0.0, 1.0);
        }
        let (m, s) = (self.mean[j], self.sd[j]);
        if s == 0.0 {
            f64::from(u8::from(a <= m && m <= b))
        } else {
            normal::interval((a - m) / s, (b - m) / s)
        }
    }

    /// The probabilities that `x_j` lies in `[a, b]` and below `lo`, between `lo` and `hi`,
    /// above `hi` (strictly below and above: the output's violation is strict).
    fn parts(&self, j: usize, a: f64, b: f64, lo: f64, hi: f64) -> [f64; 3] {
        if self.is_point(j) {
            let m = self.mean[j];
            let inside = a <= m && m <= b;
            let bit = |c: bool| f64::from(u8::from(inside && c));
            return [bit(m < lo), bit(lo <= m && m <= hi), bit(m > hi)];
        }
        [
            self.between(j, a, b.min(lo)),
            self.between(j, a.max(lo), b.min(hi)),
            self.between(j, a.max(hi), b),
        ]
    }

    /// The density of `x_j` at `u` (0 for a point mass: its atom is added apart).
    fn density(&self, j: usize, u: f64) -> f64 {
        if let Some((lo, hi)) = self.uniform_of(j) {
            return if hi > lo && lo <= u && u <= hi {
                1.0 / (hi - lo)
            } else {
                0.0
            };
        }
        let s = self.sd[j];
        if s == 0.0 {
            0.0
        } else {
            normal::pdf((u - self.mean[j]) / s) / s
        }
    }

    /// Where the density of a pivot candidate lives: `None` for a point mass.
    fn window(&self, j: usize) -> Option<(f64, f64)> {
        if let Some((lo, hi)) = self.uniform_of(j) {
            return (hi > lo).then_some((lo, hi));
        }
        let (m, s) = (self.mean[j], self.sd[j]);
        (s > 0.0).then_some((m - WINDOW_SIGMAS * s, m + WINDOW_SIGMAS * s))
    }
}

/// How many of the output's channels must lie strictly below `lo` for `y < lo` (`k`), and
/// strictly above `hi` for `y > hi` (`|O| - k + 1`).
fn output_needs(rank: &Rank) -> (usize, usize) {
    let n = rank.of.len();
    (rank.k, n + 1 - rank.k)
}

/// Adds one channel to a saturating count polynomial: `poly[c]` is the probability of `c`
/// counted so far (the last entry: `need` or more); `yes` counts, `no` does not.
fn add_channel(poly: &mut [f64], yes: f64, no: f64) {
    let need = poly.len() - 1;
    if need == 0 {
        poly[0] *= yes + no;
        return;
    }
    poly[need] = poly[need] * (yes + no) + poly[need - 1] * yes;
    for c in (1..need).rev() {
        poly[c] = poly[c] * no + poly[c - 1] * yes;
    }
    poly[0] *= no;
}

/// `from` shifted up by one count (saturating), added to `into` with weight `w`.
fn add_shifted(into: &mut [f64], from: &[f64], w: f64, shift: bool) {
    let need = into.len() - 1;
    if !shift || need == 0 {
        for (i, f) in into.iter_mut().zip(from) {
            *i += w * f;
        }
        return;
    }
    into[need] += w * (from[need] + from[need - 1]);
    for c in 1..need {
        into[c] += w * from[c - 1];
    }
}

/// `P(y < lo)` and `P(y > hi)` with every channel free: Poisson-binomial tails of the
/// counts below `lo` and above `hi`.
fn violation_tails(cond: &Conditional, q: &Question, rank: &Rank) -> (f64, f64) {
    let (need_lo, need_hi) = output_needs(rank);
    let mut below = vec![0.0; need_lo + 1];
    let mut above = vec![0.0; need_hi + 1];
    below[0] = 1.0;
    above[0] = 1.0;
    for &j in &rank.of {
        let [b, m, a] = cond.parts(
            j,
            f64::NEG_INFINITY,
            f64::INFINITY,
            q.safe_lower,
            q.safe_upper,
        );
        add_channel(&mut below, b, m + a);
        add_channel(&mut above, a, b + m);
    }
    (below[need_lo], above[need_hi])
}

/// Without an agreement but with own bands: `P(y < lo, every band passes)`,
/// `P(y > hi, every band passes)` and `P(every band passes)`, by the counts of
/// [`violation_tails`] with each channel confined to its band.
fn banded_tails(cond: &Conditional, rank: &Rank, q: &Question, in_output: &[bool]) -> [f64; 3] {
    let (need_lo, need_hi) = output_needs(rank);
    let mut below = vec![0.0; need_lo + 1];
    let mut above = vec![0.0; need_hi + 1];
    below[0] = 1.0;
    above[0] = 1.0;
    let mut pass = 1.0;
    for (j, &counted) in in_output.iter().enumerate() {
        let band = cond.confined(j, None, 0.0);
        if counted {
            let (a, b) = band.unwrap_or((f64::NEG_INFINITY, f64::INFINITY));
            let [pb, pm, pa] = cond.parts(j, a, b, q.safe_lower, q.safe_upper);
            add_channel(&mut below, pb, pm + pa);
            add_channel(&mut above, pa, pb + pm);
            pass *= pb + pm + pa;
        } else if let Some((a, b)) = band {
            let p = cond.between(j, a, b);
            for x in below.iter_mut().chain(above.iter_mut()) {
                *x *= p;
            }
            pass *= p;
        }
    }
    [below[need_lo], above[need_hi], pass]
}

/// Detection on `k = q.detection_needed >= 2` firing checks of single channels (one per
/// channel, no agreement check): `P(y < lo, fewer than k fire)`, `P(y > hi, fewer than k
/// fire)` and `P(fewer than k fire)`. Given the shared terms the channels are independent,
/// so each channel adds to two saturating counts at once: below (or above) the safety end,
/// and firing (outside its own band); the joint count is a two-dimensional Poisson-binomial
/// programme, `O(n need k)` per point (the count of firing checks is the usual k-out-of-n
/// reliability recursion; Barlow and Heidtmann 1984, IEEE Trans. Reliability R-33(4), from
/// memory).
fn counted_tails(cond: &Conditional, rank: &Rank, q: &Question, in_output: &[bool]) -> [f64; 3] {
    let k = q.detection_needed;
    let (need_lo, need_hi) = output_needs(rank);
    let (lo, hi) = (q.safe_lower, q.safe_upper);
    // poly[c * k + f]: c counted toward the output (saturating at need), f checks fired
    // (f < k; a state with k or more fired is detected and dropped).
    let mut below = vec![0.0; (need_lo + 1) * k];
    let mut above = vec![0.0; (need_hi + 1) * k];
    let mut quiet = vec![0.0; k];
    below[0] = 1.0;
    above[0] = 1.0;
    quiet[0] = 1.0;
    // One scratch buffer for every step (this runs at every point of the outer integral).
    let mut next: Vec<f64> = Vec::with_capacity(below.len().max(above.len()));
    // Adds one channel: `(yes, no)` for staying quiet and for firing.
    let mut step =
        |poly: &mut Vec<f64>, need: usize, quiet_parts: (f64, f64), fired_parts: (f64, f64)| {
            next.clear();
            next.resize(poly.len(), 0.0);
            for c in 0..=need {
                for f in 0..k {
                    let p = poly[c * k + f];
                    if p == 0.0 {
                        continue;
                    }
                    let up = (c + 1).min(need);
                    let (q_yes, q_no) = quiet_parts;
                    let (f_yes, f_no) = fired_parts;
                    next[up * k + f] += p * q_yes;
                    next[c * k + f] += p * q_no;
                    if f + 1 < k {
                        next[up * k + f + 1] += p * f_yes;
                        next[c * k + f + 1] += p * f_no;
                    }
                }
            }
            std::mem::swap(poly, &mut next);
        };
    for (j, &counted) in in_output.iter().enumerate().take(cond.mean.len()) {
        let band = cond.band.get(j).copied().flatten();
        let all = cond.parts(j, f64::NEG_INFINITY, f64::INFINITY, lo, hi);
        let (inside, outside) = match band {
            None => (all, [0.0; 3]),
            Some((a, b)) => {
                let inside = cond.parts(j, a, b, lo, hi);
                let outside = if cond.is_point(j) {
                    // Exact bits: a point is inside or not.
                    [all[0] - inside[0], all[1] - inside[1], all[2] - inside[2]]
                } else {
                    let left = cond.parts(j, f64::NEG_INFINITY, a, lo, hi);
                    let right = cond.parts(j, b, f64::INFINITY, lo, hi);
                    [left[0] + right[0], left[1] + right[1], left[2] + right[2]]
                };
                (inside, outside)
            }
        };
        let (in_all, out_all) = (
            inside[0] + inside[1] + inside[2],
            outside[0] + outside[1] + outside[2],
        );
        if counted {
            step(
                &mut below,
                need_lo,
                (inside[0], inside[1] + inside[2]),
                (outside[0], outside[1] + outside[2]),
            );
            step(
                &mut above,
                need_hi,
                (inside[2], inside[0] + inside[1]),
                (outside[2], outside[0] + outside[1]),
            );
        } else if band.is_some() {
            step(&mut below, need_lo, (0.0, in_all), (0.0, out_all));
            step(&mut above, need_hi, (0.0, in_all), (0.0, out_all));
        }
        if band.is_some() {
            // In place, from the top: f fired stays (inside) or came from f - 1 (outside).
            for f in (0..k).rev() {
                let from_below = if f > 0 { quiet[f - 1] * out_all } else { 0.0 };
                quiet[f] = from_below + quiet[f] * in_all;
            }
        }
    }
    let tail = |poly: &[f64], need: usize| poly[need * k..(need + 1) * k].iter().sum::<f64>();
    [
        tail(&below, need_lo),
        tail(&above, need_hi),
        quiet.iter().sum(),
    ]
}

/// The pivot structure of an agreement: the channels that can be the pivot, and for every
/// constrained channel the interval `[u + alpha, u + beta]` it must lie in.
struct Pivot {
    candidates: Vec<usize>,
    /// `(channel, alpha, beta)` for every constrained channel (candidates included).
    intervals: Vec<(usize, f64, f64)>,
    /// The same by channel: `(alpha, beta)` or `None` for an unconstrained channel.
    interval_of: Vec<Option<(f64, f64)>>,
    /// Whether each channel can be the pivot.
    is_candidate: Vec<bool>,
}

impl Pivot {
    fn new(n: usize, candidates: Vec<usize>, intervals: Vec<(usize, f64, f64)>) -> Pivot {
        let mut interval_of = vec![None; n];
        for &(j, alpha, beta) in &intervals {
            interval_of[j] = Some((alpha, beta));
        }
        let mut is_candidate = vec![false; n];
        for &j in &candidates {
            is_candidate[j] = true;
        }
        Pivot {
            candidates,
            intervals,
            interval_of,
            is_candidate,
        }
    }
}

impl Pivot {
    fn of(q: &Question, cond: &Conditional) -> Option<Pivot> {
        match &q.agreement {
            Agreement::Always => None,
            Agreement::Range { of, limit } => {
                let mut members = of.clone();
                members.sort_unstable();
                members.dedup();
                let intervals = members.iter().map(|&j| (j, 0.0, *limit)).collect();
                Some(Pivot::new(cond.mean.len(), members, intervals))
            }
            Agreement::Differences(list) => {
                let common = q.agreement.common_channels();
                let centre = common
                    .iter()
                    .copied()
                    .find(|&c| cond.is_point(c))
                    .or_else(|| common.first().copied())?;
                let mut intervals: Vec<(usize, f64, f64)> = Vec::new();
                for d in list {
                    // x_a - x_b in [lower, upper], with x_centre = u.
                    let (other, alpha, beta) = if d.a == centre {
                        (d.b, -d.upper, -d.lower)
                    } else {
                        (d.a, d.lower, d.upper)
                    };
                    match intervals.iter_mut().find(|(j, _, _)| *j == other) {
                        Some(entry) => {
                            entry.1 = entry.1.max(alpha);
                            entry.2 = entry.2.min(beta);
                        }
                        None => intervals.push((other, alpha, beta)),
                    }
                }
                intervals.push((centre, f64::NEG_INFINITY, f64::INFINITY));
                intervals.sort_by_key(|e| e.0);
                Some(Pivot::new(cond.mean.len(), vec![centre], intervals))
            }
        }
    }
}

/// The per-point programme: with the pivot at `u` (weights `weight(j)`: the density or atom
/// of each candidate), the densities of "every check passes and `y < lo`", "every check
/// passes and `y > hi`" and "every check passes", in one pass over the channels. Each is a
/// count polynomial in two states: pivot not yet placed (`free`) and placed (`placed`).
fn pivot_term(
    cond: &Conditional,
    q: &Question,
    rank: &Rank,
    pivot: &Pivot,
    u: f64,
    weight: &dyn Fn(usize) -> f64,
    in_output: &[bool],
) -> [f64; 3] {
    let (need_lo, need_hi) = output_needs(rank);
    let sizes = [need_lo + 1, need_hi + 1, 1];
    // One buffer for the six polynomials: free and placed of each programme.
    let total: usize = sizes.iter().sum();
    let mut buffer = vec![0.0; 2 * total];
    let (free_all, placed_all) = buffer.split_at_mut(total);
    let (free_lo, rest) = free_all.split_at_mut(sizes[0]);
    let (free_hi, free_pass) = rest.split_at_mut(sizes[1]);
    let (placed_lo, rest) = placed_all.split_at_mut(sizes[0]);
    let (placed_hi, placed_pass) = rest.split_at_mut(sizes[1]);
    let mut free = [free_lo, free_hi, free_pass];
    let placed = [placed_lo, placed_hi, placed_pass];
    for f in free.iter_mut() {
        f[0] = 1.0;
    }
    let (lo, hi) = (q.safe_lower, q.safe_upper);
    for (j, &counted) in in_output.iter().enumerate().take(cond.mean.len()) {
        let interval = cond.confined(j, pivot.interval_of[j], u);
        if interval.is_none() && !counted {
            continue;
        }
        let (a, b) = interval.unwrap_or((f64::NEG_INFINITY, f64::INFINITY));
        let [pb, pm, pa] = cond.parts(j, a, b, lo, hi);
        // (counted, not counted) for the three programmes.
        let split = if counted {
            [(pb, pm + pa), (pa, pb + pm), (0.0, pb + pm + pa)]
        } else {
            let all = pb + pm + pa;
            [(0.0, all), (0.0, all), (0.0, all)]
        };
        let w = if pivot.is_candidate[j] && cond.band_admits(j, u) {
            weight(j)
        } else {
            0.0
        };
        let pivot_counted = [counted && u < lo, counted && u > hi, false];
        for k in 0..3 {
            let (yes, no) = split[k];
            add_channel(placed[k], yes, no);
            if w != 0.0 {
                // The pivot placed here: from the programme before this channel (free is
                // updated only below).
                add_shifted(placed[k], free[k], w, pivot_counted[k]);
            }
            add_channel(free[k], yes, no);
        }
    }
    [placed[0][need_lo], placed[1][need_hi], placed[2][0]]
}

struct PointResult {
    point: VectorPoint<4>,
    evaluations: usize,
    converged: bool,
}

/// The four figures given the shared terms (independent channels).
fn conditional_figures(
    cond: &Conditional,
    q: &Question,
    rank: &Rank,
    accuracy: &Accuracy,
) -> Result<PointResult, ProbError> {
    let mut in_output = vec![false; cond.mean.len()];
    for &j in &rank.of {
        in_output[j] = true;
    }
    let mut evaluations = 1;
    let mut converged = true;
    // The violation with every channel free, and the bound of its integral (an even median).
    let (v_lo, v_hi, e_v) = if rank.paired {
        let free = Conditional { band: &[], ..*cond };
        let [lower, upper] = paired_tails(&free, q, rank, false, &in_output, accuracy)?;
        evaluations += lower.evaluations + upper.evaluations;
        converged &= lower.converged && upper.converged;
        (lower.value, upper.value, [lower.error, upper.error])
    } else {
        let (v_lo, v_hi) = violation_tails(cond, q, rank);
        (v_lo, v_hi, [0.0; 2])
    };
    // [A_lo, A_hi, Pass] with their errors.
    let banded = cond.band.iter().any(Option::is_some);
    let (agreed, agreed_error) = match Pivot::of(q, cond) {
        None if !banded => ([v_lo, v_hi, 1.0], [e_v[0], e_v[1], 0.0]),
        None if rank.paired => {
            // Own bands only: the pair's tails with every channel in its band.
            let [lower, upper] = paired_tails(cond, q, rank, false, &in_output, accuracy)?;
            evaluations += lower.evaluations + upper.evaluations;
            converged &= lower.converged && upper.converged;
            let [_, _, pass] = if q.detection_needed > 1 {
                counted_tails(cond, rank, q, &in_output)
            } else {
                banded_tails(cond, rank, q, &in_output)
            };
            (
                [lower.value, upper.value, pass],
                [lower.error, upper.error, pass * ROUNDING_REL],
            )
        }
        None if q.detection_needed > 1 => {
            let t = counted_tails(cond, rank, q, &in_output);
            (t, t.map(|x| x * ROUNDING_REL))
        }
        None => {
            let t = banded_tails(cond, rank, q, &in_output);
            (t, t.map(|x| x * ROUNDING_REL))
        }
        Some(pivot) => {
            let mut value = [0.0; 3];
            let mut error = [0.0; 3];
            // Atoms: a candidate without spread of its own is the pivot at its value.
            for &j in &pivot.candidates {
                if cond.is_point(j) {
                    let u = cond.mean[j];
                    let only = move |i: usize| f64::from(u8::from(i == j));
                    let t = pivot_term(cond, q, rank, &pivot, u, &only, &in_output);
                    for c in 0..3 {
                        value[c] += t[c];
                        error[c] += t[c] * ROUNDING_REL;
                    }
                }
            }
            // Densities: windows of the spread candidates, merged.
            let spread = pivot
                .candidates
                .iter()
                .filter(|&&j| cond.window(j).is_some())
                .count();
            let truncated = spread as f64 * WINDOW_TAIL;
            let merged = pivot_windows(cond, &pivot);
            let breaks = breakpoints(cond, q, &pivot);
            // The pass probability is near 1 and the small alarm figures are its complement:
            // it is integrated to the absolute tolerance alone.
            let tol = VectorTolerance {
                abs: accuracy.abs / merged.len().max(1) as f64,
                rel: [accuracy.rel, accuracy.rel, 0.0],
                max_intervals: accuracy.max_intervals,
            };
            for (lo, hi) in merged {
                let r = integrate(
                    |u| {
                        let w = |i: usize| cond.density(i, u);
                        let t = pivot_term(cond, q, rank, &pivot, u, &w, &in_output);
                        Ok((t, t.map(|x| x * ROUNDING_REL)))
                    },
                    lo,
                    hi,
                    &breaks,
                    &tol,
                )?;
                evaluations += r.evaluations;
                converged &= r.converged;
                for c in 0..3 {
                    value[c] += r.value[c];
                    error[c] += r.error[c];
                }
            }
            for e in error.iter_mut() {
                *e += truncated;
            }
            if rank.paired {
                // The pass figure stands; the two joint tails of the pair replace those of
                // one order statistic.
                let [lower, upper] = paired_tails(cond, q, rank, true, &in_output, accuracy)?;
                evaluations += lower.evaluations + upper.evaluations;
                converged &= lower.converged && upper.converged;
                value[0] = lower.value;
                value[1] = upper.value;
                error[0] = lower.error;
                error[1] = upper.error;
            }
            (value, error)
        }
    };
    let [a_lo, a_hi, pass] = agreed;
    let [e_lo, e_hi, e_pass] = agreed_error;
    let round = |x: f64| x.abs() * ROUNDING_REL + f64::EPSILON;
    let p_vu = a_lo + a_hi;
    let e_vu = e_lo + e_hi + round(p_vu);
    let p_vd = (v_lo - a_lo).max(0.0) + (v_hi - a_hi).max(0.0);
    let e_vd = e_lo + e_hi + e_v[0] + e_v[1] + round(v_lo + v_hi);
    let p_sq = (pass - p_vu).max(0.0);
    let e_sq = e_pass + e_vu + round(pass);
    let p_sd = ((1.0 - pass) - p_vd).max(0.0);
    let e_sd = e_pass + e_vd + round(1.0);
    Ok(PointResult {
        point: ([p_vd, p_vu, p_sd, p_sq], [e_vd, e_vu, e_sd, e_sq]),
        evaluations,
        converged,
    })
}

/// The channels and question mirrored (`x -> -x`): the upper tail of the output becomes
/// the lower one, and the middle pair of an even count stays the same pair.
struct Mirrored {
    mean: Vec<f64>,
    sd: Vec<f64>,
    uniform: Option<(usize, f64, f64)>,
    band: Vec<Option<(f64, f64)>>,
    question: Question,
}

impl Mirrored {
    fn of(cond: &Conditional, q: &Question) -> Mirrored {
        let agreement = match &q.agreement {
            Agreement::Differences(list) => Agreement::Differences(
                list.iter()
                    .map(|d| Difference {
                        lower: -d.upper,
                        upper: -d.lower,
                        ..*d
                    })
                    .collect(),
            ),
            other => other.clone(),
        };
        Mirrored {
            mean: cond.mean.iter().map(|m| -m).collect(),
            sd: cond.sd.to_vec(),
            uniform: cond.uniform.map(|(i, a, b)| (i, -b, -a)),
            band: cond.band.iter().map(|b| b.map(|(l, h)| (-h, -l))).collect(),
            question: Question {
                output: q.output.clone(),
                safe_lower: -q.safe_upper,
                safe_upper: -q.safe_lower,
                detection_needed: q.detection_needed,
                agreement,
                bands: q
                    .bands
                    .iter()
                    .map(|b| ChannelBand {
                        lower: -b.upper,
                        upper: -b.lower,
                        ..*b
                    })
                    .collect(),
            },
        }
    }

    fn conditional(&self) -> Conditional<'_> {
        Conditional {
            mean: &self.mean,
            sd: &self.sd,
            uniform: self.uniform,
            band: &self.band,
        }
    }
}

/// Both tails of an even median, `P(y < lo)` and `P(y > hi)` (the second as the lower tail
/// of the mirrored channels), jointly with the agreement when `with_agreement` (its pivot
/// found anew for each side) and with the channels' own bands as `cond` carries them.
fn paired_tails(
    cond: &Conditional,
    q: &Question,
    rank: &Rank,
    with_agreement: bool,
    in_output: &[bool],
    accuracy: &Accuracy,
) -> Result<[Integrated; 2], ProbError> {
    let pivot = with_agreement.then(|| Pivot::of(q, cond)).flatten();
    let lower = paired_lower(cond, q, rank, pivot.as_ref(), in_output, accuracy)?;
    let mirror = Mirrored::of(cond, q);
    let mirror_cond = mirror.conditional();
    let mirror_pivot = with_agreement
        .then(|| Pivot::of(&mirror.question, &mirror_cond))
        .flatten();
    let upper = paired_lower(
        &mirror_cond,
        &mirror.question,
        rank,
        mirror_pivot.as_ref(),
        in_output,
        accuracy,
    )?;
    Ok([lower, upper])
}

/// One integrated figure with its bound and cost.
struct Integrated {
    value: f64,
    error: f64,
    evaluations: usize,
    converged: bool,
}

/// `P(y < lo)` of an even median (jointly with the checks passing when `pivot` is given):
/// see [`paired`]. With checks, the agreement's pivot `u` is integrated outside (atoms of
/// candidates without spread, then the merged windows of the others) and `t` inside, each
/// inner integral held to a quarter of the outer targets per unit length.
fn paired_lower(
    cond: &Conditional,
    q: &Question,
    rank: &Rank,
    pivot: Option<&Pivot>,
    in_output: &[bool],
    accuracy: &Accuracy,
) -> Result<Integrated, ProbError> {
    let side = paired::LowerSide {
        cond,
        in_output,
        k: rank.k,
        lo: q.safe_lower,
        detection_needed: if pivot.is_some() {
            1
        } else {
            q.detection_needed
        },
    };
    let Some(pivot) = pivot else {
        // One dimension: cheap to hold to a thousandth of the relative target, which keeps
        // the detected figure (this minus the joint tail) meaningful when it is much smaller.
        let (value, error, evaluations, converged) = side.given_agreement(
            None,
            accuracy.abs,
            accuracy.rel / 1000.0,
            accuracy.max_intervals,
        )?;
        return Ok(Integrated {
            value,
            error,
            evaluations,
            converged,
        });
    };
    let mut out = Integrated {
        value: 0.0,
        error: 0.0,
        evaluations: 0,
        converged: true,
    };
    let windows = pivot_windows(cond, pivot);
    let width: f64 = windows.iter().map(|(a, b)| b - a).sum::<f64>().max(1.0);
    let inner_abs = accuracy.abs / (4.0 * width);
    let inner_rel = accuracy.rel / 16.0;
    for &j in &pivot.candidates {
        if cond.is_point(j) {
            let only = move |i: usize| f64::from(u8::from(i == j));
            let at = paired::AgreementAt {
                pivot,
                u: cond.mean[j],
                weight: &only,
            };
            let (v, e, n, c) =
                side.given_agreement(Some(at), inner_abs, inner_rel, accuracy.max_intervals)?;
            out.value += v;
            out.error += e;
            out.evaluations += n;
            out.converged &= c;
        }
    }
    let breaks = breakpoints(cond, q, pivot);
    let tol = VectorTolerance {
        abs: accuracy.abs / windows.len().max(1) as f64,
        rel: [accuracy.rel],
        max_intervals: accuracy.max_intervals,
    };
    for &(lo, hi) in &windows {
        let mut inner_evaluations = 0;
        let mut inner_converged = true;
        let r = integrate(
            |u| {
                let w = |i: usize| cond.density(i, u);
                let at = paired::AgreementAt {
                    pivot,
                    u,
                    weight: &w,
                };
                let (v, e, n, c) =
                    side.given_agreement(Some(at), inner_abs, inner_rel, accuracy.max_intervals)?;
                inner_evaluations += n;
                inner_converged &= c;
                Ok(([v], [e]))
            },
            lo,
            hi,
            &breaks,
            &tol,
        )?;
        out.value += r.value[0];
        out.error += r.error[0] + WINDOW_TAIL;
        out.evaluations += inner_evaluations;
        out.converged &= r.converged && inner_converged;
    }
    Ok(out)
}

/// The merged density windows of the pivot's candidates with spread.
fn pivot_windows(cond: &Conditional, pivot: &Pivot) -> Vec<(f64, f64)> {
    let mut windows: Vec<(f64, f64)> = pivot
        .candidates
        .iter()
        .filter_map(|&j| cond.window(j))
        .collect();
    windows.sort_by(|x, y| x.0.total_cmp(&y.0));
    let mut merged: Vec<(f64, f64)> = Vec::new();
    for w in windows {
        match merged.last_mut() {
            Some(last) if w.0 <= last.1 => last.1 = last.1.max(w.1),
            _ => merged.push(w),
        }
    }
    merged
}

/// Pivot values where a term steps or kinks: where an interval end or the pivot itself
/// meets a safety end, a point mass or an end of the uniform channel.
fn breakpoints(cond: &Conditional, q: &Question, pivot: &Pivot) -> Vec<f64> {
    let mut levels: Vec<f64> = vec![q.safe_lower, q.safe_upper];
    for (l, h) in cond.band.iter().flatten() {
        levels.push(*l);
        levels.push(*h);
    }
    for &(j, _, _) in &pivot.intervals {
        if cond.is_point(j) {
            levels.push(cond.mean[j]);
        }
    }
    if let Some((_, a, b)) = cond.uniform {
        levels.push(a);
        levels.push(b);
    }
    levels.retain(|t| t.is_finite());
    let mut points = levels.clone();
    for &(_, alpha, beta) in &pivot.intervals {
        for end in [alpha, beta] {
            if end.is_finite() {
                points.extend(levels.iter().map(|t| t - end));
            }
        }
    }
    points.sort_by(f64::total_cmp);
    points.dedup();
    points
}

#[cfg(test)]
mod tests {
    use super::*;

    fn accuracy() -> Accuracy {
        Accuracy {
            abs: 1e-13,
            rel: 1e-9,
            max_intervals: 400,
        }
    }

    #[test]
    fn min_of_two_without_checks_is_a_product_of_tails() {
        // y = min(x0, x1), independent N(0,1) and N(1, 2^2): P(y > 0.5) = Q(0.5) Q(-0.25)
        // (independence, by hand).
        let g = SharedGaussian {
            mean: vec![0.0, 1.0],
            own_sd: vec![1.0, 2.0],
            shared: vec![],
            uniform: None,
        };
        let q = Question {
            output: Rank::single(vec![0, 1], 1).into(),
            safe_lower: f64::NEG_INFINITY,
            safe_upper: 0.5,
            agreement: Agreement::Always,
            bands: Vec::new(),
            detection_needed: 1,
        };
        let f = figures(&g, &q, &accuracy()).unwrap();
        let want = normal::sf(0.5) * normal::sf(-0.25);
        assert!((f.violated_undetected.value - want).abs() < 1e-15);
        assert_eq!(f.violated_detected.value, 0.0);
    }

    #[test]
    fn range_of_two_equals_a_difference_band() {
        // max - min <= T for two independent N(0,1): |x0 - x1| <= T, and x0 - x1 ~ N(0, 2):
        // P = 2 Phi(T / sqrt 2) - 1 (by hand).
        let g = SharedGaussian {
            mean: vec![0.0, 0.0],
            own_sd: vec![1.0, 1.0],
            shared: vec![],
            uniform: None,
        };
        for agreement in [
            Agreement::Range {
                of: vec![0, 1],
                limit: 1.3,
            },
            Agreement::Differences(vec![Difference {
                a: 0,
                b: 1,
                lower: -1.3,
                upper: 1.3,
            }]),
        ] {
            let q = Question {
                output: Rank::single(vec![0], 1).into(),
                safe_lower: f64::NEG_INFINITY,
                safe_upper: f64::INFINITY,
                agreement,
                bands: Vec::new(),
                detection_needed: 1,
            };
            let f = figures(&g, &q, &accuracy()).unwrap();
            let want = normal::interval(-1.3 / 2f64.sqrt(), 1.3 / 2f64.sqrt());
            assert!(
                (f.safe_quiet.value - want).abs() <= f.safe_quiet.error.max(1e-14),
                "{} vs {want}",
                f.safe_quiet.value
            );
        }
    }
}
