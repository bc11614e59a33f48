//! Validation of the functions of readings: derived signals, the output and the checks.
//! Each `of` must have the form its kind takes and name channels or derived signals.

use super::error::Sink;
use super::limits;
use super::names::{NameRef, Namespace};
use super::raw::*;
use super::resolved::*;

/// The most arguments of an order statistic or a range check.
pub(crate) fn max_order_args() -> usize {
    limits::MAX_ORDER_ARGS
}

fn is_reading(r: NameRef) -> bool {
    matches!(r, NameRef::Channel(_) | NameRef::Signal(_))
}

fn reading(ns: &Namespace, sink: &mut Sink<'_>, name: &Spanned<String>) -> Option<Reading> {
    match ns.resolve(
        sink,
        name,
        "a channel or derived signal",
        is_reading,
        "a shared source is not a reading; refer to the channels it feeds",
    )? {
        NameRef::Channel(i) => Some(Reading::Channel(i)),
        NameRef::Signal(i) => Some(Reading::Signal(i)),
        NameRef::Source(_) => None,
    }
}

/// A list of at least `min` (and at most `max`) distinct readings.
fn list(
    ns: &Namespace,
    sink: &mut Sink<'_>,
    of: &Spanned<Args>,
    what: &str,
    min: usize,
    max: usize,
) -> Option<Vec<Reading>> {
    let names = match &of.value {
        Args::List(names) => names,
        Args::One(name) => {
            of.error(
                sink,
                format!(
                    "{what} takes a list of names, found the single name \"{}\"",
                    name.value
                ),
                format!("write of = [\"{}\", ...]", name.value),
            );
            return None;
        }
        Args::Weights(_) => {
            of.error(
                sink,
                format!("{what} takes a list of names, not a table of weights"),
                "write of = [\"a\", \"b\"], or use kind = \"linear\" for a weighted form",
            );
            return None;
        }
    };
    if names.is_empty() {
        of.error(
            sink,
            format!("{what} is computed from nothing: `of` is empty"),
            "list the channels or signals it is computed from, e.g. of = [\"a\", \"b\"]",
        );
        return None;
    }
    if names.len() < min {
        of.error(
            sink,
            format!("{what} needs at least {min} names, found {}", names.len()),
            if min == 2 {
                "list more names, or use an output of kind = \"select\" for a single channel"
                    .to_string()
            } else {
                format!("list at least {min} names")
            },
        );
        return None;
    }
    if names.len() > max {
        of.error(
            sink,
            format!(
                "{what} has {} names, more than the limit of {} (limits::MAX_ORDER_ARGS)",
                names.len(),
                limits::MAX_ORDER_ARGS
            ),
            format!("use at most {max} names"),
        );
        return None;
    }
    let mut out = Vec::new();
    let mut ok = true;
    for (i, n) in names.iter().enumerate() {
        if names[..i].iter().any(|m| m.value == n.value) {
            n.error(
                sink,
                format!("`{}` is listed twice", n.value),
                "list each name once (use kind = \"linear\" to weight one more than another)",
            );
            ok = false;
            continue;
        }
        match reading(ns, sink, n) {
            Some(r) => out.push(r),
            None => ok = false,
        }
    }
    ok.then_some(out)
}

/// Exactly one reading: `of = "a"` (or a list of one).
fn one(ns: &Namespace, sink: &mut Sink<'_>, of: &Spanned<Args>, what: &str) -> Option<Reading> {
    match &of.value {
        Args::One(name) => reading(ns, sink, name),
        Args::List(names) if names.len() == 1 => reading(ns, sink, &names[0]),
        Args::List(names) => {
            of.error(
                sink,
                format!("{what} takes exactly one name, found {}", names.len()),
                "write of = \"a\"",
            );
            None
        }
        Args::Weights(_) => {
            of.error(
                sink,
                format!("{what} takes one name, not a table of weights"),
                "write of = \"a\"",
            );
            None
        }
    }
}

/// A table of readings with weights.
fn weights(
    ns: &Namespace,
    sink: &mut Sink<'_>,
    of: &Spanned<Args>,
    what: &str,
) -> Option<Vec<(Reading, f64)>> {
    let table = match &of.value {
        Args::Weights(w) => w,
        _ => {
            of.error(
                sink,
                format!("{what} takes a table of names with weights"),
                "write of = { a = 0.5, b = 0.5 }",
            );
            return None;
        }
    };
    if table.is_empty() {
        of.error(
            sink,
            format!("{what} is computed from nothing: `of` is empty"),
            "give names with weights, e.g. of = { a = 0.5, b = 0.5 }",
        );
        return None;
    }
    let mut out = Vec::new();
    let mut ok = true;
    for (name, w) in table {
        if w.value == 0.0 {
            w.warning(
                sink,
                format!("weight 0: `{}` has no effect", name.value),
                "drop the entry or give its weight",
            );
        }
        match reading(ns, sink, name) {
            Some(r) => out.push((r, w.value)),
            None => ok = false,
        }
    }
    ok.then_some(out)
}

/// Errors for a `constant` given to a kind that takes none.
fn no_constant(sink: &mut Sink<'_>, constant: &Option<Spanned<f64>>, kind: &str) -> bool {
    if let Some(c) = constant {
        c.error(
            sink,
            format!("`constant` is only allowed with kind = \"linear\", not \"{kind}\""),
            "drop it, or use kind = \"linear\" with of = { .. } and constant = ..",
        );
        return false;
    }
    true
}

