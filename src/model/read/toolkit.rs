//! The reading toolkit: a table being read ([`TableReader`], which reports unknown keys), typed
//! values with their spans (numbers, integers, strings, pairs, weights, kind keywords),
//! named sub-tables, and the suggestions for misspelt keys. Nothing here knows a section of
//! the file; `sections.rs` reads those with it.

use crate::model::error::{Sink, Span};
use crate::model::limits;
use crate::model::raw::*;
use crate::model::tree::{Entry, Node, Value};

/// Joins a key path.
pub(super) fn join(parent: &str, key: &str) -> String {
    if parent.is_empty() {
        key.to_string()
    } else {
        format!("{parent}.{key}")
    }
}

/// A table being read: remembers which keys were used, to report the others.
pub(crate) struct TableReader<'n> {
    pub(super) entries: &'n [Entry],
    used: Vec<bool>,
    pub key: String,
    pub span: Span,
}

impl<'n> TableReader<'n> {
    /// The node as a table, or an error saying it must be one.
    pub(super) fn of(node: &'n Node, key: &str, sink: &mut Sink<'_>) -> Option<TableReader<'n>> {
        match &node.value {
            Value::Table(entries) => Some(TableReader {
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

    pub(super) fn take(&mut self, k: &str) -> Option<&'n Entry> {
        let i = self.entries.iter().position(|e| e.key == k)?;
        self.used[i] = true;
        self.entries.get(i)
    }

    pub(super) fn path(&self, k: &str) -> String {
        join(&self.key, k)
    }

    /// Reports every key that was not used.
    pub(super) fn finish(self, sink: &mut Sink<'_>, known: &[&str]) {
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

    pub(super) fn required_number(
        &mut self,
        sink: &mut Sink<'_>,
        k: &str,
        example: &str,
    ) -> Option<Spanned<f64>> {
        match self.take(k) {
            Some(e) => number(sink, &e.value, &self.path(k), example),
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

    pub(super) fn optional_number(
        &mut self,
        sink: &mut Sink<'_>,
        k: &str,
        example: &str,
    ) -> Option<Spanned<f64>> {
        let e = self.take(k)?;
        number(sink, &e.value, &self.path(k), example)
    }

    pub(super) fn required_string(
        &mut self,
        sink: &mut Sink<'_>,
        k: &str,
        example: &str,
    ) -> Option<Spanned<String>> {
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
pub(super) fn suggest(word: &str, known: &[&str]) -> Option<String> {
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

pub(super) fn spanned<T>(v: T, node: &Node, key: &str) -> Spanned<T> {
    Spanned {
        value: v,
        span: node.span,
        key: key.to_string(),
        overridden: node.overridden,
    }
}

pub(super) fn type_error(
    sink: &mut Sink<'_>,
    node: &Node,
    key: &str,
    expected: &str,
    example: &str,
) {
    let mut message = format!("expected {expected}, found {}", node.value.type_name());
    if node.overridden {
        message.push_str(" (the value was set by an override)");
    }
    sink.error(node.span, key, message, format!("write it as {example}"));
}

/// A finite number (TOML integer or float).
pub(super) fn number(
    sink: &mut Sink<'_>,
    node: &Node,
    key: &str,
    example: &str,
) -> Option<Spanned<f64>> {
    match &node.value {
        Value::Int(Some(i)) if (*i as f64).abs() <= limits::MAX_MAGNITUDE => {
            Some(spanned(*i as f64, node, key))
        }
        Value::Float(x) if x.is_finite() && x.abs() <= limits::MAX_MAGNITUDE => {
            Some(spanned(*x, node, key))
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
            let s = spanned(*x, node, key);
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

pub(super) fn value_is_finite(value: &Value) -> bool {
    match value {
        Value::Int(Some(_)) => true,
        Value::Float(x) => x.is_finite(),
        _ => false,
    }
}

/// An integer (an override may give it as an integral float).
pub(super) fn integer(
    sink: &mut Sink<'_>,
    node: &Node,
    key: &str,
    example: &str,
) -> Option<Spanned<i64>> {
    match &node.value {
        Value::Int(Some(i)) => Some(spanned(*i, node, key)),
        Value::Float(x)
            if node.overridden && x.fract() == 0.0 && x.abs() < limits::MAX_EXACT_INT =>
        {
            Some(spanned(*x as i64, node, key))
        }
        _ => {
            type_error(sink, node, key, "an integer", example);
            None
        }
    }
}

pub(super) fn string(
    sink: &mut Sink<'_>,
    node: &Node,
    key: &str,
    example: &str,
) -> Option<Spanned<String>> {
    match &node.value {
        Value::Str(s) => Some(spanned(s.clone(), node, key)),
        _ => {
            type_error(sink, node, key, "a string", example);
            None
        }
    }
}

/// `[a, b]` of two numbers.
pub(super) fn pair(
    sink: &mut Sink<'_>,
    node: &Node,
    key: &str,
    example: &str,
) -> Option<Spanned<(f64, f64)>> {
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
    let a = number(sink, &items[0], &format!("{key}[0]"), example);
    let b = number(sink, &items[1], &format!("{key}[1]"), example);
    Some(spanned((a?.value, b?.value), node, key))
}

/// A name used as a table key (channel, source, signal, check, fault).
pub(super) fn name_of(sink: &mut Sink<'_>, e: &Entry, section: &str) -> Spanned<String> {
    let key = join(section, &e.key);
    let name = Spanned::new(e.key.clone(), e.key_span, key);
    check_name(sink, &name);
    name
}

/// Names are letters, digits and `_`, starting with a letter or `_`, at most 64 characters,
/// so that they read well in formulas and in Graphviz.
pub(crate) fn check_name(sink: &mut Sink<'_>, name: &Spanned<String>) {
    let s = &name.value;
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
pub(super) fn named_tables<'n>(
    sink: &mut Sink<'_>,
    e: &'n Entry,
    section: &str,
    incomplete: &mut bool,
    example: &str,
) -> Vec<(Spanned<String>, TableReader<'n>)> {
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
        match TableReader::of(&entry.value, &name.key, sink) {
            Some(t) => out.push((name, t)),
            None => *incomplete = true,
        }
    }
    out
}

/// A table of names with numbers: `{ a = 0.5, b = 0.5 }`.
pub(super) fn weights(
    sink: &mut Sink<'_>,
    node: &Node,
    key: &str,
    example: &str,
) -> Option<Weights> {
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
        let name = Spanned {
            value: e.key.clone(),
            span: e.key_span,
            key: k.clone(),
            overridden: false,
        };
        if let Some(w) = number(sink, &e.value, &k, example) {
            out.push((name, w));
        }
    }
    Some(out)
}

/// A kind keyword out of `allowed`.
pub(super) fn kind<T: Copy>(
    sink: &mut Sink<'_>,
    t: &mut TableReader<'_>,
    allowed: &[(&str, T)],
    renamed: &[(&str, &str, &str)],
) -> Option<Spanned<T>> {
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
    match allowed.iter().find(|(n, _)| *n == s.value) {
        Some((_, k)) => Some(Spanned {
            value: *k,
            span: s.span,
            key: s.key,
            overridden: false,
        }),
        None => {
            if let Some((old, new, what)) = renamed.iter().find(|(o, _, _)| *o == s.value) {
                s.error(
                    sink,
                    format!("the kind \"{old}\" was renamed to \"{new}\" ({what})"),
                    format!("write kind = \"{new}\""),
                );
                return None;
            }
            let mut fix = format!("use one of {}", quoted(&names));
            if let Some(g) = suggest(&s.value, &names) {
                fix = format!("did you mean \"{g}\"? Kinds: {}", quoted(&names));
            }
            s.error(sink, format!("unknown kind \"{}\"", s.value), fix);
            None
        }
    }
}

pub(super) fn quoted(names: &[&str]) -> String {
    names
        .iter()
        .map(|n| format!("\"{n}\""))
        .collect::<Vec<_>>()
        .join(", ")
}
