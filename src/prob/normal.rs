//! The standard normal distribution: density, CDF, complementary CDF and quantile.
//!
//! (First version: CDF through `libm::erfc`; to be replaced by a tail-accurate algorithm
//! with tests against mpmath.)

/// `1 / sqrt(2 pi)`.
const INV_SQRT_2PI: f64 = 0.398_942_280_401_432_7;

/// Density `phi(x) = exp(-x^2 / 2) / sqrt(2 pi)`.
pub fn pdf(x: f64) -> f64 {
    INV_SQRT_2PI * (-0.5 * x * x).exp()
}

/// `Phi(x) = P(Z <= x)`.
pub fn cdf(x: f64) -> f64 {
    0.5 * libm::erfc(-x * std::f64::consts::FRAC_1_SQRT_2)
}

/// `1 - Phi(x) = P(Z > x)`, computed without cancellation.
pub fn sf(x: f64) -> f64 {
    cdf(-x)
}

/// `P(a < Z < b)` for `a <= b`, from the tail that avoids cancellation.
pub fn interval(a: f64, b: f64) -> f64 {
    if b <= a {
        0.0
    } else if a >= 0.0 {
        (sf(a) - sf(b)).max(0.0)
    } else if b <= 0.0 {
        (cdf(b) - cdf(a)).max(0.0)
    } else {
        (1.0 - cdf(a) - sf(b)).max(0.0)
    }
}

/// The quantile `Phi^-1(p)`; `-inf` at 0, `+inf` at 1, NaN outside `[0, 1]`.
pub fn quantile(p: f64) -> f64 {
    if !(0.0..=1.0).contains(&p) {
        return f64::NAN;
    }
    if p == 0.0 {
        return f64::NEG_INFINITY;
    }
    if p == 1.0 {
        return f64::INFINITY;
    }
    // Newton refinement from a crude start; replaced by Wichura (1988) AS 241.
    let mut x = 0.0;
    for _ in 0..100 {
        let step = (cdf(x) - p) / pdf(x).max(1e-300);
        x -= step.clamp(-1.0, 1.0);
        if step.abs() < 1e-15 * (1.0 + x.abs()) {
            break;
        }
    }
    x
}
