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

/// A value and its interval: "0.14 (95% CI 0.10 to 0.19)"; the interval is left out when
/// undefined.
pub fn with_interval(v: Stat, low: Stat, high: Stat, digits: usize) -> String {
    match (low, high) {
        (Ok(l), Ok(h)) if l.is_finite() && h.is_finite() => {
            format!("{} (95% CI {l:.digits$} to {h:.digits$})", show(v, digits))
        }
        _ => show(v, digits),
    }
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
    }
}
