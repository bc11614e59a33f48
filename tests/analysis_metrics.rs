//! Hardware metrics (`analysis::metrics`) on hand-computed FMEDA-style examples.
//!
//! Formulas, ISO 26262-5:2018 clauses 8.4.5 and 8.4.6 with Annex C (from memory), and the
//! all-dangerous convention of README.md "What the figures mean":
//! - residual rate `sum(fit_i p_vu,i)`; SPFM = SFF = `1 - residual / sum(fit_i)` (the SFF of
//!   IEC 61508-2 Annex C when every undetected violation counts as dangerous undetected);
//! - latent rate `sum(fit_i p_sq,i (1 - latent_coverage_i))`;
//!   LFM = `1 - latent / sum(fit_i (1 - p_vu,i))`;
//! - targets, ISO 26262-5:2018 Table 4 (SPFM >= 90 / 97 / 99 % for ASIL B / C / D), Table 5
//!   (LFM >= 60 / 80 / 90 %), Table 6 (residual budget < 100 FIT for B and C, < 10 FIT for
//!   D), all from memory: check them against the standard in force.
//!
//! The classification rule of `metrics.rs`: a target is met when the pessimistic end of the
//! metric's bound meets it (value minus error for SPFM and LFM, `>=`; value plus error for
//! the residual rate, `<`), so that numerical error never lifts a design a level. The
//! boundary tests below pin that rule down: exactly at a target with zero error meets it;
//! above it but within the error bound does not.

use concord::analysis::metrics::{
    Asil, LFM_TARGETS, PMHF_TARGETS_FIT, SPFM_TARGETS, asil_for_maximum, asil_for_minimum, metrics,
};
use concord::analysis::site::SiteResult;
use concord::analysis::{AnalysisOptions, Outcome, analyze};
use concord::model::{Amplitude, load_str};
use concord::prob::Estimate;

/// A site with given figures; each `(value, error)`.
fn site(
    name: &str,
    fit: f64,
    [vd, vu, sd, sq]: [(f64, f64); 4],
    latent_coverage: f64,
) -> SiteResult {
    SiteResult {
        name: name.to_string(),
        fit,
        mode: "add",
        // The figures are given by hand; the amplitude only names the kind of site.
        amplitude: Amplitude::Gaussian {
            mean: 0.0,
            sigma: 1.0,
        },
        outcome: Outcome {
            p_vd: Estimate::new(vd.0, vd.1),
            p_vu: Estimate::new(vu.0, vu.1),
            p_sd: Estimate::new(sd.0, sd.1),
            p_sq: Estimate::new(sq.0, sq.1),
        },
        worst: None,
        curve: None,
        latent_coverage,
        warnings: Vec::new(),
        method: concord::analysis::engine::FigureMethod::Polytopes,
    }
}

/// Exact figures (zero error).
fn exact(name: &str, fit: f64, p: [f64; 4], latent_coverage: f64) -> SiteResult {
    site(name, fit, p.map(|v| (v, 0.0)), latent_coverage)
}

fn close(what: &str, got: f64, want: f64) {
    assert!(
        (got - want).abs() <= 1e-14 * want.abs().max(1.0),
        "{what}: {got}, by hand {want}"
    );
}

