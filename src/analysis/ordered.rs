//! When a model fits the order-statistic engine ([`crate::prob::order`]), and its
//! scenarios written as channels that are independent once a few shared terms are fixed.
//!
//! A model fits when its output is an order statistic of channels (minimum, maximum, a
//! median of an odd count, or one channel), its checks pass together in a region the
//! engine counts (no checks; one range check; difference checks of channel pairs that all
//! share one channel) and it detects on any firing check, or on k of its checks when they are
//! checks of single channels against fixed limits, one per channel. A scenario fits when its
//! covariance is a diagonal plus at most [`MAX_SHARED_TERMS`] shared terms: each shared
//! source is one term, a positive correlation between own noises is one term per group
//! of correlated channels when the group's correlations factor as `rho_ij = a_i a_j`, a
//! gaussian fault amplitude that moves several channels is one more; a term that moves one
//! channel only is that channel's own noise, and terms that move the channels in the same
//! proportions are one term.

use crate::model::{CompiledFault, CompiledModel, Detection, FaultMode, Formula, OrderStat};
use crate::prob::order::{
    Agreement, ChannelBand, Difference, MAX_SHARED_TERMS, Output, Question, Rank, SharedGaussian,
    WeightedSum, unsupported_reason,
};

/// Relative tolerance of the tests that two shared terms are parallel and that a group's
/// correlations factor (rounding of the file's numbers, well below any physical meaning).
const FACTOR_REL: f64 = 1e-12;

/// The model's question for the order-statistic engine, or why it does not fit.
pub fn question(model: &CompiledModel) -> Result<Question, String> {
    let output = match &model.output_formula {
        Formula::Order { stat, args } => {
            let of = Formula::bare_channels(args)
                .ok_or("the output is an order statistic of derived signals")?;
            let n = of.len();
            match stat {
                OrderStat::Min => Rank::single(of, 1),
                OrderStat::Max => Rank::single(of, n),
                OrderStat::Median => Rank::median(of),
            }
            .into()
        }
        other => match (other.as_channel(), other.linear(model.channels.len())) {
            (Some(i), _) => Rank::single(vec![i], 1).into(),
            (None, Some(form)) => Output::Weighted(WeightedSum {
                weights: form.coeffs,
                constant: form.constant,
            }),
            (None, None) => {
                return Err(
                    "the output is neither an order statistic nor a weighted sum of channels"
                        .into(),
                );
            }
        },
    };
    let n = model.channels.len();
    let mut range = None;
    let mut differences = Vec::new();
    let mut bands = Vec::new();
    let mut firing_checks = 0usize;
    for check in &model.checks {
        let (lower, upper) = (check.lower, check.upper);
        match &check.formula {
            Formula::Range(args) => {
                let of = Formula::bare_channels(args).ok_or_else(|| {
                    format!("check '{}' is a range of derived signals", check.name)
                })?;
                if lower > 0.0 {
                    return Err(format!("check '{}' fires on a small range", check.name));
                }
                if upper == f64::INFINITY {
                    continue;
                }
                if range.is_some() {
                    return Err("more than one range check".into());
                }
                range = Some(Agreement::Range { of, limit: upper });
                firing_checks += 1;
            }
            other => {
                let form = other.linear(n).ok_or_else(|| {
                    format!("check '{}' is neither a range nor linear", check.name)
                })?;
                let used: Vec<usize> = (0..n).filter(|i| form.coeffs[*i] != 0.0).collect();
                if lower == f64::NEG_INFINITY && upper == f64::INFINITY {
                    continue;
                }
                if let [i] = used.as_slice() {
                    // One channel against fixed limits: lower <= c x + k <= upper.
                    let c = form.coeffs[*i];
                    let (l, h) = ((lower - form.constant) / c, (upper - form.constant) / c);
                    bands.push(ChannelBand {
                        channel: *i,
                        lower: l.min(h),
                        upper: l.max(h),
                    });
                    firing_checks += 1;
                    continue;
                }
                let (a, b) = match used.as_slice() {
                    [i, j] if form.coeffs[*i] == 1.0 && form.coeffs[*j] == -1.0 => (*i, *j),
                    [i, j] if form.coeffs[*i] == -1.0 && form.coeffs[*j] == 1.0 => (*j, *i),
                    _ => {
                        return Err(format!(
                            "check '{}' is neither the difference of two channels nor a \
                             check of one channel",
                            check.name
                        ));
                    }
                };
                differences.push(Difference {
                    a,
                    b,
                    lower: lower - form.constant,
                    upper: upper - form.constant,
                });
                firing_checks += 1;
            }
        }
    }
    // Detection on k >= 2 firing checks is counted for checks of single channels alone (one
    // per channel, beside no range or difference check); without a check that can fire,
    // nothing is ever detected whatever k is (`Agreement::Always`).
    let detection_needed = match model.detection {
        Detection::AtLeast(k) if k > 1 && firing_checks > 0 => {
            if range.is_some() || !differences.is_empty() {
                return Err(format!(
                    "detection needs {k} firing checks, with a range or difference check"
                ));
            }
            let mut channels: Vec<usize> = bands.iter().map(|b| b.channel).collect();
            channels.sort_unstable();
            if channels.windows(2).any(|w| w[0] == w[1]) {
                return Err(format!(
                    "detection needs {k} firing checks, two of them on one channel"
                ));
            }
            k
        }
        _ => 1,
    };
    let agreement = match (range, differences.is_empty()) {
        (None, true) => Agreement::Always,
        (Some(r), true) => r,
        (None, false) => Agreement::Differences(differences),
        (Some(_), false) => return Err("a range check together with difference checks".into()),
    };
    if matches!(agreement, Agreement::Differences(_)) && agreement.common_channels().is_empty() {
        return Err("difference checks that do not all share one channel".into());
    }
    Ok(Question {
        output,
        safe_lower: model.safety_lower,
        safe_upper: model.safety_upper,
        agreement,
        bands,
        detection_needed,
    })
}

