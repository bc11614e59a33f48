//! The architecture file as read: typed, every value with its span and key path, but not yet
//! checked for meaning (names may be unknown, numbers out of range). `read` builds it;
//! `validate` checks it; `compile` turns a valid one into the compiled model.

use super::error::{Sink, Span};

/// A value with where it came from.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Spanned<T> {
    pub value: T,
    pub span: Span,
    /// Key path for messages, e.g. `channels.a.sigma`.
    pub key: String,
    /// True when an override set the value.
    pub overridden: bool,
}

impl<T> Spanned<T> {
    pub(crate) fn new(value: T, span: Span, key: impl Into<String>) -> Spanned<T> {
        Spanned {
            value,
            span,
            key: key.into(),
            overridden: false,
        }
    }

    /// Records an error about this value.
    pub(crate) fn error(
        &self,
        sink: &mut Sink<'_>,
        message: impl Into<String>,
        fix: impl Into<String>,
    ) {
        let mut message = message.into();
        if self.overridden {
            message.push_str(" (the value was set by an override)");
        }
        sink.error(self.span, &self.key, message, fix);
    }

    /// Records a warning about this value.
    pub(crate) fn warning(
        &self,
        sink: &mut Sink<'_>,
        message: impl Into<String>,
        fix: impl Into<String>,
    ) {
        sink.warning(self.span, &self.key, message, fix);
    }
}

/// Names with gains or weights: `{ a = 0.5, b = 0.5 }`.
pub(crate) type Weights = Vec<(Spanned<String>, Spanned<f64>)>;

/// The `of` of a signal, output or check, in whichever form the file wrote it.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum Args {
    /// `of = "a"`
    One(Spanned<String>),
    /// `of = ["a", "b"]`
    List(Vec<Spanned<String>>),
    /// `of = { a = 0.5, b = 0.5 }`
    Weights(Weights),
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum SignalKind {
    Linear,
    Median,
    Min,
    Max,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum OutputKind {
    Mean,
    Weighted,
    Select,
    Median,
    Min,
    Max,
    Linear,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum CheckKind {
    Difference,
    Range,
    FromOutput,
    Linear,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Mode {
    Add,
    Replace,
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) struct RawSource {
    pub name: Spanned<String>,
    pub mean: Spanned<f64>,
    pub sigma: Spanned<f64>,
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) struct RawChannel {
    pub name: Spanned<String>,
    pub mean: Spanned<f64>,
    pub sigma: Spanned<f64>,
    pub from: Weights,
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) struct RawCorrelation {
    /// `correlations[i]` (0-based, as in the file order).
    pub key: String,
    pub span: Span,
    pub between: Option<(Spanned<String>, Spanned<String>)>,
    pub rho: Option<Spanned<f64>>,
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) struct RawSignal {
    pub name: Spanned<String>,
    pub kind: Option<Spanned<SignalKind>>,
    pub of: Option<Spanned<Args>>,
    pub constant: Option<Spanned<f64>>,
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) struct RawOutput {
    pub span: Span,
    pub kind: Option<Spanned<OutputKind>>,
    pub of: Option<Spanned<Args>>,
    pub constant: Option<Spanned<f64>>,
}

/// `limit = L` or `lower = .., upper = ..` (either may be omitted for a one-sided band).
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct RawBand {
    /// Key path of the table holding the band (`safety`, `checks.ab`).
    pub key: String,
    pub span: Span,
    pub limit: Option<Spanned<f64>>,
    pub lower: Option<Spanned<f64>>,
    pub upper: Option<Spanned<f64>>,
    /// True when one of `limit`, `lower`, `upper` is present but could not be read.
    pub broken: bool,
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) struct RawCheck {
    pub name: Spanned<String>,
    pub kind: Option<Spanned<CheckKind>>,
    pub of: Option<Spanned<Args>>,
    pub constant: Option<Spanned<f64>>,
    pub band: RawBand,
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) enum RawFires {
    Any,
    AtLeast(Spanned<i64>),
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) enum RawSigma {
    Known(Spanned<f64>),
    Unknown,
    UnknownRange(Spanned<f64>, Spanned<f64>),
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) enum RawAmplitude {
    Gaussian {
        mean: Spanned<f64>,
        sigma: Spanned<RawSigma>,
    },
    UniformFullScale,
    Uniform(Spanned<f64>, Spanned<f64>),
    /// `(value, weight)` pairs.
    Points(Vec<(Spanned<f64>, Spanned<f64>)>),
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) struct RawFault {
    pub name: Spanned<String>,
    pub fit: Option<Spanned<f64>>,
    pub hits: Option<Spanned<Weights>>,
    pub mode: Option<Spanned<Mode>>,
    pub amplitude: Option<Spanned<RawAmplitude>>,
    pub latent_coverage: Option<Spanned<f64>>,
}

/// `confirm` of the timing section: how the diagnostic confirms a fault over samples.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum RawConfirm {
    /// `{ consecutive = n }`
    Consecutive(Spanned<i64>),
    /// `{ at_least = m, of_last = n }`
    Window {
        count: Spanned<i64>,
        window: Spanned<i64>,
    },
    /// `{ up = u, down = d, trip = level }`
    Counter {
        up: Spanned<i64>,
        down: Spanned<i64>,
        trip: Spanned<i64>,
    },
}

/// The `[timing]` section.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct RawTiming {
    pub span: Span,
    pub sample_period: Option<Spanned<f64>>,
    pub deadline: Option<Spanned<f64>>,
    pub confirm: Option<Spanned<RawConfirm>>,
    pub danger_samples: Option<Spanned<i64>>,
    pub fresh_sources: Vec<Spanned<String>>,
    pub constant_channels: Vec<Spanned<String>>,
}

/// The `[isolation]` section: which channel a detection blames.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct RawIsolation {
    pub span: Span,
    pub rule: Option<Spanned<String>>,
    pub margin: Option<Spanned<f64>>,
    pub among: Option<Vec<Spanned<String>>>,
    pub degraded: Option<RawDegraded>,
}

