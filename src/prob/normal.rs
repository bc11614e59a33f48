//! The standard normal distribution: density, CDF, complementary CDF, log-CDF, interval
//! probabilities and the quantile, accurate to a few units in the last place in both tails.
//!
//! # Algorithms and accuracy
//!
//! - `cdf`, `sf`, `log_cdf`, `mills_ratio`: W. J. Cody's rational Chebyshev approximations
//!   of `erf` and `erfc` (Cody 1969, Math. Comp. 23:631-637; the form of ACM TOMS
//!   Algorithm 715), whose stated relative error is below `1e-16` on each range. The
//!   approximations give `erf(u)` for `|u| < 0.46875` and the scaled `exp(u^2) erfc(u)` beyond,
//!   with `u = |x| / sqrt(2)`. The gaussian factor is then computed in the variable `x` itself,
//!   never through `u^2`: `exp(-x^2/2) = exp(-xh^2/2) * exp(-(x - xh)(x + xh)/2)` with `xh` =
//!   `x` truncated to a multiple of 1/16, so that `xh^2/2` is exact and the second factor has
//!   an argument of at most a few units. Going through `erfc(x / sqrt(2))` instead would
//!   turn the rounding of `x / sqrt(2)` into a relative error of about `x^2 * 1.1e-16`
//!   (`1.6e-13` at `x = -37.5`).
//!   Measured against mpmath at 50 digits (`tests/prob_normal.rs`): relative error at most
//!   `6.8e-16` (about 3 units in the last place) for every result in the normal floating-point range (`x` from -37.5 to 37.5,
//!   results down to `2.2e-308`); subnormal results (to `x` about -38.4) are within a few
//!   subnormal units, and beyond that the result underflows to 0.
//! - `quantile`: Wichura (1988), Applied Statistics 37:477-484, Algorithm AS 241 (`PPND16`),
//!   stated relative accuracy about `1e-16`, followed in the tails by one Halley step on
//!   the tail probability.
//! - `interval`: from the tail that avoids cancellation; narrow intervals by a 12-point
//!   Gauss–Legendre rule on the density, so that the result keeps its relative accuracy.

#![allow(clippy::excessive_precision)]

use std::f64::consts::FRAC_1_SQRT_2;

use crate::prob::legendre;

/// `1 / sqrt(2 pi)`.
const INV_SQRT_2PI: f64 = 0.398_942_280_401_432_677_939_946_059_934_4;

/// `1 / sqrt(pi)`.
const INV_SQRT_PI: f64 = 0.564_189_583_547_756_286_948_079_451_560_8;

/// `sqrt(pi / 2)`.
const SQRT_PI_OVER_2: f64 = 1.253_314_137_315_500_251_207_882_642_405_5;

/// Cody's split between the `erf` and the scaled `erfc` approximations, in `u = x/sqrt(2)`.
const ERF_SPLIT: f64 = 0.46875;

/// Cody's split between the two `erfc` approximations, in `u`.
const ERFC_SPLIT: f64 = 4.0;

/// Beyond this `|x|` the upper tail `P(Z > |x|)` (below `4e-350`) and the density
/// underflow to zero in double precision.
pub const UNDERFLOW_X: f64 = 40.0;

/// `E|Z| = sqrt(2 / pi)` for standard normal `Z` (common practice; digits from mpmath 1.3.0).
pub const MEAN_ABS: f64 = 0.797_884_560_802_865_4;

/// Cody (1969), `erf(u) = u * P(u^2) / Q(u^2)` for `|u| <= 0.46875`; numerator, highest
/// power first.
const ERF_NUM: [f64; 5] = [
    1.857_777_061_846_031_53e-1,
    3.161_123_743_870_565_60e0,
    1.138_641_541_510_501_56e2,
    3.774_852_376_853_020_21e2,
    3.209_377_589_138_469_47e3,
];
/// Denominator of [`ERF_NUM`], highest power first.
const ERF_DEN: [f64; 5] = [
    1.0,
    2.360_129_095_234_412_09e1,
    2.440_246_379_344_441_73e2,
    1.282_616_526_077_372_28e3,
    2.844_236_833_439_170_62e3,
];

