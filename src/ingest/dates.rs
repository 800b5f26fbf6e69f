//! Dates: ISO 8601 unless a layout is configured, spreadsheet serial numbers where the file is
//! a workbook, and a refusal to guess between day-first and month-first.
//!
//! Dates are held as days since 0001-01-01 (chrono's `num_days_from_ce`) in an `i32`.

use chrono::{Datelike, NaiveDate, NaiveDateTime};

/// Why a date value was not accepted.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum DateProblem {
    /// The value has the right shape but names no real day (2024-02-30).
    Impossible,
    /// The value is not in the expected layout at all.
    Unreadable,
}

/// Parses date values of one column.
#[derive(Debug, Clone)]
pub struct DateParser {
    format: Option<String>,
    excel_serials: bool,
}

/// The ISO 8601 layout, as messages name it.
pub const ISO_LAYOUT: &str = "YYYY-MM-DD (ISO 8601)";

/// Days since 0001-01-01 of a calendar date.
pub fn to_days(d: NaiveDate) -> i32 {
    d.num_days_from_ce()
}

/// The calendar date of a day number produced by [`to_days`].
pub fn from_days(days: i32) -> Option<NaiveDate> {
    NaiveDate::from_num_days_from_ce_opt(days)
}

/// Format a day number as ISO 8601.
pub fn iso(days: i32) -> String {
    use chrono::Datelike;
    match from_days(days) {
        // Four-digit years written directly (the formatter's general path cost more than the
        // date checks of a people table); other years as the formatter writes them.
        Some(d) if (0..=9999).contains(&d.year()) => {
            format!("{:04}-{:02}-{:02}", d.year(), d.month(), d.day())
        }
        Some(d) => d.format("%Y-%m-%d").to_string(),
        None => String::new(),
    }
}

impl DateParser {
    /// `format` empty means ISO 8601.
    pub fn new(format: &str, excel_serials: bool) -> DateParser {
        DateParser {
            format: (!format.is_empty()).then(|| format.to_string()),
            excel_serials,
        }
    }

    /// The layout shown in messages.
    pub fn layout(&self) -> &str {
        self.format.as_deref().unwrap_or(ISO_LAYOUT)
    }

    /// Parse one trimmed, non-empty value.
    pub fn parse(&self, v: &str) -> Result<i32, DateProblem> {
        if self.excel_serials {
            if let Ok(serial) = v.parse::<f64>() {
                let base = NaiveDate::from_ymd_opt(1899, 12, 30).ok_or(DateProblem::Unreadable)?;
                if !(1.0..=2_958_465.0).contains(&serial) {
                    return Err(DateProblem::Unreadable);
                }
                let d = base
                    .checked_add_signed(chrono::TimeDelta::days(serial.floor() as i64))
                    .ok_or(DateProblem::Unreadable)?;
                return Ok(to_days(d));
            }
        }
        match &self.format {
            None => parse_iso(v),
            Some(f) => match NaiveDate::parse_from_str(v, f) {
                Ok(d) => in_range(d),
                Err(_) => match NaiveDateTime::parse_from_str(v, f) {
                    Ok(dt) => in_range(dt.date()),
                    Err(e) if matches!(e.kind(), chrono::format::ParseErrorKind::OutOfRange) => {
                        Err(DateProblem::Impossible)
                    }
                    Err(_) => Err(DateProblem::Unreadable),
                },
            },
        }
    }
}

/// Years 1 to 9999 only: a layout such as %Y also reads "-2" or "12345" as a year, which no
/// export means (found by fuzzing; such a date did not survive being written as ISO 8601).
fn in_range(d: NaiveDate) -> Result<i32, DateProblem> {
    if (1..=9999).contains(&d.year()) {
        Ok(to_days(d))
    } else {
        Err(DateProblem::Impossible)
    }
}

fn digits(b: &[u8]) -> Option<u32> {
    if b.is_empty() || !b.iter().all(u8::is_ascii_digit) {
        return None;
    }
    // Checked: a long run of digits is no day, month or year (found by fuzzing).
    b.iter().try_fold(0u32, |a, d| {
        a.checked_mul(10)?.checked_add(u32::from(d - b'0'))
    })
}

