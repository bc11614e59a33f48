//! The one namespace of sources, channels and derived signals: what each name refers to, the
//! lookup with "did you mean" suggestions, and its building from the raw model (a name defined
//! twice is an error). Validation builds it; the validation of functions and fault sites
//! resolves references through it.

use std::collections::HashMap;

use super::error::{Sink, Span};
use super::raw::{RawModel, Spanned};
use super::read::edit_distance;

/// What a name in the shared namespace of sources, channels and signals refers to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum NameRef {
    Source(usize),
    Channel(usize),
    Signal(usize),
}

impl NameRef {
    pub(crate) fn word(self) -> &'static str {
        match self {
            NameRef::Source(_) => "a shared source",
            NameRef::Channel(_) => "a channel",
            NameRef::Signal(_) => "a derived signal",
        }
    }
}

/// The names of sources, channels and signals (one namespace).
pub(crate) struct Namespace {
    map: HashMap<String, (NameRef, Span)>,
    /// Some names could not be read: unknown names are then not reported.
    incomplete: bool,
}

impl Namespace {
    pub(crate) fn get(&self, name: &str) -> Option<NameRef> {
        self.map.get(name).map(|(r, _)| *r)
    }

    /// The closest defined name of one of the accepted kinds, for "did you mean".
    pub(crate) fn suggest(&self, name: &str, accept: impl Fn(NameRef) -> bool) -> Option<String> {
        let mut best: Option<(usize, &String)> = None;
        for (k, (r, _)) in &self.map {
            if !accept(*r) {
                continue;
            }
            let d = edit_distance(name, k);
            if d <= 2 && best.is_none_or(|(bd, bk)| (d, k) < (bd, bk)) {
                best = Some((d, k));
            }
        }
        best.map(|(_, k)| k.clone())
    }

    /// All names of the accepted kinds, sorted, for messages.
    pub(crate) fn list(&self, accept: impl Fn(NameRef) -> bool) -> String {
        let mut names: Vec<&String> = self
            .map
            .iter()
            .filter(|(_, (r, _))| accept(*r))
            .map(|(k, _)| k)
            .collect();
        names.sort();
        let shown: Vec<&str> = names.iter().take(12).map(|s| s.as_str()).collect();
        let mut s = shown.join(", ");
        if names.len() > shown.len() {
            s.push_str(", ...");
        }
        if s.is_empty() {
            s = "(none defined)".into();
        }
        s
    }

    /// Resolves a reference; records an error saying what was expected when it fails.
    pub(crate) fn resolve(
        &self,
        sink: &mut Sink<'_>,
        name: &Spanned<String>,
        expected: &str,
        accept: impl Fn(NameRef) -> bool + Copy,
        fix_wrong_kind: &str,
    ) -> Option<NameRef> {
        match self.get(&name.value) {
            Some(r) if accept(r) => Some(r),
            Some(r) => {
                name.error(
                    sink,
                    format!(
                        "`{}` is {}, but {expected} is expected here",
                        name.value,
                        r.word()
                    ),
                    fix_wrong_kind,
                );
                None
            }
            None if self.incomplete => None,
            None => {
                let mut fix = format!("use one of the defined names: {}", self.list(accept));
                if let Some(s) = self.suggest(&name.value, accept) {
                    fix = format!("did you mean `{s}`? Defined: {}", self.list(accept));
                }
                name.error(
                    sink,
                    format!(
                        "unknown name `{}` ({expected} is expected here)",
                        name.value
                    ),
                    fix,
                );
                None
            }
        }
    }
}

pub(crate) fn build_namespace(raw: &RawModel, sink: &mut Sink<'_>) -> Namespace {
    let mut map: HashMap<String, (NameRef, Span)> = HashMap::new();
    let mut add = |sink: &mut Sink<'_>, name: &Spanned<String>, r: NameRef| {
        if let Some((prev, span)) = map.get(&name.value) {
            let (line, _) = sink.line_col(span.start);
            name.error(
                sink,
                format!(
                    "`{}` is already defined as {} (line {line}); sources, channels and \
                     signals share one namespace",
                    name.value,
                    prev.word()
                ),
                "give every source, channel and signal its own name",
            );
        } else {
            map.insert(name.value.clone(), (r, name.span));
        }
    };
    for (i, s) in raw.sources.iter().enumerate() {
        add(sink, &s.name, NameRef::Source(i));
    }
    for (i, c) in raw.channels.iter().enumerate() {
        add(sink, &c.name, NameRef::Channel(i));
    }
    for (i, s) in raw.signals.iter().enumerate() {
        add(sink, &s.name, NameRef::Signal(i));
    }
    Namespace {
        map,
        incomplete: raw.names_incomplete,
    }
}
