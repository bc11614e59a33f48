//! The formulas of the file in words, as the compiled model carries them (the description of
//! the output, each check and each derived signal, made once at compile time from the
//! definitions the model then drops). It stays in the model because only the model still
//! holds those definitions; it writes the file's own numbers back as written and rounds
//! nothing. Every other text, and every computed number, is written by the report layer
//! (`report::format`).

/// A number as written in a file: shortest form that reads back to the same value, in
/// exponent notation when very large or very small.
fn as_written(x: f64) -> String {
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

/// `0.5*a + 0.5*b - 0.2`; a coefficient of 1 is left out.
pub(crate) fn linear_formula(terms: &[(String, f64)], constant: f64) -> String {
    let mut out = String::new();
    for (name, c) in terms {
        let (sign, mag) = if *c < 0.0 { ("-", -c) } else { ("+", *c) };
        let body = if mag == 1.0 {
            name.clone()
        } else {
            format!("{}*{name}", as_written(mag))
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
            out = as_written(constant);
        } else if constant < 0.0 {
            out.push_str(&format!(" - {}", as_written(-constant)));
        } else {
            out.push_str(&format!(" + {}", as_written(constant)));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formulas_read_naturally() {
        let t = vec![("a".to_string(), 0.5), ("b".to_string(), -1.0)];
        assert_eq!(linear_formula(&t, -0.25), "0.5*a - b - 0.25");
        assert_eq!(linear_formula(&[("a".into(), -1.0)], 0.0), "-a");
        assert_eq!(as_written(5400.0), "5400");
        assert_eq!(as_written(1e-5), "1e-5");
    }
}
