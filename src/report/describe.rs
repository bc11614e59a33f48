//! The readable summary that `concord check` prints: channels with own and total sigma, the
//! total correlation matrix, the output and checks as formulas with their bands, detection,
//! the safety band, the fault sites and the warnings. Lines fit in 100 columns for up to 12
//! channels with names of up to 16 characters.

use std::fmt::Write;

use crate::model::{Architecture, Detection, FaultMode};

use super::format::{
    AmplitudeStyle, as_written, band, describe_amplitude, format_number, outside, short_style,
    significant_style,
};

fn pieces(n: usize) -> String {
    if n == 1 {
        "1 piece".into()
    } else {
        format!("{n} pieces")
    }
}

/// Entry `i` of a vector, NaN when missing (a hand-built model with inconsistent sizes prints
/// NaN instead of panicking).
fn entry(v: &[f64], i: usize) -> f64 {
    v.get(i).copied().unwrap_or(f64::NAN)
}

/// Entry `(i, j)` of a matrix, NaN when missing.
fn matrix_entry(m: &nalgebra::DMatrix<f64>, i: usize, j: usize) -> f64 {
    m.get((i, j)).copied().unwrap_or(f64::NAN)
}

fn truncate(s: &str, w: usize) -> String {
    s.chars().take(w).collect()
}

/// The `concord check` summary of a loaded architecture.
pub fn describe(arch: &Architecture) -> String {
    let mut o = body(arch);
    o.push_str(&warnings(arch));
    o
}

