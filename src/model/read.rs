//! Reading the document tree into the typed raw model: key names, value types, required keys.
//! Every problem is recorded in the sink and reading goes on, so that one run reports them
//! all; a value that cannot be read is left out (and its absence is not reported again).

use super::error::{Sink, Span};
use super::limits;
use super::raw::*;
use super::tree::{Entry, Node, Value};

const TOP_KEYS: &[&str] = &[
    "name",
    "unit",
    "full_scale",
    "sources",
    "channels",
    "correlations",
    "signals",
    "output",
    "checks",
    "detection",
    "safety",
    "faults",
];

/// Reads the whole document.
pub(crate) fn read(root: &Node, sink: &mut Sink<'_>) -> RawModel {
    let mut model = RawModel {
        name: None,
        unit: None,
        full_scale: None,
        sources: Vec::new(),
        channels: Vec::new(),
        correlations: Vec::new(),
        signals: Vec::new(),
        output: None,
        checks: Vec::new(),
        detection: None,
        safety: None,
        faults: Vec::new(),
        names_incomplete: false,
        channels_given: false,
    };
    let Some(mut top) = Tbl::of(root, "", sink) else {
        return model;
    };
    model.name = top.req_str(sink, "name", "name = \"Dual hall channels, averaged\"");
    model.unit = top.req_str(sink, "unit", "unit = \"deg\"");
    if let Some(e) = top.take("full_scale") {
        model.full_scale = pair(sink, &e.value, "full_scale", "full_scale = [-540.0, 540.0]");
    }
    if let Some(e) = top.take("sources") {
        for (name, t) in named_tables(
            sink,
            e,
            "sources",
            &mut model.names_incomplete,
            "[sources.vref]",
        ) {
            if let Some(s) = read_source(sink, name, t) {
                model.sources.push(s);
            }
        }
    }
    match top.take("channels") {
        Some(e) => {
            model.channels_given = true;
            for (name, t) in named_tables(
                sink,
                e,
                "channels",
                &mut model.names_incomplete,
                "[channels.a]",
            ) {
                if let Some(c) = read_channel(sink, name, t) {
                    model.channels.push(c);
                }
            }
        }
        None => sink.error(
            top.span,
            "channels",
            "the file defines no channels",
            "add at least one channel, e.g. [channels.a] with mean = 0.0 and sigma = 0.5",
        ),
    }
    if let Some(e) = top.take("correlations") {
        model.correlations = read_correlations(sink, &e.value);
    }
    if let Some(e) = top.take("signals") {
        for (name, t) in named_tables(
            sink,
            e,
            "signals",
            &mut model.names_incomplete,
            "[signals.est]",
        ) {
            model.signals.push(read_signal(sink, name, t));
        }
    }
    match top.take("output") {
        Some(e) => model.output = read_output(sink, &e.value),
        None => sink.error(
            top.span,
            "output",
            "the file has no [output] section",
            "add [output] with kind = \"mean\" and of = [\"a\", \"b\"]",
        ),
    }
    if let Some(e) = top.take("checks") {
        for (name, t) in named_tables(
            sink,
            e,
            "checks",
            &mut model.names_incomplete,
            "[checks.ab]",
        ) {
            model.checks.push(read_check(sink, name, t));
        }
    }
    if let Some(e) = top.take("detection") {
        model.detection = read_detection(sink, &e.value);
    }
    match top.take("safety") {
        Some(e) => {
            if let Some(mut t) = Tbl::of(&e.value, "safety", sink) {
                let band = read_band(sink, &mut t, "safety");
                t.finish(sink, &["limit", "lower", "upper"]);
                model.safety = Some(band);
            }
        }
        None => sink.error(
            top.span,
            "safety",
            "the file has no [safety] section (the safety requirement on the output)",
            "add [safety] with limit = 2.0 (or lower = .. and upper = ..)",
        ),
    }
    if let Some(e) = top.take("faults") {
        for (name, t) in named_tables(
            sink,
            e,
            "faults",
            &mut model.names_incomplete,
            "[faults.a_drift]",
        ) {
            model.faults.push(read_fault(sink, name, t));
        }
    }
    top.finish(sink, TOP_KEYS);
    model
}

