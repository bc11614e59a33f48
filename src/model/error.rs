//! Diagnostics (errors and warnings about an architecture file) and the model layer's error.
//!
//! Every diagnostic names the file, the line and column of the offending text (1-based; 0 when
//! the problem has no place in the file, e.g. an override given on the command line), the key
//! path (`channels.a.sigma`), what is wrong and how to fix it. Many diagnostics are collected
//! and reported together.

use std::fmt;

use thiserror::Error;

/// How serious a diagnostic is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Severity {
    /// The file is rejected.
    Error,
    /// The file is accepted, but something looks unintended (e.g. an unused channel).
    Warning,
}

/// One finding about an architecture file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Diagnostic {
    /// The file name as given for messages.
    pub file: String,
    /// 1-based line of the offending text; 0 when the finding has no place in the file.
    pub line: usize,
    /// 1-based column (in characters) of the offending text; 0 with `line == 0`.
    pub column: usize,
    /// Key path of the offending entry, e.g. `channels.a.sigma` or `correlations[2].rho`;
    /// empty for a TOML syntax error.
    pub key: String,
    /// What is wrong.
    pub message: String,
    /// How to fix it.
    pub fix: String,
    /// Error or warning.
    pub severity: Severity,
}

impl Diagnostic {
    /// True for a warning (the file is still accepted).
    pub fn is_warning(&self) -> bool {
        self.severity == Severity::Warning
    }

    /// True for an error (the file is rejected).
    pub fn is_error(&self) -> bool {
        self.severity == Severity::Error
    }
}

impl fmt::Display for Diagnostic {
    /// `FILE:LINE:COL: error: KEY: MESSAGE (fix: FIX)`, without the position when there is none
    /// and without the key when it is empty.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if self.line > 0 {
            write!(f, ":{}:{}", self.line, self.column)?;
        }
        let level = match self.severity {
            Severity::Error => "error",
            Severity::Warning => "warning",
        };
        write!(f, ": {level}: ")?;
        if !self.key.is_empty() {
            write!(f, "{}: ", self.key)?;
        }
        write!(f, "{}", self.message)?;
        if !self.fix.is_empty() {
            write!(f, " (fix: {})", self.fix)?;
        }
        Ok(())
    }
}

/// Why an architecture could not be loaded.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum ModelError {
    /// The file could not be read (missing, unreadable, not UTF-8, too large).
    #[error("{diagnostic}")]
    Read {
        /// The one diagnostic that says why.
        diagnostic: Diagnostic,
    },
    /// The file was read but is not a valid architecture; every error found is listed.
    #[error("{}", render(diagnostics))]
    Invalid {
        /// All errors found, in file order (warnings found on the way are not included).
        diagnostics: Vec<Diagnostic>,
    },
}

impl ModelError {
    /// Every diagnostic of the error (one for [`ModelError::Read`]).
    pub fn diagnostics(&self) -> &[Diagnostic] {
        match self {
            ModelError::Read { diagnostic } => std::slice::from_ref(diagnostic),
            ModelError::Invalid { diagnostics } => diagnostics,
        }
    }
}

/// One diagnostic per line, then a count.
fn render(diagnostics: &[Diagnostic]) -> String {
    let mut out = String::new();
    for d in diagnostics {
        out.push_str(&d.to_string());
        out.push('\n');
    }
    let n = diagnostics.len();
    out.push_str(&format!(
        "{n} error{} in the architecture file",
        if n == 1 { "" } else { "s" }
    ));
    out
}

/// A byte range of the source text.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub(crate) struct Span {
    pub start: usize,
    pub end: usize,
}

impl Span {
    pub(crate) fn new(range: std::ops::Range<usize>) -> Span {
        Span {
            start: range.start,
            end: range.end,
        }
    }
}

/// Most diagnostics kept per file; beyond that only a count is kept (a huge array with one
/// mistake per element must not flood the terminal).
pub(crate) const MAX_DIAGNOSTICS: usize = 100;

