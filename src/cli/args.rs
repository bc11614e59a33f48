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
    /// validation summary (exit code 1 when any case fails).
    Selftest(SelftestArgs),
    /// Repeat the analysis over a range of one key of the file (and series of a second), or
    /// follow one fault site over the spread of its amplitude.
    Sweep(SweepArgs),
    /// Find the widest comparator band that meets a coverage target (the fewest false alarms).
    Tune(TuneArgs),
    /// Put several architectures side by side.
    Compare(CompareArgs),
    /// Rank the numeric inputs of a file by how much each moves every figure (derivatives
    /// and elasticities).
    Sensitivity(SensitivityArgs),
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
pub enum MethodArg {
    /// Exact integration with error bounds.
    Exact,
    /// Plain Monte Carlo sampling (for verification; slower and less accurate).
    Montecarlo,
}

/// The one accuracy knob shared by the commands that analyse.
#[derive(Debug, Clone, Copy, Args)]
pub struct AccuracyArgs {
    /// Target error of every reported probability (absolute; relative accuracy 1e-6 is
    /// kept for small figures). Looser is faster. Default 1e-11.
    #[arg(long, value_name = "X")]
    pub tolerance: Option<f64>,
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
    pub method: MethodArg,
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
    #[arg(long = "with-curves")]
    pub curve: bool,
    /// A tolerance of an input, KEY=LO:HI (repeatable, up to six): every figure's lowest
    /// and highest value over the box of tolerances, and the ASIL verdicts on the worst.
    #[arg(long, value_name = "KEY=LO:HI")]
    pub within: Vec<String>,
    /// Also differentiate every figure by every numeric input (as `concord sensitivity`),
    /// into the JSON's `sensitivity` list; it costs four analyses per input.
    #[arg(long = "with-sensitivity")]
    pub with_sensitivity: bool,
    #[command(flatten)]
    pub accuracy: AccuracyArgs,
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
    /// Also rank the inputs by their effect on the metrics (section 11; as `concord
    /// sensitivity`, four analyses per input).
    #[arg(long = "with-sensitivity")]
    pub with_sensitivity: bool,
    #[command(flatten)]
    pub accuracy: AccuracyArgs,
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

/// Output formats of `concord sweep`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum SweepFormatArg {
    /// One CSV row per point.
    Csv,
    /// One JSON object, one row per line.
    Json,
}

/// Arguments of `concord sweep`.
#[derive(Debug, Args)]
pub struct SweepArgs {
    /// The architecture file (TOML).
    pub file: PathBuf,
    /// The key to vary and its values: `KEY=FROM:TO` (with --points, --log) or
    /// `KEY=V1,V2,...`, e.g. `safety.limit=1:4` or `checks.ab.limit=2,2.5,3`.
    #[arg(long, value_name = "KEY=VALUES", conflicts_with = "spread")]
    pub vary: Option<String>,
    /// A second key, one series per value: `KEY=FROM:TO` (with --series-points,
    /// --series-log) or `KEY=V1,V2,...`.
    #[arg(long, value_name = "KEY=VALUES", requires = "vary")]
    pub series: Option<String>,
    /// Follow fault site SITE over the sigma of its gaussian amplitude (log-spaced) instead:
    /// both coverage figures and the residual, with the worst case over the range.
    #[arg(long, value_name = "SITE")]
    pub spread: Option<String>,
    /// The sigma range of --spread, `FROM:TO`; default: the site's unknown range, or the range
    /// `analyze` would search.
    #[arg(long, value_name = "FROM:TO", requires = "spread")]
    pub sigma: Option<String>,
    /// Points of the swept range (default 50; 200 for --spread).
    #[arg(long)]
    pub points: Option<usize>,
    /// Space the swept range logarithmically.
    #[arg(long)]
    pub log: bool,
    /// Values per series range (default 5).
    #[arg(long, default_value_t = 5)]
    pub series_points: usize,
    /// Space the series range logarithmically.
    #[arg(long)]
    pub series_log: bool,
    /// Output format.
    #[arg(long, value_enum, default_value = "csv")]
    pub format: SweepFormatArg,
    /// Write the rows to FILE instead of standard output.
    #[arg(long, short = 'o', value_name = "FILE")]
    pub output: Option<PathBuf>,
    /// Also draw the sweep as an SVG picture in FILE.
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// The fault site whose coverage the plot of a parameter sweep shows (default: every
    /// site without series, the first site with series).
    #[arg(long, value_name = "SITE", requires = "vary")]
    pub site: Option<String>,
    /// Draw the end states of a single fault (continues, shutdown, fault stays, residual)
    /// against the swept key as an SVG picture in FILE (a file with an `[isolation]` section).
    #[arg(long, value_name = "FILE", requires = "vary")]
    pub plot_isolation: Option<PathBuf>,
    #[command(flatten)]
    pub accuracy: AccuracyArgs,
}

