//! Validation of fault sites: rate, hit nodes, mode, amplitude model, latent coverage.

use super::error::Sink;
use super::names::{NameRef, Namespace};
use super::raw::*;
use super::resolved::*;
use crate::prob::tolerance::WEIGHT_SUM_ABS;

/// The default search range of an unknown fault sigma.
///
/// From `1e-3` times the smallest positive half-width among the safety band and the check
/// bands (far below anything that could violate or fire), to `10` times the largest
/// magnitude of a `full_scale` end (far beyond the measuring range), or `1e3` times the
/// largest half-width when there is no `full_scale`. One-sided bands count with the distance
/// of their finite bound from zero. Falls back to `[1e-3, 1e3]` when no band has a finite
/// positive width, and widens the upper end to `1e6` times the lower when the two would cross.
pub fn default_sigma_range(
    safety: (f64, f64),
    check_bands: &[(f64, f64)],
    full_scale: Option<(f64, f64)>,
) -> (f64, f64) {
    let mut widths: Vec<f64> = Vec::new();
    for (lo, hi) in std::iter::once(safety).chain(check_bands.iter().copied()) {
        let w = if lo.is_finite() && hi.is_finite() {
            (hi - lo) / 2.0
        } else if lo.is_finite() {
            lo.abs()
        } else if hi.is_finite() {
            hi.abs()
        } else {
            0.0
        };
        if w > 0.0 && w.is_finite() {
            widths.push(w);
        }
    }
    let (Some(min_w), Some(max_w)) = (
        widths.iter().copied().reduce(f64::min),
        widths.iter().copied().reduce(f64::max),
    ) else {
        return (1e-3, 1e3);
    };
    let lo = 1e-3 * min_w;
    let hi = match full_scale {
        Some((a, b)) if a.abs().max(b.abs()) > 0.0 => 10.0 * a.abs().max(b.abs()),
        _ => 1e3 * max_w,
    };
    if hi > lo { (lo, hi) } else { (lo, 1e6 * lo) }
}

pub(crate) fn validate_faults(
    raw: &RawModel,
    ns: &Namespace,
    safety: Option<(f64, f64)>,
    checks: &[&VCheck],
    sink: &mut Sink<'_>,
) -> Vec<VFault> {
    let bands: Vec<(f64, f64)> = checks.iter().map(|c| (c.lower, c.upper)).collect();
    let default_range = default_sigma_range(
        safety.unwrap_or((-1.0, 1.0)),
        &bands,
        raw.full_scale.as_ref().map(|f| f.value),
    );
    if raw.faults.is_empty() {
        sink.warning(
            Default::default(),
            "faults",
            "the file defines no fault sites: only the fault-free baseline can be analysed",
            "add [faults.X] sections with fit, hits, mode and amplitude",
        );
    }
    raw.faults
        .iter()
        .filter_map(|f| fault(f, raw, ns, default_range, sink))
        .collect()
}

fn fault(
    f: &RawFault,
    raw: &RawModel,
    ns: &Namespace,
    default_range: (f64, f64),
    sink: &mut Sink<'_>,
) -> Option<VFault> {
    let mut ok = true;
    if let Some(fit) = &f.fit {
        if fit.value < 0.0 {
            fit.error(
                sink,
                format!(
                    "the failure rate is {} FIT, but it cannot be negative",
                    fit.value
                ),
                "give the rate in FIT (failures per 1e9 hours), >= 0",
            );
            ok = false;
        } else if fit.value == 0.0 {
            fit.warning(
                sink,
                "a failure rate of 0 FIT: the site contributes nothing to the metrics",
                "give its rate or drop the site",
            );
        }
    }
    let mut hits = Vec::new();
    if let Some(h) = &f.hits {
        if h.value.is_empty() {
            h.error(
                sink,
                "the fault hits nothing",
                "name the channels or sources it acts on, e.g. hits = { a = 1.0 }",
            );
            ok = false;
        }
        for (name, gain) in &h.value {
            match ns.resolve(
                sink,
                name,
                "a channel or shared source",
                |r| matches!(r, NameRef::Channel(_) | NameRef::Source(_)),
                "a fault hits channels or shared sources; a derived signal is computed from \
                 them and fails only through them",
            ) {
                Some(NameRef::Channel(i)) => {
                    hits.push((Site::Channel(i), gain.value, name.value.clone()))
                }
                Some(NameRef::Source(i)) => {
                    hits.push((Site::Source(i), gain.value, name.value.clone()))
                }
                _ => ok = false,
            }
            if gain.value == 0.0 {
                gain.warning(
                    sink,
                    format!("gain 0: the fault has no effect on `{}`", name.value),
                    "give the gain, or drop the entry",
                );
            }
        }
    }
    if let (Some(mode), Some(h)) = (&f.mode, &f.hits)
        && mode.value == Mode::Replace
    {
        if h.value.len() > 1 {
            h.error(
                sink,
                format!(
                    "a replace-mode fault must hit exactly one channel, this one hits {}",
                    h.value.len()
                ),
                "split it into one site per channel, or use mode = \"add\"",
            );
            ok = false;
        }
        for (name, _) in &h.value {
            if let Some(NameRef::Source(_)) = ns.get(&name.value) {
                name.error(
                    sink,
                    format!(
                        "a replace-mode fault cannot hit the shared source `{}`: only a \
                             channel reading can be replaced",
                        name.value
                    ),
                    "hit the channel whose reading is replaced, or use mode = \"add\" \
                         for a fault of the source",
                );
                ok = false;
            }
        }
    }
    let amplitude = f
        .amplitude
        .as_ref()
        .and_then(|a| amplitude(a, raw, default_range, sink));
    if let Some(lc) = &f.latent_coverage
        && !(0.0..=1.0).contains(&lc.value)
    {
        lc.error(
            sink,
            format!("latent_coverage is {}, outside [0, 1]", lc.value),
            "give the share of latent faults found by other means, from 0 to 1",
        );
        ok = false;
    }
    let mode = match f.mode.as_ref()?.value {
        Mode::Add => VMode::Add,
        Mode::Replace => VMode::Replace,
    };
    if !ok {
        return None;
    }
    Some(VFault {
        name: f.name.value.clone(),
        fit: f.fit.as_ref()?.value,
        hits,
        mode,
        amplitude: amplitude?,
        latent_coverage: f.latent_coverage.as_ref().map_or(0.0, |l| l.value),
        loc: Loc {
            span: f.name.span,
            key: f.name.key.clone(),
        },
    })
}

