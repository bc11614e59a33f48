//! A computed probability (or any computed number) with a bound on its numerical error.

use serde::Serialize;

/// A value together with an absolute bound on its numerical error.
///
/// The bound covers the numerical method only (integration, quadrature, search), not the
/// modelling assumptions. `error` is never negative; `0.0` means exact to rounding.
/// The default is [`Estimate::zero`].
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct Estimate {
    /// The computed value.
    pub value: f64,
    /// Absolute error bound on `value`.
    pub error: f64,
}

impl Estimate {
    /// A value whose error is only floating-point rounding, `rel` relative to the value.
    pub fn exact(value: f64) -> Self {
        Self {
            value,
            error: value.abs() * crate::prob::tolerance::ROUNDING_REL,
        }
    }

    /// A value with an explicit absolute error bound.
    pub fn new(value: f64, error: f64) -> Self {
        Self {
            value,
            error: error.abs(),
        }
    }

    /// Zero, exactly.
    pub fn zero() -> Self {
        Self {
            value: 0.0,
            error: 0.0,
        }
    }

    /// The sum of two estimates; errors add. (A method rather than `std::ops::Add` so that
    /// every place where bounds accumulate reads as such.)
    #[allow(clippy::should_implement_trait)]
    pub fn add(self, other: Self) -> Self {
        Self {
            value: self.value + other.value,
            error: self.error + other.error,
        }
    }

    /// The estimate scaled by a non-negative exact weight.
    pub fn scale(self, weight: f64) -> Self {
        Self {
            value: self.value * weight,
            error: self.error * weight.abs(),
        }
    }

    /// The value clamped to `[0, 1]`, keeping the error bound.
    pub fn clamp_probability(self) -> Self {
        Self {
            value: self.value.clamp(0.0, 1.0),
            error: self.error,
        }
    }
}

impl std::iter::Sum for Estimate {
    fn sum<I: Iterator<Item = Self>>(iter: I) -> Self {
        iter.fold(Self::zero(), Self::add)
    }
}
