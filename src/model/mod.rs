//! Architecture files (TOML): reading, validation, the model graph and the compiled
//! piecewise-linear gaussian model that the analysis integrates.
//!
//! Loading runs in stages, each collecting every problem it finds before the next one runs:
//! 1. `tree`: TOML syntax (the toml crate's recoverable parser, with spans);
//! 2. `overrides`: numeric values set by key path (sweeps, tuning; `bands` says which keys
//!    move the band of a check);
//! 3. `read`: key names, value types, required keys -> the raw model;
//! 4. `validate` (with `names`, `functions`, `faults`, `psd`): names, references and numbers
//!    -> the resolved model;
//! 5. `graph`: the petgraph graph, cycles among signals, unused nodes (warnings);
//! 6. `compile` (with `pieces`): mean, covariance, piecewise-linear functions, fault maps.
//!
//! The format is documented in docs/architecture-format.md.

mod bands;
mod compile;
mod compiled;
mod error;
mod faults;
mod functions;
mod graph;
mod isolation;
pub mod limits;
mod names;
mod overrides;
mod pieces;
mod psd;
mod raw;
mod read;
mod resolved;
mod text;
mod timing;
mod tree;
mod validate;

use std::path::Path;

pub use bands::{BandForm, CheckBand};
pub use compiled::{
    Amplitude, Architecture, CompiledCheck, CompiledFault, CompiledModel, DegradedModel, Detection,
    FaultMode, Formula, Guard, Isolation, IsolationRule, LinearForm, OrderStat, Piece,
    PiecewiseLinear, StatedDegraded, Timing, guards_contradict,
};
pub use error::{Diagnostic, ModelError, Severity};
pub use faults::default_sigma_range;
pub use graph::{GraphNode, ModelGraph, NodeKind};
pub use pieces::order_piece_count;

/// Compiles a degraded architecture (derived, so valid by construction); its warnings are
/// dropped (they would name spans of the full file).
fn compile_degraded(
    resolved: &resolved::Resolved,
    path: &str,
    text: &str,
) -> Result<CompiledModel, String> {
    let mut sink = error::Sink::new(path, text);
    let graph = graph::build(resolved);
    let model = graph::signal_order(resolved, &graph, &mut sink)
        .and_then(|order| compile::compile(resolved, &order, &mut sink));
    model.ok_or_else(|| "the degraded architecture could not be compiled".to_string())
}

/// The resolved file with the values of `[isolation.degraded]` set, from which every
/// degraded architecture is derived; an error on the section when those values make the
/// file invalid (its first problem named).
fn with_degraded_values(
    root: &tree::Node,
    set: &[(String, f64)],
    path: &str,
    text: &str,
    v: &isolation::VIsolation,
    sink: &mut error::Sink<'_>,
) -> Option<resolved::Resolved> {
    let mut stage_sink = error::Sink::new(path, text);
    let mut stage_root = root.clone();
    overrides::apply(&mut stage_root, set, &mut stage_sink);
    let raw = read::read(&stage_root, &mut stage_sink);
    let stage = validate::validate(&raw, &mut stage_sink);
    let problem = match stage_sink.finish() {
        Ok(_) => None,
        Err(ModelError::Invalid { diagnostics }) => diagnostics.into_iter().next(),
        Err(_) => None,
    };
    match (stage, problem) {
        (Some(stage), None) => Some(stage),
        (_, problem) => {
            let span = v.degraded.as_ref().map_or(v.loc.span, |d| d.loc.span);
            sink.error(
                span,
                "isolation.degraded.set",
                match problem {
                    Some(d) => format!(
                        "with the values of isolation.degraded.set the file is not valid: {} \
                         ({})",
                        d.message, d.key
                    ),
                    None => "with the values of isolation.degraded.set the file is not valid"
                        .to_string(),
                },
                "give values that keep the file valid (each as a sweep would set it)",
            );
            None
        }
    }
}

/// Reads and compiles an architecture file.
///
/// # Errors
/// [`ModelError::Read`] when the file cannot be read, [`ModelError::Invalid`] with every
/// problem found when it is not a valid architecture.
pub fn load(path: &Path) -> Result<Architecture, ModelError> {
    let shown = path.display().to_string();
    let read_error = |message: String, fix: &str| ModelError::Read {
        diagnostic: Diagnostic {
            file: shown.clone(),
            line: 0,
            column: 0,
            key: String::new(),
            message,
            fix: fix.to_string(),
            severity: Severity::Error,
        },
    };
    if let Ok(meta) = std::fs::metadata(path)
        && meta.len() > limits::MAX_FILE_BYTES as u64
    {
        return Err(read_error(
            format!(
                "the file has {} bytes, more than the limit of {} (an architecture file \
                     has a few kilobytes)",
                meta.len(),
                limits::MAX_FILE_BYTES
            ),
            "give the architecture file, not a data file",
        ));
    }
    let bytes = std::fs::read(path).map_err(|e| {
        read_error(
            format!("cannot read the file: {e}"),
            "check the path and the permissions",
        )
    })?;
    let text = String::from_utf8(bytes).map_err(|e| {
        read_error(
            format!(
                "the file is not UTF-8 text (invalid byte at offset {})",
                e.utf8_error().valid_up_to()
            ),
            "save the file as UTF-8",
        )
    })?;
    load_str(&text, &shown)
}