/// Collects diagnostics for one file and turns byte offsets into lines and columns.
pub(crate) struct Sink<'a> {
    file: &'a str,
    text: &'a str,
    line_starts: Vec<usize>,
    errors: Vec<Diagnostic>,
    warnings: Vec<Diagnostic>,
    dropped: usize,
    /// Set while reading a value that an override replaced, to say so in messages.
    pub(crate) note: Option<String>,
}

impl<'a> Sink<'a> {
    pub(crate) fn new(file: &'a str, text: &'a str) -> Sink<'a> {
        let mut line_starts = vec![0];
        for (i, b) in text.bytes().enumerate() {
            if b == b'\n' {
                line_starts.push(i + 1);
            }
        }
        Sink {
            file,
            text,
            line_starts,
            errors: Vec::new(),
            warnings: Vec::new(),
            dropped: 0,
            note: None,
        }
    }

    /// 1-based line and character column of a byte offset (clamped to the text).
    pub(crate) fn line_col(&self, offset: usize) -> (usize, usize) {
        let offset = offset.min(self.text.len());
        let line = match self.line_starts.binary_search(&offset) {
            Ok(i) => i,
            Err(i) => i.saturating_sub(1),
        };
        let start = self.line_starts.get(line).copied().unwrap_or(0);
        let column = self
            .text
            .get(start..offset)
            .map(|s| s.chars().count())
            .unwrap_or(0)
            + 1;
        (line + 1, column)
    }

    fn make(
        &self,
        severity: Severity,
        span: Option<Span>,
        key: &str,
        message: String,
        fix: String,
    ) -> Diagnostic {
        let (line, column) = match span {
            Some(s) => self.line_col(s.start),
            None => (0, 0),
        };
        Diagnostic {
            file: self.file.to_string(),
            line,
            column,
            key: key.to_string(),
            message,
            fix,
            severity,
        }
    }

    /// Records an error at `span`.
    pub(crate) fn error(
        &mut self,
        span: Span,
        key: &str,
        message: impl Into<String>,
        fix: impl Into<String>,
    ) {
        let mut message = message.into();
        if let Some(note) = &self.note {
            message.push_str(note);
        }
        self.push_error(self.make(Severity::Error, Some(span), key, message, fix.into()));
    }

    /// Records an error that has no place in the file.
    pub(crate) fn error_nowhere(
        &mut self,
        key: &str,
        message: impl Into<String>,
        fix: impl Into<String>,
    ) {
        self.push_error(self.make(Severity::Error, None, key, message.into(), fix.into()));
    }

    fn push_error(&mut self, d: Diagnostic) {
        if self.errors.len() < MAX_DIAGNOSTICS {
            self.errors.push(d);
        } else {
            self.dropped += 1;
        }
    }

    /// Records a warning at `span`.
    pub(crate) fn warning(
        &mut self,
        span: Span,
        key: &str,
        message: impl Into<String>,
        fix: impl Into<String>,
    ) {
        if self.warnings.len() < MAX_DIAGNOSTICS {
            let d = self.make(
                Severity::Warning,
                Some(span),
                key,
                message.into(),
                fix.into(),
            );
            self.warnings.push(d);
        }
    }

    /// Number of errors so far.
    pub(crate) fn error_count(&self) -> usize {
        self.errors.len() + self.dropped
    }

    /// The errors as a [`ModelError`] (sorted by position), or the warnings when there are none.
    pub(crate) fn finish(mut self) -> Result<Vec<Diagnostic>, ModelError> {
        if self.errors.is_empty() {
            sort(&mut self.warnings);
            return Ok(self.warnings);
        }
        sort(&mut self.errors);
        if self.dropped > 0 {
            let d = self.make(
                Severity::Error,
                None,
                "",
                format!("{} further errors were found and not listed", self.dropped),
                "fix the errors above and load the file again".to_string(),
            );
            self.errors.push(d);
        }
        Err(ModelError::Invalid {
            diagnostics: self.errors,
        })
    }
}

/// Stable sort by position, keeping positionless diagnostics last.
fn sort(list: &mut [Diagnostic]) {
    list.sort_by_key(|d| (d.line == 0, d.line, d.column));
}