/// The channels before the shared terms are tidied: means, own variances and the gains
/// of every shared term.
#[derive(Debug, Clone, PartialEq)]
pub struct SharedTerms {
    mean: Vec<f64>,
    own_variance: Vec<f64>,
    columns: Vec<Vec<f64>>,
}

impl SharedTerms {
    /// The fault-free channels of a model, or why they cannot be written this way.
    pub fn baseline(model: &CompiledModel) -> Result<SharedTerms, String> {
        let n = model.channels.len();
        let s = &model.own_sigmas;
        let mut own_variance: Vec<f64> = s.iter().map(|x| x * x).collect();
        let mut columns = Vec::new();
        for k in 0..model.sources.len() {
            let sigma = model.source_sigmas.get(k).copied().unwrap_or(0.0);
            let column: Vec<f64> = (0..n).map(|i| model.source_gains[(i, k)] * sigma).collect();
            columns.push(column);
        }
        // Groups of channels whose own noises correlate.
        let r = &model.own_correlation;
        let mut group = vec![usize::MAX; n];
        for start in 0..n {
            if group[start] != usize::MAX {
                continue;
            }
            group[start] = start;
            let mut stack = vec![start];
            while let Some(i) = stack.pop() {
                for j in 0..n {
                    if j != i
                        && group[j] == usize::MAX
                        && r[(i, j)] != 0.0
                        && s[i] > 0.0
                        && s[j] > 0.0
                    {
                        group[j] = start;
                        stack.push(j);
                    }
                }
            }
        }
        for start in 0..n {
            let members: Vec<usize> = (0..n).filter(|i| group[*i] == start).collect();
            if members.len() < 2 {
                continue;
            }
            let loadings = rank_one_loadings(r, &members)
                .ok_or("own-noise correlations that are not one shared term per group")?;
            let mut column = vec![0.0; n];
            for (&i, a) in members.iter().zip(&loadings) {
                column[i] = a * s[i];
                own_variance[i] = s[i] * s[i] * (1.0 - a * a).max(0.0);
            }
            columns.push(column);
        }
        Ok(SharedTerms {
            mean: model.mean.clone(),
            own_variance,
            columns,
        })
    }

    /// A fault site's channels before its amplitude: a replaced channel loses its mean,
    /// noise and shared terms; the direction in which the amplitude moves the channels.
    pub fn for_fault(&self, fault: &CompiledFault) -> SharedFault {
        let (base, direction) = self.split_fault(fault);
        let replaced = match &fault.mode {
            FaultMode::Replace { channel, gain } if *channel < direction.len() => {
                Some((*channel, *gain))
            }
            _ => None,
        };
        SharedFault {
            base,
            direction,
            replaced,
        }
    }

    fn split_fault(&self, fault: &CompiledFault) -> (SharedTerms, Vec<f64>) {
        let n = self.mean.len();
        let mut base = self.clone();
        let direction = match &fault.mode {
            FaultMode::Add { direction } => direction.clone(),
            FaultMode::Replace { channel, gain } => {
                let mut d = vec![0.0; n];
                if *channel < n {
                    base.mean[*channel] = 0.0;
                    base.own_variance[*channel] = 0.0;
                    for c in &mut base.columns {
                        c[*channel] = 0.0;
                    }
                    d[*channel] = *gain;
                }
                d
            }
        };
        (base, direction)
    }

    /// The channels with the amplitude `F` fixed.
    pub fn at_amplitude(&self, direction: &[f64], amplitude: f64) -> SharedGaussian {
        let mut t = self.clone();
        for (m, d) in t.mean.iter_mut().zip(direction) {
            *m += d * amplitude;
        }
        t.tidy()
    }

    /// The channels with `F ~ N(mean, sigma^2)`: one more shared term `sigma * direction`.
    pub fn with_gaussian(&self, direction: &[f64], mean: f64, sigma: f64) -> SharedGaussian {
        let mut t = self.clone();
        for (m, d) in t.mean.iter_mut().zip(direction) {
            *m += d * mean;
        }
        t.columns
            .push(direction.iter().map(|d| d * sigma).collect());
        t.tidy()
    }