/// Compiles an architecture from its text; `path_for_messages` names it in diagnostics.
///
/// # Errors
/// [`ModelError::Invalid`] with every problem found.
pub fn load_str(text: &str, path_for_messages: &str) -> Result<Architecture, ModelError> {
    load_str_with_overrides(text, path_for_messages, &[])
}

/// Like [`load_str`], with numeric values set by dotted key path before validation, e.g.
/// `("safety.limit", 1.5)`, `("checks.ab.limit", 2.0)`, `("channels.a.sigma", 0.3)`,
/// `("faults.a_drift.amplitude.gaussian.sigma", 2.0)`, `("correlations[0].rho", 0.5)`.
///
/// # Errors
/// [`ModelError::Invalid`] with every problem found, including each path that names nothing
/// in the file.
pub fn load_str_with_overrides(
    text: &str,
    path_for_messages: &str,
    overrides: &[(String, f64)],
) -> Result<Architecture, ModelError> {
    let mut sink = error::Sink::new(path_for_messages, text);
    if text.len() > limits::MAX_FILE_BYTES {
        sink.error_nowhere(
            "",
            format!(
                "the text has {} bytes, more than the limit of {}",
                text.len(),
                limits::MAX_FILE_BYTES
            ),
            "give the architecture file, not a data file",
        );
        return Err(sink.finish().err().unwrap_or(ModelError::Invalid {
            diagnostics: Vec::new(),
        }));
    }
    let Some(mut root) = tree::parse(text, &mut sink) else {
        return Err(sink.finish().err().unwrap_or(ModelError::Invalid {
            diagnostics: Vec::new(),
        }));
    };
    overrides::apply(&mut root, overrides, &mut sink);
    let raw = read::read(&root, &mut sink);
    let inputs = overrides::numeric_leaves(&root);
    // A key that names no number of the file is an error at the key, with examples.
    let known_input = |key: &raw::Spanned<String>, sink: &mut error::Sink<'_>| -> bool {
        if inputs.iter().any(|(k, _)| *k == key.value) {
            return true;
        }
        let known: Vec<&str> = inputs.iter().map(|(k, _)| k.as_str()).take(8).collect();
        key.error(
            sink,
            format!("`{}` is not a numeric input of the file", key.value),
            format!(
                "name a number of the file by its dotted key, e.g. {}",
                known.join(", ")
            ),
        );
        false
    };
    for (key, _) in &raw.tolerances {
        known_input(key, &mut sink);
    }
    // The values of [isolation.degraded] name numbers of the file, as overrides do.
    let mut degraded_keys_ok = true;
    for (key, _) in raw
        .isolation
        .iter()
        .flat_map(|i| i.degraded.iter())
        .flat_map(|d| d.set.iter())
    {
        degraded_keys_ok &= known_input(key, &mut sink);
    }
    let tolerances: Vec<(String, f64, f64)> = raw
        .tolerances
        .iter()
        .map(|(k, r)| (k.value.clone(), r.value.0, r.value.1))
        .collect();
    let check_bands = bands::written_bands(&raw);
    let compiled = validate::validate(&raw, &mut sink).and_then(|resolved| {
        let graph = graph::build(&resolved);
        let order = graph::signal_order(&resolved, &graph, &mut sink)?;
        graph::unused(&resolved, &graph, &mut sink);
        let mut model = compile::compile(&resolved, &order, &mut sink)?;
        if let Some(v) = &resolved.isolation {
            let set = v.degraded.as_ref().map_or(&[][..], |d| d.set.as_slice());
            let stage_base = if set.is_empty() {
                Some(resolved.clone())
            } else if !degraded_keys_ok {
                // (each unknown key is already an error of its own)
                None
            } else {
                with_degraded_values(&root, set, path_for_messages, text, v, &mut sink)
            };
            if let Some(stage_base) = stage_base {
                model.isolation =
                    isolation::compile_isolation(v, &stage_base, &model, &mut sink, |r| {
                        compile_degraded(r, path_for_messages, text)
                    });
            }
        }
        Some((model, graph))
    });
    let Some((model, graph)) = compiled else {
        // Every path without a model records an error; should one not, say so rather than
        // return an empty list.
        if sink.error_count() == 0 {
            sink.error_nowhere(
                "",
                "the model could not be compiled (an internal inconsistency of concord)",
                "report this file to the concord maintainers",
            );
        }
        return Err(sink.finish().err().unwrap_or(ModelError::Invalid {
            diagnostics: Vec::new(),
        }));
    };
    let warnings = sink.finish()?;
    Ok(Architecture {
        path: path_for_messages.to_string(),
        source: text.to_string(),
        overrides: overrides.to_vec(),
        check_bands,
        model,
        graph,
        warnings,
        tolerances,
    })
}