/// `[isolation.degraded]`: what the file states of the architecture that runs on after a
/// channel is dropped, on top of the derivation.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct RawDegraded {
    pub span: Span,
    /// How the output combines the channels it keeps: "mean", "median", "min" or "max".
    pub output: Option<Spanned<String>>,
    /// Values in force after the drop, by the dotted keys of an override.
    pub set: Vec<(Spanned<String>, Spanned<f64>)>,
}

/// One tolerance of `[tolerances]`: the dotted key and `[lower, upper]`.
pub(crate) type RawTolerance = (Spanned<String>, Spanned<(f64, f64)>);

/// The whole file as read.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct RawModel {
    pub name: Option<Spanned<String>>,
    pub unit: Option<Spanned<String>>,
    pub full_scale: Option<Spanned<(f64, f64)>>,
    pub sources: Vec<RawSource>,
    pub channels: Vec<RawChannel>,
    pub correlations: Vec<RawCorrelation>,
    pub signals: Vec<RawSignal>,
    pub output: Option<RawOutput>,
    pub checks: Vec<RawCheck>,
    pub detection: Option<Spanned<RawFires>>,
    pub safety: Option<RawBand>,
    pub faults: Vec<RawFault>,
    pub timing: Option<RawTiming>,
    pub isolation: Option<RawIsolation>,
    /// `[tolerances]`: `"KEY" = [lower, upper]` per input.
    pub tolerances: Vec<RawTolerance>,
    /// True when a section of names (sources, channels, signals) or one of its entries could
    /// not be read: references to unknown names are then not reported (they would only echo
    /// the error already reported).
    pub names_incomplete: bool,
    /// True when the file has a `channels` key (its absence is reported by `read`).
    pub channels_given: bool,
}
