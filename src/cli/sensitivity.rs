//! `concord sensitivity FILE [--format table|json|csv] [--plot DIR]`.

use crate::analysis::sensitivity::sensitivity;
use crate::report::sensitivity::{charts, csv, json, table};

use super::args::{Format, SensitivityArgs};
use super::{CliError, load, write_output};

/// Differentiates every figure by every numeric input and renders the ranking.
pub fn run(args: &SensitivityArgs) -> Result<String, CliError> {
    let options = args.accuracy.options()?;
    let arch = load(&args.file)?;
    let found = sensitivity(&arch, &options)?;
    if let Some(dir) = &args.plot {
        std::fs::create_dir_all(dir).map_err(|e| CliError::write(dir, e))?;
        for (name, svg) in charts(&found) {
            write_output(&dir.join(name), svg)?;
        }
    }
    match args.format {
        Format::Table => Ok(table(&found, &arch.path)),
        Format::Json => Ok(json(&found)?),
        Format::Csv => Ok(csv(&found)),
    }
}
