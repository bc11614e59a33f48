//! Number formatting shared by the text outputs.

use crate::prob::Estimate;

/// A probability in scientific form with four significant digits, e.g. `1.234e-05`.
pub fn probability(p: f64) -> String {
    if p == 0.0 {
        "0".to_string()
    } else {
        format!("{p:.3e}")
    }
}

/// An error bound in short scientific form, e.g. `2e-12`.
pub fn bound(e: f64) -> String {
    if e == 0.0 {
        "0".to_string()
    } else {
        format!("{e:.0e}")
    }
}

/// A coverage as a percentage with two decimals, truncated (never rounded up, so that
/// 99.996 % is shown as 99.99 and not as 100.00).
pub fn percent_floor(fraction: f64) -> String {
    // The tiny allowance keeps exact decimals such as 0.57 (5699.999... hundredths) whole.
    let hundredths = (fraction * 10_000.0 + 1e-7).floor() / 100.0;
    format!("{hundredths:.2}")
}

/// An estimate of a coverage as `99.12 ± 0.01` percent.
pub fn percent_with_bound(e: Estimate) -> String {
    format!("{} ± {}", percent_floor(e.value), bound(e.error * 100.0))
}

/// A rate in FIT with four significant digits.
pub fn fit(value: f64) -> String {
    if value == 0.0 {
        "0".to_string()
    } else if value.abs() >= 0.01 && value.abs() < 1e5 {
        format!("{value:.4}")
    } else {
        format!("{value:.3e}")
    }
}

/// A sigma or other plain number, short.
pub fn number(value: f64) -> String {
    if value == 0.0 {
        "0".to_string()
    } else if value.abs() >= 1e-3 && value.abs() < 1e5 {
        let s = format!("{value:.4}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        format!("{value:.3e}")
    }
}

/// Word-wraps a paragraph to lines of at most `width` characters (continuation lines
/// indented by two spaces).
pub fn wrap(text: &str, width: usize) -> Vec<String> {
    let mut lines = Vec::new();
    let mut line = String::new();
    for word in text.split_whitespace() {
        if !line.is_empty() && line.chars().count() + 1 + word.chars().count() > width {
            lines.push(std::mem::take(&mut line));
            line.push_str("  ");
        }
        if !line.trim().is_empty() {
            line.push(' ');
        }
        line.push_str(word);
    }
    if !line.trim().is_empty() {
        lines.push(line);
    }
    lines
}

/// Text for XML and HTML: `&`, `<`, `>`, `"` and `'` as character references, control
/// characters other than tab and newline dropped (XML 1.0 does not allow them).
pub fn xml_escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            '\t' | '\n' => out.push(c),
            c if c.is_control() => {}
            c => out.push(c),
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn percentages_are_never_rounded_up() {
        assert_eq!(percent_floor(0.99996), "99.99");
        assert_eq!(percent_floor(1.0), "100.00");
        assert_eq!(percent_floor(0.5), "50.00");
    }

    #[test]
    fn markup_is_escaped() {
        assert_eq!(
            xml_escape("a<b & \"c\" 'd'>\u{1}"),
            "a&lt;b &amp; &quot;c&quot; &#39;d&#39;&gt;"
        );
    }
}
