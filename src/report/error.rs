//! The report layer's error: what can keep an output from being written. The narrow
//! [`super::plot::PlotError`] and [`super::date::DateError`] stay beside it.

use thiserror::Error;

/// Why an output cannot be made.
#[derive(Debug, Error)]
pub enum ReportError {
    /// JSON output could not be made (not expected for finite figures).
    #[error("JSON output failed: {0}")]
    Json(#[from] serde_json::Error),
    /// A picture was asked for a fault site the architecture does not have.
    #[error("no fault site '{site}' to plot; the sites are: {}", .sites.join(", "))]
    UnknownSite {
        /// The site asked for.
        site: String,
        /// The sites there are.
        sites: Vec<String>,
    },
}