    /// The fault-free channels, tidied.
    pub fn tidied(&self) -> SharedGaussian {
        self.clone().tidy()
    }

    /// Drops empty terms, folds terms that move one channel into its own noise, and merges
    /// terms that move the channels in the same proportions.
    fn tidy(mut self) -> SharedGaussian {
        let mut kept: Vec<Vec<f64>> = Vec::new();
        for column in std::mem::take(&mut self.columns) {
            let used: Vec<usize> = (0..column.len()).filter(|i| column[*i] != 0.0).collect();
            match used.as_slice() {
                [] => continue,
                [i] => {
                    self.own_variance[*i] += column[*i] * column[*i];
                    continue;
                }
                _ => {}
            }
            if let Some(existing) = kept.iter_mut().find(|k| parallel(k, &column).is_some()) {
                let lambda = parallel(existing, &column).unwrap_or(0.0);
                let factor = (1.0 + lambda * lambda).sqrt();
                for v in existing.iter_mut() {
                    *v *= factor;
                }
            } else {
                kept.push(column);
            }
        }
        SharedGaussian {
            mean: self.mean,
            own_sd: self
                .own_variance
                .iter()
                .map(|v| v.max(0.0).sqrt())
                .collect(),
            shared: kept,
            uniform: None,
        }
    }
}

/// A fault site in shared-term form.
#[derive(Debug, Clone, PartialEq)]
pub struct SharedFault {
    /// The channels before the amplitude.
    pub base: SharedTerms,
    /// How the amplitude moves the channels.
    pub direction: Vec<f64>,
    /// The replaced channel and its gain, for a `replace` fault.
    pub replaced: Option<(usize, f64)>,
}

impl SharedFault {
    /// The channels with the amplitude fixed.
    pub fn at_amplitude(&self, amplitude: f64) -> SharedGaussian {
        self.base.at_amplitude(&self.direction, amplitude)
    }

    /// The channels with a gaussian amplitude.
    pub fn with_gaussian(&self, mean: f64, sigma: f64) -> SharedGaussian {
        self.base.with_gaussian(&self.direction, mean, sigma)
    }

    /// For a replaced channel with a uniform amplitude on `[lower, upper]`: the channel
    /// reads `gain * F`, itself uniform, so no integral over the amplitude is needed.
    pub fn with_uniform(&self, lower: f64, upper: f64) -> Option<SharedGaussian> {
        let (channel, gain) = self.replaced?;
        let (a, b) = (gain * lower, gain * upper);
        if !(a - b).is_normal() {
            // A range of one value (or none): the amplitude is a point, not a spread.
            return None;
        }
        let mut g = self.base.tidied();
        g.uniform = Some((channel, a.min(b), a.max(b)));
        Some(g)
    }
}

/// `lambda` with `b = lambda a` on the same support, if the two are parallel.
fn parallel(a: &[f64], b: &[f64]) -> Option<f64> {
    let i = (0..a.len()).find(|i| a[*i] != 0.0)?;
    let lambda = b[i] / a[i];
    let fits = a.iter().zip(b).all(|(x, y)| {
        let want = lambda * x;
        (y - want).abs() <= FACTOR_REL * y.abs().max(want.abs()) && ((*x == 0.0) == (*y == 0.0))
    });
    fits.then_some(lambda)
}

/// Loadings `a_i` in `(0, 1]` with `rho_ij = a_i a_j` for every pair of the group, if any.
fn rank_one_loadings(r: &nalgebra::DMatrix<f64>, members: &[usize]) -> Option<Vec<f64>> {
    let m = members.len();
    let mut a = vec![0.0; m];
    if m == 2 {
        let rho = r[(members[0], members[1])];
        if rho <= 0.0 {
            return None;
        }
        a = vec![rho.sqrt(); 2];
    } else {
        for x in 0..m {
            let (y, z) = ((x + 1) % m, (x + 2) % m);
            let (i, j, k) = (members[x], members[y], members[z]);
            let v = r[(i, j)] * r[(i, k)] / r[(j, k)];
            if !(v > 0.0 && v.is_finite()) {
                return None;
            }
            a[x] = v.sqrt();
        }
    }
    for x in 0..m {
        if a[x] > 1.0 + FACTOR_REL {
            return None;
        }
        for y in x + 1..m {
            let rho = r[(members[x], members[y])];
            if (rho - a[x] * a[y]).abs() > FACTOR_REL.max(1e-9) * rho.abs().max(1e-300) {
                return None;
            }
        }
    }
    Some(a.iter().map(|v| v.min(1.0)).collect())
}

/// Why a scenario cannot go to the order-statistic engine, if it cannot.
pub fn scenario_unsupported(g: &SharedGaussian, q: &Question) -> Option<String> {
    if g.shared.len() > MAX_SHARED_TERMS {
        return Some(format!(
            "{} shared terms remain (sources, correlated groups, the fault), more than {}",
            g.shared.len(),
            MAX_SHARED_TERMS
        ));
    }
    unsupported_reason(g, q)
}
