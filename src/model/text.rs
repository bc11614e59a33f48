//! Number and formula formatting shared by descriptions, the summary and DOT labels.

/// A number as written in a file: shortest form that reads back to the same value, in
/// exponent notation when very large or very small.
pub(crate) fn num(x: f64) -> String {
    if x == 0.0 {
        return "0".into();
    }
    if !x.is_finite() {
        return if x.is_nan() {
            "NaN".into()
        } else if x > 0.0 {
            "inf".into()
        } else {
            "-inf".into()
        };
    }
    let a = x.abs();
    if !(1e-4..1e6).contains(&a) {
        format!("{x:e}")
    } else {
        format!("{x}")
    }
}

/// A computed number to `digits` significant digits.
pub(crate) fn sig(x: f64, digits: usize) -> String {
    if x == 0.0 {
        return "0".into();
    }
    if !x.is_finite() {
        return num(x);
    }
    let a = x.abs();
    if !(1e-4..1e6).contains(&a) {
        return format!("{:.*e}", digits.saturating_sub(1), x);
    }
    let mag = a.log10().floor() as i64;
    let decimals = (digits as i64 - 1 - mag).max(0) as usize;
    format!("{x:.decimals$}")
}

/// A computed number to 4 significant digits, without trailing zeros.
pub(crate) fn short(x: f64) -> String {
    let s = sig(x, 4);
    if s.contains('.') && !s.contains('e') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// `0.5*a + 0.5*b - 0.2`; a coefficient of 1 is left out.
pub(crate) fn linear_formula(terms: &[(String, f64)], constant: f64) -> String {
    let mut out = String::new();
    for (name, c) in terms {
        let (sign, mag) = if *c < 0.0 { ("-", -c) } else { ("+", *c) };
        let body = if mag == 1.0 {
            name.clone()
        } else {
            format!("{}*{name}", num(mag))
        };
        if out.is_empty() {
            if sign == "-" {
                out.push('-');
            }
            out.push_str(&body);
        } else {
            out.push_str(&format!(" {sign} {body}"));
        }
    }
    if constant != 0.0 || out.is_empty() {
        if out.is_empty() {
            out = num(constant);
        } else if constant < 0.0 {
            out.push_str(&format!(" - {}", num(-constant)));
        } else {
            out.push_str(&format!(" + {}", num(constant)));
        }
    }
    out
}

/// `[lower, upper]`, with `-inf`/`inf` for open ends.
pub(crate) fn band(lower: f64, upper: f64) -> String {
    format!("[{}, {}]", num(lower), num(upper))
}

/// `outside [-2, 2] deg`, `above 3 deg` or `below -1 deg`, for a band with open ends.
pub(crate) fn outside(lower: f64, upper: f64, unit: &str) -> String {
    match (lower.is_finite(), upper.is_finite()) {
        (true, true) => format!("outside {} {unit}", band(lower, upper)),
        (false, true) => format!("above {} {unit}", num(upper)),
        (true, false) => format!("below {} {unit}", num(lower)),
        (false, false) => "never".to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formulas_read_naturally() {
        let t = vec![("a".to_string(), 0.5), ("b".to_string(), -1.0)];
        assert_eq!(linear_formula(&t, -0.25), "0.5*a - b - 0.25");
        assert_eq!(linear_formula(&[("a".into(), -1.0)], 0.0), "-a");
        assert_eq!(num(5400.0), "5400");
        assert_eq!(num(1e-5), "1e-5");
        assert_eq!(sig(0.61846584, 4), "0.6185");
        assert_eq!(short(0.002), "0.002");
        assert_eq!(short(0.2), "0.2");
    }
}
