//! The readers of each section of the file (sources, channels, correlations, signals, the
//! output, checks, detection, faults and their amplitudes), built on the toolkit.

use super::toolkit::*;
use crate::model::error::Sink;
use crate::model::limits;
use crate::model::raw::*;
use crate::model::tree::{Entry, Node, Value};

/// The `of` of a signal, output or check: a name, a list of names or a table of weights.
pub(super) fn args(sink: &mut Sink<'_>, node: &Node, key: &str) -> Option<Spanned<Args>> {
    let example = "of = [\"a\", \"b\"], of = \"a\" or of = { a = 0.5, b = 0.5 }";
    match &node.value {
        Value::Str(s) => Some(spanned(Args::One(spanned(s.clone(), node, key)), node, key)),
        Value::Array(items) => {
            if items.len() > limits::MAX_ARGS {
                sink.error(
                    node.span,
                    key,
                    format!(
                        "lists {} names, more than the limit of {}",
                        items.len(),
                        limits::MAX_ARGS
                    ),
                    "list only the channels or signals that are meant",
                );
                return None;
            }
            let mut names = Vec::new();
            let mut ok = true;
            for (i, item) in items.iter().enumerate() {
                match string(
                    sink,
                    item,
                    &format!("{key}[{i}]"),
                    "a quoted name like \"a\"",
                ) {
                    Some(s) => names.push(s),
                    None => ok = false,
                }
            }
            ok.then(|| spanned(Args::List(names), node, key))
        }
        Value::Table(_) => {
            weights(sink, node, key, example).map(|w| spanned(Args::Weights(w), node, key))
        }
        _ => {
            type_error(sink, node, key, "names", example);
            None
        }
    }
}

/// Kinds that an earlier version of the file format spelled otherwise: (old word, new word,
/// what the kind computes). A file with the old word gets an error that names the new one.
pub(super) const RENAMED_CHECK_KINDS: [(&str, &str, &str); 1] =
    [("spread", "range", "max minus min")];

pub(super) fn read_source(
    sink: &mut Sink<'_>,
    name: Spanned<String>,
    mut t: TableReader<'_>,
) -> Option<RawSource> {
    let mean = t
        .optional_number(sink, "mean", "mean = 0.0")
        .unwrap_or_else(|| Spanned::new(0.0, t.span, t.path("mean")));
    // a missing or unreadable sigma is reported; 0 stands in so that the name stays defined
    let sigma = t
        .required_number(sink, "sigma", "sigma = 0.1")
        .unwrap_or_else(|| Spanned::new(0.0, t.span, t.path("sigma")));
    t.finish(sink, &["mean", "sigma"]);
    Some(RawSource { name, mean, sigma })
}

pub(super) fn read_channel(
    sink: &mut Sink<'_>,
    name: Spanned<String>,
    mut t: TableReader<'_>,
) -> Option<RawChannel> {
    let mean = t
        .optional_number(sink, "mean", "mean = 0.0")
        .unwrap_or_else(|| Spanned::new(0.0, t.span, t.path("mean")));
    // a missing or unreadable sigma is reported; 0 stands in so that the name stays defined
    let sigma = t
        .required_number(sink, "sigma", "sigma = 0.5")
        .unwrap_or_else(|| Spanned::new(0.0, t.span, t.path("sigma")));
    let from = match t.take("from") {
        Some(e) => {
            weights(sink, &e.value, &t.path("from"), "from = { vref = 1.0 }").unwrap_or_default()
        }
        None => Vec::new(),
    };
    t.finish(sink, &["mean", "sigma", "from"]);
    Some(RawChannel {
        name,
        mean,
        sigma,
        from,
    })
}

