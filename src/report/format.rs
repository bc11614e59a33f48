//! Number formatting shared by the text outputs: the one number formatter
//! ([`format_number`], a [`NumberStyle`] per output) and the one amplitude describer
//! ([`describe_amplitude`], an [`AmplitudeStyle`] per output).

use crate::model::Amplitude;
use crate::prob::Estimate;

/// A probability in scientific form with four significant digits, e.g. `1.234e-5`
/// ([`PROBABILITY`]).
pub fn probability(p: f64) -> String {
    format_number(p, &PROBABILITY)
}

/// An error bound in short scientific form, e.g. `2e-12` ([`BOUND`]).
pub fn bound(e: f64) -> String {
    format_number(e, &BOUND)
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

/// A rate in FIT with four significant digits ([`FIT`]).
pub fn fit(value: f64) -> String {
    format_number(value, &FIT)
}

/// How many digits a number keeps in plain (not exponent) notation.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Digits {
    /// The shortest form that reads back to the same value (`{}`, `{:e}`).
    Shortest,
    /// This many significant digits.
    Significant(usize),
    /// This many digits after the decimal point.
    Decimals(usize),
}

/// When a number is written in plain notation rather than with an exponent.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Notation {
    /// Always plain.
    Plain,
    /// Always with an exponent.
    Scientific,
    /// Plain for magnitudes in `[low, high)`, with an exponent otherwise.
    PlainWithin(f64, f64),
}

/// A way of writing numbers: the one number formatter of the outputs ([`format_number`])
/// takes it, and each output keeps its own style.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NumberStyle {
    /// Digits in plain notation.
    pub digits: Digits,
    /// When plain notation is used.
    pub notation: Notation,
    /// Digits after the point of the mantissa in exponent notation (`None`: shortest).
    pub exponent_decimals: Option<usize>,
    /// Whether trailing zeros (and a trailing point) of plain notation are dropped.
    pub trim: bool,
    /// Whether those of the mantissa in exponent notation are dropped too (`2.5e3`).
    pub trim_mantissa: bool,
}

/// As a file would write it: the shortest form that reads back to the same value, in
/// exponent notation below 1e-4 and from 1e6 on (`5400`, `0.5`, `1e-5`).
pub const AS_WRITTEN: NumberStyle = NumberStyle {
    digits: Digits::Shortest,
    notation: Notation::PlainWithin(1e-4, 1e6),
    exponent_decimals: None,
    trim: false,
    trim_mantissa: false,
};

/// Rust's own shortest plain form (`5400`, `0.002`), never an exponent: the amplitudes of
/// the table, JSON and CSV.
pub const PLAIN: NumberStyle = NumberStyle {
    digits: Digits::Shortest,
    notation: Notation::Plain,
    exponent_decimals: None,
    trim: false,
    trim_mantissa: false,
};

/// Four decimals without trailing zeros from 1e-3 to 1e5, four significant digits in
/// exponent notation outside: sigmas and other plain numbers of the reports.
pub const SHORT_DECIMALS: NumberStyle = NumberStyle {
    digits: Digits::Decimals(4),
    notation: Notation::PlainWithin(1e-3, 1e5),
    exponent_decimals: Some(3),
    trim: true,
    trim_mantissa: false,
};

/// The tick labels of the charts: like [`SHORT_DECIMALS`], but three significant digits
/// without trailing zeros in exponent notation (`1e-6`, `2.5e5`).
pub const TICK: NumberStyle = NumberStyle {
    digits: Digits::Decimals(4),
    notation: Notation::PlainWithin(1e-3, 1e5),
    exponent_decimals: Some(2),
    trim: true,
    trim_mantissa: true,
};

/// Four significant digits, always with an exponent (`7.598e-4`): probabilities.
pub const PROBABILITY: NumberStyle = scientific(3);

/// One significant digit, always with an exponent (`2e-12`): error bounds.
pub const BOUND: NumberStyle = scientific(0);

/// Four decimals from 0.01 to 1e5 (`0.1564`), four significant digits with an exponent
/// outside: rates in FIT.
pub const FIT: NumberStyle = NumberStyle {
    digits: Digits::Decimals(4),
    notation: Notation::PlainWithin(0.01, 1e5),
    exponent_decimals: Some(3),
    trim: false,
    trim_mantissa: false,
};

/// Always with an exponent, `decimals` digits after the mantissa's point.
pub const fn scientific(decimals: usize) -> NumberStyle {
    NumberStyle {
        digits: Digits::Shortest,
        notation: Notation::Scientific,
        exponent_decimals: Some(decimals),
        trim: false,
        trim_mantissa: false,
    }
}

