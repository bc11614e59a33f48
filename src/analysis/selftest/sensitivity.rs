//! Cases of the sensitivity of the figures to the inputs: two equal channels on a shared
//! source, averaged and compared, whose false alarm and residual have derivatives in closed
//! form.

use crate::analysis::AnalysisOptions;
use crate::analysis::sensitivity::{SensitivityAnalysis, sensitivity};
use crate::model::load_str;

use super::{Case, Measure, ReferenceData};

const SENSITIVITY: &str = "sensitivity of the figures";

/// Two equal channels N(0, 0.5^2) on a source N(0, 0.2^2), their mean against 1.5 and their
/// difference against 1.6, and a drift of the source N(0, 0.9^2) of 10 FIT.
const TWO: &str = "name = \"two on a source\"\nunit = \"mm\"\n[sources.ref]\nsigma = 0.2\n\
    [channels.a]\nsigma = 0.5\nfrom = { ref = 1.0 }\n[channels.b]\nsigma = 0.5\n\
    from = { ref = 1.0 }\n[output]\nkind = \"mean\"\nof = [\"a\", \"b\"]\n[checks.ab]\n\
    kind = \"difference\"\nof = [\"a\", \"b\"]\nlimit = 1.6\n[safety]\nlimit = 1.5\n\
    [faults.ref_drift]\nfit = 10.0\nhits = { ref = 1.0 }\nmode = \"add\"\n\
    amplitude = { gaussian = { mean = 0.0, sigma = 0.9 } }\n";

fn phi(x: f64) -> f64 {
    0.5 * libm::erfc(-x * std::f64::consts::FRAC_1_SQRT_2)
}

fn density(x: f64) -> f64 {
    (-0.5 * x * x).exp() / (2.0 * std::f64::consts::PI).sqrt()
}

/// The derivative and its bound of one row.
fn row(
    found: &Result<SensitivityAnalysis, String>,
    key: &str,
    site: Option<&str>,
    figure: &str,
) -> Result<(f64, f64), String> {
    let found = found.as_ref().map_err(Clone::clone)?;
    found
        .rows
        .iter()
        .find(|r| r.key == key && r.site.as_deref() == site && r.figure == figure)
        .map(|r| (r.derivative, r.error))
        .ok_or_else(|| format!("no row {key} / {figure}"))
}

/// The cases of this group. The difference `d = a - b ~ N(0, 2 s^2)` does not see the source
/// and is independent of the mean `m ~ N(0, s^2/2 + g^2 + f^2)` (equal variances; Cochran
/// 1934), so `false_alarm = 2 Phi(-T / sd_d)` and `residual = fit 2 Phi(-L / sd_m) (1 - 2
/// Phi(-T / sd_d))`, differentiated by hand.
pub fn sensitivity_cases(_data: &ReferenceData) -> Vec<Case> {
    let (s, g, f, t, l, fit) = (0.5f64, 0.2f64, 0.9f64, 1.6f64, 1.5f64, 10.0);
    let sd_d = (2.0 * s * s).sqrt();
    let sd_m = (s * s / 2.0 + g * g + f * f).sqrt();
    let pass = 1.0 - 2.0 * phi(-t / sd_d);
    let found = load_str(TWO, "two.toml")
        .map_err(|e| e.to_string())
        .and_then(|arch| {
            sensitivity(&arch, &AnalysisOptions::default()).map_err(|e| e.to_string())
        });
    let source = "derived by hand: normal probabilities of the independent mean and \
                  difference (Cochran 1934), Phi by libm erfc";
    let mut cases = Vec::new();
    for (name, key, site, figure, reference) in [
        (
            "d false alarm / d comparator limit",
            "checks.ab.limit",
            None,
            "false_alarm",
            -2.0 * density(t / sd_d) / sd_d,
        ),
        (
            "d residual rate / d safety limit",
            "safety.limit",
            Some("ref_drift"),
            "residual_fit",
            -fit * 2.0 * density(l / sd_m) / sd_m * pass,
        ),
        (
            "d residual rate / d comparator limit",
            "checks.ab.limit",
            Some("ref_drift"),
            "residual_fit",
            fit * 2.0 * phi(-l / sd_m) * 2.0 * density(t / sd_d) / sd_d,
        ),
    ] {
        cases.push(Case::new(
            SENSITIVITY,
            name,
            source,
            row(&found, key, site, figure),
            reference,
            1e-9 * reference.abs(),
            Measure::Absolute,
        ));
    }
    cases
}
