//! From the resolved model to the compiled one: mean vector and covariance of the channel
//! deviations, the piecewise-linear output, checks and signals, and the fault maps.
//!
//! With channel systematic means `m`, own sigmas `D = diag(s)`, own correlation `R`, source
//! gains `G` (n x s), source means `mu_s` and sigmas `S = diag(sigma_s)`:
//! `x = m + G mu_s + D u + G S v` with `u ~ N(0, R)`, `v ~ N(0, I)` independent, so
//! `mean = m + G mu_s` and `covariance = D R D + G S^2 G^T`.

use nalgebra::DMatrix;

use super::compiled::*;
use super::error::Sink;
use super::limits;
use super::pieces::{Builder, OrderKind, PieceError, Pw, rank_pattern_count};
use super::resolved::*;
use super::text::linear_formula;

/// Coefficient sums of the pieces of the output must be 1 and of a check 0 within this
/// (only a warning is given otherwise).
const TRUTH_GAIN_ABS: f64 = 1e-9;

/// Compiles a resolved model; signals are built in `order` (inputs first).
pub(crate) fn compile(v: &Resolved, order: &[usize], sink: &mut Sink<'_>) -> Option<CompiledModel> {
    let n = v.channels.len();
    let s = v.sources.len();
    let mut gains = DMatrix::<f64>::zeros(n, s);
    for (i, c) in v.channels.iter().enumerate() {
        for (j, g) in &c.from {
            gains[(i, *j)] += *g;
        }
    }
    let source_means: Vec<f64> = v.sources.iter().map(|x| x.mean).collect();
    let source_sigmas: Vec<f64> = v.sources.iter().map(|x| x.sigma).collect();
    let own_sigmas: Vec<f64> = v.channels.iter().map(|c| c.sigma).collect();
    let mean: Vec<f64> = (0..n)
        .map(|i| v.channels[i].mean + (0..s).map(|j| gains[(i, j)] * source_means[j]).sum::<f64>())
        .collect();
    let mut own_correlation = DMatrix::<f64>::identity(n, n);
    for (i, j, rho) in &v.correlations {
        own_correlation[(*i, *j)] = *rho;
        own_correlation[(*j, *i)] = *rho;
    }
    let mut covariance = DMatrix::<f64>::zeros(n, n);
    for i in 0..n {
        for j in i..n {
            let own = own_sigmas[i] * own_correlation[(i, j)] * own_sigmas[j];
            let shared: f64 = (0..s)
                .map(|k| gains[(i, k)] * source_sigmas[k] * source_sigmas[k] * gains[(j, k)])
                .sum();
            covariance[(i, j)] = own + shared;
            covariance[(j, i)] = own + shared;
        }
    }

    // The formulas as written (always), then the linear pieces when they stay within the
    // limits; beyond them only the order-statistic and Monte Carlo engines can run.
    let mut signal_formula: Vec<Option<Formula>> = vec![None; v.signals.len()];
    for &i in order {
        let f = formula(&v.signals[i].def, &signal_formula, None);
        signal_formula[i] = Some(f);
    }
    let output_formula = formula(&v.output.def, &signal_formula, None);
    let check_formulas: Vec<Formula> = v
        .checks
        .iter()
        .map(|c| formula(&c.def, &signal_formula, Some(&output_formula)))
        .collect();

    let mut b = Builder::new(n);
    let built = all_pieces(&mut b, v, order, n);
    let pieces_complete = built.is_ok();
    let empty = || PiecewiseLinear { pieces: Vec::new() };
    let (signal_pieces, output, check_pieces) = match built {
        Ok(p) => p,
        Err(_) => (
            vec![empty(); v.signals.len()],
            empty(),
            vec![empty(); v.checks.len()],
        ),
    };
    let names = Names { v };
    let mut checks = Vec::new();
    for ((c, function), formula) in v.checks.iter().zip(check_pieces).zip(check_formulas) {
        checks.push(CompiledCheck {
            name: c.name.clone(),
            function,
            lower: c.lower,
            upper: c.upper,
            description: names.describe(&c.def),
            formula,
        });
    }
    if pieces_complete {
        warn_truth_gain(&output, 1.0, sink, &v.output.loc, "the output", "1");
        for (c, vc) in checks.iter().zip(&v.checks) {
            warn_truth_gain(&c.function, 0.0, sink, &vc.loc, "the check", "0");
        }
    }
    let signals: Vec<(String, PiecewiseLinear)> = v
        .signals
        .iter()
        .zip(signal_pieces)
        .map(|(sig, pw)| (sig.name.clone(), pw))
        .collect();
    let faults = v.faults.iter().map(|f| fault(f, &gains, n, sink)).collect();
    Some(CompiledModel {
        name: v.name.clone(),
        unit: v.unit.clone(),
        full_scale: v.full_scale,
        channels: v.channels.iter().map(|c| c.name.clone()).collect(),
        mean,
        covariance,
        sources: v.sources.iter().map(|x| x.name.clone()).collect(),
        source_gains: gains,
        source_means,
        source_sigmas,
        own_sigmas,
        own_means: v.channels.iter().map(|c| c.mean).collect(),
        own_correlation,
        signal_descriptions: v.signals.iter().map(|x| names.describe(&x.def)).collect(),
        signals,
        output_description: names.describe(&v.output.def),
        output,
        output_formula,
        pieces_complete,
        checks,
        detection: match v.detection {
            VDetection::Any => Detection::Any,
            VDetection::AtLeast(k) => Detection::AtLeast(k),
        },
        safety_lower: v.safety.0,
        safety_upper: v.safety.1,
        faults,
        timing: v.timing.clone(),
        isolation: None,
    })
}