/// `YYYY-MM-DD`, optionally followed by `T` or a space and a time (ignored).
pub fn parse_iso(v: &str) -> Result<i32, DateProblem> {
    let b = v.as_bytes();
    if b.len() < 10
        || b[4] != b'-'
        || b[7] != b'-'
        || (b.len() > 10 && !matches!(b[10], b'T' | b't' | b' '))
    {
        return Err(DateProblem::Unreadable);
    }
    let (Some(y), Some(m), Some(d)) = (digits(&b[0..4]), digits(&b[5..7]), digits(&b[8..10]))
    else {
        return Err(DateProblem::Unreadable);
    };
    civil_days(y as i32, m, d).ok_or(DateProblem::Impossible)
}

/// The day number ([`to_days`]) of year `y`, month `m`, day `d` of the proleptic Gregorian
/// calendar, or `None` for a date that does not exist. Arithmetic only (days from the civil
/// date as in H. Hinnant, "chrono-Compatible Low-Level Date Algorithms"), checked against
/// chrono for every day of years 0 to 9999 in the tests.
fn civil_days(y: i32, m: u32, d: u32) -> Option<i32> {
    let leap = y % 4 == 0 && (y % 100 != 0 || y % 400 == 0);
    let month_days = match m {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        2 if leap => 29,
        2 => 28,
        _ => return None,
    };
    if d == 0 || d > month_days {
        return None;
    }
    let y = if m <= 2 { y - 1 } else { y };
    let era = y.div_euclid(400);
    let year_of_era = y - era * 400;
    let day_of_year = (153 * ((m as i32 + 9) % 12) + 2) / 5 + d as i32 - 1;
    let day_of_era = year_of_era * 365 + year_of_era / 4 - year_of_era / 100 + day_of_year;
    // Days from 1970-01-01, moved to days from the common era (0001-01-01 is day 1).
    Some(era * 146_097 + day_of_era - 719_468 + 719_163)
}

/// True for values shaped like `a/b/yyyy`, `a.b.yyyy` or `a-b-yyyy` (day and month in some order).
fn looks_numeric_dmy(v: &str) -> Option<(u32, u32)> {
    let parts: Vec<&str> = v.split(['/', '.', '-']).collect();
    if parts.len() != 3 || parts[2].len() < 2 || parts[0].len() > 2 || parts[1].len() > 2 {
        return None;
    }
    let p2 = parts[2].split([' ', 'T']).next().unwrap_or("");
    match (
        digits(parts[0].as_bytes()),
        digits(parts[1].as_bytes()),
        digits(p2.as_bytes()),
    ) {
        (Some(a), Some(b), Some(_)) => Some((a, b)),
        _ => None,
    }
}