/// Cody (1969), `exp(u^2) erfc(u) = P(u) / Q(u)` for `0.46875 <= u <= 4`; numerator, highest
/// power first.
const ERFCX_MID_NUM: [f64; 9] = [
    2.153_115_354_744_038_46e-8,
    5.641_884_969_886_700_89e-1,
    8.883_149_794_388_375_94e0,
    6.611_919_063_714_162_95e1,
    2.986_351_381_974_001_31e2,
    8.819_522_212_417_690_90e2,
    1.712_047_612_634_070_58e3,
    2.051_078_377_826_071_47e3,
    1.230_339_354_797_997_25e3,
];
/// Denominator of [`ERFCX_MID_NUM`], highest power first.
const ERFCX_MID_DEN: [f64; 9] = [
    1.0,
    1.574_492_611_070_983_47e1,
    1.176_939_508_913_124_99e2,
    5.371_811_018_620_098_58e2,
    1.621_389_574_566_690_19e3,
    3.290_799_235_733_459_63e3,
    4.362_619_090_143_247_16e3,
    3.439_367_674_143_721_64e3,
    1.230_339_354_803_749_42e3,
];

/// Cody (1969), `exp(u^2) erfc(u) = (1/sqrt(pi) - z P(z) / Q(z)) / u` with `z = 1/u^2` for
/// `u >= 4`; numerator, highest power first.
const ERFCX_BIG_NUM: [f64; 6] = [
    1.631_538_713_730_209_78e-2,
    3.053_266_349_612_323_44e-1,
    3.603_448_999_498_044_39e-1,
    1.257_817_261_112_292_46e-1,
    1.608_378_514_874_227_66e-2,
    6.587_491_615_298_378_03e-4,
];
/// Denominator of [`ERFCX_BIG_NUM`], highest power first.
const ERFCX_BIG_DEN: [f64; 6] = [
    1.0,
    2.568_520_192_289_822_42e0,
    1.872_952_849_923_467_25e0,
    5.279_051_029_514_284_12e-1,
    6.051_834_131_244_131_91e-2,
    2.335_204_976_268_691_85e-3,
];