fn amplitude(
    a: &Spanned<RawAmplitude>,
    raw: &RawModel,
    default_range: (f64, f64),
    sink: &mut Sink<'_>,
) -> Option<VAmplitude> {
    match &a.value {
        RawAmplitude::Gaussian { mean, sigma } => {
            let sigma = match &sigma.value {
                RawSigma::Known(s) => {
                    if s.value < 0.0 {
                        s.error(
                            sink,
                            format!("sigma is {}, but it cannot be negative", s.value),
                            "give a value >= 0, or sigma = \"unknown\" for a worst case",
                        );
                        return None;
                    }
                    VSigma::Known(s.value)
                }
                RawSigma::Unknown => VSigma::Unknown {
                    lo: default_range.0,
                    hi: default_range.1,
                    defaulted: true,
                },
                RawSigma::UnknownRange(lo, hi) => {
                    if lo.value <= 0.0 {
                        lo.error(
                            sink,
                            format!(
                                "the search range starts at {}, but must start above 0",
                                lo.value
                            ),
                            "give a small positive lower end, e.g. unknown = [0.01, 1000.0]",
                        );
                        return None;
                    }
                    if lo.value >= hi.value {
                        lo.error(
                            sink,
                            format!("the search range [{}, {}] is empty", lo.value, hi.value),
                            "give unknown = [lower, upper] with lower < upper",
                        );
                        return None;
                    }
                    VSigma::Unknown {
                        lo: lo.value,
                        hi: hi.value,
                        defaulted: false,
                    }
                }
            };
            Some(VAmplitude::Gaussian {
                mean: mean.value,
                sigma,
            })
        }
        RawAmplitude::UniformFullScale => match &raw.full_scale {
            Some(fs) if fs.value.0 < fs.value.1 => Some(VAmplitude::Uniform {
                lower: fs.value.0,
                upper: fs.value.1,
                full_scale: true,
            }),
            Some(_) => None, // full_scale itself is reported
            None => {
                a.error(
                    sink,
                    "uniform = \"full_scale\" but the file gives no full_scale",
                    "add full_scale = [lower, upper] at the top of the file, or give the range: \
                     uniform = [-10.0, 10.0]",
                );
                None
            }
        },
        RawAmplitude::Uniform(lo, hi) => {
            if lo.value >= hi.value {
                lo.error(
                    sink,
                    format!("the range [{}, {}] is empty", lo.value, hi.value),
                    "give uniform = [lower, upper] with lower < upper",
                );
                return None;
            }
            Some(VAmplitude::Uniform {
                lower: lo.value,
                upper: hi.value,
                full_scale: false,
            })
        }
        RawAmplitude::Points(points) => {
            if points.is_empty() {
                a.error(
                    sink,
                    "the list of points is empty",
                    "give [value, weight] pairs, e.g. points = [[540.0, 0.5], [-540.0, 0.5]]",
                );
                return None;
            }
            let mut ok = true;
            for (_, w) in points {
                if w.value <= 0.0 {
                    w.error(
                        sink,
                        format!("the weight is {}, but weights must be positive", w.value),
                        "give each point a positive weight, or drop the point",
                    );
                    ok = false;
                }
            }
            let sum: f64 = points.iter().map(|(_, w)| w.value).sum();
            if ok && (sum - 1.0).abs() > WEIGHT_SUM_ABS {
                a.error(
                    sink,
                    format!("the weights sum to {sum}, not 1"),
                    "scale the weights so that they sum to 1 (they are probabilities)",
                );
                ok = false;
            }
            ok.then(|| VAmplitude::Points(points.iter().map(|(v, w)| (v.value, w.value)).collect()))
        }
    }
}
