//! Sections 9 to 12 of the report: the Monte Carlo cross-check, the method and its
//! settings, how to reproduce the report, and the cautions.

use std::fmt::Write as _;

use crate::report::ReportInput;
use crate::report::cautions::CAUTIONS;
use crate::report::format::{number, probability, xml_escape as esc};
use crate::report::json::AnalysisJson;

use super::{HtmlOptions, cell, prob_cell, sci_html, section_start, text_cell, verdict_html};

pub(super) fn crosscheck(o: &mut String, doc: &AnalysisJson, options: &HtmlOptions) {
    section_start(o, "crosscheck", 12, "Monte Carlo cross-check");
    let Some(rows) = &doc.verification else {
        o.push_str("<p>Not run for this report. Run <code>concord report FILE --verify N</code> to re-run every scenario with N samples by plain Monte Carlo sampling, an independent code path.</p>\n</section>\n");
        return;
    };
    let agree = rows.iter().filter(|r| r.agrees).count();
    let (samples, seed) = options.monte_carlo.unwrap_or((0, 0));
    let _ = writeln!(
        o,
        "<p>Every scenario was re-run by plain Monte Carlo sampling (an independent code path) with {samples} samples, seed {seed}, at the worst σ of each site. A figure agrees when the exact value lies in the sampled 99.9 % Wilson interval. <strong>{agree} of {} figures agree.</strong></p>",
        rows.len()
    );
    o.push_str(r#"<table class="wide crosscheck"><thead><tr><th>scenario</th><th>figure</th><th class="num">exact</th><th class="num">sampled</th><th class="num">99.9 % interval</th><th>agrees</th></tr></thead><tbody>"#);
    for (i, r) in rows.iter().enumerate() {
        let key = format!("verification/{i}");
        let _ = writeln!(
            o,
            r#"<tr>{}{}{}{}<td class="num">[{}, {}]</td><td>{}</td></tr>"#,
            text_cell(&r.scenario),
            text_cell(&r.figure),
            prob_cell(&format!("{key}/exact"), r.exact, r.exact_error),
            cell(
                &format!("{key}/sampled"),
                r.sampled,
                &sci_html(&probability(r.sampled)),
                None,
                ""
            ),
            sci_html(&probability(r.interval[0])),
            sci_html(&probability(r.interval[1])),
            verdict_html(r.agrees, if r.agrees { "yes" } else { "NO" })
        );
    }
    o.push_str("</tbody></table>\n</section>\n");
}

/// Meaning of each numerical setting, by its field name in `AnalysisOptions`.
const OPTION_MEANINGS: [(&str, &str); 12] = [
    (
        "polytope_abs",
        "absolute tolerance of each polytope probability",
    ),
    (
        "polytope_rel",
        "relative tolerance of each polytope probability",
    ),
    ("polytope_max_points", "lattice points allowed per polytope"),
    (
        "amplitude_abs",
        "absolute tolerance of the integral over a uniform amplitude",
    ),
    ("amplitude_rel", "relative tolerance of that integral"),
    (
        "amplitude_max_intervals",
        "subintervals allowed in that integral",
    ),
    (
        "sigma_scan_points",
        "points of the log-spaced scan over an unknown σ",
    ),
    (
        "sigma_scan_rel",
        "relative tolerance of each polytope during the scan",
    ),
    (
        "sigma_rel_tol",
        "relative tolerance in σ of the refined worst case",
    ),
    (
        "sigma_max_evaluations",
        "evaluations allowed per refinement",
    ),
    ("max_polytopes", "disjoint polytopes allowed per scenario"),
    (
        "engine",
        "which engine: automatic (order statistics from four channels where they fit, else polytopes)",
    ),
];

pub(super) fn method(o: &mut String, input: &ReportInput<'_>, options: &HtmlOptions) {
    section_start(o, "method", 13, "Numerical method and tolerances");
    o.push_str("<p>Every outcome is a union of disjoint polytopes in the space of the channel deviations. Each polytope probability is integrated with its own error bound: closed forms for one and two random directions (the normal distribution; the bivariate normal by Genz 2004); exact planar slices for two conditioning variables; one adaptive Gauss–Kronrod integral over exact slices for three (deterministic); Genz's sequential conditioning with a randomised lattice rule and a fixed seed for four or more (Genz 1992; Genz and Bretz 2009), its bound the scatter of the random shifts. A uniform amplitude is integrated by adaptive Gauss–Kronrod (QUADPACK, Piessens et al. 1983) with breakpoints where the integrand steps; an unknown σ is scanned on a log grid and every local maximum of the residual refined by Brent's method (Brent 1973) in log σ; the worst case's bounds add how far each figure moves over the tolerance in σ either side of the σ found and, for the residual, twice the largest bound among the refinement's values and those at the σ found (the point found can read high and the true top low). The residual is integrated directly, never as a difference of large probabilities. The bounds cover the numerical method only, not the model.</p>\n");
    o.push_str("<p>Where the channels are independent once one shared term is fixed (a shared source, a positive correlation written as one, a gaussian fault amplitude) and the output is an order statistic of channels with range or difference checks, the figures are computed instead from counts: given the shared term, “the output above L” is “at least k readings above L”, a Poisson-binomial sum, and a range check is one integral over the smallest reading (David and Nagaraja 2003, Order Statistics); the integrals over that reading and over the shared term are adaptive Gauss–Kronrod rules over windows of ±9 standard deviations, whose mass outside (2.3e-19 each) is added to the bounds. This takes polynomial time in the number of channels; models of up to three channels stay with the polytopes.</p>\n");
    let mut by_method = vec![format!(
        "fault-free baseline: {}",
        input.analysis.baseline_method.words()
    )];
    for site in &input.analysis.sites {
        by_method.push(format!("{}: {}", site.name, site.method.words()));
    }
    let _ = writeln!(
        o,
        "<p>Method of each figure set: {}.</p>",
        esc(&by_method.join("; "))
    );
    let _ = writeln!(
        o,
        "<p>Method of this report: <strong>{}</strong>. Cross-check: {}.</p>",
        esc(input.method),
        match options.monte_carlo {
            Some((n, seed)) => format!("{n} Monte Carlo samples per scenario, seed {seed}"),
            None => "not run".to_string(),
        }
    );
    o.push_str(r#"<table class="kv"><thead><tr><th>setting</th><th class="num">value</th><th>meaning</th></tr></thead><tbody>"#);
    let settings = serde_json::to_value(input.analysis.options).ok();
    if let Some(serde_json::Value::Object(map)) = settings {
        for (name, value) in map {
            let meaning = OPTION_MEANINGS
                .iter()
                .find(|(n, _)| *n == name)
                .map_or("", |(_, m)| m);
            let shown = value.as_f64().map_or_else(|| value.to_string(), number);
            let _ = write!(
                o,
                r#"<tr><td><code>{}</code></td><td class="num">{}</td><td>{}</td></tr>"#,
                esc(&name),
                esc(&shown),
                esc(meaning)
            );
        }
    }
    o.push_str("</tbody></table>\n</section>\n");
}

pub(super) fn reproduce(o: &mut String, doc: &AnalysisJson, options: &HtmlOptions) {
    section_start(o, "reproduce", 14, "Reproducing this report");
    o.push_str("<p>concord is deterministic: the same input file, tool version and options give the same figures, bit for bit, whatever the number of threads. To reproduce this report, check that the file's SHA-256 matches and run the command below; <code>concord analyze FILE --format json --with-curves</code> prints the same numbers as JSON (each number cell of this page carries its exact JSON value in <code>data-value</code>).</p>\n");
    o.push_str(r#"<table class="kv"><tbody>"#);
    let rows = [
        ("tool", format!("concord {}", doc.tool_version)),
        ("input file", doc.input_file.clone()),
        ("input SHA-256", doc.input_sha256.clone()),
        ("report date", options.date.to_string()),
        ("command", options.command.clone()),
    ];
    for (k, v) in rows {
        let _ = write!(
            o,
            "<tr><th scope=\"row\">{}</th><td><code class=\"hash\">{}</code></td></tr>",
            esc(k),
            esc(&v)
        );
    }
    o.push_str("</tbody></table>\n</section>\n");
}

pub(super) fn cautions(o: &mut String) {
    section_start(o, "cautions", 15, "Cautions");
    o.push_str(r#"<ul class="cautions">"#);
    for c in CAUTIONS {
        let _ = write!(o, "<li>{}</li>", esc(c));
    }
    o.push_str("</ul>\n</section>\n");
}