/// Wichura (1988) AS 241, central range `|p - 1/2| <= 0.425`: `x = q A(r) / B(r)` with
/// `q = p - 1/2`, `r = 0.180625 - q^2`; numerator, highest power first.
const PPND_CENTRAL_NUM: [f64; 8] = [
    2.509_080_928_730_122_672_7e3,
    3.343_057_558_358_812_810_5e4,
    6.726_577_092_700_870_085_3e4,
    4.592_195_393_154_987_145_7e4,
    1.373_169_376_550_946_112_5e4,
    1.971_590_950_306_551_442_7e3,
    1.331_416_678_917_843_774_5e2,
    3.387_132_872_796_366_608_0e0,
];
/// Denominator of [`PPND_CENTRAL_NUM`], highest power first.
const PPND_CENTRAL_DEN: [f64; 8] = [
    5.226_495_278_852_854_561_0e3,
    2.872_908_573_572_194_267_4e4,
    3.930_789_580_009_271_061_0e4,
    2.121_379_430_158_659_586_7e4,
    5.394_196_021_424_751_107_7e3,
    6.871_870_074_920_579_083_0e2,
    4.231_333_070_160_091_125_2e1,
    1.0,
];
/// AS 241, intermediate tail `s = sqrt(-ln r) <= 5`: `|x| = C(s - 1.6) / D(s - 1.6)`.
const PPND_MID_NUM: [f64; 8] = [
    7.745_450_142_783_414_076_40e-4,
    2.272_384_498_926_918_458_33e-2,
    2.417_807_251_774_506_117_70e-1,
    1.270_458_252_452_368_382_58e0,
    3.647_848_324_763_204_605_04e0,
    5.769_497_221_460_691_405_50e0,
    4.630_337_846_156_545_295_90e0,
    1.423_437_110_749_683_577_34e0,
];
/// Denominator of [`PPND_MID_NUM`], highest power first.
const PPND_MID_DEN: [f64; 8] = [
    1.050_750_071_644_416_843_24e-9,
    5.475_938_084_995_344_946_00e-4,
    1.519_866_656_361_645_719_66e-2,
    1.481_039_764_274_800_745_90e-1,
    6.897_673_349_851_000_045_50e-1,
    1.676_384_830_183_803_849_40e0,
    2.053_191_626_637_758_821_87e0,
    1.0,
];
/// AS 241, far tail `s > 5`: `|x| = E(s - 5) / F(s - 5)`.
const PPND_FAR_NUM: [f64; 8] = [
    2.010_334_399_292_288_132_65e-7,
    2.711_555_568_743_487_578_15e-5,
    1.242_660_947_388_078_438_60e-3,
    2.653_218_952_657_612_309_30e-2,
    2.965_605_718_285_048_912_30e-1,
    1.784_826_539_917_291_335_80e0,
    5.463_784_911_164_114_369_90e0,
    6.657_904_643_501_103_777_20e0,
];
/// Denominator of [`PPND_FAR_NUM`], highest power first.
const PPND_FAR_DEN: [f64; 8] = [
    2.044_263_103_389_939_785_64e-15,
    1.421_511_758_316_445_888_70e-7,
    1.846_318_317_510_054_681_80e-5,
    7.868_691_311_456_132_591_00e-4,
    1.487_536_129_085_061_485_25e-2,
    1.369_298_809_227_358_053_10e-1,
    5.998_322_065_558_879_376_90e-1,
    1.0,
];

/// A polynomial by Horner's rule, coefficients from the highest power down.
#[inline(always)]
fn horner(coefficients: &[f64], x: f64) -> f64 {
    coefficients.iter().fold(0.0, |acc, &c| acc * x + c)
}

/// `erf(u)` for `|u| <= 0.46875` (Cody 1969).
#[inline]
fn erf_small(u: f64) -> f64 {
    let z = u * u;
    u * horner(&ERF_NUM, z) / horner(&ERF_DEN, z)
}

/// `exp(u^2) erfc(u)` for `u >= 0.46875` (Cody 1969), including `u = +inf` (gives 0).
#[inline]
fn erfcx_large(u: f64) -> f64 {
    if u <= ERFC_SPLIT {
        horner(&ERFCX_MID_NUM, u) / horner(&ERFCX_MID_DEN, u)
    } else {
        let z = 1.0 / (u * u);
        let r = z * horner(&ERFCX_BIG_NUM, z) / horner(&ERFCX_BIG_DEN, z);
        (INV_SQRT_PI - r) / u
    }
}

/// `(exp(-xh^2/2), exp(-(x - xh)(x + xh)/2))` for `0 <= x < UNDERFLOW_X`, `xh` being `x`
/// truncated to a multiple of 1/16: their product is `exp(-x^2/2)` to about two rounding
/// errors, with no error growing with `x^2` (Cody's split).
#[inline]
fn split_gauss(x: f64) -> (f64, f64) {
    let xh = (x * 16.0).trunc() / 16.0;
    let d = (x - xh) * (x + xh);
    ((-0.5 * xh * xh).exp(), (-0.5 * d).exp())
}

/// `P(Z > y)` for `y >= 0.46875 sqrt(2)` (not NaN), by the scaled `erfc`.
#[inline]
fn upper_tail(y: f64) -> f64 {
    if y >= UNDERFLOW_X {
        return 0.0;
    }
    let (big, small) = split_gauss(y);
    // The small factors first, so that only the last product can underflow.
    0.5 * erfcx_large(y * FRAC_1_SQRT_2) * small * big
}