/// Coverage figures a target or a column is set on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum CoverageArg {
    /// `p_vd / (p_vd + p_vu)`.
    Dc,
    /// `1 - p_vu`: every fault of the site counted as dangerous.
    DcAllDangerous,
}

/// Output formats of `concord tune`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum TuneFormat {
    /// A summary for the terminal.
    Text,
    /// One JSON object with the whole curve.
    Json,
}

/// Arguments of `concord tune`.
#[derive(Debug, Args)]
pub struct TuneArgs {
    /// The architecture file (TOML).
    pub file: PathBuf,
    /// The coverage target, a fraction (e.g. 0.99) or a percentage (e.g. 99%).
    #[arg(long, value_name = "X")]
    pub target_dc: String,
    /// The coverage figure the target is set on.
    #[arg(long, value_enum, default_value = "dc-all-dangerous")]
    pub figure: CoverageArg,
    /// Tune this check only (default: every check, bands scaled together).
    #[arg(long, value_name = "NAME")]
    pub check: Option<String>,
    /// A fault site that must meet the target (repeat for several; default: every site).
    #[arg(long, value_name = "SITE")]
    pub site: Vec<String>,
    /// Range of the scale factor on the file's bands, `LO:HI`.
    #[arg(long, value_name = "LO:HI", default_value = "0.1:10")]
    pub scale: String,
    /// Points of the trade-off curve.
    #[arg(long, default_value_t = 41)]
    pub points: usize,
    /// Output format.
    #[arg(long, value_enum, default_value = "text")]
    pub format: TuneFormat,
    /// Write the trade-off curve (coverage against false alarm) as CSV to FILE.
    #[arg(long = "curve-csv", value_name = "FILE")]
    pub curve: Option<PathBuf>,
    /// Draw the trade-off curve as an SVG picture in FILE.
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// Tune the confirmation rule of the file's [timing] section with the bands: for each
    /// candidate rule the widest bands whose coverage over the deadline meets the target,
    /// then the rule with the fewest false alarms per hour.
    #[arg(long)]
    pub with_confirmation: bool,
    #[command(flatten)]
    pub accuracy: AccuracyArgs,
}

/// Columns `concord compare` can sort by.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum CompareColumn {
    /// Architecture name.
    Name,
    /// Number of channels the output uses (fewest first).
    Channels,
    /// Lowest coverage over the sites (highest first).
    Coverage,
    /// Residual rate (lowest first).
    ResidualFit,
    /// SPFM (highest first).
    Spfm,
    /// LFM (highest first).
    Lfm,
    /// False-alarm probability (lowest first).
    Alarm,
    /// Wall-clock seconds of the analysis (lowest first).
    Seconds,
}

/// Arguments of `concord compare`.
#[derive(Debug, Args)]
pub struct CompareArgs {
    /// The architecture files (TOML), at least one.
    #[arg(required = true)]
    pub files: Vec<PathBuf>,
    /// The coverage figure of the site columns.
    #[arg(long, value_enum, default_value = "dc")]
    pub figure: CoverageArg,
    /// Sort the rows by this column (default: the order of the files).
    #[arg(long, value_enum)]
    pub sort: Option<CompareColumn>,
    /// Output format.
    #[arg(long, value_enum, default_value = "table")]
    pub format: Format,
    #[command(flatten)]
    pub accuracy: AccuracyArgs,
}

/// Arguments of `concord sensitivity`.
#[derive(Debug, Args)]
pub struct SensitivityArgs {
    /// The architecture file (TOML).
    pub file: PathBuf,
    /// Output format.
    #[arg(long, value_enum, default_value = "table")]
    pub format: Format,
    /// Also write one SVG bar chart per figure, ranking the inputs, into this folder.
    #[arg(long, value_name = "DIR")]
    pub plot: Option<PathBuf>,
    #[command(flatten)]
    pub accuracy: AccuracyArgs,
}

impl AccuracyArgs {
    /// The analysis options with the asked tolerance (the defaults without one).
    ///
    /// # Errors
    /// A tolerance that is not a number between 0 and 0.01 (exclusive of 0).
    pub fn options(&self) -> Result<crate::analysis::AnalysisOptions, super::CliError> {
        let mut options = crate::analysis::AnalysisOptions::default();
        if let Some(x) = self.tolerance {
            if !(x > 0.0 && x <= 0.01) {
                return Err(super::CliError::Value {
                    flag: "--tolerance".into(),
                    message: format!(
                        "{x} is not a usable target error; give a number above 0 and at most \
                         0.01, e.g. 1e-9 (the default is 1e-11)"
                    ),
                });
            }
            options.polytope_abs = x;
            options.amplitude_abs = x;
        }
        Ok(options)
    }
}
