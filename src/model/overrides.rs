//! Overrides: numeric values set by dotted key path before validation (used by sweeps and
//! tuning through [`Architecture::with_overrides`]), e.g.
//! `safety.limit`, `checks.ab.limit`, `channels.a.sigma`, `correlations.0.rho` (or
//! `correlations[0].rho`), `faults.a_drift.amplitude.gaussian.sigma`.
//!
//! The path must name a number (or a string such as `sigma = "unknown"`) in the file, or an
//! optional numeric key of an existing table (`mean`, `limit`, `lower`, `upper`, `constant`,
//! `latent_coverage`); anything else is an error naming the path. The overridden value is
//! then validated like any other, and messages about it say that an override set it.

use super::compiled::Architecture;
use super::error::{ModelError, Sink};
use super::tree::{Entry, Node, Value};

impl Architecture {
    /// The architecture with `overrides` set on top of the values this one already has: the
    /// file reloaded with its overrides and then these, validated and compiled again. The
    /// result is what loading the file with those values written in by hand gives (a later
    /// value for the same key wins).
    ///
    /// # Errors
    /// [`ModelError::Invalid`] with every problem found, including each path that names
    /// nothing in the file and each value that makes the file invalid.
    pub fn with_overrides(&self, overrides: &[(String, f64)]) -> Result<Architecture, ModelError> {
        let mut all = self.overrides.clone();
        all.extend_from_slice(overrides);
        super::load_str_with_overrides(&self.source, &self.path, &all)
    }
}

impl Architecture {
    /// Every number of the file (with its overrides) that shapes the one-sample figures and
    /// that an override can set, with its value, in file order: sigmas, means, gains,
    /// weights, correlations, bands, failure rates, known amplitudes and latent coverages.
    /// Left out: the timing, detection and isolation sections (counts and rules), the full
    /// scale, the weights of point amplitudes (they must sum to one) and the search range of
    /// an unknown sigma (the worst case does not move with it unless it sits at an end).
    pub fn numeric_inputs(&self) -> Vec<(String, f64)> {
        let mut sink = super::error::Sink::new(&self.path, &self.source);
        let Some(mut root) = super::tree::parse(&self.source, &mut sink) else {
            return Vec::new();
        };
        apply(&mut root, &self.overrides, &mut sink);
        numeric_leaves(&root)
    }
}

/// Top-level sections whose numbers are counts or rules, not inputs of the figures.
const NOT_INPUTS: &[&str] = &[
    "timing",
    "detection",
    "isolation",
    "full_scale",
    "tolerances",
];

/// The numeric inputs of a document tree (see [`Architecture::numeric_inputs`]).
pub(crate) fn numeric_leaves(root: &Node) -> Vec<(String, f64)> {
    let mut out = Vec::new();
    walk(root, "", &mut out);
    out
}

fn walk(node: &Node, path: &str, out: &mut Vec<(String, f64)>) {
    let join = |k: &str| {
        if path.is_empty() {
            k.to_string()
        } else {
            format!("{path}.{k}")
        }
    };
    match &node.value {
        Value::Table(entries) => {
            for e in entries {
                if path.is_empty() && NOT_INPUTS.contains(&e.key.as_str()) {
                    continue;
                }
                if e.key == "unknown" {
                    continue;
                }
                walk(&e.value, &join(&e.key), out);
            }
        }
        Value::Array(items) => {
            let points = path.ends_with("amplitude.points");
            for (i, item) in items.iter().enumerate() {
                if let (true, Value::Array(pair)) = (points, &item.value) {
                    // (value, weight): only the value is free.
                    if let Some(v) = pair.first() {
                        walk(v, &format!("{path}.{i}.0"), out);
                    }
                    continue;
                }
                walk(item, &join(&i.to_string()), out);
            }
        }
        Value::Float(v) if v.is_finite() => out.push((path.to_string(), *v)),
        Value::Int(Some(v)) => out.push((path.to_string(), *v as f64)),
        _ => {}
    }
}

/// Keys that may be added by an override when the file leaves them out.
const OPTIONAL_NUMERIC: &[&str] = &[
    "mean",
    "limit",
    "lower",
    "upper",
    "constant",
    "latent_coverage",
];

/// Applies every override; records an error for each path that names nothing settable.
pub(crate) fn apply(root: &mut Node, overrides: &[(String, f64)], sink: &mut Sink<'_>) {
    for (path, value) in overrides {
        if let Err(why) = set(root, path, *value) {
            sink.error_nowhere(
                &format!("override {path}"),
                why,
                "give the dotted path of a number in the file, e.g. safety.limit or \
                 channels.a.sigma",
            );
        }
    }
}

/// `correlations[1].rho` -> `["correlations", "1", "rho"]`.
fn segments(path: &str) -> Vec<String> {
    path.replace('[', ".")
        .replace(']', "")
        .split('.')
        .map(|s| s.trim().to_string())
        .collect()
}

fn set(root: &mut Node, path: &str, value: f64) -> Result<(), String> {
    let steps = segments(path);
    if steps.iter().any(|s| s.is_empty()) {
        return Err(format!("`{path}` is not a dotted key path"));
    }
    let mut node = root;
    let mut walked = String::new();
    for (i, step) in steps.iter().enumerate() {
        let last = i + 1 == steps.len();
        let here = if walked.is_empty() {
            "the top level".to_string()
        } else {
            format!("`{walked}`")
        };
        let span = node.span;
        node = match &mut node.value {
            Value::Table(entries) => {
                let found = entries.iter().position(|e| e.key == *step);
                match found {
                    Some(at) => &mut entries[at].value,
                    None if last && OPTIONAL_NUMERIC.contains(&step.as_str()) => {
                        entries.push(Entry {
                            key: step.clone(),
                            key_span: span,
                            value: Node {
                                span,
                                value: Value::Str(String::new()),
                                overridden: true,
                            },
                        });
                        let added = entries.len() - 1;
                        &mut entries[added].value
                    }
                    None => return Err(format!("{here} has no key `{step}`")),
                }
            }
            Value::Array(items) => {
                let index: usize = step
                    .parse()
                    .map_err(|_| format!("{here} is an array; `{step}` is not an index"))?;
                let len = items.len();
                items
                    .get_mut(index)
                    .ok_or_else(|| format!("{here} has {len} entries, no index {index}"))?
            }
            other => {
                return Err(format!(
                    "{here} is {}, it has no key `{step}`",
                    other.type_name()
                ));
            }
        };
        if !walked.is_empty() {
            walked.push('.');
        }
        walked.push_str(step);
    }
    // An unknown sigma (`sigma = { unknown = [lo, hi] }`) may be pinned to a number, as
    // `sigma = "unknown"` may.
    let unknown_range = steps.last().is_some_and(|s| s == "sigma")
        && matches!(&node.value, Value::Table(t) if t.len() == 1 && t[0].key == "unknown");
    if unknown_range {
        node.value = Value::Float(value);
        node.overridden = true;
        return Ok(());
    }
    match node.value {
        Value::Table(_) | Value::Array(_) => Err(format!(
            "`{path}` is {}, not a number",
            node.value.type_name()
        )),
        _ => {
            node.value = Value::Float(value);
            node.overridden = true;
            Ok(())
        }
    }
}