pub(super) fn read_correlations(sink: &mut Sink<'_>, node: &Node) -> Vec<RawCorrelation> {
    let example = "[[correlations]] with between = [\"a\", \"b\"] and rho = 0.2";
    let Value::Array(items) = &node.value else {
        type_error(sink, node, "correlations", "an array of tables", example);
        return Vec::new();
    };
    if items.len() > limits::MAX_CORRELATIONS {
        sink.error(
            node.span,
            "correlations",
            format!(
                "has {} entries, more than one per pair of {} channels ({})",
                items.len(),
                limits::MAX_CHANNELS,
                limits::MAX_CORRELATIONS
            ),
            "give each pair of channels at most one [[correlations]] entry",
        );
        return Vec::new();
    }
    let mut out = Vec::new();
    for (i, item) in items.iter().enumerate() {
        let key = format!("correlations[{i}]");
        let Some(mut t) = TableReader::of(item, &key, sink) else {
            continue;
        };
        let between_key = t.path("between");
        let between = match t.take("between") {
            Some(e) => match &e.value.value {
                Value::Array(names) if names.len() == 2 => {
                    let a = string(sink, &names[0], &format!("{between_key}[0]"), "\"a\"");
                    let b = string(sink, &names[1], &format!("{between_key}[1]"), "\"b\"");
                    a.zip(b)
                }
                Value::Array(names) => {
                    sink.error(
                        e.value.span,
                        &between_key,
                        format!("must name exactly two channels, found {}", names.len()),
                        "write between = [\"a\", \"b\"]; give each pair its own entry",
                    );
                    None
                }
                _ => {
                    type_error(
                        sink,
                        &e.value,
                        &between_key,
                        "two channel names",
                        "between = [\"a\", \"b\"]",
                    );
                    None
                }
            },
            None => {
                sink.error(
                    t.span,
                    &between_key,
                    "missing key `between`",
                    "add between = [\"a\", \"b\"]",
                );
                None
            }
        };
        let rho = t.required_number(sink, "rho", "rho = 0.2");
        t.finish(sink, &["between", "rho"]);
        out.push(RawCorrelation {
            key,
            span: item.span,
            between,
            rho,
        });
    }
    out
}

pub(super) fn read_signal(
    sink: &mut Sink<'_>,
    name: Spanned<String>,
    mut t: TableReader<'_>,
) -> RawSignal {
    let kind = kind(
        sink,
        &mut t,
        &[
            ("linear", SignalKind::Linear),
            ("median", SignalKind::Median),
            ("min", SignalKind::Min),
            ("max", SignalKind::Max),
        ],
        &[],
    );
    let of = read_of(sink, &mut t);
    let constant = t.optional_number(sink, "constant", "constant = 0.0");
    t.finish(sink, &["kind", "of", "constant"]);
    RawSignal {
        name,
        kind,
        of,
        constant,
    }
}

pub(super) fn read_of(sink: &mut Sink<'_>, t: &mut TableReader<'_>) -> Option<Spanned<Args>> {
    let key = t.path("of");
    match t.take("of") {
        Some(e) => args(sink, &e.value, &key),
        None => {
            sink.error(
                t.span,
                &key,
                "missing key `of` (what the function is computed from)",
                "add of = [\"a\", \"b\"] (or of = { a = 0.5, b = 0.5 } for a linear form)",
            );
            None
        }
    }
}

pub(super) fn read_output(sink: &mut Sink<'_>, node: &Node) -> Option<RawOutput> {
    let mut t = TableReader::of(node, "output", sink)?;
    let kind = kind(
        sink,
        &mut t,
        &[
            ("mean", OutputKind::Mean),
            ("weighted", OutputKind::Weighted),
            ("select", OutputKind::Select),
            ("median", OutputKind::Median),
            ("min", OutputKind::Min),
            ("max", OutputKind::Max),
            ("linear", OutputKind::Linear),
        ],
        &[],
    );
    let of = read_of(sink, &mut t);
    let constant = t.optional_number(sink, "constant", "constant = 0.0");
    t.finish(sink, &["kind", "of", "constant"]);
    Some(RawOutput {
        span: node.span,
        kind,
        of,
        constant,
    })
}