/// A three-site FMEDA sheet, computed by hand:
///
/// | site | FIT | p_vd | p_vu | p_sd | p_sq | latent cov. |
/// |------|-----|------|------|------|------|-------------|
/// | s1   | 100 | 0.20 | 0.01 | 0.09 | 0.70 | 0           |
/// | s2   |  50 | 1.00 | 0    | 0    | 0    | 0           |
/// | s3   |  10 | 0.45 | 0.05 | 0    | 0.50 | 0.6         |
///
/// - total 160 FIT; residual 100 * 0.01 + 50 * 0 + 10 * 0.05 = 1.5 FIT;
/// - SPFM = SFF = 1 - 1.5 / 160 = 1 - 0.009375 = 0.990625 -> ASIL D (>= 99 %);
/// - latent 100 * 0.70 * 1 + 0 + 10 * 0.50 * 0.4 = 70 + 2 = 72 FIT;
/// - not residual 100 * 0.99 + 50 * 1 + 10 * 0.95 = 99 + 50 + 9.5 = 158.5 FIT;
/// - LFM = 1 - 72 / 158.5 = 0.5457413... -> below the ASIL B target of 60 %;
/// - rate-weighted dc = (20 + 50 + 4.5) / (21 + 50 + 5) = 74.5 / 76 = 0.98026315...;
/// - residual 1.5 FIT < 10 -> the ASIL D budget.
#[test]
fn three_site_sheet_by_hand() {
    let sites = [
        exact("s1", 100.0, [0.20, 0.01, 0.09, 0.70], 0.0),
        exact("s2", 50.0, [1.0, 0.0, 0.0, 0.0], 0.0),
        exact("s3", 10.0, [0.45, 0.05, 0.0, 0.50], 0.6),
    ];
    close("s1 residual", sites[0].residual_fit().value, 1.0);
    close("s3 latent", sites[2].latent_fit().value, 2.0);
    let m = metrics(&sites);
    close("total", m.total_fit, 160.0);
    close("residual", m.residual_fit.value, 1.5);
    close("latent", m.latent_fit.value, 72.0);
    close("spfm", m.spfm.value, 0.990625);
    close("sff", m.sff.value, 0.990625);
    close("lfm", m.lfm.value, 1.0 - 72.0 / 158.5);
    close("lfm digits", m.lfm.value, 0.545_741_324_921_135_6);
    close(
        "dc_avg",
        m.dc_avg.expect("dangerous rate").value,
        74.5 / 76.0,
    );
    assert_eq!(m.asil_spfm, Asil::D);
    assert_eq!(m.asil_lfm, Asil::Qm);
    assert_eq!(m.asil_residual_budget, Asil::D);
    // Exact inputs give exact metrics (bounds zero up to rounding).
    assert!(m.spfm.error == 0.0 && m.lfm.error < 1e-15);
}

/// Bounds propagate (DEVELOPERS.md "How a figure is computed", step 5: every figure carries its
/// bound). The sheet above
/// with `s1.p_vu = 0.01 ± 1e-4` and `s1.p_sq = 0.70 ± 2e-4`:
///
/// - residual error 100 * 1e-4 = 0.01 FIT; SPFM error 0.01 / 160 = 6.25e-5;
/// - latent error 100 * 2e-4 = 0.02 FIT; not-residual error 100 * 1e-4 = 0.01 FIT;
/// - LFM bound from the extreme quotients (interval arithmetic): 72.02 / 158.49 -
///   72 / 158.5 = 1.5485e-4 is larger than 72 / 158.5 - 71.98 / 158.51 = 1.5483e-4.
#[test]
fn bounds_propagate_by_interval_arithmetic() {
    let sites = [
        site(
            "s1",
            100.0,
            [(0.20, 0.0), (0.01, 1e-4), (0.09, 0.0), (0.70, 2e-4)],
            0.0,
        ),
        exact("s2", 50.0, [1.0, 0.0, 0.0, 0.0], 0.0),
        exact("s3", 10.0, [0.45, 0.05, 0.0, 0.50], 0.6),
    ];
    let m = metrics(&sites);
    close("residual error", m.residual_fit.error, 0.01);
    close("spfm error", m.spfm.error, 6.25e-5);
    close("latent error", m.latent_fit.error, 0.02);
    let centre = 72.0 / 158.5;
    close("lfm error", m.lfm.error, 72.02 / 158.49 - centre);
    assert!(72.02 / 158.49 - centre > centre - 71.98 / 158.51);
    // SPFM 0.990625 - 6.25e-5 = 0.9905625 still meets ASIL D.
    assert_eq!(m.asil_spfm, Asil::D);
}

