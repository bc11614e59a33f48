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
    /// Write the report for a safety case: one self-contained HTML file.
    Report(ReportArgs),
    /// Run the bundled invented scenario end to end into a folder and list what it wrote.
    Demo(DemoArgs),
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

/// Arguments of `concord report`.
#[derive(Debug, Args)]
pub struct ReportArgs {
    /// The architecture file (TOML).
    pub file: PathBuf,
    /// Where to write the HTML report.
    #[arg(short = 'o', long, default_value = "report.html")]
    pub output: PathBuf,
    /// The date printed on the report (YYYY-MM-DD); default: SOURCE_DATE_EPOCH if set,
    /// else today in UTC.
    #[arg(long, value_name = "YYYY-MM-DD")]
    pub date: Option<String>,
    /// Monte Carlo samples per scenario for the cross-check (0: no cross-check).
    #[arg(long, value_name = "N", default_value_t = 200_000)]
    pub verify: u64,
    /// Seed of the Monte Carlo cross-check.
    #[arg(long, default_value_t = 0x0C0C_0A7D)]
    pub seed: u64,
}

/// Arguments of `concord demo`.
#[derive(Debug, Args)]
pub struct DemoArgs {
    /// The folder to write into (created if missing).
    #[arg(long, default_value = "concord-demo")]
    pub out: PathBuf,
    /// The date printed on the reports (YYYY-MM-DD); default as for `concord report`.
    #[arg(long, value_name = "YYYY-MM-DD")]
    pub date: Option<String>,
}
