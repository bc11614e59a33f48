//! Sections 3 to 5 of the report: the architecture (its diagram), the inputs as the file
//! gives them and the assumptions.

use std::fmt::Write as _;

use crate::model::{Detection, FaultMode};

use crate::report::ReportInput;
use crate::report::diagram;
use crate::report::format::{AmplitudeStyle, describe_amplitude, number, xml_escape as esc};
use crate::report::json::{AnalysisJson, SiteJson};

use super::section_start;

pub(super) fn architecture(o: &mut String, input: &ReportInput<'_>) {
    section_start(o, "architecture", 3, "Architecture");
    o.push_str(r#"<figure class="diagram-figure">"#);
    o.push_str(&diagram::render_svg(input.architecture));
    let _ = writeln!(
        o,
        "<figcaption>Figure 1. The model graph of the file, computed from left to right. {}</figcaption></figure>",
        esc(diagram::KEY)
    );
    o.push_str("</section>\n");
}

pub(super) fn inputs(o: &mut String, input: &ReportInput<'_>) {
    let m = &input.architecture.model;
    let unit = esc(&m.unit);
    section_start(o, "inputs", 4, "Inputs");
    let _ = writeln!(
        o,
        "<p>All deviations, limits and amplitudes are in <strong>{unit}</strong> (deviation = reported value − true value); failure rates in FIT (failures per 10<sup>9</sup> hours).</p>"
    );
    o.push_str(r#"<table class="kv"><tbody>"#);
    let full = m.full_scale.map_or("not given".to_string(), |(a, b)| {
        format!("[{}, {}] {}", number(a), number(b), m.unit)
    });
    let rows = [
        ("Measuring range (full scale)", full),
        ("Output", m.output_description.clone()),
        (
            "Safety band (violated outside)",
            format!(
                "[{}, {}] {}",
                number(m.safety_lower),
                number(m.safety_upper),
                m.unit
            ),
        ),
        (
            "Detection",
            match m.detection {
                Detection::Any => "any check fires".to_string(),
                Detection::AtLeast(k) => format!("at least {k} checks fire"),
            },
        ),
    ];
    for (k, v) in rows {
        let _ = write!(
            o,
            "<tr><th scope=\"row\">{}</th><td>{}</td></tr>",
            esc(k),
            esc(&v)
        );
    }
    o.push_str("</tbody></table>\n");

    let _ = writeln!(
        o,
        r#"<h3>Channels</h3><table class="wide"><thead><tr><th>channel</th><th class="num">systematic mean [{unit}]</th><th class="num">own σ [{unit}]</th><th class="num">total σ [{unit}]</th><th>shared sources (gain)</th></tr></thead><tbody>"#
    );
    let total = m.total_sigmas();
    for (i, name) in m.channels.iter().enumerate() {
        let sources: Vec<String> = m
            .sources
            .iter()
            .enumerate()
            .filter_map(|(j, s)| {
                let g = m.source_gains.get((i, j)).copied().unwrap_or(0.0);
                (g != 0.0).then(|| format!("{s} ({})", number(g)))
            })
            .collect();
        let _ = writeln!(
            o,
            r#"<tr><td>{}</td><td class="num">{}</td><td class="num">{}</td><td class="num">{}</td><td>{}</td></tr>"#,
            esc(name),
            esc(&number(m.own_means.get(i).copied().unwrap_or(f64::NAN))),
            esc(&number(m.own_sigmas.get(i).copied().unwrap_or(f64::NAN))),
            esc(&number(total.get(i).copied().unwrap_or(f64::NAN))),
            esc(&if sources.is_empty() {
                "none".to_string()
            } else {
                sources.join(", ")
            })
        );
    }
    o.push_str("</tbody></table>\n");

    if !m.sources.is_empty() {
        let _ = writeln!(
            o,
            r#"<h3>Shared error sources (common cause)</h3><table><thead><tr><th>source</th><th class="num">mean [{unit}]</th><th class="num">σ [{unit}]</th></tr></thead><tbody>"#
        );
        for (j, name) in m.sources.iter().enumerate() {
            let _ = writeln!(
                o,
                r#"<tr><td>{}</td><td class="num">{}</td><td class="num">{}</td></tr>"#,
                esc(name),
                esc(&number(m.source_means.get(j).copied().unwrap_or(f64::NAN))),
                esc(&number(m.source_sigmas.get(j).copied().unwrap_or(f64::NAN)))
            );
        }
        o.push_str("</tbody></table>\n");
    }

    let n = m.channels.len();
    let mut pairs = Vec::new();
    for i in 0..n {
        for j in i + 1..n {
            let rho = m.own_correlation.get((i, j)).copied().unwrap_or(0.0);
            if rho != 0.0 {
                pairs.push((i, j, rho));
            }
        }
    }
    o.push_str("<h3>Correlation of the channels' own noise</h3>");
    if pairs.is_empty() {
        o.push_str("<p>None: the own noise terms are independent.</p>\n");
    } else {
        o.push_str(
            r#"<table><thead><tr><th>between</th><th class="num">ρ</th></tr></thead><tbody>"#,
        );
        for (i, j, rho) in pairs {
            let _ = write!(
                o,
                r#"<tr><td>{} and {}</td><td class="num">{}</td></tr>"#,
                esc(&m.channels[i]),
                esc(&m.channels[j]),
                esc(&number(rho))
            );
        }
        o.push_str("</tbody></table>\n");
    }

    if !m.signals.is_empty() {
        o.push_str(r#"<h3>Derived signals</h3><table><thead><tr><th>signal</th><th>value</th></tr></thead><tbody>"#);
        for (k, (name, _)) in m.signals.iter().enumerate() {
            let d = m.signal_descriptions.get(k).cloned().unwrap_or_default();
            let _ = write!(
                o,
                "<tr><td>{}</td><td><code>{}</code></td></tr>",
                esc(name),
                esc(&d)
            );
        }
        o.push_str("</tbody></table>\n");
    }

    let _ = writeln!(
        o,
        r#"<h3>Checks</h3><table><thead><tr><th>check</th><th>value</th><th class="num">passes within [{unit}]</th></tr></thead><tbody>"#
    );
    for c in &m.checks {
        let _ = writeln!(
            o,
            r#"<tr><td>{}</td><td><code>{}</code></td><td class="num">[{}, {}]</td></tr>"#,
            esc(&c.name),
            esc(&c.description),
            esc(&end(c.lower)),
            esc(&end(c.upper))
        );
    }
    o.push_str("</tbody></table>\n");

    let _ = writeln!(
        o,
        r#"<h3>Fault sites</h3><table class="wide"><thead><tr><th>site</th><th class="num">rate [FIT]</th><th>mode</th><th>acts on (gain)</th><th>amplitude F [{unit}]</th><th class="num">latent coverage</th></tr></thead><tbody>"#
    );
    for f in &m.faults {
        let hits: Vec<String> = f
            .hits
            .iter()
            .map(|(n, g)| format!("{n} ({})", number(*g)))
            .collect();
        let mode = match f.mode {
            FaultMode::Add { .. } => "add",
            FaultMode::Replace { .. } => "replace",
        };
        let _ = writeln!(
            o,
            r#"<tr><td>{}</td><td class="num">{}</td><td>{}</td><td>{}</td><td>{}</td><td class="num">{}</td></tr>"#,
            esc(&f.name),
            esc(&number(f.fit)),
            esc(mode),
            esc(&hits.join(", ")),
            esc(&describe_amplitude(
                &f.amplitude,
                f.uniform_is_full_scale,
                AmplitudeStyle::Prose
            )),
            esc(&number(f.latent_coverage))
        );
    }
    o.push_str("</tbody></table>\n");
    o.push_str("<p class=\"tablenote\">Mode <em>add</em>: what the site acts on reads its value plus gain × F (a shared source passes this on to every channel it feeds: a common-cause fault). Mode <em>replace</em>: the channel reads gain × F, its noise gone (e.g. stuck at a value).</p>\n</section>\n");
}

pub(super) fn end(v: f64) -> String {
    if v.is_finite() {
        number(v)
    } else if v > 0.0 {
        "∞".to_string()
    } else {
        "−∞".to_string()
    }
}

pub(super) fn assumptions(o: &mut String, input: &ReportInput<'_>, doc: &AnalysisJson) {
    let m = &input.architecture.model;
    section_start(o, "assumptions", 5, "Assumptions");
    o.push_str("<ol class=\"assumptions\">\n");
    o.push_str("<li><strong>Gaussian noise.</strong> Without a fault, the channel deviations are jointly gaussian with the means, standard deviations, shared sources and correlations of section 4 (a singular covariance, e.g. a σ of zero, is allowed).</li>\n");
    o.push_str("<li><strong>Independent fault sites.</strong> Each fault site is analysed as the only fault present; its amplitude is independent of all noise. Rates are constant and add up across sites.</li>\n");
    o.push_str("<li><strong>Fault models.</strong> As written in the file:<ul>");
    for f in &m.faults {
        let _ = write!(
            o,
            "<li><code>{}</code>: {} ({})</li>",
            esc(&f.name),
            esc(&describe_amplitude(
                &f.amplitude,
                f.uniform_is_full_scale,
                AmplitudeStyle::Prose
            )),
            match f.mode {
                FaultMode::Add { .. } => "added to what it hits",
                FaultMode::Replace { .. } => "replaces the channel's reading",
            }
        );
    }
    o.push_str("</ul></li>\n");
    let searched: Vec<&SiteJson> = doc
        .sites
        .iter()
        .filter(|s| s.sigma_range.is_some())
        .collect();
    if searched.is_empty() {
        o.push_str("<li><strong>Fault spread.</strong> No site has an unknown spread; no worst case over σ was searched.</li>\n");
    } else {
        o.push_str("<li><strong>Unknown fault spread.</strong> Where σ is unknown, every figure of the site is taken at the σ with the largest residual p<sub>vu</sub> within the searched range:<ul>");
        for s in searched {
            if let Some([lo, hi]) = s.sigma_range {
                let _ = write!(
                    o,
                    "<li><code>{}</code>: σ from {} to {} {}</li>",
                    esc(&s.name),
                    esc(&number(lo)),
                    esc(&number(hi)),
                    esc(&doc.unit)
                );
            }
        }
        o.push_str("</ul>A worst case at an end of its range is flagged in the warnings.</li>\n");
    }
    o.push_str("<li><strong>Strict limits.</strong> A check fires when its value is below its lower or above its upper limit; the output violates the safety requirement likewise.</li>\n");
    o.push_str("<li><strong>Latent faults.</strong> A fault that neither violates nor is detected is latent, less the share that other means find (latent coverage of section 4).</li>\n");
    o.push_str("</ol>\n</section>\n");
}