/// The piece builder's kind of an order statistic.
fn order_kind(stat: Stat) -> OrderKind {
    match stat {
        Stat::Median => OrderKind::Median,
        Stat::Min => OrderKind::Min,
        Stat::Max => OrderKind::Max,
    }
}

/// The linear pieces of every signal, the output and every check, or the first limit
/// that building them passes.
#[allow(clippy::type_complexity)]
fn all_pieces(
    b: &mut Builder,
    v: &Resolved,
    order: &[usize],
    n: usize,
) -> Result<(Vec<PiecewiseLinear>, PiecewiseLinear, Vec<PiecewiseLinear>), PieceError> {
    // An order statistic of k arguments has at least its rank patterns as pieces: refuse
    // before building any of them.
    let too_many = |def: &FnDef| match def {
        FnDef::Order(stat, rs) => {
            rank_pattern_count(rs.len(), order_kind(*stat)) > limits::MAX_PIECES
        }
        FnDef::Range(rs) => rank_pattern_count(rs.len(), OrderKind::Range) > limits::MAX_PIECES,
        _ => false,
    };
    let defs = v
        .signals
        .iter()
        .map(|s| &s.def)
        .chain([&v.output.def])
        .chain(v.checks.iter().map(|c| &c.def));
    for def in defs {
        if too_many(def) {
            return Err(PieceError::TooManyPieces);
        }
    }
    let channel_pw: Vec<Pw> = (0..n)
        .map(|i| b.linear(LinearForm::coordinate(n, i)))
        .collect();
    let mut signal_pw: Vec<Option<Pw>> = vec![None; v.signals.len()];
    for &i in order {
        let built = build(b, &v.signals[i].def, &channel_pw, &signal_pw, None)?;
        signal_pw[i] = Some(built);
    }
    let output_pw = build(b, &v.output.def, &channel_pw, &signal_pw, None)?;
    let mut checks = Vec::new();
    for c in &v.checks {
        let pw = build(b, &c.def, &channel_pw, &signal_pw, Some(&output_pw))?;
        checks.push(b.export(&pw));
    }
    let signals = signal_pw
        .iter()
        .map(|p| match p {
            Some(p) => b.export(p),
            None => PiecewiseLinear { pieces: Vec::new() },
        })
        .collect();
    Ok((signals, b.export(&output_pw), checks))
}

