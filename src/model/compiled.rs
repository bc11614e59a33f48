//! The compiled model: what the analysis layer integrates. Channel deviations `x` (one
//! coordinate per channel, in file order) are gaussian with `mean` and `covariance`; the
//! output, the checks and the derived signals are piecewise-linear functions of `x`.

use nalgebra::DMatrix;

use crate::prob::debounce::Debounce;

use super::bands::CheckBand;
use super::error::Diagnostic;
use super::graph::ModelGraph;

/// An affine function of the channel deviations x (length = number of channels).
#[derive(Debug, Clone, PartialEq)]
pub struct LinearForm {
    pub coeffs: Vec<f64>,
    pub constant: f64,
}

impl LinearForm {
    /// `sum_i coeffs[i] * x[i] + constant`, summed in index order (so that a form and its
    /// exact negation evaluate to exact negatives). Missing coordinates count as 0.
    pub fn eval(&self, x: &[f64]) -> f64 {
        let mut s = 0.0;
        for (c, xi) in self.coeffs.iter().zip(x) {
            s += c * xi;
        }
        s + self.constant
    }

    /// The form `0`.
    pub fn zero(n: usize) -> LinearForm {
        LinearForm {
            coeffs: vec![0.0; n],
            constant: 0.0,
        }
    }

    /// The coordinate `x[i]`.
    pub fn coordinate(n: usize, i: usize) -> LinearForm {
        let mut f = LinearForm::zero(n);
        if let Some(c) = f.coeffs.get_mut(i) {
            *c = 1.0;
        }
        f
    }

    /// True when every coefficient is zero (the form is a constant).
    pub fn is_constant(&self) -> bool {
        self.coeffs.iter().all(|c| *c == 0.0)
    }
}

/// A half-space condition under which a piece holds: form(x) > 0 when strict, >= 0 otherwise.
#[derive(Debug, Clone, PartialEq)]
pub struct Guard {
    pub form: LinearForm,
    pub strict: bool,
}

impl Guard {
    /// Whether `x` satisfies the guard.
    pub fn holds(&self, x: &[f64]) -> bool {
        let v = self.form.eval(x);
        if self.strict { v > 0.0 } else { v >= 0.0 }
    }

    /// True when `other` is the exact negation of `self`: coefficients and constant negated
    /// (compared with `==`, so `0.0 == -0.0`) and exactly one of the two strict. A piece
    /// holding both guards is empty; two pieces holding one each are disjoint.
    pub fn is_negation_of(&self, other: &Guard) -> bool {
        self.strict != other.strict
            && self.form.constant == -other.form.constant
            && self.form.coeffs.len() == other.form.coeffs.len()
            && self
                .form
                .coeffs
                .iter()
                .zip(&other.form.coeffs)
                .all(|(a, b)| *a == -*b)
    }
}

/// True when two or three of `guards` cannot hold together: their forms add up, exactly
/// (the sums checked to be free of rounding), to a constant that is negative, or zero while
/// one of them is strict. `f + g + h = c` with `f, g, h >= 0` and `c < 0` is impossible, and
/// so is `c = 0` with `h > 0`; for two guards this includes a guard and its exact negation.
/// Order statistics over the same readings say "a before b", "b before c" and "c before a"
/// this way (a reading that is another plus a constant gives `c < 0`), a cycle that no pair
/// of guards shows. Used to drop empty products of pieces; a missed case only costs an
/// empty piece, which the engine proves empty later.
pub fn guards_contradict(guards: &[&Guard]) -> bool {
    let n = guards.len();
    let zero = Guard {
        form: LinearForm::zero(guards.first().map_or(0, |g| g.form.coeffs.len())),
        strict: false,
    };
    for i in 0..n {
        for j in i + 1..n {
            let (a, b) = (guards[i], guards[j]);
            if cannot_hold_together(a, b, &zero) {
                return true;
            }
            for c in &guards[j + 1..] {
                if cannot_hold_together(a, b, c) {
                    return true;
                }
            }
        }
    }
    false
}