/// `digits` significant digits, in exponent notation below 1e-4 and from 1e6 on, trailing
/// zeros kept (`0.5000`): the columns of the `check` summary.
pub const fn significant_style(digits: usize) -> NumberStyle {
    NumberStyle {
        digits: Digits::Significant(digits),
        notation: Notation::PlainWithin(1e-4, 1e6),
        exponent_decimals: Some(digits.saturating_sub(1)),
        trim: false,
        trim_mantissa: false,
    }
}

/// `digits` significant digits, in exponent notation below 1e-4 and from 1e6 on, trailing
/// zeros dropped (`0.002`, `5400`).
pub const fn short_style(digits: usize) -> NumberStyle {
    NumberStyle {
        trim: true,
        ..significant_style(digits)
    }
}

/// `digits` significant digits, always plain, trailing zeros dropped: the limits of `tune`
/// in text and pictures (`2.70531`).
pub const fn plain_significant_style(digits: usize) -> NumberStyle {
    NumberStyle {
        digits: Digits::Significant(digits),
        notation: Notation::Plain,
        exponent_decimals: None,
        trim: true,
        trim_mantissa: false,
    }
}

/// The one number formatter: `x` in `style`. Zero is `0`; NaN and the infinities are `NaN`,
/// `inf` and `-inf`.
pub fn format_number(x: f64, style: &NumberStyle) -> String {
    if x == 0.0 {
        return "0".into();
    }
    if !x.is_finite() {
        return format!("{x}");
    }
    let magnitude = x.abs();
    let plain = match style.notation {
        Notation::Plain => true,
        Notation::Scientific => false,
        Notation::PlainWithin(low, high) => (low..high).contains(&magnitude),
    };
    if !plain {
        let text = match style.exponent_decimals {
            Some(d) => format!("{x:.d$e}"),
            None => format!("{x:e}"),
        };
        return match text.split_once('e') {
            Some((mantissa, exponent)) if style.trim_mantissa => {
                let mantissa = mantissa.trim_end_matches('0').trim_end_matches('.');
                format!("{mantissa}e{exponent}")
            }
            _ => text,
        };
    }
    let text = match style.digits {
        Digits::Shortest => format!("{x}"),
        Digits::Decimals(d) => format!("{x:.d$}"),
        Digits::Significant(digits) => {
            let exponent = magnitude.log10().floor() as i64;
            let d = (digits as i64 - 1 - exponent).max(0) as usize;
            format!("{x:.d$}")
        }
    };
    if style.trim && text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

/// A sigma or other plain number, short ([`SHORT_DECIMALS`]).
pub fn number(value: f64) -> String {
    format_number(value, &SHORT_DECIMALS)
}

/// A number as a file writes it ([`AS_WRITTEN`]).
pub fn as_written(value: f64) -> String {
    format_number(value, &AS_WRITTEN)
}

/// `[lower, upper]` as written, with `-inf`/`inf` for open ends.
pub fn band(lower: f64, upper: f64) -> String {
    format!("[{}, {}]", as_written(lower), as_written(upper))
}

/// `outside [-2, 2] deg`, `above 3 deg` or `below -1 deg`, for a band with open ends.
pub fn outside(lower: f64, upper: f64, unit: &str) -> String {
    match (lower.is_finite(), upper.is_finite()) {
        (true, true) => format!("outside {} {unit}", band(lower, upper)),
        (false, true) => format!("above {} {unit}", as_written(upper)),
        (true, false) => format!("below {} {unit}", as_written(lower)),
        (false, false) => "never".to_string(),
    }
}

/// How an amplitude model is put in words; each output keeps its own.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AmplitudeStyle<'a> {
    /// One short term, numbers in [`PLAIN`]: `gaussian(mean 0, sigma 0.8)`,
    /// `points(540 w 0.5; -540 w 0.5)` (the table, the JSON `amplitude` and the CSV).
    Compact,
    /// The `check` summary and the DOT graph, numbers as written, with the unit:
    /// `gaussian, mean 1 deg, sigma 0.8 deg`, `uniform on [-540, 540] deg (full scale)`.
    Summary {
        /// The unit of the file.
        unit: &'a str,
    },
    /// The HTML report, numbers in [`SHORT_DECIMALS`]: `gaussian, mean 1, σ 0.8`,
    /// `one of 540 (weight 0.5), -540 (weight 0.5)`.
    Prose,
}

/// Points the summary lists before it only counts the rest.
const SUMMARY_POINTS: usize = 6;

