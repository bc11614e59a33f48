//! Hardware metrics from per-site figures: residual and latent rates, SPFM, LFM, SFF and the
//! ASIL targets they meet (ISO 26262-5:2018 clauses 8 and 9, Tables 4 to 6; IEC 61508-2
//! Annex C for the SFF). The targets below are recalled, not checked against the published
//! text: check them against the standard in force; the analyst remains responsible for the
//! classification.

use serde::Serialize;

use crate::prob::Estimate;

use super::site::SiteResult;

/// An automotive safety integrity level whose metric targets a design meets.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
pub enum Asil {
    /// The metric is undefined for this sheet (no failure rate at all, or no rate left
    /// that is not residual): no ASIL can be claimed from it.
    #[serde(rename = "n/a")]
    NotApplicable,
    /// Below the ASIL B target. ISO 26262-5 sets no SPFM or LFM target for ASIL A (from
    /// memory), so this does not mean "QM only": it means no target of B, C or D is met.
    #[serde(rename = "below B")]
    Qm,
    /// ASIL B.
    B,
    /// ASIL C.
    C,
    /// ASIL D.
    D,
}

impl Asil {
    /// The label used in reports.
    pub fn label(self) -> &'static str {
        match self {
            Asil::NotApplicable => "n/a",
            Asil::Qm => "below B",
            Asil::B => "B",
            Asil::C => "C",
            Asil::D => "D",
        }
    }
}

impl Asil {
    /// The classification in words for a report line, e.g. "meets ASIL D".
    pub fn verdict(self) -> String {
        match self {
            Asil::NotApplicable => "not applicable (no rate to judge)".to_string(),
            Asil::Qm => "meets no ASIL target (below B)".to_string(),
            other => format!("meets ASIL {}", other.label()),
        }
    }
}

/// SPFM targets for ASIL B, C, D: ISO 26262-5:2018 Table 4 (recalled, not checked
/// against the published text): >= 90 / 97 / 99 %.
pub const SPFM_TARGETS: [(Asil, f64); 3] = [(Asil::D, 0.99), (Asil::C, 0.97), (Asil::B, 0.90)];
/// LFM targets for ASIL B, C, D: ISO 26262-5:2018 Table 5 (recalled, not checked
/// against the published text): >= 60 / 80 / 90 %.
pub const LFM_TARGETS: [(Asil, f64); 3] = [(Asil::D, 0.90), (Asil::C, 0.80), (Asil::B, 0.60)];
/// Residual-rate targets (the PMHF budget) for ASIL B, C, D: ISO 26262-5:2018 Table 6
/// (recalled, not checked against the published text): < 100 FIT for B and C, < 10 FIT for D.
pub const PMHF_TARGETS_FIT: [(Asil, f64); 3] =
    [(Asil::D, 10.0), (Asil::C, 100.0), (Asil::B, 100.0)];

/// The one pass rule of every output (tables, JSON, compare, the report's marks and tiles): a
/// lower-bound target (SPFM, LFM) is met when the value minus its error bound reaches it; an
/// upper limit (the residual rate in FIT) when the value plus its error bound stays below it.
/// So numerical error never lifts a design a level.
pub fn meets_minimum(value: Estimate, target: f64) -> bool {
    value.value - value.error >= target
}

/// The upper-limit side of the pass rule of [`meets_minimum`]: value plus error below `target`.
pub fn meets_maximum(value: Estimate, target: f64) -> bool {
    value.value + value.error < target
}

/// The highest ASIL whose lower-bound target `value` meets by [`meets_minimum`].
pub fn asil_for_minimum(value: Estimate, targets: &[(Asil, f64)]) -> Asil {
    targets
        .iter()
        .find(|(_, t)| meets_minimum(value, *t))
        .map_or(Asil::Qm, |(a, _)| *a)
}

/// The highest ASIL whose upper-limit target (in FIT) `value` stays below by
/// [`meets_maximum`].
pub fn asil_for_maximum(value: Estimate, targets: &[(Asil, f64)]) -> Asil {
    targets
        .iter()
        .find(|(_, t)| meets_maximum(value, *t))
        .map_or(Asil::Qm, |(a, _)| *a)
}

