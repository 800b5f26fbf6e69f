//! The one formatter of a statistic for people to read: a value with a fixed number of
//! decimals, a share as a percentage, a value with its interval; an undefined statistic in words
//! (text reports) or as a dash (tight dashboard cells).

use crate::metrics::Stat;

/// The value with `digits` decimals, or "undefined (reason)".
pub fn show(v: Stat, digits: usize) -> String {
    match v {
        Ok(x) => format!("{x:.digits$}"),
        Err(reason) => format!("undefined ({reason})"),
    }
}

/// The value with `digits` decimals, or "–" when undefined.
pub fn short(v: Stat, digits: usize) -> String {
    match v {
        Ok(x) if x.is_finite() => format!("{x:.digits$}"),
        _ => "–".to_string(),
    }
}

/// The value with `digits` decimals, "-" when not finite, "- (reason)" when undefined (the
/// outlook's tables, where a dash keeps the columns readable).
pub fn dashed(v: Stat, digits: usize) -> String {
    match v {
        Ok(x) if x.is_finite() => format!("{x:.digits$}"),
        Ok(_) => "-".to_string(),
        Err(why) => format!("- ({why})"),
    }
}

/// A share as a percentage with one decimal, or "–".
pub fn pct(v: Stat) -> String {
    match v {
        Ok(x) if x.is_finite() => format!("{:.1}%", 100.0 * x),
        _ => "–".to_string(),
    }
}

/// How a number of an interval reads.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Style {
    /// As [`show`]: an undefined end in words.
    Words,
    /// As [`short`]: an undefined end as a dash.
    Cell,
    /// A share as a percentage with `digits` decimals; an undefined end as a dash.
    Percent,
}

fn styled(v: Stat, digits: usize, style: Style) -> String {
    match style {
        Style::Words => show(v, digits),
        Style::Cell => short(v, digits),
        Style::Percent => match v {
            Ok(x) if x.is_finite() => format!("{:.digits$}%", 100.0 * x),
            _ => "–".to_string(),
        },
    }
}

/// The ends of an interval: "0.10 to 0.19" (every interval hubwatch prints reads this way).
pub fn range(low: Stat, high: Stat, digits: usize, style: Style) -> String {
    format!(
        "{} to {}",
        styled(low, digits, style),
        styled(high, digits, style)
    )
}

/// A value and its interval: "0.14 (95% CI 0.10 to 0.19)"; the interval is left out when
/// undefined.
pub fn with_interval(v: Stat, low: Stat, high: Stat, digits: usize) -> String {
    match (low, high) {
        (Ok(l), Ok(h)) if l.is_finite() && h.is_finite() => format!(
            "{} (95% CI {})",
            show(v, digits),
            range(low, high, digits, Style::Words)
        ),
        _ => show(v, digits),
    }
}

/// A value and its standard error: "0.123 ± 0.010"; the value alone (or its reason, as
/// [`show`]) when either is undefined. Text reports.
pub fn plus_minus(v: Stat, se: Stat, digits: usize) -> String {
    match (v, se) {
        (Ok(x), Ok(e)) => format!("{x:.digits$} ± {e:.digits$}"),
        (v, _) => show(v, digits),
    }
}

/// A value and its standard error in a tight cell: each side as [`short`] ("0.12 ± –").
pub fn plus_minus_short(v: Stat, se: Stat, digits: usize) -> String {
    format!("{} ± {}", short(v, digits), short(se, digits))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn undefined_values_say_why_or_show_a_dash() {
        assert_eq!(show(Ok(1.23456), 2), "1.23");
        assert_eq!(show(Err("no contacts"), 2), "undefined (no contacts)");
        assert_eq!(short(Err("x"), 2), "–");
        assert_eq!(pct(Ok(0.5)), "50.0%");
        assert_eq!(
            with_interval(Ok(0.5), Ok(0.25), Ok(0.75), 2),
            "0.50 (95% CI 0.25 to 0.75)"
        );
        assert_eq!(with_interval(Ok(0.5), Err("x"), Ok(0.75), 2), "0.50");
        assert_eq!(plus_minus(Ok(0.1234), Ok(0.01), 3), "0.123 ± 0.010");
        assert_eq!(plus_minus(Ok(0.1234), Err("x"), 3), "0.123");
        assert_eq!(
            plus_minus(Err("no pairs"), Ok(0.1), 3),
            "undefined (no pairs)"
        );
        assert_eq!(range(Ok(0.1), Err("x"), 2, Style::Cell), "0.10 to –");
        assert_eq!(
            range(Ok(0.1), Ok(0.25), 1, Style::Percent),
            "10.0% to 25.0%"
        );
        assert_eq!(plus_minus_short(Ok(0.5), Err("x"), 2), "0.50 ± –");
    }
}