/// Everything of [`describe`] before the warnings.
fn body(arch: &Architecture) -> String {
    let m = &arch.model;
    let unit = &m.unit;
    let mut o = String::new();
    let _ = writeln!(o, "Architecture: {}", m.name);
    let _ = writeln!(o, "  file: {}", arch.path);
    let _ = write!(o, "  unit: {unit}");
    if let Some((a, b)) = m.full_scale {
        let _ = write!(o, "   full scale: {} {unit}", band(a, b));
    }
    o.push('\n');

    let w = m
        .channels
        .iter()
        .chain(&m.sources)
        .map(|s| s.chars().count())
        .max()
        .unwrap_or(4)
        .clamp(4, 16);

    if !m.sources.is_empty() {
        let _ = writeln!(o, "\nShared sources ({})", m.sources.len());
        let _ = writeln!(
            o,
            "  {:<w$}  {:>10}  {:>10}  feeds",
            "name", "mean", "sigma"
        );
        for (j, s) in m.sources.iter().enumerate() {
            let feeds: Vec<String> = (0..m.channels.len())
                .filter(|i| matrix_entry(&m.source_gains, *i, j) != 0.0)
                .map(|i| {
                    format!(
                        "{} x {}",
                        m.channels[i],
                        as_written(matrix_entry(&m.source_gains, i, j))
                    )
                })
                .collect();
            let _ = writeln!(
                o,
                "  {:<w$}  {:>10}  {:>10}  {}",
                s,
                as_written(entry(&m.source_means, j)),
                as_written(entry(&m.source_sigmas, j)),
                if feeds.is_empty() {
                    "(nothing)".into()
                } else {
                    feeds.join(", ")
                }
            );
        }
    }

    let total = m.total_sigmas();
    let _ = writeln!(o, "\nChannels ({}), deviations in {unit}", m.channels.len());
    let _ = writeln!(
        o,
        "  {:<w$}  {:>10}  {:>10}  {:>11}  {:>10}",
        "name", "mean", "own sigma", "total sigma", "total mean"
    );
    for (i, c) in m.channels.iter().enumerate() {
        let own_mean = entry(&m.own_means, i);
        let _ = writeln!(
            o,
            "  {:<w$}  {:>10}  {:>10}  {:>11}  {:>10}",
            c,
            as_written(own_mean),
            as_written(entry(&m.own_sigmas, i)),
            format_number(entry(&total, i), &significant_style(4)),
            format_number(entry(&m.mean, i), &short_style(4))
        );
    }

    let n = m.channels.len();
    if n > 1 {
        let r = m.total_correlation();
        let _ = writeln!(
            o,
            "\nTotal correlation (own correlations plus shared sources)"
        );
        let w = w.min(12);
        let mut head = format!("  {:<w$}", "");
        for c in &m.channels {
            let _ = write!(head, " {:>6}", truncate(c, 6));
        }
        let _ = writeln!(o, "{}", head.trim_end());
        for (i, c) in m.channels.iter().enumerate() {
            let mut row = format!("  {:<w$}", truncate(c, w));
            for j in 0..n {
                let _ = write!(row, " {:>6.3}", matrix_entry(&r, i, j));
            }
            let _ = writeln!(o, "{row}");
        }
    }

    if !m.signals.is_empty() {
        let _ = writeln!(o, "\nDerived signals");
        for ((name, f), d) in m.signals.iter().zip(&m.signal_descriptions) {
            let _ = writeln!(o, "  {name} = {d}   ({})", pieces(f.pieces.len()));
        }
    }

    let _ = writeln!(o, "\nOutput and safety requirement");
    let _ = writeln!(
        o,
        "  output = {}   ({})",
        m.output_description,
        pieces(m.output.pieces.len())
    );
    let _ = writeln!(
        o,
        "  violated when the output deviation is {}",
        outside(m.safety_lower, m.safety_upper, unit)
    );

    let rule = match m.detection {
        Detection::Any => "detected when any check fires".to_string(),
        Detection::AtLeast(k) => format!("detected when at least {k} checks fire"),
    };
    let _ = writeln!(o, "\nChecks ({}; {rule})", m.checks.len());
    for c in &m.checks {
        let head = format!("  {} = {}", c.name, c.description);
        let tail = format!(
            "fires {}   ({})",
            outside(c.lower, c.upper, unit),
            pieces(c.function.pieces.len())
        );
        if head.chars().count() + tail.chars().count() + 3 <= 100 {
            let _ = writeln!(o, "{head}   {tail}");
        } else {
            let _ = writeln!(o, "{head}\n      {tail}");
        }
    }

    if let Some(t) = &m.timing {
        let head = format!(
            "Timing: a sample every {}; confirmed after {}; deadline {} ({} samples); \
             dangerous from {} sample{} outside the band",
            super::format::seconds(t.sample_period),
            super::format::describe_confirm(&t.confirm),
            super::format::seconds(t.deadline),
            t.samples,
            t.danger_samples,
            if t.danger_samples == 1 { "" } else { "s" }
        );
        let _ = writeln!(o);
        for line in super::format::wrap(&head, 98) {
            let _ = writeln!(o, "{line}");
        }
        let fresh: Vec<&str> = m
            .sources
            .iter()
            .zip(&t.fresh_sources)
            .filter(|(_, f)| **f)
            .map(|(n, _)| n.as_str())
            .collect();
        let held: Vec<&str> = m
            .channels
            .iter()
            .zip(&t.constant_channels)
            .filter(|(_, f)| **f)
            .map(|(n, _)| n.as_str())
            .collect();
        let _ = writeln!(
            o,
            "  constant over the interval: shared sources{}{}; fresh every sample: own noise{}",
            if fresh.is_empty() {
                String::new()
            } else {
                format!(" except {}", fresh.join(", "))
            },
            if held.is_empty() {
                String::new()
            } else {
                format!(", the own noise of {}", held.join(", "))
            },
            if fresh.is_empty() {
                String::new()
            } else {
                format!(", {}", fresh.join(", "))
            }
        );
    }

    if let Some(iso) = &m.isolation {
        let _ = writeln!(o);
        let head = format!(
            "Isolation: {}",
            super::format::describe_isolation_rule(&iso.rule, &m.unit)
        );
        for line in super::format::wrap(&head, 98) {
            let _ = writeln!(o, "{line}");
        }
        if let Some(st) = &iso.stated {
            let mut parts = Vec::new();
            if let Some(output) = &st.output {
                parts.push(format!("output the {output} of the channels kept"));
            }
            for (key, value) in &st.set {
                parts.push(format!("{key} = {}", super::format::number(*value)));
            }
            let text = format!("stated after a drop: {}", parts.join(", "));
            for line in super::format::wrap(&text, 96) {
                let _ = writeln!(o, "  {line}");
            }
        }
        for d in &iso.degraded {
            let name = m.channels.get(d.dropped).map_or("?", String::as_str);
            let text = match &d.model {
                Ok(g) => {
                    let checks: Vec<String> = g
                        .checks
                        .iter()
                        .map(|c| format!("{}: {}", c.name, c.description))
                        .collect();
                    format!(
                        "without {name}: output {}; checks {}",
                        g.output_description,
                        if checks.is_empty() {
                            "none".to_string()
                        } else {
                            checks.join(", ")
                        }
                    )
                }
                Err(why) => format!("without {name}: none ({why})"),
            };
            for line in super::format::wrap(&text, 96) {
                let _ = writeln!(o, "  {line}");
            }
        }
    }

    let total_fit: f64 = m.faults.iter().map(|f| f.fit).sum();
    let _ = writeln!(
        o,
        "\nFault sites ({}, {} FIT in total)",
        m.faults.len(),
        as_written(total_fit)
    );
    for f in &m.faults {
        let hits: Vec<String> = f
            .hits
            .iter()
            .map(|(h, g)| format!("{h} x {}", as_written(*g)))
            .collect();
        let mode = match &f.mode {
            FaultMode::Add { .. } => "add",
            FaultMode::Replace { .. } => "replace",
        };
        let _ = write!(
            o,
            "  {}: {} FIT, {mode}, hits {}",
            f.name,
            as_written(f.fit),
            hits.join(", ")
        );
        if f.latent_coverage > 0.0 {
            let _ = write!(o, ", latent coverage {}", as_written(f.latent_coverage));
        }
        o.push('\n');
        if let FaultMode::Add { direction } = &f.mode
            && (f.hits.len() > 1 || direction.iter().filter(|d| **d != 0.0).count() > 1)
        {
            let d: Vec<String> = direction
                .iter()
                .zip(&m.channels)
                .filter(|(d, _)| **d != 0.0)
                .map(|(d, c)| format!("{c} x {}", as_written(*d)))
                .collect();
            let _ = writeln!(o, "      reaches {}", d.join(", "));
        }
        let _ = writeln!(
            o,
            "      amplitude: {}",
            describe_amplitude(
                &f.amplitude,
                f.uniform_is_full_scale,
                AmplitudeStyle::Summary { unit }
            )
        );
    }

    o
}