/// `P(0 < Z < y)` for `y >= 0`, without cancellation for small `y`.
#[inline]
fn half_interval(y: f64) -> f64 {
    let u = y * FRAC_1_SQRT_2;
    if u < ERF_SPLIT {
        0.5 * erf_small(u)
    } else {
        0.5 - upper_tail(y)
    }
}

/// Density `phi(x) = exp(-x^2 / 2) / sqrt(2 pi)`, with relative error of a few units in the
/// last place for every `x` (the gaussian factor by Cody's split, see the module notes).
pub fn pdf(x: f64) -> f64 {
    let y = x.abs();
    if y.is_nan() {
        f64::NAN
    } else if y < 1.0 {
        INV_SQRT_2PI * (-0.5 * y * y).exp()
    } else if y >= UNDERFLOW_X {
        0.0
    } else {
        let (big, small) = split_gauss(y);
        INV_SQRT_2PI * small * big
    }
}

/// `Phi(x) = P(Z <= x)` for a standard normal `Z`.
///
/// Cody's (1969) rational approximations with the split exponential; relative error at most
/// `6.8e-16` measured against mpmath wherever the result is a normal floating-point number
/// (see the module notes). `cdf(-inf) = 0`, `cdf(+inf) = 1`, NaN gives NaN.
pub fn cdf(x: f64) -> f64 {
    sf(-x)
}

/// `1 - Phi(x) = P(Z > x)`, computed directly (no cancellation): relative error as for
/// [`cdf`], whose mirror image it is (`sf(x) = cdf(-x)` exactly).
pub fn sf(x: f64) -> f64 {
    if x.is_nan() {
        return f64::NAN;
    }
    let u = x * FRAC_1_SQRT_2;
    if u.abs() < ERF_SPLIT {
        0.5 - 0.5 * erf_small(u)
    } else if x > 0.0 {
        upper_tail(x)
    } else {
        1.0 - upper_tail(-x)
    }
}

/// `ln Phi(x)`, accurate (relative error of a few units in the last place) for every `x`,
/// including far below the underflow of [`cdf`]: for `x <= -0.66` it is
/// `ln(erfcx(|x|/sqrt 2) / 2) - x^2/2` from Cody's scaled approximation, so no exponential
/// is formed. Overflows to `-inf` only once `x^2` overflows (`|x| > 1.3e154`).
pub fn log_cdf(x: f64) -> f64 {
    log_sf(-x)
}

/// `ln(1 - Phi(x)) = ln P(Z > x)`, the mirror image of [`log_cdf`].
pub fn log_sf(x: f64) -> f64 {
    if x.is_nan() {
        return f64::NAN;
    }
    let u = x * FRAC_1_SQRT_2;
    if u.abs() < ERF_SPLIT {
        sf(x).ln()
    } else if x > 0.0 {
        if x == f64::INFINITY {
            return f64::NEG_INFINITY;
        }
        (0.5 * erfcx_large(u)).ln() - 0.5 * x * x
    } else {
        (-upper_tail(-x)).ln_1p()
    }
}

/// The Mills ratio `(1 - Phi(x)) / phi(x)`. For `x >= 0.66` it is `sqrt(pi/2) erfcx(x/sqrt 2)`
/// from Cody's scaled approximation, with no under- or overflow for any large `x`
/// (it tends to `1/x`); below, the quotient of [`sf`] and [`pdf`]. Used to combine a tail
/// probability with a large exponential factor without overflow.
pub fn mills_ratio(x: f64) -> f64 {
    if x.is_nan() {
        return f64::NAN;
    }
    let u = x * FRAC_1_SQRT_2;
    if u >= ERF_SPLIT {
        SQRT_PI_OVER_2 * erfcx_large(u)
    } else {
        sf(x) / pdf(x)
    }
}