pub(super) fn read_band(sink: &mut Sink<'_>, t: &mut TableReader<'_>, key: &str) -> RawBand {
    let present = ["limit", "lower", "upper"].map(|k| t.entries.iter().any(|e| e.key == k));
    let limit = t.optional_number(sink, "limit", "limit = 2.0");
    let lower = t.optional_number(sink, "lower", "lower = -2.0");
    let upper = t.optional_number(sink, "upper", "upper = 2.0");
    let broken = (present[0] && limit.is_none())
        || (present[1] && lower.is_none())
        || (present[2] && upper.is_none());
    RawBand {
        key: key.to_string(),
        span: t.span,
        limit,
        lower,
        upper,
        broken,
    }
}

pub(super) fn read_check(
    sink: &mut Sink<'_>,
    name: Spanned<String>,
    mut t: TableReader<'_>,
) -> RawCheck {
    let kind = kind(
        sink,
        &mut t,
        &[
            ("difference", CheckKind::Difference),
            ("range", CheckKind::Range),
            ("from_output", CheckKind::FromOutput),
            ("linear", CheckKind::Linear),
        ],
        &RENAMED_CHECK_KINDS,
    );
    let of = read_of(sink, &mut t);
    let constant = t.optional_number(sink, "constant", "constant = 0.0");
    let band = read_band(sink, &mut t, &name.key);
    t.finish(sink, &["kind", "of", "constant", "limit", "lower", "upper"]);
    RawCheck {
        name,
        kind,
        of,
        constant,
        band,
    }
}

pub(super) fn read_detection(sink: &mut Sink<'_>, node: &Node) -> Option<Spanned<RawFires>> {
    let mut t = TableReader::of(node, "detection", sink)?;
    let key = t.path("fires");
    let example = "fires = \"any\" or fires = { at_least = 2 }";
    let fires = match t.take("fires") {
        None => Some(Spanned::new(RawFires::Any, t.span, key.clone())),
        Some(e) => match &e.value.value {
            Value::Str(s) if s == "any" => Some(spanned(RawFires::Any, &e.value, &key)),
            Value::Str(s) => {
                sink.error(
                    e.value.span,
                    &key,
                    format!("unknown detection rule \"{s}\""),
                    format!("write {example}"),
                );
                None
            }
            Value::Table(_) => {
                let mut ft = TableReader::of(&e.value, &key, sink)?;
                let k = ft
                    .take("at_least")
                    .and_then(|a| integer(sink, &a.value, &join(&key, "at_least"), "at_least = 2"));
                if k.is_none() && ft.entries.iter().all(|x| x.key != "at_least") {
                    sink.error(
                        e.value.span,
                        &key,
                        "missing key `at_least`",
                        format!("write {example}"),
                    );
                }
                ft.finish(sink, &["at_least"]);
                k.map(|k| spanned(RawFires::AtLeast(k), &e.value, &key))
            }
            _ => {
                type_error(sink, &e.value, &key, "\"any\" or { at_least = k }", example);
                None
            }
        },
    };
    t.finish(sink, &["fires"]);
    fires
}

