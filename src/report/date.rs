//! The date printed on a report, chosen so that a report can be reproduced bit for bit.
//!
//! In order: a date given on the command line (`YYYY-MM-DD`), the environment variable
//! `SOURCE_DATE_EPOCH` (seconds since 1970-01-01 UTC, the convention of reproducible
//! builds, reproducible-builds.org), else today's date in UTC from the system clock.

use std::time::{SystemTime, UNIX_EPOCH};

/// A calendar date (proleptic Gregorian), printed as `YYYY-MM-DD`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub struct Date {
    /// Year, e.g. 2026.
    pub year: i64,
    /// Month 1 to 12.
    pub month: u32,
    /// Day 1 to 31.
    pub day: u32,
}

impl std::fmt::Display for Date {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{:04}-{:02}-{:02}", self.year, self.month, self.day)
    }
}

/// Why a date could not be taken.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum DateError {
    /// A date text that is not `YYYY-MM-DD` or names no real day.
    #[error("date '{text}' is not a day written as YYYY-MM-DD (e.g. 2026-03-31)")]
    Format {
        /// The text given.
        text: String,
    },
    /// `SOURCE_DATE_EPOCH` is set but is not a whole number of seconds.
    #[error(
        "SOURCE_DATE_EPOCH is '{text}', not a whole number of seconds since 1970-01-01 UTC; \
         set it to such a number or unset it"
    )]
    Epoch {
        /// The variable's value.
        text: String,
    },
}

fn is_leap(year: i64) -> bool {
    (year % 4 == 0 && year % 100 != 0) || year % 400 == 0
}

fn days_in_month(year: i64, month: u32) -> u32 {
    match month {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        2 if is_leap(year) => 29,
        2 => 28,
        _ => 0,
    }
}

impl Date {
    /// The day `days` after 1970-01-01 (negative: before it).
    ///
    /// Counts whole 400-year cycles (146 097 days each) from 0000-03-01, so that the leap
    /// day is the last day of each counted year; the year of a day within its cycle follows
    /// from the 4-, 100- and 400-year leap rules (the method of H. Hinnant's public-domain
    /// "chrono-compatible low-level date algorithms", `civil_from_days`). Checked in the tests against dates worked
    /// out by hand and against a walk day by day over several centuries.
    pub fn from_days_since_epoch(days: i64) -> Date {
        // 719 468 days from 0000-03-01 to 1970-01-01.
        let z = days + 719_468;
        let cycle = z.div_euclid(146_097);
        let day_of_cycle = z.rem_euclid(146_097); // 0 ..= 146 096
        let year_of_cycle = (day_of_cycle - day_of_cycle / 1_460 + day_of_cycle / 36_524
            - day_of_cycle / 146_096)
            / 365; // 0 ..= 399
        let day_of_year =
            day_of_cycle - (365 * year_of_cycle + year_of_cycle / 4 - year_of_cycle / 100); // 0 ..= 365, counted from March 1
        let month_from_march = (5 * day_of_year + 2) / 153; // 0 ..= 11
        let day = (day_of_year - (153 * month_from_march + 2) / 5 + 1) as u32;
        let month = if month_from_march < 10 {
            month_from_march + 3
        } else {
            month_from_march - 9
        } as u32;
        let year = year_of_cycle + cycle * 400 + i64::from(month <= 2);
        Date { year, month, day }
    }

    /// The UTC date of a time in seconds since 1970-01-01 00:00 UTC.
    pub fn from_unix_seconds(seconds: i64) -> Date {
        Date::from_days_since_epoch(seconds.div_euclid(86_400))
    }