/// The hardware metrics of an architecture.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Metrics {
    /// Sum of the failure rates of the sites, FIT.
    pub total_fit: f64,
    /// `sum(fit_i * p_vu,i)`, FIT.
    pub residual_fit: Estimate,
    /// `sum(fit_i * p_sq,i * (1 - latent_coverage_i))`, FIT.
    pub latent_fit: Estimate,
    /// Single-point fault metric `1 - residual / total` (ISO 26262-5:2018, 8.4.5).
    pub spfm: Estimate,
    /// Latent fault metric `1 - latent / sum(fit_i (1 - p_vu,i))` (ISO 26262-5:2018, 8.4.6).
    pub lfm: Estimate,
    /// Safe failure fraction (IEC 61508-2, C.1), with all residual outcomes dangerous
    /// undetected: `1 - residual / total`.
    pub sff: Estimate,
    /// Coverage averaged over the dangerous rate: `sum(fit p_vd) / sum(fit (p_vd + p_vu))`.
    pub dc_avg: Option<Estimate>,
    /// Highest ASIL whose SPFM target is met.
    pub asil_spfm: Asil,
    /// Highest ASIL whose LFM target is met.
    pub asil_lfm: Asil,
    /// Highest ASIL whose residual-rate budget the residual rate stays under (the
    /// single-point part of the PMHF only; multiple-point contributions are not included).
    pub asil_residual_budget: Asil,
}

/// Rolls site figures up into the hardware metrics.
///
/// Bounds propagate linearly: each metric's error is the FIT-weighted sum of the sites'
/// error bounds; for the ratios the interval of the quotient is taken.
pub fn metrics(sites: &[SiteResult]) -> Metrics {
    let total_fit: f64 = sites.iter().map(|s| s.fit).sum();
    let residual_fit: Estimate = sites.iter().map(SiteResult::residual_fit).sum();
    let latent_fit: Estimate = sites.iter().map(SiteResult::latent_fit).sum();
    let not_residual: Estimate = sites
        .iter()
        .map(|s| {
            Estimate::new(
                s.fit * (1.0 - s.outcome.p_vu.value),
                s.fit * s.outcome.p_vu.error,
            )
        })
        .sum();
    // Undefined metrics are reported as 1 with the classification "n/a": an empty sheet or
    // one where every fault is residual must never read as ASIL D.
    let spfm_defined = total_fit > 0.0;
    let spfm = if spfm_defined {
        Estimate::new(
            1.0 - residual_fit.value / total_fit,
            residual_fit.error / total_fit,
        )
    } else {
        Estimate::new(1.0, 0.0)
    };
    let lfm_defined = not_residual.value > 0.0;
    let lfm = one_minus_ratio(latent_fit, not_residual);
    let classify = |defined: bool, value: Estimate, targets: &[(Asil, f64)]| {
        if defined {
            asil_for_minimum(value, targets)
        } else {
            Asil::NotApplicable
        }
    };
    let detected: Estimate = sites.iter().map(|s| s.outcome.p_vd.scale(s.fit)).sum();
    let dangerous: Estimate = sites
        .iter()
        .map(|s| s.outcome.violation().scale(s.fit))
        .sum();
    let dc_avg = (dangerous.value > 0.0).then(|| ratio(detected, residual_fit, dangerous));
    Metrics {
        total_fit,
        residual_fit,
        latent_fit,
        spfm,
        lfm,
        sff: spfm,
        dc_avg,
        asil_spfm: classify(spfm_defined, spfm, &SPFM_TARGETS),
        asil_lfm: classify(lfm_defined, lfm, &LFM_TARGETS),
        asil_residual_budget: asil_for_maximum(residual_fit, &PMHF_TARGETS_FIT),
    }
}

/// `1 - a / b` with the bound from the extreme quotients.
fn one_minus_ratio(a: Estimate, b: Estimate) -> Estimate {
    if b.value <= 0.0 {
        return Estimate::new(1.0, 0.0);
    }
    let centre = a.value / b.value;
    let b_lo = (b.value - b.error).max(f64::MIN_POSITIVE);
    let high = (a.value + a.error) / b_lo;
    let low = (a.value - a.error).max(0.0) / (b.value + b.error);
    Estimate::new(1.0 - centre, (high - centre).max(centre - low))
}

/// `d / (d + r)` where `total = d + r`, bounded by interval arithmetic on `d` and `r`.
fn ratio(d: Estimate, r: Estimate, total: Estimate) -> Estimate {
    let centre = d.value / total.value;
    let d_lo = (d.value - d.error).max(0.0);
    let r_lo = (r.value - r.error).max(0.0);
    let low = if d_lo + r.value + r.error > 0.0 {
        d_lo / (d_lo + r.value + r.error)
    } else {
        0.0
    };
    let high = if d.value + d.error + r_lo > 0.0 {
        (d.value + d.error) / (d.value + d.error + r_lo)
    } else {
        1.0
    };
    Estimate::new(centre, (centre - low).max(high - centre))
}