/// The targets in the constants are those recalled from ISO 26262-5:2018 Tables 4 to 6
/// (from memory).
#[test]
fn targets_are_the_recalled_iso_values() {
    assert_eq!(
        SPFM_TARGETS,
        [(Asil::D, 0.99), (Asil::C, 0.97), (Asil::B, 0.90)]
    );
    assert_eq!(
        LFM_TARGETS,
        [(Asil::D, 0.90), (Asil::C, 0.80), (Asil::B, 0.60)]
    );
    assert_eq!(
        PMHF_TARGETS_FIT,
        [(Asil::D, 10.0), (Asil::C, 100.0), (Asil::B, 100.0)]
    );
}

/// One site of `fit` 100 FIT with residual share `p_vu` gives SPFM `1 - p_vu`; the boundary
/// values are exact in binary arithmetic for these inputs (100 * p then / 100 round back to
/// p, and 1 - p rounds to the target's double): checked first, so the test says which it is.
fn spfm_of(p_vu: f64, error: f64) -> (Estimate, Asil) {
    let m = metrics(&[site(
        "s",
        100.0,
        [(1.0 - p_vu, 0.0), (p_vu, error), (0.0, 0.0), (0.0, 0.0)],
        0.0,
    )]);
    (m.spfm, m.asil_spfm)
}

#[test]
fn spfm_boundaries_of_table_4() {
    // ISO 26262-5:2018 Table 4 (from memory): ">= 99 %" for D, ">= 97 %" for C, ">= 90 %"
    // for B; a value exactly at a target meets it.
    for (p_vu, target, level, below) in [
        (0.01, 0.99, Asil::D, Asil::C),
        (0.03, 0.97, Asil::C, Asil::B),
        (0.10, 0.90, Asil::B, Asil::Qm),
    ] {
        let (spfm, asil) = spfm_of(p_vu, 0.0);
        assert_eq!(spfm.value, target, "SPFM at the boundary is exact here");
        assert_eq!(
            asil, level,
            "exactly {target} with zero error meets {level:?}"
        );
        // One residual FIT in a thousand more: just below the target.
        let (spfm, asil) = spfm_of(p_vu + 1e-5, 0.0);
        assert!(spfm.value < target);
        assert_eq!(asil, below, "just below {target}");
        // Above the target by less than the bound: the pessimistic end decides (rule of
        // metrics.rs), one level lower.
        let (spfm, asil) = spfm_of(p_vu - 5e-5, 1e-4);
        assert!(spfm.value > target && spfm.value - spfm.error < target);
        assert_eq!(asil, below, "{target} within the bound");
        // Above by more than the bound: met.
        let (spfm, asil) = spfm_of(p_vu - 2e-4, 1e-4);
        assert!(spfm.value - spfm.error > target);
        assert_eq!(asil, level);
    }
}

#[test]
fn lfm_boundaries_of_table_5() {
    // One site of 100 FIT, no residual, all quiet (p_sq = 1): latent = 100 (1 - lc), not
    // residual = 100, LFM = lc. ISO 26262-5:2018 Table 5 (from memory): ">= 90 %" for D,
    // ">= 80 %" for C, ">= 60 %" for B.
    let lfm_of = |lc: f64, sq_error: f64| {
        let m = metrics(&[site(
            "s",
            100.0,
            [(0.0, 0.0), (0.0, 0.0), (0.0, 0.0), (1.0, sq_error)],
            lc,
        )]);
        (m.lfm, m.asil_lfm)
    };
    for (lc, level, below) in [
        (0.9, Asil::D, Asil::C),
        (0.8, Asil::C, Asil::B),
        (0.6, Asil::B, Asil::Qm),
    ] {
        let (lfm, asil) = lfm_of(lc, 0.0);
        // 1 - 100 (1 - lc) / 100 rounds back to the double of lc for these three values
        // (checked here, so a change of the arithmetic shows).
        assert_eq!(lfm.value, lc);
        assert_eq!(asil, level, "exactly {lc} with zero error meets {level:?}");
        let (lfm, asil) = lfm_of(lc + 1e-3, 0.0);
        assert!(lfm.value > lc);
        assert_eq!(asil, level);
        let (lfm, asil) = lfm_of(lc - 1e-3, 0.0);
        assert!(lfm.value < lc);
        assert_eq!(asil, below);
        // Above the target by 1e-3, within the bound: a p_sq error e gives a latent error
        // 100 e (1 - lc) and an LFM error e (1 - lc); e = 2e-2 makes that at least 2e-3 for
        // every lc here, so the pessimistic end is below the target.
        let (lfm, asil) = lfm_of(lc + 1e-3, 2e-2);
        assert!(lfm.value > lc && lfm.value - lfm.error < lc, "{lfm:?}");
        assert_eq!(asil, below, "{lc} within the bound");
    }
}