/// Joins a key path.
fn join(parent: &str, key: &str) -> String {
    if parent.is_empty() {
        key.to_string()
    } else {
        format!("{parent}.{key}")
    }
}

/// A table being read: remembers which keys were used, to report the others.
pub(crate) struct Tbl<'n> {
    entries: &'n [Entry],
    used: Vec<bool>,
    pub key: String,
    pub span: Span,
}

impl<'n> Tbl<'n> {
    /// The node as a table, or an error saying it must be one.
    fn of(node: &'n Node, key: &str, sink: &mut Sink<'_>) -> Option<Tbl<'n>> {
        match &node.value {
            Value::Table(entries) => Some(Tbl {
                entries,
                used: vec![false; entries.len()],
                key: key.to_string(),
                span: node.span,
            }),
            other => {
                let what = if key.is_empty() { "the document" } else { key };
                sink.error(
                    node.span,
                    key,
                    format!("{what} must be a table, found {}", other.type_name()),
                    format!("write it as a table: [{key}] followed by key = value lines"),
                );
                None
            }
        }
    }

    fn take(&mut self, k: &str) -> Option<&'n Entry> {
        let i = self.entries.iter().position(|e| e.key == k)?;
        self.used[i] = true;
        self.entries.get(i)
    }

    fn path(&self, k: &str) -> String {
        join(&self.key, k)
    }

    /// Reports every key that was not used.
    fn finish(self, sink: &mut Sink<'_>, known: &[&str]) {
        for (e, used) in self.entries.iter().zip(&self.used) {
            if !used {
                let mut fix = format!("use one of the known keys: {}", known.join(", "));
                if let Some(s) = suggest(&e.key, known) {
                    fix = format!("did you mean `{s}`? Known keys: {}", known.join(", "));
                }
                sink.error(
                    e.key_span,
                    &join(&self.key, &e.key),
                    format!("unknown key `{}`", e.key),
                    fix,
                );
            }
        }
    }

    fn req_num(&mut self, sink: &mut Sink<'_>, k: &str, example: &str) -> Option<Sp<f64>> {
        match self.take(k) {
            Some(e) => num(sink, &e.value, &self.path(k), example),
            None => {
                sink.error(
                    self.span,
                    &self.path(k),
                    format!("missing key `{k}`"),
                    format!("add {example}"),
                );
                None
            }
        }
    }

    fn opt_num(&mut self, sink: &mut Sink<'_>, k: &str, example: &str) -> Option<Sp<f64>> {
        let e = self.take(k)?;
        num(sink, &e.value, &self.path(k), example)
    }

    fn req_str(&mut self, sink: &mut Sink<'_>, k: &str, example: &str) -> Option<Sp<String>> {
        match self.take(k) {
            Some(e) => string(sink, &e.value, &self.path(k), example),
            None => {
                sink.error(
                    self.span,
                    &self.path(k),
                    format!("missing key `{k}`"),
                    format!("add {example}"),
                );
                None
            }
        }
    }
}

/// Closest known key within two edits, for "did you mean".
fn suggest(word: &str, known: &[&str]) -> Option<String> {
    known
        .iter()
        .map(|k| (edit_distance(word, k), *k))
        .filter(|(d, _)| *d <= 2)
        .min_by_key(|(d, _)| *d)
        .map(|(_, k)| k.to_string())
}