/// `P(a < Z < b)`; 0 if `b <= a`; `a` and `b` may be infinite; NaN if either is NaN.
///
/// Never a difference of two large numbers: an interval that contains 0 is
/// `P(0 < Z < b) + P(0 < Z < -a)`; an interval on one side of 0 is the difference of the
/// two tail probabilities on that side, which loses at most a factor of about 3 in relative
/// accuracy, unless it is narrow (`(b - a) max(1, |b|, |a|) <= 1`): then it is
/// `phi(a) * integral over [0, b-a] of exp(-a t - t^2/2)` by the 12-point Gauss–Legendre
/// rule, whose error on this entire integrand is below `1e-20` relative. Measured relative
/// error against mpmath: at most `8e-16`.
pub fn interval(a: f64, b: f64) -> f64 {
    if a.is_nan() || b.is_nan() {
        f64::NAN
    } else if b <= a {
        0.0
    } else if a >= 0.0 {
        one_sided_interval(a, b)
    } else if b <= 0.0 {
        one_sided_interval(-b, -a)
    } else {
        half_interval(b) + half_interval(-a)
    }
}

/// `P(a < Z < b)` for `0 <= a < b` (`b` may be `+inf`).
fn one_sided_interval(a: f64, b: f64) -> f64 {
    let width = b - a;
    if width * b.max(1.0) <= 1.0 {
        // phi(a + t) = phi(a) exp(-a t - t^2/2): the exponent stays below 1.5 in size.
        let integral = legendre::RULE_12.integrate(0.0, width, |t| (-t * (a + 0.5 * t)).exp());
        pdf(a) * integral
    } else {
        (sf(a) - sf(b)).max(0.0)
    }
}

/// The quantile `Phi^-1(p)`: `-inf` at 0, `+inf` at 1, NaN outside `[0, 1]` or for NaN.
///
/// Wichura (1988), Algorithm AS 241 (`PPND16`), relative accuracy about `1e-16`; in the
/// tails (`|p - 1/2| > 0.425`) one Halley step on the tail probability follows, which uses
/// the relative accuracy of [`cdf`] there. Measured against mpmath for `p` from `1e-300` to
/// `1 - 1e-16`: relative error at most `5.6e-16`. For `p > 1/2` the result is `-quantile(1 - p)`
/// (`1 - p` is exact there), so it cannot resolve more than the spacing of doubles near 1.
pub fn quantile(p: f64) -> f64 {
    if p.is_nan() || !(0.0..=1.0).contains(&p) {
        return f64::NAN;
    }
    if p == 0.0 {
        return f64::NEG_INFINITY;
    }
    if p == 1.0 {
        return f64::INFINITY;
    }
    let q = p - 0.5;
    if q.abs() <= 0.425 {
        let r = 0.180625 - q * q;
        return q * horner(&PPND_CENTRAL_NUM, r) / horner(&PPND_CENTRAL_DEN, r);
    }
    if q < 0.0 {
        lower_tail_quantile(p)
    } else {
        -lower_tail_quantile(1.0 - p)
    }
}

/// `Phi^-1(r)` for `0 < r < 0.075` (AS 241 tail ranges and one Halley step).
fn lower_tail_quantile(r: f64) -> f64 {
    let s = (-r.ln()).sqrt();
    let x = if s <= 5.0 {
        let t = s - 1.6;
        -horner(&PPND_MID_NUM, t) / horner(&PPND_MID_DEN, t)
    } else {
        let t = s - 5.0;
        -horner(&PPND_FAR_NUM, t) / horner(&PPND_FAR_DEN, t)
    };
    // Halley's step for Phi(x) = r: with e = (Phi(x) - r) / phi(x), x - e / (1 + x e / 2).
    // Skipped where Phi(x) is subnormal and no longer carries full relative accuracy.
    if r < f64::MIN_POSITIVE {
        return x;
    }
    let e = (cdf(x) - r) / pdf(x);
    if e.is_finite() {
        x - e / (1.0 + 0.5 * x * e)
    } else {
        x
    }
}
