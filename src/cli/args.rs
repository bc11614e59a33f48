//! Command-line arguments (clap).

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand, ValueEnum};

/// Exact diagnostic-coverage analysis of redundant measurement chains.
#[derive(Debug, Parser)]
#[command(name = "concord", version, about, long_about = None)]
pub struct Cli {
    /// The command to run.
    #[command(subcommand)]
    pub command: Command,
}

/// The commands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Validate an architecture file and print the compiled model.
    Check(CheckArgs),
    /// Compute the coverage figures of every fault site, the baseline and the metrics.
    Analyze(AnalyzeArgs),
    /// Run the built-in validation suite against outside references and print the
    /// qualification summary (exit code 1 when any case fails).
    Selftest(SelftestArgs),
}

/// Arguments of `concord check`.
#[derive(Debug, Args)]
pub struct CheckArgs {
    /// The architecture file (TOML).
    pub file: PathBuf,
    /// Print the model graph in Graphviz DOT instead of the summary.
    #[arg(long)]
    pub dot: bool,
}

/// Output formats of `concord analyze`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// A table for the terminal.
    Table,
    /// One JSON object (the documented contract).
    Json,
    /// One CSV row per scenario.
    Csv,
}

/// Computation methods.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Method {
    /// Exact integration with error bounds.
    Exact,
    /// Plain Monte Carlo sampling (for verification; slower and less accurate).
    Montecarlo,
}

/// Arguments of `concord analyze`.
#[derive(Debug, Args)]
pub struct AnalyzeArgs {
    /// The architecture file (TOML).
    pub file: PathBuf,
    /// Output format.
    #[arg(long, value_enum, default_value = "table")]
    pub format: Format,
    /// Computation method.
    #[arg(long, value_enum, default_value = "exact")]
    pub method: Method,
    /// Samples per scenario for `--method montecarlo`.
    #[arg(long, default_value_t = 1_000_000)]
    pub samples: u64,
    /// Seed of the Monte Carlo engine.
    #[arg(long, default_value_t = 0x0C0C_0A7D)]
    pub seed: u64,
    /// After the exact analysis, re-run every scenario with N Monte Carlo samples and
    /// report per figure whether the exact value lies in the sampled interval.
    #[arg(long, value_name = "N")]
    pub verify: Option<u64>,
    /// Include the whole curve over sigma of every site with unknown spread (JSON).
    #[arg(long)]
    pub curve: bool,
}

/// Output formats of `concord selftest`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum SelftestFormat {
    /// A table for the terminal.
    Table,
    /// One JSON object, for archiving with a tool assessment.
    Json,
}

/// Arguments of `concord selftest`.
#[derive(Debug, Args)]
pub struct SelftestArgs {
    /// Output format.
    #[arg(long, value_enum, default_value = "table")]
    pub format: SelftestFormat,
}