/// Levenshtein distance (short strings only: keys and kinds).
pub(crate) fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().take(64).collect();
    let b: Vec<char> = b.chars().take(64).collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.iter().enumerate() {
        let mut cur = vec![i + 1; b.len() + 1];
        for (j, cb) in b.iter().enumerate() {
            let cost = usize::from(ca != cb);
            cur[j + 1] = (prev[j] + cost).min(prev[j + 1] + 1).min(cur[j] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
}

fn sp<T>(v: T, node: &Node, key: &str) -> Sp<T> {
    Sp {
        v,
        span: node.span,
        key: key.to_string(),
        overridden: node.overridden,
    }
}

fn type_error(sink: &mut Sink<'_>, node: &Node, key: &str, expected: &str, example: &str) {
    let mut message = format!("expected {expected}, found {}", node.value.type_name());
    if node.overridden {
        message.push_str(" (the value was set by an override)");
    }
    sink.error(node.span, key, message, format!("write it as {example}"));
}

/// A finite number (TOML integer or float).
fn num(sink: &mut Sink<'_>, node: &Node, key: &str, example: &str) -> Option<Sp<f64>> {
    match &node.value {
        Value::Int(Some(i)) if (*i as f64).abs() <= limits::MAX_MAGNITUDE => {
            Some(sp(*i as f64, node, key))
        }
        Value::Float(x) if x.is_finite() && x.abs() <= limits::MAX_MAGNITUDE => {
            Some(sp(*x, node, key))
        }
        Value::Int(Some(_)) | Value::Float(_) if value_is_finite(&node.value) => {
            let shown = match &node.value {
                Value::Int(Some(i)) => i.to_string(),
                Value::Float(x) => format!("{x:e}"),
                _ => String::new(),
            };
            sink.error(
                node.span,
                key,
                format!(
                    "{shown} is larger in magnitude than the limit of {:e} for any number \
                     of an architecture file (beyond it the computation would lose its digits)",
                    limits::MAX_MAGNITUDE
                ),
                "choose a larger unit so that the numbers stay below the limit",
            );
            None
        }
        Value::Int(None) => {
            sink.error(
                node.span,
                key,
                "the integer does not fit in 64 bits",
                format!("write a number of sensible size, e.g. {example}"),
            );
            None
        }
        Value::Float(x) => {
            let s = sp(*x, node, key);
            s.error(
                sink,
                format!("{x} is not a finite number"),
                format!("give a finite value, e.g. {example}"),
            );
            None
        }
        _ => {
            type_error(sink, node, key, "a number", example);
            None
        }
    }
}

fn value_is_finite(value: &Value) -> bool {
    match value {
        Value::Int(Some(_)) => true,
        Value::Float(x) => x.is_finite(),
        _ => false,
    }
}

/// An integer (an override may give it as an integral float).
fn int(sink: &mut Sink<'_>, node: &Node, key: &str, example: &str) -> Option<Sp<i64>> {
    match &node.value {
        Value::Int(Some(i)) => Some(sp(*i, node, key)),
        Value::Float(x)
            if node.overridden && x.fract() == 0.0 && x.abs() < limits::MAX_EXACT_INT =>
        {
            Some(sp(*x as i64, node, key))
        }
        _ => {
            type_error(sink, node, key, "an integer", example);
            None
        }
    }
}

fn string(sink: &mut Sink<'_>, node: &Node, key: &str, example: &str) -> Option<Sp<String>> {
    match &node.value {
        Value::Str(s) => Some(sp(s.clone(), node, key)),
        _ => {
            type_error(sink, node, key, "a string", example);
            None
        }
    }
}

/// `[a, b]` of two numbers.
fn pair(sink: &mut Sink<'_>, node: &Node, key: &str, example: &str) -> Option<Sp<(f64, f64)>> {
    let Value::Array(items) = &node.value else {
        type_error(sink, node, key, "an array of two numbers", example);
        return None;
    };
    if items.len() != 2 {
        sink.error(
            node.span,
            key,
            format!(
                "expected two numbers [lower, upper], found {} values",
                items.len()
            ),
            format!("write it as {example}"),
        );
        return None;
    }
    let a = num(sink, &items[0], &format!("{key}[0]"), example);
    let b = num(sink, &items[1], &format!("{key}[1]"), example);
    Some(sp((a?.v, b?.v), node, key))
}

/// A name used as a table key (channel, source, signal, check, fault).
fn name_of(sink: &mut Sink<'_>, e: &Entry, section: &str) -> Sp<String> {
    let key = join(section, &e.key);
    let name = Sp::new(e.key.clone(), e.key_span, key);
    check_name(sink, &name);
    name
}

/// Names are letters, digits and `_`, starting with a letter or `_`, at most 64 characters,
/// so that they read well in formulas and in Graphviz.
pub(crate) fn check_name(sink: &mut Sink<'_>, name: &Sp<String>) {
    let s = &name.v;
    let mut chars = s.chars();
    let first_ok = chars
        .next()
        .is_some_and(|c| c.is_ascii_alphabetic() || c == '_');
    let rest_ok = s.chars().all(|c| c.is_ascii_alphanumeric() || c == '_');
    if !first_ok || !rest_ok || s.len() > limits::MAX_NAME_LEN {
        let shown: String = s.chars().take(limits::MAX_NAME_LEN).collect();
        name.error(
            sink,
            format!(
                "`{shown}` is not a valid name: names are letters, digits and `_`, start with a \
                 letter or `_` and have at most {} characters",
                limits::MAX_NAME_LEN
            ),
            "rename it, e.g. `hall_1` instead of `hall-1` or `1hall`",
        );
    }
}

/// The sub-tables of a section like `[channels]`, each with its name.
fn named_tables<'n>(
    sink: &mut Sink<'_>,
    e: &'n Entry,
    section: &str,
    incomplete: &mut bool,
    example: &str,
) -> Vec<(Sp<String>, Tbl<'n>)> {
    let Some(entries) = e.value.entries() else {
        *incomplete = true;
        sink.error(
            e.value.span,
            section,
            format!(
                "`{section}` must be a table of named entries, found {}",
                e.value.value.type_name()
            ),
            format!("write each entry as its own table, e.g. {example}"),
        );
        return Vec::new();
    };
    let mut out = Vec::new();
    for entry in entries {
        let name = name_of(sink, entry, section);
        match Tbl::of(&entry.value, &name.key, sink) {
            Some(t) => out.push((name, t)),
            None => *incomplete = true,
        }
    }
    out
}

/// A table of names with numbers: `{ a = 0.5, b = 0.5 }`.
fn weights(sink: &mut Sink<'_>, node: &Node, key: &str, example: &str) -> Option<Weights> {
    let Some(entries) = node.entries() else {
        type_error(sink, node, key, "a table of names with numbers", example);
        return None;
    };
    if entries.len() > limits::MAX_ARGS {
        sink.error(
            node.span,
            key,
            format!(
                "has {} entries, more than the limit of {}",
                entries.len(),
                limits::MAX_ARGS
            ),
            "list only the channels, signals or sources that are meant",
        );
        return None;
    }
    let mut out = Vec::new();
    for e in entries {
        let k = join(key, &e.key);
        let name = Sp {
            v: e.key.clone(),
            span: e.key_span,
            key: k.clone(),
            overridden: false,
        };
        if let Some(w) = num(sink, &e.value, &k, example) {
            out.push((name, w));
        }
    }
    Some(out)
}

/// The `of` of a signal, output or check: a name, a list of names or a table of weights.
fn args(sink: &mut Sink<'_>, node: &Node, key: &str) -> Option<Sp<Args>> {
    let example = "of = [\"a\", \"b\"], of = \"a\" or of = { a = 0.5, b = 0.5 }";
    match &node.value {
        Value::Str(s) => Some(sp(Args::One(sp(s.clone(), node, key)), node, key)),
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
            ok.then(|| sp(Args::List(names), node, key))
        }
        Value::Table(_) => {
            weights(sink, node, key, example).map(|w| sp(Args::Weights(w), node, key))
        }
        _ => {
            type_error(sink, node, key, "names", example);
            None
        }
    }
}

