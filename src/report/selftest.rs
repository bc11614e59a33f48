//! The validation summary of `concord selftest`: a table for the terminal and a JSON
//! document for archiving with a tool assessment (ISO 26262-8:2018 clause 11).
//!
//! JSON fields (kept stable; fields may be added, never renamed or dropped):
//! `{"suite", "tool_version", "reference_sha256" (of the compiled reference data),
//! "verdict" ("pass" | "fail"), "cases_total", "passed", "failed",
//! "groups": [{"group", "cases", "passed"}],
//! "cases": [{"group", "name", "source", "computed" (null when it failed to compute),
//! "reference", "measure" ("absolute" | "relative"), "error", "bound" (in that measure;
//! error null when not computed), "pass", "note" (null unless it failed to compute)}],
//! "cautions"}`.
//! The document holds no time or host, so that the same build always writes the same bytes.

use std::fmt::Write as _;

use serde::{Deserialize, Serialize};

use crate::analysis::selftest::{Case, REFERENCE_JSON, SelfTest};

use super::cautions::CAUTIONS;
use super::error::ReportError;
use super::format::{format_number, scientific, wrap};
use super::{TOOL_VERSION, input_sha256};

/// The name of the suite as reports print it.
pub const SUITE: &str = "concord selftest";

/// One case in the JSON document.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CaseJson {
    /// Group of the case.
    pub group: String,
    /// The case.
    pub name: String,
    /// Where the reference comes from.
    pub source: String,
    /// The value concord computed (null when it failed to compute).
    pub computed: Option<f64>,
    /// The reference value.
    pub reference: f64,
    /// `absolute` or `relative`.
    pub measure: String,
    /// Difference to the reference in `measure` (null when not computed).
    pub error: Option<f64>,
    /// Largest difference allowed in `measure`.
    pub bound: f64,
    /// Whether the case passed.
    pub pass: bool,
    /// Why the case failed to compute.
    pub note: Option<String>,
}

/// One group in the JSON document.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GroupJson {
    /// The group.
    pub group: String,
    /// Its cases.
    pub cases: usize,
    /// How many passed.
    pub passed: usize,
}

/// The JSON document of a selftest run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SelfTestJson {
    /// Always `concord selftest`.
    pub suite: String,
    /// The version of concord.
    pub tool_version: String,
    /// SHA-256 of the reference data compiled into the binary.
    pub reference_sha256: String,
    /// `pass` when every case passed, else `fail`.
    pub verdict: String,
    /// Number of cases.
    pub cases_total: usize,
    /// Cases that passed.
    pub passed: usize,
    /// Cases that failed.
    pub failed: usize,
    /// Counts per group.
    pub groups: Vec<GroupJson>,
    /// Every case.
    pub cases: Vec<CaseJson>,
    /// The cautions of every report.
    pub cautions: Vec<String>,
}

fn verdict(suite: &SelfTest) -> &'static str {
    if suite.all_passed() { "pass" } else { "fail" }
}

fn case_json(c: &Case) -> CaseJson {
    CaseJson {
        group: c.group.to_string(),
        name: c.name.clone(),
        source: c.source.clone(),
        computed: c.computed,
        reference: c.reference,
        measure: c.measure.key().to_string(),
        error: c.error.is_finite().then_some(c.error),
        bound: c.bound,
        pass: c.pass,
        note: c.note.clone(),
    }
}

/// The JSON document of a run.
pub fn document(suite: &SelfTest) -> SelfTestJson {
    SelfTestJson {
        suite: SUITE.to_string(),
        tool_version: TOOL_VERSION.to_string(),
        reference_sha256: input_sha256(REFERENCE_JSON),
        verdict: verdict(suite).to_string(),
        cases_total: suite.cases.len(),
        passed: suite.passed(),
        failed: suite.failed(),
        groups: suite
            .groups()
            .into_iter()
            .map(|(g, n)| GroupJson {
                group: g.to_string(),
                cases: n,
                passed: suite
                    .cases
                    .iter()
                    .filter(|c| c.group == g && c.pass)
                    .count(),
            })
            .collect(),
        cases: suite.cases.iter().map(case_json).collect(),
        cautions: CAUTIONS.iter().map(|s| s.to_string()).collect(),
    }
}

/// The JSON text (pretty-printed, with a final newline).
///
/// # Errors
/// Serialisation errors (none in practice: non-finite numbers are written as null).
pub fn render_json(suite: &SelfTest) -> Result<String, ReportError> {
    let mut text = serde_json::to_string_pretty(&document(suite))?;
    text.push('\n');
    Ok(text)
}

/// Seven significant digits, always with an exponent.
fn short(v: f64) -> String {
    format_number(v, &scientific(6))
}

/// The table: per group its sources, then one line per case, then the summary.
pub fn render_table(suite: &SelfTest) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "{SUITE} {TOOL_VERSION}: validation summary");
    let _ = writeln!(
        out,
        "reference data sha256 {}",
        input_sha256(REFERENCE_JSON)
    );
    for line in wrap(
        "error: |computed - reference|, absolute or relative to the reference (rel); \
         bound: concord's own error bound plus the reference's tolerance",
        98,
    ) {
        let _ = writeln!(out, "{line}");
    }
    for (group, _) in suite.groups() {
        let cases: Vec<&Case> = suite.cases.iter().filter(|c| c.group == group).collect();
        let passed = cases.iter().filter(|c| c.pass).count();
        let _ = writeln!(out);
        let _ = writeln!(out, "{group}: {passed} of {} passed", cases.len());
        let mut sources: Vec<&str> = Vec::new();
        for c in &cases {
            if !sources.contains(&c.source.as_str()) {
                sources.push(&c.source);
            }
        }
        for s in sources {
            for line in wrap(&format!("  source: {s}"), 98) {
                let _ = writeln!(out, "  {}", line.trim_start());
            }
        }
        let _ = writeln!(
            out,
            "  {:<40} {:>13} {:>13} {:>9} {:>9}  result",
            "case", "computed", "reference", "error", "bound"
        );
        for c in cases {
            let computed = c.computed.map_or("failed".to_string(), short);
            let rel = match c.measure {
                crate::analysis::selftest::Measure::Relative => " rel",
                crate::analysis::selftest::Measure::Absolute => "",
            };
            let error = if c.error.is_finite() {
                format!("{:.1e}", c.error)
            } else {
                "-".to_string()
            };
            let name = if c.name.chars().count() > 40 {
                let _ = writeln!(out, "  {}", c.name);
                String::new()
            } else {
                c.name.clone()
            };
            let _ = writeln!(
                out,
                "  {:<40} {:>13} {:>13} {:>9} {:>9}{rel:<4}  {}",
                name,
                computed,
                short(c.reference),
                error,
                format!("{:.1e}", c.bound),
                if c.pass { "pass" } else { "FAIL" }
            );
            if let Some(note) = &c.note {
                let _ = writeln!(out, "    {note}");
            }
        }
    }
    let _ = writeln!(out);
    let _ = writeln!(
        out,
        "{} cases: {} passed, {} failed. Verdict: {}.",
        suite.cases.len(),
        suite.passed(),
        suite.failed(),
        verdict(suite)
    );
    for line in wrap(
        "These cases show that this build computes its reference cases within the stated \
         bounds; they are evidence for a tool assessment (ISO 26262-8:2018 clause 11), not a \
         qualification by themselves.",
        98,
    ) {
        let _ = writeln!(out, "{line}");
    }
    for caution in CAUTIONS {
        for line in wrap(&format!("Caution: {caution}"), 98) {
            let _ = writeln!(out, "{line}");
        }
    }
    out
}
