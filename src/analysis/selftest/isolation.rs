//! Cases of isolation after detection: a channel stuck far outside the others, whose blame
//! follows by hand from one normal difference (also through a sweep of its comparator), and a
//! pair of channels, which never names a channel.

use crate::analysis::sweep::{Axis, SweepPlan, sweep};
use crate::analysis::{AnalysisOptions, analyze};
use crate::model::load_str;

use super::{Case, Measure, ReferenceData};

const ISOLATION: &str = "isolation after detection";

/// Three equal independent channels N(0, 0.5^2), median, three pairwise comparisons at 2 with
/// detection on two, channel a replaced by 100, and the given rule.
fn stuck_far(rule: &str) -> String {
    let mut text = String::from("name = \"three channels, one stuck far\"\nunit = \"mm\"\n");
    for c in ["a", "b", "c"] {
        text.push_str(&format!("[channels.{c}]\nmean = 0.0\nsigma = 0.5\n"));
    }
    text.push_str("[output]\nkind = \"median\"\nof = [\"a\", \"b\", \"c\"]\n");
    for (name, x, y) in [("ab", "a", "b"), ("ac", "a", "c"), ("bc", "b", "c")] {
        text.push_str(&format!(
            "[checks.{name}]\nkind = \"difference\"\nof = [\"{x}\", \"{y}\"]\nlimit = 2.0\n"
        ));
    }
    text.push_str(
        "[detection]\nfires = { at_least = 2 }\n[safety]\nlimit = 1.5\n[faults.stuck]\nfit = 10.0\n\
         hits = { a = 1.0 }\nmode = \"replace\"\namplitude = { points = [[100.0, 1.0]] }\n",
    );
    text.push_str(&format!("[isolation]\n{rule}\n"));
    text
}

/// A pair averaged and compared, a drift of known spread on one channel, and the given rule.
fn pair(rule: &str) -> String {
    format!(
        "name = \"a pair\"\nunit = \"mm\"\n[channels.a]\nmean = 0.0\nsigma = 0.5\n\
         [channels.b]\nmean = 0.0\nsigma = 0.5\n[output]\nkind = \"mean\"\nof = [\"a\", \"b\"]\n\
         [checks.ab]\nkind = \"difference\"\nof = [\"a\", \"b\"]\nlimit = 2.0\n[safety]\n\
         limit = 1.5\n[faults.drift]\nfit = 10.0\nhits = {{ a = 1.0 }}\nmode = \"add\"\n\
         amplitude = {{ gaussian = {{ mean = 0.0, sigma = 3.0 }} }}\n[isolation]\n{rule}\n"
    )
}

/// A value with its bound.
type Bounded = (f64, f64);

/// `(isolated, none blamed)` of the first site, each with its bound.
fn figures(text: &str) -> Result<(Bounded, Bounded), String> {
    let arch = load_str(text, "isolation.toml").map_err(|e| e.to_string())?;
    let a = analyze(&arch.model, &AnalysisOptions::default(), false).map_err(|e| e.to_string())?;
    let s = a
        .isolation
        .and_then(|i| i.sites.into_iter().next())
        .ok_or_else(|| "no isolation figures".to_string())?;
    Ok((
        (s.isolated.value, s.isolated.error),
        (s.blame.declined.value, s.blame.declined.error),
    ))
}

/// Rounding allowance of a sum of polytope probabilities.
const SUM_ABS: f64 = 1e-12;