/// Whether `a`, `b` and `c` sum to a constant form whose value rules them out together
/// (see [`guards_contradict`]); `false` whenever a sum is not exact.
fn cannot_hold_together(a: &Guard, b: &Guard, c: &Guard) -> bool {
    /// `x + y + z` when `x + y` is exact (its rounding error, by Knuth's two-sum, zero):
    /// then the last addition is correctly rounded and has the exact sum's sign.
    fn exact_sum(x: f64, y: f64, z: f64) -> Option<f64> {
        let s = x + y;
        let y_part = s - x;
        let error = (x - (s - y_part)) + (y - y_part);
        (error == 0.0).then_some(s + z)
    }
    let (fa, fb, fc) = (&a.form, &b.form, &c.form);
    if fa.coeffs.len() != fb.coeffs.len() || fb.coeffs.len() != fc.coeffs.len() {
        return false;
    }
    let cancel = fa
        .coeffs
        .iter()
        .zip(&fb.coeffs)
        .zip(&fc.coeffs)
        .all(|((x, y), z)| exact_sum(*x, *y, *z) == Some(0.0));
    if !cancel {
        return false;
    }
    match exact_sum(fa.constant, fb.constant, fc.constant) {
        Some(total) => total < 0.0 || (total == 0.0 && (a.strict || b.strict || c.strict)),
        None => false,
    }
}

/// One linear piece: `value(x)` wherever all guards hold.
#[derive(Debug, Clone, PartialEq)]
pub struct Piece {
    pub guards: Vec<Guard>,
    pub value: LinearForm,
}

impl Piece {
    /// Whether every guard holds at `x`.
    pub fn contains(&self, x: &[f64]) -> bool {
        self.guards.iter().all(|g| g.holds(x))
    }
}

/// A piecewise-linear function whose pieces partition R^n EXACTLY (no overlap even on ties:
/// ties between equal arguments are broken by argument index through strict/non-strict guards,
/// so every x lies in exactly one piece).
#[derive(Debug, Clone, PartialEq)]
pub struct PiecewiseLinear {
    pub pieces: Vec<Piece>,
}

impl PiecewiseLinear {
    /// The value at `x`, from the piece that contains it (NaN if none does, which the
    /// construction rules out).
    pub fn eval(&self, x: &[f64]) -> f64 {
        match self.piece_at(x).and_then(|i| self.pieces.get(i)) {
            Some(p) => p.value.eval(x),
            None => f64::NAN,
        }
    }

    /// Index of the first piece that contains `x`.
    pub fn piece_at(&self, x: &[f64]) -> Option<usize> {
        self.pieces.iter().position(|p| p.contains(x))
    }

    /// How many pieces contain `x` (exactly 1 by construction).
    pub fn count_containing(&self, x: &[f64]) -> usize {
        self.pieces.iter().filter(|p| p.contains(x)).count()
    }

    /// True when the function is one linear form everywhere.
    pub fn is_linear(&self) -> bool {
        self.pieces.len() == 1 && self.pieces[0].guards.is_empty()
    }
}

/// Which order statistic a [`Formula::Order`] takes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OrderStat {
    /// The middle value; of an even count, the mean of the two middle values.
    Median,
    Min,
    Max,
}

/// A function of the channel deviations as the file defines it, before it is split into
/// linear pieces: derived signals and the output are written out in place. The
/// order-statistic engine reads its structure, and the Monte Carlo engine evaluates it
/// directly when the pieces are too many to build.
#[derive(Debug, Clone, PartialEq)]
pub enum Formula {
    /// One channel, `x[i]`.
    Channel(usize),
    /// `sum(weight * term) + constant`.
    Sum {
        terms: Vec<(f64, Formula)>,
        constant: f64,
    },
    /// An order statistic of the arguments.
    Order { stat: OrderStat, args: Vec<Formula> },
    /// `max - min` of the arguments.
    Range(Vec<Formula>),
}