/// A kind keyword out of `allowed`.
/// Kinds that an earlier version of the file format spelled otherwise: (old word, new word,
/// what the kind computes). A file with the old word gets an error that names the new one.
const RENAMED_CHECK_KINDS: [(&str, &str, &str); 1] = [("spread", "range", "max minus min")];

fn kind<T: Copy>(
    sink: &mut Sink<'_>,
    t: &mut Tbl<'_>,
    allowed: &[(&str, T)],
    renamed: &[(&str, &str, &str)],
) -> Option<Sp<T>> {
    let key = t.path("kind");
    let names: Vec<&str> = allowed.iter().map(|(n, _)| *n).collect();
    let example = format!("kind = \"{}\"", names.first().copied().unwrap_or(""));
    let Some(e) = t.take("kind") else {
        sink.error(
            t.span,
            &key,
            "missing key `kind`",
            format!("add kind = one of {}", quoted(&names)),
        );
        return None;
    };
    let s = string(sink, &e.value, &key, &example)?;
    match allowed.iter().find(|(n, _)| *n == s.v) {
        Some((_, k)) => Some(Sp {
            v: *k,
            span: s.span,
            key: s.key,
            overridden: false,
        }),
        None => {
            if let Some((old, new, what)) = renamed.iter().find(|(o, _, _)| *o == s.v) {
                s.error(
                    sink,
                    format!("the kind \"{old}\" was renamed to \"{new}\" ({what})"),
                    format!("write kind = \"{new}\""),
                );
                return None;
            }
            let mut fix = format!("use one of {}", quoted(&names));
            if let Some(g) = suggest(&s.v, &names) {
                fix = format!("did you mean \"{g}\"? Kinds: {}", quoted(&names));
            }
            s.error(sink, format!("unknown kind \"{}\"", s.v), fix);
            None
        }
    }
}

