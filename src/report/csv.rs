//! CSV output: one row for the baseline and one per fault site, columns named as in JSON,
//! after the comment block of the cautions (lines starting with `#`); with a timing
//! section, one more row per site named `<site> (timed)`: the same columns over the
//! deadline.

use crate::analysis::Outcome;
use crate::analysis::site::SiteResult;

use super::ReportInput;
use super::cautions::csv_comment_block;
use super::format::{AmplitudeStyle, describe_amplitude};

/// The CSV header.
pub const HEADER: &str = "scenario,fit,mode,amplitude,dc,dc_error,dc_all_dangerous,p_vd,p_vd_error,\
p_vu,p_vu_error,p_sd,p_sd_error,p_sq,p_sq_error,worst_sigma,residual_fit,latent_fit";

/// Quotes a text field when it holds a comma, quote or line break (RFC 4180, 2.6 and 2.7);
/// every CSV writer of the report layer uses it.
pub(crate) fn field(text: &str) -> String {
    if text.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

fn opt(v: Option<f64>) -> String {
    v.map_or(String::new(), |x| format!("{x:e}"))
}

/// The CSV text.
pub fn render(input: &ReportInput<'_>) -> String {
    let a = input.analysis;
    let mut out = csv_comment_block();
    out.push_str(HEADER);
    out.push('\n');
    let b = &a.baseline;
    out.push_str(&format!(
        "baseline,,,,{},{},{:e},{:e},{:e},{:e},{:e},{:e},{:e},{:e},{:e},,,\n",
        opt(b.dc().map(|d| d.value)),
        opt(b.dc().map(|d| d.error)),
        b.dc_all_dangerous().value,
        b.p_vd.value,
        b.p_vd.error,
        b.p_vu.value,
        b.p_vu.error,
        b.p_sd.value,
        b.p_sd.error,
        b.p_sq.value,
        b.p_sq.error
    ));
    for s in &a.sites {
        out.push_str(&site_row(
            &s.name,
            s,
            &s.outcome,
            s.worst.as_ref().map(|w| w.sigma),
        ));
    }
    // With a timing section, one more row per site: the same columns over the deadline.
    if let Some(t) = &a.timed {
        for (ts, s) in t.sites.iter().zip(&a.sites) {
            out.push_str(&site_row(
                &format!("{} (timed)", ts.name),
                s,
                &ts.outcome,
                ts.worst_sigma,
            ));
        }
    }
    out
}

/// One row of a fault site: its rate and fault model from `site`, the figures of `o`.
fn site_row(name: &str, site: &SiteResult, o: &Outcome, worst_sigma: Option<f64>) -> String {
    format!(
        "{},{:e},{},{},{},{},{:e},{:e},{:e},{:e},{:e},{:e},{:e},{:e},{:e},{},{:e},{:e}\n",
        field(name),
        site.fit,
        site.mode,
        field(&describe_amplitude(
            &site.amplitude,
            false,
            AmplitudeStyle::Compact
        )),
        opt(o.dc().map(|d| d.value)),
        opt(o.dc().map(|d| d.error)),
        o.dc_all_dangerous().value,
        o.p_vd.value,
        o.p_vd.error,
        o.p_vu.value,
        o.p_vu.error,
        o.p_sd.value,
        o.p_sd.error,
        o.p_sq.value,
        o.p_sq.error,
        opt(worst_sigma),
        o.p_vu.value * site.fit,
        o.p_sq.value * (site.fit * (1.0 - site.latent_coverage))
    )
}