impl Formula {
    /// The value at `x` (NaN for a channel index outside `x`).
    pub fn eval(&self, x: &[f64]) -> f64 {
        match self {
            Formula::Channel(i) => x.get(*i).copied().unwrap_or(f64::NAN),
            Formula::Sum { terms, constant } => {
                let mut s = 0.0;
                for (w, t) in terms {
                    s += w * t.eval(x);
                }
                s + constant
            }
            Formula::Order { stat, args } => {
                let mut v: Vec<f64> = args.iter().map(|a| a.eval(x)).collect();
                v.sort_by(f64::total_cmp);
                match (stat, v.len()) {
                    (_, 0) => f64::NAN,
                    (OrderStat::Min, _) => v[0],
                    (OrderStat::Max, n) => v[n - 1],
                    (OrderStat::Median, n) if n % 2 == 1 => v[n / 2],
                    (OrderStat::Median, n) => 0.5 * (v[n / 2 - 1] + v[n / 2]),
                }
            }
            Formula::Range(args) => {
                let v: Vec<f64> = args.iter().map(|a| a.eval(x)).collect();
                let max = v.iter().copied().fold(f64::NEG_INFINITY, f64::max);
                let min = v.iter().copied().fold(f64::INFINITY, f64::min);
                max - min
            }
        }
    }

    /// Every channel the formula reads with a gain other than zero, sorted.
    pub fn channels(&self) -> Vec<usize> {
        fn walk(f: &Formula, out: &mut Vec<usize>) {
            match f {
                Formula::Channel(i) => out.push(*i),
                Formula::Sum { terms, .. } => {
                    for (w, t) in terms {
                        if *w != 0.0 {
                            walk(t, out);
                        }
                    }
                }
                Formula::Order { args, .. } | Formula::Range(args) => {
                    for a in args {
                        walk(a, out);
                    }
                }
            }
        }
        let mut out = Vec::new();
        walk(self, &mut out);
        out.sort_unstable();
        out.dedup();
        out
    }

    /// The channel indices of the arguments when every argument is a bare channel (or a
    /// sum that is exactly one channel).
    pub fn bare_channels(args: &[Formula]) -> Option<Vec<usize>> {
        args.iter().map(Formula::as_channel).collect()
    }

    /// The channel this formula is, when it is one channel with gain 1 and no constant.
    pub fn as_channel(&self) -> Option<usize> {
        match self {
            Formula::Channel(i) => Some(*i),
            Formula::Sum { terms, constant } if *constant == 0.0 && terms.len() == 1 => {
                let (w, t) = &terms[0];
                if *w == 1.0 { t.as_channel() } else { None }
            }
            Formula::Order { args, .. } if args.len() == 1 => args[0].as_channel(),
            _ => None,
        }
    }

    /// The formula as one linear form over `n` channels, when it is linear.
    pub fn linear(&self, n: usize) -> Option<LinearForm> {
        match self {
            Formula::Channel(i) => (*i < n).then(|| LinearForm::coordinate(n, *i)),
            Formula::Sum { terms, constant } => {
                let mut f = LinearForm::zero(n);
                f.constant = *constant;
                for (w, t) in terms {
                    let inner = t.linear(n)?;
                    for (c, ic) in f.coeffs.iter_mut().zip(&inner.coeffs) {
                        *c += w * ic;
                    }
                    f.constant += w * inner.constant;
                }
                Some(f)
            }
            Formula::Order { args, .. } if args.len() == 1 => args[0].linear(n),
            _ => None,
        }
    }
}

/// A check: fires when `function(x) < lower` or `> upper`.
#[derive(Debug, Clone, PartialEq)]
pub struct CompiledCheck {
    pub name: String,
    pub function: PiecewiseLinear,
    pub lower: f64,
    pub upper: f64,
    /// The check value as a formula, e.g. `a - b` or `max(a, b, c) - min(a, b, c)`.
    pub description: String,
    /// The check value as the file defines it.
    pub formula: Formula,
}

/// When the diagnostics count as detecting.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Detection {
    /// Any check fires.
    Any,
    /// At least k checks fire (1 <= k <= number of checks).
    AtLeast(usize),
}

/// How a fault acts on the channels.
#[derive(Debug, Clone, PartialEq)]
pub enum FaultMode {
    /// `x -> x + direction * F`; `direction` already includes source gains (a source hit with
    /// gain g adds `g * source_gain_i` to channel i).
    Add { direction: Vec<f64> },
    /// Channel `channel` reads exactly `gain * F` (its mean, own noise and source terms gone).
    Replace { channel: usize, gain: f64 },
}