#[test]
fn residual_budget_boundaries_of_table_6() {
    // ISO 26262-5:2018 Table 6 (from memory): "< 10^-8 /h" (10 FIT) for D, "< 10^-7 /h"
    // (100 FIT) for B and C: strict, so exactly 10 FIT misses D.
    let at = |fit: f64, err: f64| asil_for_maximum(Estimate::new(fit, err), &PMHF_TARGETS_FIT);
    assert_eq!(at(9.99, 0.0), Asil::D);
    assert_eq!(at(10.0, 0.0), Asil::C);
    assert_eq!(at(9.99, 0.02), Asil::C, "within the bound of 10 FIT");
    assert_eq!(at(99.0, 0.0), Asil::C);
    assert_eq!(at(100.0, 0.0), Asil::Qm);
    assert_eq!(at(99.99, 0.02), Asil::Qm);
    // The same rule for a minimum target, directly.
    assert_eq!(
        asil_for_minimum(Estimate::new(0.99, 0.0), &SPFM_TARGETS),
        Asil::D
    );
    // 0.995 - 0.006 = 0.989: below the 0.99 of D, above the 0.97 of C.
    assert_eq!(
        asil_for_minimum(Estimate::new(0.995, 0.006), &SPFM_TARGETS),
        Asil::C
    );
}

