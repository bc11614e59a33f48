//! The parsed TOML document as a plain tree with byte spans, entries in file order.
//!
//! The toml crate's recoverable parser (`toml::de::DeTable::parse_recoverable`) reports every
//! syntax error with its span; its tables are sorted by key, so entries are put back into
//! file order here (by the position of their keys). Overrides edit this tree before it is read.

use toml::Spanned;
use toml::de::{DeTable, DeValue};

use super::error::{Sink, Span};

/// Deepest nesting kept; the toml parser already stops at 80 levels.
const MAX_DEPTH: usize = 96;

/// Most syntax errors listed (one per line).
const MAX_SYNTAX_ERRORS: usize = 5;

/// A value of the document.
#[derive(Debug, Clone)]
pub(crate) enum Value {
    Str(String),
    /// An integer; `None` when it does not fit in 64 bits.
    Int(Option<i64>),
    Float(f64),
    Bool,
    Datetime,
    Array(Vec<Node>),
    Table(Vec<Entry>),
}

/// A key of a table with its value.
#[derive(Debug, Clone)]
pub(crate) struct Entry {
    pub key: String,
    pub key_span: Span,
    pub value: Node,
}

/// A value with the span of its text.
#[derive(Debug, Clone)]
pub(crate) struct Node {
    pub span: Span,
    pub value: Value,
    /// Set when an override replaced or added the value.
    pub overridden: bool,
}

impl Value {
    /// The TOML type name, for messages.
    pub(crate) fn type_name(&self) -> &'static str {
        match self {
            Value::Str(_) => "a string",
            Value::Int(_) => "an integer",
            Value::Float(_) => "a float",
            Value::Bool => "a boolean",
            Value::Datetime => "a date-time",
            Value::Array(_) => "an array",
            Value::Table(_) => "a table",
        }
    }
}

impl Node {
    /// The entries when the node is a table.
    pub(crate) fn entries(&self) -> Option<&[Entry]> {
        match &self.value {
            Value::Table(t) => Some(t),
            _ => None,
        }
    }
}

/// Parses `text`; on syntax errors records every one in `sink` and returns `None`.
pub(crate) fn parse(text: &str, sink: &mut Sink<'_>) -> Option<Node> {
    let (table, errors) = DeTable::parse_recoverable(text);
    if !errors.is_empty() {
        // The parser recovers and goes on, so one mistake (an unclosed array) can produce a
        // long tail of follow-up errors: keep the first per line, at most MAX_SYNTAX_ERRORS.
        let mut located: Vec<(Span, &str)> = errors
            .iter()
            .map(|e| (e.span().map(Span::new).unwrap_or_default(), e.message()))
            .collect();
        located.sort_by_key(|(s, _)| s.start);
        let mut kept: Vec<(Span, &str)> = Vec::new();
        let mut last_line = 0;
        let mut skipped = 0usize;
        for (span, message) in located {
            let line = sink.line_col(span.start).0;
            // "unclosed ..." names the real mistake of a long tail: always keep it
            let unclosed = message.contains("unclosed");
            if !unclosed && (line == last_line || kept.len() >= MAX_SYNTAX_ERRORS) {
                skipped += 1;
                continue;
            }
            last_line = line;
            kept.push((span, message));
        }
        for (span, message) in kept {
            sink.error(
                span,
                "",
                format!("TOML syntax: {message}"),
                "correct the TOML syntax at this position (strings in double quotes, \
                 one key = value per line, brackets and braces closed)",
            );
        }
        if skipped > 0 {
            sink.error_nowhere(
                "",
                format!(
                    "{skipped} further TOML syntax errors were found, often consequences of \
                     the first"
                ),
                "fix the first syntax error and load the file again",
            );
        }
        return None;
    }
    let span = Span::new(table.span());
    let root = DeValue::Table(table.into_inner());
    Some(convert(&root, span, 0))
}

fn convert(value: &DeValue<'_>, span: Span, depth: usize) -> Node {
    let value = if depth > MAX_DEPTH {
        // Unreachable with the parser's own recursion limit; kept so that no input can
        // recurse without bound here.
        Value::Str(String::new())
    } else {
        match value {
            DeValue::String(s) => Value::Str(s.to_string()),
            DeValue::Integer(i) => Value::Int(i64::from_str_radix(i.as_str(), i.radix()).ok()),
            DeValue::Float(f) => Value::Float(f.as_str().parse::<f64>().unwrap_or(f64::NAN)),
            DeValue::Boolean(_) => Value::Bool,
            DeValue::Datetime(_) => Value::Datetime,
            DeValue::Array(a) => Value::Array(
                a.iter()
                    .map(|item| convert(item.get_ref(), Span::new(item.span()), depth + 1))
                    .collect(),
            ),
            DeValue::Table(t) => Value::Table(convert_table(t, depth)),
        }
    };
    Node {
        span,
        value,
        overridden: false,
    }
}

fn convert_table(t: &DeTable<'_>, depth: usize) -> Vec<Entry> {
    let mut entries: Vec<Entry> = t
        .iter()
        .map(|(k, v): (&Spanned<_>, &Spanned<DeValue<'_>>)| Entry {
            key: k.get_ref().to_string(),
            key_span: Span::new(k.span()),
            value: convert(v.get_ref(), Span::new(v.span()), depth + 1),
        })
        .collect();
    entries.sort_by_key(|e| e.key_span.start);
    entries
}