/// The distribution of a fault's amplitude F.
#[derive(Debug, Clone, PartialEq)]
pub enum Amplitude {
    /// `F ~ N(mean, sigma^2)`, independent of all noise.
    Gaussian { mean: f64, sigma: f64 },
    /// `F ~ N(mean, sigma^2)` with sigma unknown in `[sigma_lo, sigma_hi]` (worst case);
    /// `defaulted` when the file wrote `sigma = "unknown"` and the range is the default one
    /// (see [`crate::model::default_sigma_range`]).
    GaussianUnknownSigma {
        mean: f64,
        sigma_lo: f64,
        sigma_hi: f64,
        defaulted: bool,
    },
    /// `F` uniform on `[lower, upper]`.
    Uniform { lower: f64, upper: f64 },
    /// `F` takes each value with its weight: `(value, weight)`, weights positive, summing to 1.
    Points(Vec<(f64, f64)>),
}

/// A compiled fault site.
#[derive(Debug, Clone, PartialEq)]
pub struct CompiledFault {
    pub name: String,
    /// Failure rate in FIT (failures per 1e9 hours).
    pub fit: f64,
    pub mode: FaultMode,
    pub amplitude: Amplitude,
    /// Share of latent faults found by other means (0 when absent).
    pub latent_coverage: f64,
    /// The hit channels and sources with their gains, as written (for reports).
    pub hits: Vec<(String, f64)>,
    /// True when `amplitude` is `uniform = "full_scale"` in the file (for reports).
    pub uniform_is_full_scale: bool,
}

/// The timing section: the samples within the detection deadline and how the diagnostic
/// confirms a fault over them (docs/architecture-format.md, "Timing").
#[derive(Debug, Clone, PartialEq)]
pub struct Timing {
    /// Seconds between two samples.
    pub sample_period: f64,
    /// Seconds from the fault to the end of the detection deadline (the fault detection time
    /// interval of ISO 26262-1:2018, at most the FTTI minus the fault reaction time).
    pub deadline: f64,
    /// Samples that fall within the deadline: `floor(deadline / sample_period)` (the fault
    /// is taken to strike just after a sample, the least favourable alignment).
    pub samples: usize,
    /// How the diagnostic confirms a fault.
    pub confirm: Debounce,
    /// The output counts as dangerous when it leaves the safety band in at least this many
    /// samples of the interval.
    pub danger_samples: usize,
    /// Per source (file order): true when its term is drawn anew every sample (default:
    /// constant over the interval).
    pub fresh_sources: Vec<bool>,
    /// Per channel (file order): true when its own noise stays constant over the interval
    /// (default: drawn anew every sample).
    pub constant_channels: Vec<bool>,
}

/// How a detection names the channel to drop (docs/architecture-format.md, "Isolation").
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum IsolationRule {
    /// The one candidate that takes part in every check that fired; none is blamed when no
    /// candidate, or more than one, does (one comparison of two channels cannot tell which).
    InEveryFiredCheck,
    /// The candidate reading farthest from the median of the candidates, when its distance
    /// leads that of every other candidate by more than `margin`; otherwise none.
    FarthestFromMedian { margin: f64 },
}

/// The architecture that runs on once a channel is dropped.
#[derive(Debug, Clone, PartialEq)]
pub struct DegradedModel {
    /// The dropped channel (index into the full model's channels).
    pub dropped: usize,
    /// The compiled degraded model, or why there is none (the output needs the channel).
    pub model: Result<Box<CompiledModel>, String>,
}

/// The isolation section, compiled.
#[derive(Debug, Clone, PartialEq)]
pub struct Isolation {
    pub rule: IsolationRule,
    /// The channels that may be blamed, sorted.
    pub candidates: Vec<usize>,
    /// The channels each check reads (in check order, sorted).
    pub check_channels: Vec<Vec<usize>>,
    /// One degraded architecture per candidate, in the order of `candidates`.
    pub degraded: Vec<DegradedModel>,
    /// What the file states of the degraded architectures on top of the derivation
    /// (`[isolation.degraded]`), when it states anything.
    pub stated: Option<StatedDegraded>,
}