/// A tiny architecture whose outcomes are certain: both channels have sigma 0 (a singular
/// covariance of rank 0, allowed by the format), so every fault point lands in one outcome.
/// Output `(a + b) / 2` against `|y| <= 2`; check `|a - b| <= 3`. Faults (add mode):
///
/// | site | FIT | hits, amplitude           | y, d              | outcome           | lc  |
/// |------|-----|---------------------------|-------------------|-------------------|-----|
/// | f1   | 10  | a, F = 5                  | 2.5, 5            | p_vd = 1          | 0   |
/// | f2   |  2  | a and b, F = 3            | 3, 0              | p_vu = 1          | 0   |
/// | f3   | 20  | a, F = 1                  | 0.5, 1            | p_sq = 1          | 0.5 |
/// | f4   |  5  | a, F = 3.6                | 1.8, 3.6          | p_sd = 1          | 0   |
/// | f5   |  8  | a, F = 5 (w .25), 1 (.75) | as f1 / as f3     | p_vd .25, p_sq .75| 0   |
///
/// - total 45; residual 2 * 1 = 2 FIT; SPFM = 1 - 2/45 = 0.95556 -> ASIL B (>= 90, < 97 %);
/// - latent 20 * 1 * 0.5 + 8 * 0.75 = 10 + 6 = 16; not residual 45 - 2 = 43;
///   LFM = 1 - 16/43 = 0.62791 -> ASIL B (>= 60, < 80 %);
/// - dc_avg = (10 + 8 * 0.25) / (10 + 2 + 8 * 0.25) = 12/14 = 0.857143; residual 2 < 10 FIT.
#[test]
fn certain_outcomes_of_a_tiny_architecture() {
    let text = r#"
name = "two exact channels"
unit = "mm"

[channels.a]
sigma = 0.0

[channels.b]
sigma = 0.0

[output]
kind = "mean"
of = ["a", "b"]

[checks.ab]
kind = "difference"
of = ["a", "b"]
limit = 3.0

[safety]
limit = 2.0

[faults.f1]
fit = 10.0
hits = { a = 1.0 }
mode = "add"
amplitude = { points = [[5.0, 1.0]] }

[faults.f2]
fit = 2.0
hits = { a = 1.0, b = 1.0 }
mode = "add"
amplitude = { points = [[3.0, 1.0]] }

[faults.f3]
fit = 20.0
hits = { a = 1.0 }
mode = "add"
amplitude = { points = [[1.0, 1.0]] }
latent_coverage = 0.5

[faults.f4]
fit = 5.0
hits = { a = 1.0 }
mode = "add"
amplitude = { points = [[3.6, 1.0]] }

[faults.f5]
fit = 8.0
hits = { a = 1.0 }
mode = "add"
amplitude = { points = [[5.0, 0.25], [1.0, 0.75]] }
"#;
    let arch = load_str(text, "exact.toml").unwrap_or_else(|e| panic!("{e}"));
    let a =
        analyze(&arch.model, &AnalysisOptions::default(), false).unwrap_or_else(|e| panic!("{e}"));
    let want: [[f64; 4]; 5] = [
        [1.0, 0.0, 0.0, 0.0],
        [0.0, 1.0, 0.0, 0.0],
        [0.0, 0.0, 0.0, 1.0],
        [0.0, 0.0, 1.0, 0.0],
        [0.25, 0.0, 0.0, 0.75],
    ];
    for (s, w) in a.sites.iter().zip(want) {
        let o = s.outcome;
        for (got, w) in [o.p_vd, o.p_vu, o.p_sd, o.p_sq].into_iter().zip(w) {
            assert!(
                (got.value - w).abs() <= got.error + 1e-12,
                "{}: {got:?}, by hand {w}",
                s.name
            );
        }
    }
    let m = a.metrics;
    let tol = 1e-10;
    assert!((m.total_fit - 45.0).abs() < 1e-12);
    assert!(
        (m.residual_fit.value - 2.0).abs() < tol,
        "{:?}",
        m.residual_fit
    );
    assert!(
        (m.latent_fit.value - 16.0).abs() < tol,
        "{:?}",
        m.latent_fit
    );
    assert!((m.spfm.value - (1.0 - 2.0 / 45.0)).abs() < tol);
    assert!((m.sff.value - (1.0 - 2.0 / 45.0)).abs() < tol);
    assert!((m.lfm.value - (1.0 - 16.0 / 43.0)).abs() < tol);
    let dc_avg = m.dc_avg.expect("dangerous rate");
    assert!((dc_avg.value - 12.0 / 14.0).abs() < tol);
    assert_eq!(
        (m.asil_spfm, m.asil_lfm, m.asil_residual_budget),
        (Asil::B, Asil::B, Asil::D)
    );
}

#[test]
fn undefined_metrics_claim_no_asil() {
    // Regression: an empty sheet, and a sheet whose only fault is always residual (no rate
    // left for the LFM denominator), once read as ASIL D. The metrics are undefined there
    // (ISO 26262-5:2018 8.4.5 and 8.4.6 divide by those rates, from memory): no level may
    // be claimed.
    let empty = metrics(&[]);
    assert_eq!(empty.asil_spfm, Asil::NotApplicable);
    assert_eq!(empty.asil_lfm, Asil::NotApplicable);
    let all_residual = metrics(&[exact("always_residual", 10.0, [0.0, 1.0, 0.0, 0.0], 0.0)]);
    // SPFM = 1 - 10 / 10 = 0: defined, below every target.
    close("spfm", all_residual.spfm.value, 0.0);
    assert_eq!(all_residual.asil_spfm, Asil::Qm);
    assert_eq!(all_residual.asil_lfm, Asil::NotApplicable);
    assert_ne!(all_residual.asil_lfm.verdict(), Asil::D.verdict());
}
