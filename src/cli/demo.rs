//! `concord demo`.

use super::Failure;
use super::args::DemoArgs;

/// Runs the demo.
pub fn run(_args: &DemoArgs) -> Result<String, Failure> {
    Err(Failure::computation("not yet"))
}