    /// Reads `YYYY-MM-DD`.
    ///
    /// # Errors
    /// [`DateError::Format`] for any other text or a day that does not exist.
    pub fn parse(text: &str) -> Result<Date, DateError> {
        let bad = || DateError::Format {
            text: text.to_string(),
        };
        let parts: Vec<&str> = text.trim().split('-').collect();
        let [y, m, d] = parts.as_slice() else {
            return Err(bad());
        };
        let all_digits = |s: &str, n: usize| s.len() == n && s.bytes().all(|b| b.is_ascii_digit());
        if !all_digits(y, 4) || !all_digits(m, 2) || !all_digits(d, 2) {
            return Err(bad());
        }
        let year: i64 = y.parse().map_err(|_| bad())?;
        let month: u32 = m.parse().map_err(|_| bad())?;
        let day: u32 = d.parse().map_err(|_| bad())?;
        if !(1..=12).contains(&month) || day == 0 || day > days_in_month(year, month) {
            return Err(bad());
        }
        Ok(Date { year, month, day })
    }
}

/// The report date: `given` if any, else `SOURCE_DATE_EPOCH` (as read by the caller and
/// passed in `epoch`), else today in UTC.
///
/// # Errors
/// A malformed `given` date or `SOURCE_DATE_EPOCH`.
pub fn report_date(given: Option<&str>, epoch: Option<&str>) -> Result<Date, DateError> {
    if let Some(text) = given {
        return Date::parse(text);
    }
    if let Some(text) = epoch {
        let seconds: i64 = text.trim().parse().map_err(|_| DateError::Epoch {
            text: text.to_string(),
        })?;
        return Ok(Date::from_unix_seconds(seconds));
    }
    let now = SystemTime::now()
        .duration_since(UNIX_EPOCH)
        .map(|d| d.as_secs() as i64)
        .unwrap_or(0);
    Ok(Date::from_unix_seconds(now))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn known_days() {
        // 1970-01-01 is day 0 of the Unix epoch (POSIX); 2000-03-01 follows a leap day of a
        // 400-year leap year; 1900 was no leap year (Gregorian rules, worked out by hand).
        let d = |y, m, dd| Date {
            year: y,
            month: m,
            day: dd,
        };
        assert_eq!(Date::from_days_since_epoch(0), d(1970, 1, 1));
        assert_eq!(Date::from_days_since_epoch(-1), d(1969, 12, 31));
        assert_eq!(Date::from_days_since_epoch(11_016), d(2000, 2, 29));
        assert_eq!(Date::from_days_since_epoch(11_017), d(2000, 3, 1));
        assert_eq!(Date::from_days_since_epoch(-25_508), d(1900, 3, 1));
        assert_eq!(Date::from_days_since_epoch(-25_509), d(1900, 2, 28));
        // `date -u -d @1700000000` prints Tue Nov 14 22:13:20 UTC 2023 (GNU coreutils).
        assert_eq!(Date::from_unix_seconds(1_700_000_000), d(2023, 11, 14));
    }

    #[test]
    fn a_walk_day_by_day_agrees() {
        // Independent of the cycle arithmetic: step through the calendar with the month
        // lengths, from 1600-01-01 (day -135 140) to 2400-12-31.
        let mut expected = Date {
            year: 1600,
            month: 1,
            day: 1,
        };
        let mut days = -135_140;
        while expected.year <= 2400 {
            assert_eq!(Date::from_days_since_epoch(days), expected, "day {days}");
            days += 1;
            expected.day += 1;
            if expected.day > days_in_month(expected.year, expected.month) {
                expected.day = 1;
                expected.month += 1;
                if expected.month > 12 {
                    expected.month = 1;
                    expected.year += 1;
                }
            }
        }
    }

    #[test]
    fn parsing_and_sources() {
        assert_eq!(
            Date::parse("2026-02-28").map(|d| d.to_string()),
            Ok("2026-02-28".into())
        );
        assert!(Date::parse("2026-02-29").is_err());
        assert!(Date::parse("2024-02-29").is_ok());
        assert!(Date::parse("2026-13-01").is_err());
        assert!(Date::parse("26-01-01").is_err());
        assert!(Date::parse("yesterday").is_err());
        assert_eq!(
            report_date(None, Some("1700000000")).map(|d| d.to_string()),
            Ok("2023-11-14".into())
        );
        assert_eq!(
            report_date(Some("2025-06-30"), Some("1700000000")).map(|d| d.to_string()),
            Ok("2025-06-30".into())
        );
        assert!(report_date(None, Some("soon")).is_err());
        assert!(report_date(None, None).is_ok());
    }
}
