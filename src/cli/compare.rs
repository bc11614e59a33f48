//! `concord compare FILE... [--sort COLUMN] [--figure dc|dc-all-dangerous]`.

use crate::analysis::compare::{ArchitectureSummary, summarise};
use crate::report::compare::{csv, json, table};

use super::args::{CompareArgs, CompareColumn, CoverageArg, Format};
use super::{CliError, announce_workload, load};

/// Analyses every file (in the order given) and renders them side by side.
pub fn run(args: &CompareArgs) -> Result<String, CliError> {
    let options = args.accuracy.options()?;
    let mut rows = Vec::with_capacity(args.files.len());
    for path in &args.files {
        let arch = load(path)?;
        announce_workload(path, &arch.model, &options);
        rows.push(summarise(&arch, &options)?);
    }
    let all_dangerous = args.figure == CoverageArg::DcAllDangerous;
    if let Some(column) = args.sort {
        sort(&mut rows, column, all_dangerous);
    }
    match args.format {
        Format::Table => Ok(table(&rows, all_dangerous)),
        Format::Json => Ok(json(&rows, all_dangerous)?),
        Format::Csv => Ok(csv(&rows, all_dangerous)),
    }
}

/// Sorts best first (highest coverage and metrics, lowest rates, probabilities and times);
/// ties keep the order of the files.
fn sort(rows: &mut [ArchitectureSummary], column: CompareColumn, all_dangerous: bool) {
    let low = |r: &ArchitectureSummary| r.lowest_coverage(all_dangerous).map_or(1.0, |e| e.value);
    match column {
        CompareColumn::Name => rows.sort_by(|a, b| a.name.cmp(&b.name)),
        CompareColumn::Channels => rows.sort_by_key(|r| r.output_channels),
        CompareColumn::Coverage => rows.sort_by(|a, b| low(b).total_cmp(&low(a))),
        CompareColumn::ResidualFit => rows.sort_by(|a, b| {
            a.metrics
                .residual_fit
                .value
                .total_cmp(&b.metrics.residual_fit.value)
        }),
        CompareColumn::Spfm => {
            rows.sort_by(|a, b| b.metrics.spfm.value.total_cmp(&a.metrics.spfm.value))
        }
        CompareColumn::Lfm => {
            rows.sort_by(|a, b| b.metrics.lfm.value.total_cmp(&a.metrics.lfm.value))
        }
        CompareColumn::Alarm => {
            rows.sort_by(|a, b| a.false_alarm.value.total_cmp(&b.false_alarm.value))
        }
        CompareColumn::Seconds => rows.sort_by(|a, b| a.seconds.total_cmp(&b.seconds)),
    }
}