pub(super) fn read_fault(
    sink: &mut Sink<'_>,
    name: Spanned<String>,
    mut t: TableReader<'_>,
) -> RawFault {
    let fit = t.required_number(sink, "fit", "fit = 10.0");
    let hits_key = t.path("hits");
    let hits = match t.take("hits") {
        Some(e) => weights(sink, &e.value, &hits_key, "hits = { a = 1.0 }")
            .map(|w| spanned(w, &e.value, &hits_key)),
        None => {
            sink.error(
                t.span,
                &hits_key,
                "missing key `hits` (the channels or sources the fault acts on)",
                "add hits = { a = 1.0 }",
            );
            None
        }
    };
    let mode_key = t.path("mode");
    let mode = match t.take("mode") {
        Some(e) => string(sink, &e.value, &mode_key, "mode = \"add\"").and_then(|s| {
            match s.value.as_str() {
                "add" => Some(Mode::Add),
                "replace" => Some(Mode::Replace),
                other => {
                    s.error(
                        sink,
                        format!("unknown mode \"{other}\""),
                        "use mode = \"add\" (the fault adds to the reading) or mode = \"replace\" \
                         (the channel reads the fault value, e.g. stuck-at)",
                    );
                    None
                }
            }
            .map(|m| Spanned {
                value: m,
                span: s.span,
                key: s.key.clone(),
                overridden: false,
            })
        }),
        None => {
            sink.error(
                t.span,
                &mode_key,
                "missing key `mode`",
                "add mode = \"add\" or mode = \"replace\"",
            );
            None
        }
    };
    let amp_key = t.path("amplitude");
    let amplitude = match t.take("amplitude") {
        Some(e) => read_amplitude(sink, &e.value, &amp_key),
        None => {
            sink.error(
                t.span,
                &amp_key,
                "missing key `amplitude` (how large the fault is)",
                "add amplitude = { gaussian = { mean = 0.0, sigma = \"unknown\" } }",
            );
            None
        }
    };
    let latent_coverage = t.optional_number(sink, "latent_coverage", "latent_coverage = 0.9");
    t.finish(
        sink,
        &["fit", "hits", "mode", "amplitude", "latent_coverage"],
    );
    RawFault {
        name,
        fit,
        hits,
        mode,
        amplitude,
        latent_coverage,
    }
}

pub(super) const AMPLITUDE_KINDS: &[&str] = &["gaussian", "uniform", "points"];

pub(super) fn read_amplitude(
    sink: &mut Sink<'_>,
    node: &Node,
    key: &str,
) -> Option<Spanned<RawAmplitude>> {
    let example = "amplitude = { gaussian = { mean = 0.0, sigma = 1.5 } }, \
                   amplitude = { uniform = \"full_scale\" } or \
                   amplitude = { points = [[540.0, 0.5], [-540.0, 0.5]] }";
    let Some(entries) = node.entries() else {
        type_error(sink, node, key, "a table with one amplitude model", example);
        return None;
    };
    let known: Vec<&Entry> = entries
        .iter()
        .filter(|e| AMPLITUDE_KINDS.contains(&e.key.as_str()))
        .collect();
    let mut t = TableReader::of(node, key, sink)?;
    if known.len() != 1 {
        let message = if known.is_empty() {
            "gives no amplitude model".to_string()
        } else {
            format!(
                "gives {} amplitude models ({}); a fault has exactly one",
                known.len(),
                known
                    .iter()
                    .map(|e| e.key.as_str())
                    .collect::<Vec<_>>()
                    .join(", ")
            )
        };
        for k in AMPLITUDE_KINDS {
            t.take(k);
        }
        t.finish(sink, AMPLITUDE_KINDS);
        sink.error(node.span, key, message, format!("write one of {example}"));
        return None;
    }
    let e = known[0];
    t.take(&e.key);
    t.finish(sink, AMPLITUDE_KINDS);
    let sub = join(key, &e.key);
    let amp = match e.key.as_str() {
        "gaussian" => read_gaussian(sink, &e.value, &sub)?,
        "uniform" => match &e.value.value {
            Value::Str(s) if s == "full_scale" => RawAmplitude::UniformFullScale,
            Value::Str(s) => {
                sink.error(
                    e.value.span,
                    &sub,
                    format!("\"{s}\" is not a range"),
                    "write uniform = \"full_scale\" or uniform = [-10.0, 10.0]",
                );
                return None;
            }
            _ => {
                let p = pair(sink, &e.value, &sub, "uniform = [-10.0, 10.0]")?;
                RawAmplitude::Uniform(
                    Spanned::new(p.value.0, p.span, format!("{sub}[0]")),
                    Spanned::new(p.value.1, p.span, format!("{sub}[1]")),
                )
            }
        },
        _ => read_points(sink, &e.value, &sub)?,
    };
    Some(spanned(amp, &e.value, &sub))
}