/// The cases of this group.
pub fn isolation_cases(_data: &ReferenceData) -> Vec<Case> {
    let mut cases = Vec::new();
    let every = "rule = \"in_every_fired_check\"";
    let farthest = "rule = \"farthest_from_median\"";
    let derived = "derived: a at 100 trips ab and ac; a is named exactly when |b - c| <= 2, \
                   b - c ~ N(0, 2 * 0.5^2), so P = erf(2 / (2 * 0.5)) (libm erf)";
    let found = figures(&stuck_far(every));
    cases.push(Case::new(
        ISOLATION,
        "stuck far, in every fired check: isolated",
        derived,
        found.clone().map(|f| f.0),
        libm::erf(2.0),
        SUM_ABS,
        Measure::Absolute,
    ));
    cases.push(Case::new(
        ISOLATION,
        "stuck far, in every fired check: none blamed",
        derived,
        found.map(|f| f.1),
        libm::erfc(2.0),
        SUM_ABS,
        Measure::Absolute,
    ));
    cases.push(Case::new(
        ISOLATION,
        "stuck far, farthest from the median: isolated",
        "common practice: a reading 200 sigmas away is always the farthest",
        figures(&stuck_far(farthest)).map(|f| f.0),
        1.0,
        SUM_ABS,
        Measure::Absolute,
    ));
    for (label, rule) in [
        ("in every fired check", every),
        ("farthest from the median", farthest),
    ] {
        cases.push(Case::new(
            ISOLATION,
            format!("a pair never isolates ({label})"),
            "common practice: one comparison of two channels cannot tell which is wrong",
            figures(&pair(rule)).map(|f| f.0),
            0.0,
            0.0,
            Measure::Absolute,
        ));
    }
    // A sweep of the healthy pair's comparator carries the same figures in every row.
    for limit in [1.0, 3.0] {
        cases.push(Case::new(
            ISOLATION,
            format!("sweep of checks.bc.limit, row {limit}: isolated"),
            "derived as above with the limit T of the row: P = erf(T / (2 * 0.5)) (libm erf)",
            swept_isolated(&stuck_far(every), limit),
            libm::erf(limit),
            SUM_ABS,
            Measure::Absolute,
        ));
    }
    // A degraded stage stated in the file: dropping a leaves b and c, independent
    // N(0, 0.5^2), read by their minimum (`output = "min"`); fault-free it leaves the band
    // [-1.5, 1.5] with P = Phi(-3)^2 + 1 - (1 - Phi(-3))^2 (independence).
    let stated = format!(
        "{every}\n[isolation.degraded]\noutput = \"min\"\nset = {{ \"checks.bc.limit\" = 1.0 }}"
    );
    let tail = 0.5 * libm::erfc(3.0 / std::f64::consts::SQRT_2);
    cases.push(Case::new(
        ISOLATION,
        "stated stage, min of two: violated without a fault",
        "common practice: the minimum of two independent normals, Phi by libm erfc",
        stated_violation(&stuck_far(&stated)),
        tail * tail + 1.0 - (1.0 - tail) * (1.0 - tail),
        SUM_ABS,
        Measure::Absolute,
    ));
    cases
}

/// `p_vd + p_vu` of the fault-free degraded stage without channel a, with its bound.
fn stated_violation(text: &str) -> Result<Bounded, String> {
    let arch = load_str(text, "isolation.toml").map_err(|e| e.to_string())?;
    let a = analyze(&arch.model, &AnalysisOptions::default(), false).map_err(|e| e.to_string())?;
    let stage = a
        .isolation
        .and_then(|i| i.degraded.into_iter().find(|d| d.dropped == "a"))
        .ok_or_else(|| "no stage without a".to_string())?;
    let b = stage.analysis?.baseline;
    Ok((b.p_vd.value + b.p_vu.value, b.p_vd.error + b.p_vu.error))
}

/// `isolated` of the first site in the row of a sweep of `checks.bc.limit` at `limit`.
fn swept_isolated(text: &str, limit: f64) -> Result<Bounded, String> {
    let arch = load_str(text, "isolation.toml").map_err(|e| e.to_string())?;
    let plan = SweepPlan::new(
        Axis::list("checks.bc.limit", vec![limit]).map_err(|e| e.to_string())?,
        None,
    )
    .map_err(|e| e.to_string())?;
    let mut found = None;
    sweep(&arch, &plan, &AnalysisOptions::default(), |row| {
        found = row
            .isolation
            .and_then(|i| i.sites.into_iter().next())
            .map(|s| (s.isolated.value, s.isolated.error));
        Ok::<(), crate::analysis::AnalysisError>(())
    })
    .map_err(|e| e.to_string())?;
    found.ok_or_else(|| "no isolation figures in the sweep row".to_string())
}