/// `[isolation.degraded]` as compiled: how the output combines the channels it keeps after
/// a drop (`None`: as derived) and the values in force after the drop, by dotted key.
#[derive(Debug, Clone, PartialEq)]
pub struct StatedDegraded {
    pub output: Option<String>,
    pub set: Vec<(String, f64)>,
}

/// The model the analysis integrates.
#[derive(Debug, Clone, PartialEq)]
pub struct CompiledModel {
    pub name: String,
    pub unit: String,
    pub full_scale: Option<(f64, f64)>,
    /// Coordinate order of x (file order).
    pub channels: Vec<String>,
    /// Channel systematic means plus source means times gains.
    pub mean: Vec<f64>,
    /// Own sigmas with correlations plus `G diag(source sigma^2) G^T`.
    pub covariance: DMatrix<f64>,
    pub sources: Vec<String>,
    /// n x s: gain of source j on channel i.
    pub source_gains: DMatrix<f64>,
    pub source_means: Vec<f64>,
    pub source_sigmas: Vec<f64>,
    pub own_sigmas: Vec<f64>,
    /// Channel systematic means as written (without source means).
    pub own_means: Vec<f64>,
    /// n x n correlation of the own random parts (unit diagonal).
    pub own_correlation: DMatrix<f64>,
    /// Derived signals, compiled, in file order.
    pub signals: Vec<(String, PiecewiseLinear)>,
    /// Formula of each derived signal, in the order of `signals`.
    pub signal_descriptions: Vec<String>,
    pub output: PiecewiseLinear,
    /// The output as the file defines it.
    pub output_formula: Formula,
    /// False when the output, a check or a signal has more linear pieces than
    /// `limits::MAX_PIECES` (or pairs than `limits::MAX_PRODUCT_PAIRS`): the piecewise
    /// functions are then left empty and only the order-statistic engine and the Monte
    /// Carlo engine (through the formulas) can analyse the model.
    pub pieces_complete: bool,
    /// The output as a formula, e.g. `median(a, b, c)`.
    pub output_description: String,
    pub checks: Vec<CompiledCheck>,
    pub detection: Detection,
    pub safety_lower: f64,
    pub safety_upper: f64,
    pub faults: Vec<CompiledFault>,
    /// The timing section, when the file has one.
    pub timing: Option<Timing>,
    /// The isolation section, when the file has one.
    pub isolation: Option<Isolation>,
}

impl CompiledModel {
    /// Total standard deviation of each channel (square root of the covariance diagonal).
    pub fn total_sigmas(&self) -> Vec<f64> {
        (0..self.covariance.nrows().min(self.covariance.ncols()))
            .map(|i| self.covariance[(i, i)].max(0.0).sqrt())
            .collect()
    }

    /// Total correlation matrix (own correlations plus what shared sources induce); entries
    /// of a channel with zero total sigma are 0 off the diagonal and 1 on it.
    pub fn total_correlation(&self) -> DMatrix<f64> {
        let s = self.total_sigmas();
        let n = s.len();
        DMatrix::from_fn(n, n, |i, j| {
            if i == j {
                1.0
            } else if s[i] > 0.0 && s[j] > 0.0 {
                self.covariance[(i, j)] / (s[i] * s[j])
            } else {
                0.0
            }
        })
    }
}

/// What a loaded file gives: the compiled model, the graph, warnings, and the source text
/// (for its SHA-256).
#[derive(Debug, Clone)]
pub struct Architecture {
    /// The file name as given for messages.
    pub path: String,
    /// The text as read (before overrides).
    pub source: String,
    /// The values set by dotted key path on top of `source`, in the order applied (empty
    /// for a file loaded as it is).
    pub overrides: Vec<(String, f64)>,
    /// The band of every check as the file writes it (with the overrides), in file order.
    pub check_bands: Vec<CheckBand>,
    pub model: CompiledModel,
    pub graph: ModelGraph,
    pub warnings: Vec<Diagnostic>,
    /// The tolerances of the `[tolerances]` section: (key, lower, upper), in file order.
    pub tolerances: Vec<(String, f64, f64)>,
}