/// The one amplitude describer: `amplitude` in `style`; `full_scale` when the file wrote
/// the uniform range as `"full_scale"` (the compact style leaves it out).
pub fn describe_amplitude(
    amplitude: &Amplitude,
    full_scale: bool,
    style: AmplitudeStyle,
) -> String {
    let value = |x: f64| match style {
        AmplitudeStyle::Compact => format_number(x, &PLAIN),
        AmplitudeStyle::Summary { .. } => as_written(x),
        AmplitudeStyle::Prose => number(x),
    };
    let unit = match style {
        AmplitudeStyle::Summary { unit } => format!(" {unit}"),
        _ => String::new(),
    };
    let compact = style == AmplitudeStyle::Compact;
    let sigma = if style == AmplitudeStyle::Prose {
        "σ"
    } else {
        "sigma"
    };
    let note = |yes: bool, text: &str| {
        if yes && !compact {
            format!(" ({text})")
        } else {
            String::new()
        }
    };
    match amplitude {
        Amplitude::Gaussian { mean, sigma: s } if compact => {
            format!("gaussian(mean {}, sigma {})", value(*mean), value(*s))
        }
        Amplitude::Gaussian { mean, sigma: s } => format!(
            "gaussian, mean {}{unit}, {sigma} {}{unit}",
            value(*mean),
            value(*s)
        ),
        Amplitude::GaussianUnknownSigma {
            mean,
            sigma_lo,
            sigma_hi,
            defaulted,
        } => {
            // The summary writes the range to four digits: a default range is computed.
            let range = |x: f64| match style {
                AmplitudeStyle::Summary { .. } => format_number(x, &short_style(4)),
                _ => value(x),
            };
            let range = format!("[{}, {}]", range(*sigma_lo), range(*sigma_hi));
            if compact {
                format!("gaussian(mean {}, sigma unknown in {range})", value(*mean))
            } else {
                format!(
                    "gaussian, mean {}{unit}, {sigma} unknown in {range}{unit}{}",
                    value(*mean),
                    note(*defaulted, "default range")
                )
            }
        }
        Amplitude::Uniform { lower, upper } if compact => {
            format!("uniform[{}, {}]", value(*lower), value(*upper))
        }
        Amplitude::Uniform { lower, upper } => format!(
            "uniform on [{}, {}]{unit}{}",
            value(*lower),
            value(*upper),
            note(full_scale, "full scale")
        ),
        Amplitude::Points(points) => match style {
            AmplitudeStyle::Compact => {
                let list: Vec<String> = points
                    .iter()
                    .map(|(v, w)| format!("{} w {}", value(*v), value(*w)))
                    .collect();
                format!("points({})", list.join("; "))
            }
            AmplitudeStyle::Summary { .. } => {
                let shown: Vec<String> = points
                    .iter()
                    .take(SUMMARY_POINTS)
                    .map(|(v, w)| format!("{} (p {})", value(*v), value(*w)))
                    .collect();
                let more = if points.len() > SUMMARY_POINTS {
                    format!(", ... ({} points)", points.len())
                } else {
                    String::new()
                };
                format!("points {}{more}{unit}", shown.join(", "))
            }
            AmplitudeStyle::Prose => {
                let list: Vec<String> = points
                    .iter()
                    .map(|(v, w)| format!("{} (weight {})", value(*v), value(*w)))
                    .collect();
                format!("one of {}", list.join(", "))
            }
        },
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

/// A confirmation rule in words: "3 consecutive samples", "3 of the last 5 samples", "a
/// counter up 2, down 1, tripping at 6".
pub fn describe_confirm(rule: &crate::prob::debounce::Debounce) -> String {
    use crate::prob::debounce::Debounce;
    match *rule {
        Debounce::Consecutive { count: 1 } => "the first firing sample".to_string(),
        Debounce::Consecutive { count } => format!("{count} consecutive firing samples"),
        Debounce::Window { count, window } => {
            format!("{count} firing samples of the last {window}")
        }
        Debounce::Counter { up, down, trip } => format!(
            "a counter stepping up {up} on a firing sample and down {down} on a quiet one, \
             tripping at {trip}"
        ),
    }
}

/// A short label of a confirmation rule for tables and the JSON of `tune
/// --with-confirmation`: `consecutive 3`, `3 of last 5`, `counter +2/-1 trip 4`.
pub fn rule_label(rule: &crate::prob::debounce::Debounce) -> String {
    use crate::prob::debounce::Debounce;
    match *rule {
        Debounce::Consecutive { count } => format!("consecutive {count}"),
        Debounce::Window { count, window } => format!("{count} of last {window}"),
        Debounce::Counter { up, down, trip } => format!("counter +{up}/-{down} trip {trip}"),
    }
}

/// A time in seconds with a unit that suits it: `2 ms`, `1.5 s`, `250 us`.
pub fn seconds(t: f64) -> String {
    let style = short_style(4);
    if t != 0.0 && t.abs() < 1e-3 {
        format!("{} us", format_number(t * 1e6, &style))
    } else if t.abs() < 1.0 {
        format!("{} ms", format_number(t * 1e3, &style))
    } else {
        format!("{} s", format_number(t, &style))
    }
}

/// An isolation rule in words, for a file whose unit is `unit`.
pub fn describe_isolation_rule(rule: &crate::model::IsolationRule, unit: &str) -> String {
    use crate::model::IsolationRule;
    match *rule {
        IsolationRule::InEveryFiredCheck => "the channel that takes part in every check that \
             fired is blamed and dropped; none is blamed when no single channel does"
            .to_string(),
        IsolationRule::FarthestFromMedian { margin } if margin > 0.0 => format!(
            "the reading farthest from the median is blamed and dropped when it leads the next \
             farthest by more than {} {unit}; otherwise none is blamed",
            number(margin)
        ),
        IsolationRule::FarthestFromMedian { .. } => {
            "the reading farthest from the median is blamed and dropped".to_string()
        }
    }
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
    fn each_number_style_keeps_its_form() {
        assert_eq!(as_written(5400.0), "5400");
        assert_eq!(as_written(1e-5), "1e-5");
        assert_eq!(as_written(f64::NEG_INFINITY), "-inf");
        assert_eq!(format_number(0.61846584, &significant_style(4)), "0.6185");
        assert_eq!(format_number(0.5, &significant_style(4)), "0.5000");
        assert_eq!(format_number(2.5e-7, &significant_style(4)), "2.500e-7");
        assert_eq!(format_number(0.002, &short_style(4)), "0.002");
        assert_eq!(format_number(0.2, &short_style(4)), "0.2");
        assert_eq!(
            format_number(2.705309, &plain_significant_style(6)),
            "2.70531"
        );
        assert_eq!(format_number(1e-7, &PLAIN), "0.0000001");
        assert_eq!(number(3.1433547), "3.1434");
        assert_eq!(number(2e5), "2.000e5");
        assert_eq!(format_number(2.5e5, &TICK), "2.5e5");
        assert_eq!(format_number(1e-6, &TICK), "1e-6");
        assert_eq!(format_number(0.25, &TICK), "0.25");
        assert_eq!(band(-2.0, f64::INFINITY), "[-2, inf]");
        assert_eq!(outside(f64::NEG_INFINITY, 3.0, "deg"), "above 3 deg");
    }

    #[test]
    fn each_amplitude_style_keeps_its_words() {
        let points = Amplitude::Points((0..8).map(|i| (f64::from(i), 0.125)).collect());
        assert_eq!(
            describe_amplitude(&points, false, AmplitudeStyle::Summary { unit: "V" }),
            "points 0 (p 0.125), 1 (p 0.125), 2 (p 0.125), 3 (p 0.125), 4 (p 0.125), \
             5 (p 0.125), ... (8 points) V"
        );
        let uniform = Amplitude::Uniform {
            lower: -1.0,
            upper: 1.0,
        };
        assert_eq!(
            describe_amplitude(&uniform, true, AmplitudeStyle::Compact),
            "uniform[-1, 1]"
        );
        assert_eq!(
            describe_amplitude(&uniform, true, AmplitudeStyle::Prose),
            "uniform on [-1, 1] (full scale)"
        );
        let unknown = Amplitude::GaussianUnknownSigma {
            mean: 0.0,
            sigma_lo: 0.00123456,
            sigma_hi: 10.0,
            defaulted: true,
        };
        assert_eq!(
            describe_amplitude(&unknown, false, AmplitudeStyle::Summary { unit: "V" }),
            "gaussian, mean 0 V, sigma unknown in [0.001235, 10] V (default range)"
        );
        assert_eq!(
            describe_amplitude(&unknown, false, AmplitudeStyle::Compact),
            "gaussian(mean 0, sigma unknown in [0.00123456, 10])"
        );
    }

    #[test]
    fn markup_is_escaped() {
        assert_eq!(
            xml_escape("a<b & \"c\" 'd'>\u{1}"),
            "a&lt;b &amp; &quot;c&quot; &#39;d&#39;&gt;"
        );
    }
}