/// A function as a [`Formula`], with derived signals (and the output, for a check) written
/// out in place.
fn formula(def: &FnDef, signals: &[Option<Formula>], output: Option<&Formula>) -> Formula {
    let reading = |r: &Reading| -> Formula {
        match r {
            Reading::Channel(i) => Formula::Channel(*i),
            Reading::Signal(i) => signals.get(*i).cloned().flatten().unwrap_or(Formula::Sum {
                terms: Vec::new(),
                constant: f64::NAN,
            }),
        }
    };
    let sorted = |rs: &[Reading]| {
        let mut r = rs.to_vec();
        r.sort();
        r.iter().map(reading).collect::<Vec<_>>()
    };
    match def {
        FnDef::Linear {
            terms, constant, ..
        } => Formula::Sum {
            terms: terms.iter().map(|(r, w)| (*w, reading(r))).collect(),
            constant: *constant,
        },
        FnDef::Mean(rs) => {
            let w = 1.0 / rs.len().max(1) as f64;
            Formula::Sum {
                terms: rs.iter().map(|r| (w, reading(r))).collect(),
                constant: 0.0,
            }
        }
        FnDef::Select(r) => reading(r),
        FnDef::Order(stat, rs) => Formula::Order {
            stat: match stat {
                Stat::Median => OrderStat::Median,
                Stat::Min => OrderStat::Min,
                Stat::Max => OrderStat::Max,
            },
            args: sorted(rs),
        },
        FnDef::Range(rs) => Formula::Range(sorted(rs)),
        FnDef::Difference(a, c) => Formula::Sum {
            terms: vec![(1.0, reading(a)), (-1.0, reading(c))],
            constant: 0.0,
        },
        FnDef::FromOutput(r) => Formula::Sum {
            terms: vec![
                (1.0, reading(r)),
                (
                    -1.0,
                    output.cloned().unwrap_or(Formula::Sum {
                        terms: Vec::new(),
                        constant: f64::NAN,
                    }),
                ),
            ],
            constant: 0.0,
        },
    }
}

/// Warns when a piece's coefficients do not sum to the expected true-value gain: the
/// deviation of the output must not depend on the true value (coefficients sum to 1), nor
/// must a check value (sum 0).
fn warn_truth_gain(
    f: &PiecewiseLinear,
    expected: f64,
    sink: &mut Sink<'_>,
    loc: &Loc,
    what: &str,
    word: &str,
) {
    let bad = f.pieces.iter().find_map(|p| {
        let sum: f64 = p.value.coeffs.iter().sum();
        ((sum - expected).abs() > TRUTH_GAIN_ABS).then_some(sum)
    });
    if let Some(sum) = bad {
        sink.warning(
            loc.span,
            &loc.key,
            format!(
                "the coefficients of {what} sum to {sum}, not {word}: its value would depend \
                 on the true value of the measured quantity, which the model leaves out"
            ),
            format!("check the weights; they should sum to {word}"),
        );
    }
}

fn build(
    b: &mut Builder,
    def: &FnDef,
    channels: &[Pw],
    signals: &[Option<Pw>],
    output: Option<&Pw>,
) -> Result<Pw, PieceError> {
    // A missing signal cannot happen in evaluation order; an empty function stands in.
    let empty = Pw { pieces: Vec::new() };
    let pw = |r: &Reading| -> &Pw {
        match r {
            Reading::Channel(i) => channels.get(*i).unwrap_or(&empty),
            Reading::Signal(i) => signals.get(*i).and_then(|s| s.as_ref()).unwrap_or(&empty),
        }
    };
    let sorted = |rs: &[Reading]| {
        let mut r = rs.to_vec();
        r.sort();
        r
    };
    match def {
        FnDef::Linear {
            terms, constant, ..
        } => {
            let t: Vec<(f64, &Pw)> = terms.iter().map(|(r, w)| (*w, pw(r))).collect();
            b.combine(&t, *constant)
        }
        FnDef::Mean(rs) => {
            let w = 1.0 / rs.len() as f64;
            let t: Vec<(f64, &Pw)> = rs.iter().map(|r| (w, pw(r))).collect();
            b.combine(&t, 0.0)
        }
        FnDef::Select(r) => Ok(pw(r).clone()),
        FnDef::Order(stat, rs) => {
            let rs = sorted(rs);
            let args: Vec<&Pw> = rs.iter().map(pw).collect();
            b.order(&args, order_kind(*stat))
        }
        FnDef::Range(rs) => {
            let rs = sorted(rs);
            let args: Vec<&Pw> = rs.iter().map(pw).collect();
            b.order(&args, OrderKind::Range)
        }
        FnDef::Difference(a, c) => b.combine(&[(1.0, pw(a)), (-1.0, pw(c))], 0.0),
        FnDef::FromOutput(r) => b.combine(&[(1.0, pw(r)), (-1.0, output.unwrap_or(&empty))], 0.0),
    }
}