fn quoted(names: &[&str]) -> String {
    names
        .iter()
        .map(|n| format!("\"{n}\""))
        .collect::<Vec<_>>()
        .join(", ")
}

fn read_source(sink: &mut Sink<'_>, name: Sp<String>, mut t: Tbl<'_>) -> Option<RawSource> {
    let mean = t
        .opt_num(sink, "mean", "mean = 0.0")
        .unwrap_or_else(|| Sp::new(0.0, t.span, t.path("mean")));
    // a missing or unreadable sigma is reported; 0 stands in so that the name stays defined
    let sigma = t
        .req_num(sink, "sigma", "sigma = 0.1")
        .unwrap_or_else(|| Sp::new(0.0, t.span, t.path("sigma")));
    t.finish(sink, &["mean", "sigma"]);
    Some(RawSource { name, mean, sigma })
}

fn read_channel(sink: &mut Sink<'_>, name: Sp<String>, mut t: Tbl<'_>) -> Option<RawChannel> {
    let mean = t
        .opt_num(sink, "mean", "mean = 0.0")
        .unwrap_or_else(|| Sp::new(0.0, t.span, t.path("mean")));
    // a missing or unreadable sigma is reported; 0 stands in so that the name stays defined
    let sigma = t
        .req_num(sink, "sigma", "sigma = 0.5")
        .unwrap_or_else(|| Sp::new(0.0, t.span, t.path("sigma")));
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

fn read_correlations(sink: &mut Sink<'_>, node: &Node) -> Vec<RawCorrelation> {
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
        let Some(mut t) = Tbl::of(item, &key, sink) else {
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
        let rho = t.req_num(sink, "rho", "rho = 0.2");
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

fn read_signal(sink: &mut Sink<'_>, name: Sp<String>, mut t: Tbl<'_>) -> RawSignal {
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
    let constant = t.opt_num(sink, "constant", "constant = 0.0");
    t.finish(sink, &["kind", "of", "constant"]);
    RawSignal {
        name,
        kind,
        of,
        constant,
    }
}

fn read_of(sink: &mut Sink<'_>, t: &mut Tbl<'_>) -> Option<Sp<Args>> {
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

fn read_output(sink: &mut Sink<'_>, node: &Node) -> Option<RawOutput> {
    let mut t = Tbl::of(node, "output", sink)?;
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
    let constant = t.opt_num(sink, "constant", "constant = 0.0");
    t.finish(sink, &["kind", "of", "constant"]);
    Some(RawOutput {
        span: node.span,
        kind,
        of,
        constant,
    })
}

fn read_band(sink: &mut Sink<'_>, t: &mut Tbl<'_>, key: &str) -> RawBand {
    let present = ["limit", "lower", "upper"].map(|k| t.entries.iter().any(|e| e.key == k));
    let limit = t.opt_num(sink, "limit", "limit = 2.0");
    let lower = t.opt_num(sink, "lower", "lower = -2.0");
    let upper = t.opt_num(sink, "upper", "upper = 2.0");
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

fn read_check(sink: &mut Sink<'_>, name: Sp<String>, mut t: Tbl<'_>) -> RawCheck {
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
    let constant = t.opt_num(sink, "constant", "constant = 0.0");
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

fn read_detection(sink: &mut Sink<'_>, node: &Node) -> Option<Sp<RawFires>> {
    let mut t = Tbl::of(node, "detection", sink)?;
    let key = t.path("fires");
    let example = "fires = \"any\" or fires = { at_least = 2 }";
    let fires = match t.take("fires") {
        None => Some(Sp::new(RawFires::Any, t.span, key.clone())),
        Some(e) => match &e.value.value {
            Value::Str(s) if s == "any" => Some(sp(RawFires::Any, &e.value, &key)),
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
                let mut ft = Tbl::of(&e.value, &key, sink)?;
                let k = ft
                    .take("at_least")
                    .and_then(|a| int(sink, &a.value, &join(&key, "at_least"), "at_least = 2"));
                if k.is_none() && ft.entries.iter().all(|x| x.key != "at_least") {
                    sink.error(
                        e.value.span,
                        &key,
                        "missing key `at_least`",
                        format!("write {example}"),
                    );
                }
                ft.finish(sink, &["at_least"]);
                k.map(|k| sp(RawFires::AtLeast(k), &e.value, &key))
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

fn read_fault(sink: &mut Sink<'_>, name: Sp<String>, mut t: Tbl<'_>) -> RawFault {
    let fit = t.req_num(sink, "fit", "fit = 10.0");
    let hits_key = t.path("hits");
    let hits = match t.take("hits") {
        Some(e) => weights(sink, &e.value, &hits_key, "hits = { a = 1.0 }")
            .map(|w| sp(w, &e.value, &hits_key)),
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
            match s.v.as_str() {
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
            .map(|m| Sp {
                v: m,
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
    let latent_coverage = t.opt_num(sink, "latent_coverage", "latent_coverage = 0.9");
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

const AMPLITUDE_KINDS: &[&str] = &["gaussian", "uniform", "points"];

fn read_amplitude(sink: &mut Sink<'_>, node: &Node, key: &str) -> Option<Sp<RawAmplitude>> {
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
    let mut t = Tbl::of(node, key, sink)?;
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
                    Sp::new(p.v.0, p.span, format!("{sub}[0]")),
                    Sp::new(p.v.1, p.span, format!("{sub}[1]")),
                )
            }
        },
        _ => read_points(sink, &e.value, &sub)?,
    };
    Some(sp(amp, &e.value, &sub))
}

fn read_gaussian(sink: &mut Sink<'_>, node: &Node, key: &str) -> Option<RawAmplitude> {
    let mut t = Tbl::of(node, key, sink)?;
    let mean = t
        .opt_num(sink, "mean", "mean = 0.0")
        .unwrap_or_else(|| Sp::new(0.0, t.span, t.path("mean")));
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
                let mut st = Tbl::of(&e.value, &sigma_key, sink)?;
                let r = match st.take("unknown") {
                    Some(u) => pair(
                        sink,
                        &u.value,
                        &join(&sigma_key, "unknown"),
                        "unknown = [0.01, 1000.0]",
                    )
                    .map(|p| {
                        RawSigma::UnknownRange(
                            Sp::new(p.v.0, p.span, format!("{}[0]", p.key)),
                            Sp::new(p.v.1, p.span, format!("{}[1]", p.key)),
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
            _ => num(sink, &e.value, &sigma_key, example).map(RawSigma::Known),
        }
        .map(|s| sp(s, &e.value, &sigma_key)),
    };
    t.finish(sink, &["mean", "sigma"]);
    Some(RawAmplitude::Gaussian {
        mean,
        sigma: sigma?,
    })
}

fn read_points(sink: &mut Sink<'_>, node: &Node, key: &str) -> Option<RawAmplitude> {
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
                let v = num(sink, &vw[0], &format!("{k}[0]"), example);
                let w = num(sink, &vw[1], &format!("{k}[1]"), example);
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