fn loc_of<T>(name_key: &str, s: &Spanned<T>) -> Loc {
    Loc {
        span: s.span,
        key: name_key.to_string(),
    }
}

pub(crate) fn signal_fn(s: &RawSignal, ns: &Namespace, sink: &mut Sink<'_>) -> Option<VFunction> {
    let (kind, of) = (s.kind.as_ref()?, s.of.as_ref()?);
    let what = format!("the {} signal `{}`", word_signal(kind.value), s.name.value);
    let def = match kind.value {
        SignalKind::Linear => FnDef::Linear {
            terms: weights(ns, sink, of, &what)?,
            constant: s.constant.as_ref().map_or(0.0, |c| c.value),
            weighted: false,
        },
        SignalKind::Median | SignalKind::Min | SignalKind::Max => {
            let ok = no_constant(sink, &s.constant, word_signal(kind.value));
            let args = list(ns, sink, of, &what, 2, max_order_args())?;
            let stat = match kind.value {
                SignalKind::Median => Stat::Median,
                SignalKind::Min => Stat::Min,
                _ => Stat::Max,
            };
            ok.then_some(FnDef::Order(stat, args))?
        }
    };
    Some(VFunction {
        name: s.name.value.clone(),
        def,
        loc: loc_of(&s.name.key, &s.name),
    })
}

fn word_signal(k: SignalKind) -> &'static str {
    match k {
        SignalKind::Linear => "linear",
        SignalKind::Median => "median",
        SignalKind::Min => "min",
        SignalKind::Max => "max",
    }
}

pub(crate) fn output_fn(o: &RawOutput, ns: &Namespace, sink: &mut Sink<'_>) -> Option<VFunction> {
    let (kind, of) = (o.kind.as_ref()?, o.of.as_ref()?);
    let word = match kind.value {
        OutputKind::Mean => "mean",
        OutputKind::Weighted => "weighted",
        OutputKind::Select => "select",
        OutputKind::Median => "median",
        OutputKind::Min => "min",
        OutputKind::Max => "max",
        OutputKind::Linear => "linear",
    };
    let what = format!("the {word} output");
    if kind.value != OutputKind::Linear && !no_constant(sink, &o.constant, word) {
        return None;
    }
    let def = match kind.value {
        OutputKind::Mean => FnDef::Mean(list(ns, sink, of, &what, 1, limits::MAX_ARGS)?),
        OutputKind::Select => FnDef::Select(one(ns, sink, of, &what)?),
        OutputKind::Median => FnDef::Order(
            Stat::Median,
            list(ns, sink, of, &what, 2, max_order_args())?,
        ),
        OutputKind::Min => FnDef::Order(Stat::Min, list(ns, sink, of, &what, 2, max_order_args())?),
        OutputKind::Max => FnDef::Order(Stat::Max, list(ns, sink, of, &what, 2, max_order_args())?),
        OutputKind::Weighted => {
            let terms = weights(ns, sink, of, &what)?;
            let sum: f64 = terms.iter().map(|(_, w)| w).sum();
            if (sum - 1.0).abs() > crate::prob::tolerance::WEIGHT_SUM_ABS {
                of.error(
                    sink,
                    format!(
                        "the weights sum to {sum}, not 1: the output would not measure the \
                         quantity (its deviation would depend on the true value)"
                    ),
                    "scale the weights to sum to 1, or use kind = \"linear\" for an arbitrary \
                     linear form",
                );
                return None;
            }
            FnDef::Linear {
                terms,
                constant: 0.0,
                weighted: true,
            }
        }
        OutputKind::Linear => FnDef::Linear {
            terms: weights(ns, sink, of, &what)?,
            constant: o.constant.as_ref().map_or(0.0, |c| c.value),
            weighted: false,
        },
    };
    Some(VFunction {
        name: "output".to_string(),
        def,
        loc: Loc {
            span: o.span,
            key: "output".to_string(),
        },
    })
}

pub(crate) fn check_fn(c: &RawCheck, ns: &Namespace, sink: &mut Sink<'_>) -> Option<VFunction> {
    let (kind, of) = (c.kind.as_ref()?, c.of.as_ref()?);
    let word = match kind.value {
        CheckKind::Difference => "difference",
        CheckKind::Range => "range",
        CheckKind::FromOutput => "from_output",
        CheckKind::Linear => "linear",
    };
    let what = format!("the {word} check `{}`", c.name.value);
    if kind.value != CheckKind::Linear && !no_constant(sink, &c.constant, word) {
        return None;
    }
    let def = match kind.value {
        CheckKind::Difference => {
            if let Args::List(names) = &of.value
                && names.len() != 2
            {
                of.error(
                    sink,
                    format!("{what} takes exactly two names, found {}", names.len()),
                    "write of = [\"a\", \"b\"] (the check value is a - b); use kind = \
                         \"range\" for more than two",
                );
                return None;
            }
            let a = list(ns, sink, of, &what, 2, 2)?;
            FnDef::Difference(*a.first()?, *a.get(1)?)
        }
        CheckKind::Range => FnDef::Range(list(ns, sink, of, &what, 2, max_order_args())?),
        CheckKind::FromOutput => FnDef::FromOutput(one(ns, sink, of, &what)?),
        CheckKind::Linear => FnDef::Linear {
            terms: weights(ns, sink, of, &what)?,
            constant: c.constant.as_ref().map_or(0.0, |c| c.value),
            weighted: false,
        },
    };
    Some(VFunction {
        name: c.name.value.clone(),
        def,
        loc: loc_of(&c.name.key, &c.name),
    })
}