pub(super) fn read_gaussian(sink: &mut Sink<'_>, node: &Node, key: &str) -> Option<RawAmplitude> {
    let mut t = TableReader::of(node, key, sink)?;
    let mean = t
        .optional_number(sink, "mean", "mean = 0.0")
        .unwrap_or_else(|| Spanned::new(0.0, t.span, t.path("mean")));
    let sigma_key = t.path("sigma");
    let example = "sigma = 1.5, sigma = \"unknown\" or sigma = { unknown = [0.01, 1000.0] }";
    let sigma = match t.take("sigma") {
        None => {
            sink.error(
                t.span,
                &sigma_key,
                "missing key `sigma`",
                format!("add {example}"),
            );
            None
        }
        Some(e) => match &e.value.value {
            Value::Str(s) if s == "unknown" => Some(RawSigma::Unknown),
            Value::Str(s) => {
                sink.error(
                    e.value.span,
                    &sigma_key,
                    format!("\"{s}\" is not a sigma"),
                    format!("write {example}"),
                );
                None
            }
            Value::Table(_) => {
                let mut st = TableReader::of(&e.value, &sigma_key, sink)?;
                let r = match st.take("unknown") {
                    Some(u) => pair(
                        sink,
                        &u.value,
                        &join(&sigma_key, "unknown"),
                        "unknown = [0.01, 1000.0]",
                    )
                    .map(|p| {
                        RawSigma::UnknownRange(
                            Spanned::new(p.value.0, p.span, format!("{}[0]", p.key)),
                            Spanned::new(p.value.1, p.span, format!("{}[1]", p.key)),
                        )
                    }),
                    None => {
                        sink.error(
                            e.value.span,
                            &sigma_key,
                            "a sigma table must give the search range `unknown`",
                            "write sigma = { unknown = [0.01, 1000.0] }",
                        );
                        None
                    }
                };
                st.finish(sink, &["unknown"]);
                r
            }
            _ => number(sink, &e.value, &sigma_key, example).map(RawSigma::Known),
        }
        .map(|s| spanned(s, &e.value, &sigma_key)),
    };
    t.finish(sink, &["mean", "sigma"]);
    Some(RawAmplitude::Gaussian {
        mean,
        sigma: sigma?,
    })
}

pub(super) fn read_points(sink: &mut Sink<'_>, node: &Node, key: &str) -> Option<RawAmplitude> {
    let example = "points = [[540.0, 0.5], [-540.0, 0.5]]";
    let Value::Array(items) = &node.value else {
        type_error(
            sink,
            node,
            key,
            "an array of [value, weight] pairs",
            example,
        );
        return None;
    };
    if items.len() > limits::MAX_POINTS {
        sink.error(
            node.span,
            key,
            format!(
                "lists {} points, more than the limit of {}",
                items.len(),
                limits::MAX_POINTS
            ),
            "use a uniform range or fewer points",
        );
        return None;
    }
    let mut points = Vec::new();
    let mut ok = true;
    for (i, item) in items.iter().enumerate() {
        let k = format!("{key}[{i}]");
        match &item.value {
            Value::Array(vw) if vw.len() == 2 => {
                let v = number(sink, &vw[0], &format!("{k}[0]"), example);
                let w = number(sink, &vw[1], &format!("{k}[1]"), example);
                match v.zip(w) {
                    Some(p) => points.push(p),
                    None => ok = false,
                }
            }
            _ => {
                sink.error(
                    item.span,
                    &k,
                    "each point must be a pair [value, weight]",
                    format!("write {example}"),
                );
                ok = false;
            }
        }
    }
    ok.then_some(RawAmplitude::Points(points))
}