/// Look at sample values of a date column read as ISO: if most of them are day/month/year
/// numbers, return the message that stops the load, with examples and the setting to add.
pub fn ambiguity_message(sample: &[&str]) -> Option<String> {
    let non_empty: Vec<&str> = sample
        .iter()
        .copied()
        .filter(|v| !v.trim().is_empty())
        .collect();
    let dmy: Vec<(&str, (u32, u32))> = non_empty
        .iter()
        .filter_map(|v| looks_numeric_dmy(v.trim()).map(|p| (*v, p)))
        .collect();
    if dmy.is_empty() || dmy.len() * 2 < non_empty.len() {
        return None;
    }
    let examples: Vec<String> = dmy
        .iter()
        .take(3)
        .map(|(v, _)| format!("\"{v}\""))
        .collect();
    let sep = dmy[0]
        .0
        .trim()
        .chars()
        .find(|c| matches!(c, '/' | '.' | '-'))
        .unwrap_or('/');
    let day_first_only = dmy.iter().find(|(_, (a, _))| *a > 12).map(|(v, _)| *v);
    let month_first_only = dmy.iter().find(|(_, (_, b))| *b > 12).map(|(v, _)| *v);
    let evidence = match (day_first_only, month_first_only) {
        (Some(v), None) => format!(" \"{v}\" fits only day-first."),
        (None, Some(v)) => format!(" \"{v}\" fits only month-first."),
        (Some(a), Some(b)) => {
            format!(" \"{a}\" fits only day-first but \"{b}\" only month-first: check the column.")
        }
        (None, None) => " Every value seen fits both orders.".to_string(),
    };
    Some(format!(
        "dates such as {} are not ISO 8601 (YYYY-MM-DD) and could be day-first or month-first; \
         hubwatch does not guess. Set the layout with --date-format \"%d{sep}%m{sep}%Y\" (day first) \
         or --date-format \"%m{sep}%d{sep}%Y\" (month first), or in a config file: [dates] format = \"%d{sep}%m{sep}%Y\".{evidence}",
        examples.join(", ")
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn iso_dates_and_impossible_ones() {
        let d = parse_iso("2024-03-01").unwrap();
        assert_eq!(iso(d), "2024-03-01");
        assert_eq!(parse_iso("2024-03-01T10:00:00").unwrap(), d);
        assert_eq!(parse_iso("2024-02-30"), Err(DateProblem::Impossible));
        // 2024 is a leap year, 2023 is not (Gregorian rule; common practice, no source).
        assert!(parse_iso("2024-02-29").is_ok());
        assert_eq!(parse_iso("2023-02-29"), Err(DateProblem::Impossible));
        assert_eq!(parse_iso("01/03/2024"), Err(DateProblem::Unreadable));
        assert_eq!(parse_iso("yesterday"), Err(DateProblem::Unreadable));
    }

    /// The direct writing of four-digit years agrees with chrono's `%Y-%m-%d` on every day
    /// from year -5 to 10005 (chrono is the reference formatter).
    #[test]
    fn iso_matches_the_general_formatter() {
        let from = to_days(NaiveDate::from_ymd_opt(-5, 1, 1).unwrap());
        let to = to_days(NaiveDate::from_ymd_opt(10005, 12, 31).unwrap());
        for days in (from..=to).step_by(7).chain([from, to, i32::MIN, i32::MAX]) {
            let want = from_days(days)
                .map(|d| d.format("%Y-%m-%d").to_string())
                .unwrap_or_default();
            assert_eq!(iso(days), want, "day {days}");
        }
    }

    /// The arithmetic day numbers agree with chrono's (the reference calendar) for every
    /// year 0 to 9999, month 0 to 13 and day 0 to 32: the same day, or both say the date does
    /// not exist.
    #[test]
    fn civil_days_match_chrono() {
        for y in 0..=9999 {
            for m in 0..=13 {
                for d in 0..=32 {
                    let want = NaiveDate::from_ymd_opt(y, m, d).map(to_days);
                    assert_eq!(civil_days(y, m, d), want, "{y}-{m}-{d}");
                }
            }
        }
    }

    #[test]
    fn configured_layout() {
        let p = DateParser::new("%d/%m/%Y", false);
        assert_eq!(iso(p.parse("13/04/2024").unwrap()), "2024-04-13");
        assert_eq!(p.parse("31/02/2024"), Err(DateProblem::Impossible));
        assert_eq!(p.parse("2024-04-13"), Err(DateProblem::Unreadable));
    }

    #[test]
    fn spreadsheet_serials() {
        let p = DateParser::new("", true);
        assert_eq!(iso(p.parse("45352").unwrap()), "2024-03-01");
        assert_eq!(iso(p.parse("2024-03-01").unwrap()), "2024-03-01");
    }

    #[test]
    fn ambiguous_columns_stop_with_examples() {
        let m = ambiguity_message(&["03/04/2024", "13/04/2024", ""]).unwrap();
        assert!(m.contains("\"03/04/2024\""), "{m}");
        assert!(m.contains("--date-format \"%d/%m/%Y\""), "{m}");
        assert!(m.contains("\"13/04/2024\" fits only day-first"), "{m}");
        assert!(ambiguity_message(&["2024-04-03", "2024-04-13"]).is_none());
        // One stray value among ISO dates is a field problem, not an ambiguous column.
        assert!(ambiguity_message(&["2024-04-03", "2024-04-13", "03/04/2024"]).is_none());
    }
}
