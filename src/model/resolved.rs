//! The validated model: every name resolved to an index, every number checked. Only
//! `validate` builds it, so `compile` can rely on its invariants.

use super::error::Span;

/// Where a definition sits in the file, for messages of later stages.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Loc {
    pub span: Span,
    pub key: String,
}

/// A reading that a function can be computed from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub(crate) enum Reading {
    Channel(usize),
    Signal(usize),
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Stat {
    Median,
    Min,
    Max,
}

impl Stat {
    pub(crate) fn word(self) -> &'static str {
        match self {
            Stat::Median => "median",
            Stat::Min => "min",
            Stat::Max => "max",
        }
    }
}

/// A function of readings, as defined in the file.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum FnDef {
    /// `sum(w * r) + constant`; `weighted` marks an output of kind `weighted`.
    Linear {
        terms: Vec<(Reading, f64)>,
        constant: f64,
        weighted: bool,
    },
    Mean(Vec<Reading>),
    Select(Reading),
    Order(Stat, Vec<Reading>),
    Difference(Reading, Reading),
    /// `max - min`
    Range(Vec<Reading>),
    /// `reading - output`
    FromOutput(Reading),
}

impl FnDef {
    /// Every reading the function uses, with the gain its edge in the graph carries.
    pub(crate) fn inputs(&self) -> Vec<(Reading, f64)> {
        match self {
            FnDef::Linear { terms, .. } => terms.clone(),
            FnDef::Mean(r) => {
                let w = 1.0 / r.len().max(1) as f64;
                r.iter().map(|x| (*x, w)).collect()
            }
            FnDef::Select(r) | FnDef::FromOutput(r) => vec![(*r, 1.0)],
            FnDef::Order(_, r) | FnDef::Range(r) => r.iter().map(|x| (*x, 1.0)).collect(),
            FnDef::Difference(a, b) => vec![(*a, 1.0), (*b, -1.0)],
        }
    }
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) struct VSource {
    pub name: String,
    pub mean: f64,
    pub sigma: f64,
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) struct VChannel {
    pub name: String,
    pub mean: f64,
    pub sigma: f64,
    /// (source index, gain)
    pub from: Vec<(usize, f64)>,
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) struct VFunction {
    pub name: String,
    pub def: FnDef,
    pub loc: Loc,
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) struct VCheck {
    pub name: String,
    pub def: FnDef,
    pub loc: Loc,
    pub lower: f64,
    pub upper: f64,
}

/// A node a fault hits.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Site {
    Channel(usize),
    Source(usize),
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) enum VSigma {
    Known(f64),
    /// Search range and whether it is the default.
    Unknown {
        lo: f64,
        hi: f64,
        defaulted: bool,
    },
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) enum VAmplitude {
    Gaussian {
        mean: f64,
        sigma: VSigma,
    },
    Uniform {
        lower: f64,
        upper: f64,
        full_scale: bool,
    },
    Points(Vec<(f64, f64)>),
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum VMode {
    Add,
    Replace,
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) struct VFault {
    pub name: String,
    pub fit: f64,
    /// (site, gain, name as written)
    pub hits: Vec<(Site, f64, String)>,
    pub mode: VMode,
    pub amplitude: VAmplitude,
    pub latent_coverage: f64,
    pub loc: Loc,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum VDetection {
    Any,
    AtLeast(usize),
}

#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Resolved {
    pub name: String,
    pub unit: String,
    pub full_scale: Option<(f64, f64)>,
    pub sources: Vec<VSource>,
    pub channels: Vec<VChannel>,
    /// (channel i, channel j, rho), i != j, each pair once
    pub correlations: Vec<(usize, usize, f64)>,
    pub signals: Vec<VFunction>,
    pub output: VFunction,
    pub checks: Vec<VCheck>,
    pub detection: VDetection,
    pub safety: (f64, f64),
    pub faults: Vec<VFault>,
    pub timing: Option<super::compiled::Timing>,
    pub isolation: Option<super::isolation::VIsolation>,
    /// Where each source and channel is named, for warnings of later stages.
    pub source_spans: Vec<Span>,
    pub channel_spans: Vec<Span>,
}