/// The summary of `check`: [`describe`] with the work of an exact analysis
/// ([`workload_section`]) before the warnings.
pub fn describe_with_workload(
    arch: &Architecture,
    work: Option<&crate::analysis::workload::Workload>,
) -> String {
    let mut o = body(arch);
    o.push_str(&workload_section(work));
    o.push_str(&warnings(arch));
    o
}

fn warnings(arch: &Architecture) -> String {
    let mut o = format!("\nWarnings ({})\n", arch.warnings.len());
    for w in &arch.warnings {
        let _ = writeln!(o, "  {w}");
    }
    o
}

/// The work an exact analysis of the file takes (`analysis::workload`), for `check`: which
/// engine takes its scenarios and how many polytope integrals that is, with a floor on the
/// time, so that a long run is known before it is started.
pub fn workload_section(work: Option<&crate::analysis::workload::Workload>) -> String {
    let mut o = String::from("\nExact analysis\n");
    let Some(w) = work else {
        o.push_str(
            "  the polytopes of this file cannot be built (past a limit): `analyze` says which\n",
        );
        return o;
    };
    if w.polytope_scenarios == 0 {
        o.push_str("  every scenario by order statistics given the shared terms\n");
        return o;
    }
    let text = format!(
        "about {} scenario evaluations by the polytopes ({} polytopes of {} dimensions each, \
         {} integrals in all; at least {} on two cores, often more){}",
        w.polytope_scenarios,
        w.polytopes_per_scenario,
        w.dimension,
        w.integrals,
        seconds_words(w.floor_seconds),
        w.order_unfit.as_ref().map_or(String::new(), |r| format!(
            "; the order-statistic engine does not take the file: {r}"
        ))
    );
    for line in super::format::wrap(&text, 96) {
        let _ = writeln!(o, "  {line}");
    }
    o
}

/// `0.04 s`, `25 s`, `3 min`, `2.5 h`.
fn seconds_words(seconds: f64) -> String {
    if seconds < 1.0 {
        format!("{:.2} s", seconds)
    } else if seconds < 120.0 {
        format!("{:.0} s", seconds)
    } else if seconds < 7200.0 {
        format!("{:.0} min", seconds / 60.0)
    } else {
        format!("{:.1} h", seconds / 3600.0)
    }
}
