//! The bands of the checks as the file writes them (`limit = L`, or `lower` and/or `upper`),
//! and the key paths that set a band scaled by a factor. Tuning moves a band by these keys, so
//! that every point it analyses is the file with the new band written in by hand.

use serde::Serialize;

use super::raw::{RawBand, RawModel};

/// The band of one check in the form the file writes it, which decides the keys that move it.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum BandForm {
    /// `limit = L`: the band `[-L, L]`.
    Limit(f64),
    /// `lower` and/or `upper` (a missing side is open).
    Sides {
        /// The lower end, if any.
        lower: Option<f64>,
        /// The upper end, if any.
        upper: Option<f64>,
    },
}

/// One check's band as written.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CheckBand {
    /// The check's name.
    pub name: String,
    /// Its band in the file.
    pub band: BandForm,
}

impl CheckBand {
    /// The key paths and values that scale this band by `factor`, as overrides for
    /// [`super::Architecture::with_overrides`]: a `limit` is multiplied; a two-sided band
    /// keeps its centre and has its half-width multiplied; a one-sided band has its end
    /// multiplied.
    pub fn scaled(&self, factor: f64) -> Vec<(String, f64)> {
        let key = |side: &str| format!("checks.{}.{side}", self.name);
        match &self.band {
            BandForm::Limit(limit) => vec![(key("limit"), limit * factor)],
            BandForm::Sides {
                lower: Some(lower),
                upper: Some(upper),
            } => {
                let centre = 0.5 * (lower + upper);
                let half = 0.5 * (upper - lower);
                vec![
                    (key("lower"), centre - half * factor),
                    (key("upper"), centre + half * factor),
                ]
            }
            BandForm::Sides {
                lower: Some(lower),
                upper: None,
            } => vec![(key("lower"), lower * factor)],
            BandForm::Sides {
                lower: None,
                upper: Some(upper),
            } => vec![(key("upper"), upper * factor)],
            BandForm::Sides {
                lower: None,
                upper: None,
            } => Vec::new(),
        }
    }
}

/// The bands of every check of a file that validated, in file order.
pub(crate) fn written_bands(raw: &RawModel) -> Vec<CheckBand> {
    raw.checks
        .iter()
        .map(|check| CheckBand {
            name: check.name.value.clone(),
            band: form(&check.band),
        })
        .collect()
}

/// A valid band has `limit` alone or `lower` and/or `upper`; `limit` wins should both be
/// present (validation refuses that file before a band is ever used).
fn form(band: &RawBand) -> BandForm {
    match &band.limit {
        Some(limit) => BandForm::Limit(limit.value),
        None => BandForm::Sides {
            lower: band.lower.as_ref().map(|lower| lower.value),
            upper: band.upper.as_ref().map(|upper| upper.value),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_two_sided_band_keeps_its_centre() {
        let band = CheckBand {
            name: "x".into(),
            band: BandForm::Sides {
                lower: Some(-1.0),
                upper: Some(3.0),
            },
        };
        // Centre 1, half-width 2: doubled, [1 - 4, 1 + 4].
        assert_eq!(
            band.scaled(2.0),
            vec![
                ("checks.x.lower".to_string(), -3.0),
                ("checks.x.upper".to_string(), 5.0)
            ]
        );
    }

    #[test]
    fn one_sided_bands_and_limits_move_their_one_key() {
        let upper = CheckBand {
            name: "up".into(),
            band: BandForm::Sides {
                lower: None,
                upper: Some(1.5),
            },
        };
        assert_eq!(
            upper.scaled(2.0),
            vec![("checks.up.upper".to_string(), 3.0)]
        );
        let limit = CheckBand {
            name: "ab".into(),
            band: BandForm::Limit(2.5),
        };
        assert_eq!(
            limit.scaled(0.5),
            vec![("checks.ab.limit".to_string(), 1.25)]
        );
    }
}