/// Names of readings, for formulas.
struct Names<'a> {
    v: &'a Resolved,
}

impl Names<'_> {
    fn name(&self, r: &Reading) -> String {
        match r {
            Reading::Channel(i) => self.v.channels.get(*i).map(|c| c.name.clone()),
            Reading::Signal(i) => self.v.signals.get(*i).map(|s| s.name.clone()),
        }
        .unwrap_or_default()
    }

    fn list(&self, rs: &[Reading]) -> String {
        rs.iter()
            .map(|r| self.name(r))
            .collect::<Vec<_>>()
            .join(", ")
    }

    /// The function as a formula.
    fn describe(&self, def: &FnDef) -> String {
        match def {
            FnDef::Linear {
                terms, constant, ..
            } => {
                let t: Vec<(String, f64)> = terms.iter().map(|(r, w)| (self.name(r), *w)).collect();
                linear_formula(&t, *constant)
            }
            FnDef::Mean(rs) => format!("mean({})", self.list(rs)),
            FnDef::Select(r) => self.name(r),
            FnDef::Order(stat, rs) => format!("{}({})", stat.word(), self.list(rs)),
            FnDef::Difference(a, b) => format!("{} - {}", self.name(a), self.name(b)),
            FnDef::Range(rs) => {
                let l = self.list(rs);
                format!("max({l}) - min({l})")
            }
            FnDef::FromOutput(r) => format!("{} - output", self.name(r)),
        }
    }
}

fn fault(f: &VFault, gains: &DMatrix<f64>, n: usize, sink: &mut Sink<'_>) -> CompiledFault {
    let mode = match f.mode {
        VMode::Add => {
            let mut direction = vec![0.0; n];
            for (site, g, _) in &f.hits {
                match site {
                    Site::Channel(i) => {
                        if let Some(d) = direction.get_mut(*i) {
                            *d += g;
                        }
                    }
                    Site::Source(s) => {
                        for (i, d) in direction.iter_mut().enumerate() {
                            *d += g * gains[(i, *s)];
                        }
                    }
                }
            }
            if direction.iter().all(|d| *d == 0.0) {
                sink.warning(
                    f.loc.span,
                    &f.loc.key,
                    "the fault reaches no channel (its gains, or the gains of the sources it \
                     hits, are zero), so it has no effect",
                    "hit a channel, or a source that feeds channels",
                );
            }
            FaultMode::Add { direction }
        }
        VMode::Replace => {
            let (channel, gain) = f
                .hits
                .iter()
                .find_map(|(site, g, _)| match site {
                    Site::Channel(i) => Some((*i, *g)),
                    Site::Source(_) => None,
                })
                .unwrap_or((0, 1.0));
            FaultMode::Replace { channel, gain }
        }
    };
    let (amplitude, uniform_is_full_scale) = match &f.amplitude {
        VAmplitude::Gaussian {
            mean,
            sigma: VSigma::Known(s),
        } => (
            Amplitude::Gaussian {
                mean: *mean,
                sigma: *s,
            },
            false,
        ),
        VAmplitude::Gaussian {
            mean,
            sigma: VSigma::Unknown { lo, hi, defaulted },
        } => (
            Amplitude::GaussianUnknownSigma {
                mean: *mean,
                sigma_lo: *lo,
                sigma_hi: *hi,
                defaulted: *defaulted,
            },
            false,
        ),
        VAmplitude::Uniform {
            lower,
            upper,
            full_scale,
        } => (
            Amplitude::Uniform {
                lower: *lower,
                upper: *upper,
            },
            *full_scale,
        ),
        VAmplitude::Points(p) => (Amplitude::Points(p.clone()), false),
    };
    CompiledFault {
        name: f.name.clone(),
        fit: f.fit,
        mode,
        amplitude,
        latent_coverage: f.latent_coverage,
        hits: f
            .hits
            .iter()
            .map(|(_, g, name)| (name.clone(), *g))
            .collect(),
        uniform_is_full_scale,
    }
}
