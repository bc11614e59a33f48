//! Parsing of the value arguments shared by the exploration commands: `KEY=FROM:TO`,
//! `KEY=V1,V2,...`, `FROM:TO` and coverage targets such as `0.99` or `99%`.

use crate::analysis::sweep::Axis;

use super::CliError;

/// A malformed value of `option`.
fn malformed(option: &str, message: String) -> CliError {
    CliError::Value {
        flag: option.to_string(),
        message,
    }
}

/// A number, or an input failure naming the option.
pub fn number(text: &str, option: &str) -> Result<f64, CliError> {
    let value: f64 = text.trim().parse().map_err(|_| {
        malformed(
            option,
            format!("`{text}` is not a number (write e.g. 2.5 or 1e-3)"),
        )
    })?;
    if !value.is_finite() {
        return Err(malformed(
            option,
            format!("`{text}` is not a finite number"),
        ));
    }
    Ok(value)
}

/// `FROM:TO` as two numbers.
pub fn range(text: &str, option: &str) -> Result<(f64, f64), CliError> {
    let Some((from, to)) = text.split_once(':') else {
        return Err(malformed(
            option,
            format!("`{text}` is not a range; write FROM:TO, e.g. 0.5:4"),
        ));
    };
    Ok((number(from, option)?, number(to, option)?))
}

/// `KEY=FROM:TO` (spaced over `points`, logarithmically when `log` names the option that asks
/// for it) or `KEY=V1,V2,...`.
pub fn axis(spec: &str, points: usize, log: Option<&str>, option: &str) -> Result<Axis, CliError> {
    let Some((key, values)) = spec.split_once('=') else {
        return Err(malformed(
            option,
            format!(
                "`{spec}` names no values; write KEY=FROM:TO or KEY=V1,V2, \
             e.g. safety.limit=1:4"
            ),
        ));
    };
    let key = key.trim();
    if key.is_empty() {
        return Err(malformed(
            option,
            format!("`{spec}` has no key before `=`; write e.g. checks.ab.limit=2:3"),
        ));
    }
    let built = if values.contains(':') {
        let (from, to) = range(values, option)?;
        if log.is_some() {
            Axis::log(key, from, to, points)
        } else {
            Axis::linear(key, from, to, points)
        }
    } else {
        let list = values
            .split(',')
            .map(|v| number(v, option))
            .collect::<Result<Vec<f64>, CliError>>()?;
        Axis::list(key, list)
    };
    // A log axis has rules of its own (positive ends): name the option that asked for it.
    let flag = match log {
        Some(log) => format!("{option} (with {log})"),
        None => option.to_string(),
    };
    built.map_err(|error| CliError::Request { flag, error })
}

/// A coverage target: a fraction in (0, 1] or a percentage written with `%`.
pub fn coverage_target(text: &str, option: &str) -> Result<f64, CliError> {
    let trimmed = text.trim();
    let value = match trimmed.strip_suffix('%') {
        Some(percent) => number(percent, option)? / 100.0,
        None => number(trimmed, option)?,
    };
    if !(value > 0.0 && value <= 1.0) {
        return Err(malformed(
            option,
            format!(
                "`{text}` is not a coverage; give a fraction in (0, 1] such as \
             0.99, or a percentage such as 99%"
            ),
        ));
    }
    Ok(value)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn values_parse_in_both_forms() {
        let a = axis("safety.limit=1:3", 3, None, "--vary").unwrap();
        assert_eq!(a.key, "safety.limit");
        assert_eq!(a.values, vec![1.0, 2.0, 3.0]);
        let b = axis("checks.ab.limit=2,2.5", 9, None, "--vary").unwrap();
        assert_eq!(b.values, vec![2.0, 2.5]);
        assert!(axis("checks.ab.limit", 3, None, "--vary").is_err());
        assert!(axis("=1:2", 3, None, "--vary").is_err());
        assert!(axis("k=a:2", 3, None, "--vary").is_err());
        assert!(axis("k=0:2", 3, Some("--log"), "--vary").is_err());
    }

    #[test]
    fn targets_take_fractions_and_percentages() {
        assert_eq!(coverage_target("0.99", "--target-dc").unwrap(), 0.99);
        assert!((coverage_target("99%", "--target-dc").unwrap() - 0.99).abs() < 1e-15);
        assert!(coverage_target("99", "--target-dc").is_err());
        assert!(coverage_target("0", "--target-dc").is_err());
    }
}
