//! The value rules every table of a load shares: missing-value codes, IDs trimmed and put
//! into Unicode NFC, and the bounds of plausible dates and durations.

use super::ledger::QuarantineReason;
use super::reconcile::trimmed;

/// What a value of an ID column holds.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum IdValue<'a> {
    /// Empty or blank.
    Blank,
    /// One of the missing-value codes (as written, trimmed).
    Code(&'a str),
    /// An ID: trimmed, in Unicode NFC (the bool: normalisation changed it).
    Id(std::borrow::Cow<'a, str>, bool),
}

impl IdValue<'_> {
    /// Why a row with this value in the ID field `field` cannot be used: blank, or a
    /// missing-value code; `None` for an ID.
    pub fn missing(&self, field: &str) -> Option<QuarantineReason> {
        let field = field.to_string();
        match self {
            IdValue::Blank => Some(QuarantineReason::MissingId { field }),
            IdValue::Code(c) => Some(QuarantineReason::MissingValueCode {
                field,
                code: c.to_string(),
            }),
            IdValue::Id(..) => None,
        }
    }
}

/// Value rules shared by every table of a load: missing-value codes, ID normalisation, and
/// the bounds of plausible dates and durations.
#[derive(Debug, Clone)]
pub struct Rules {
    /// Missing-value codes, lower-cased.
    missing: Vec<String>,
    /// Longest code, in bytes (longer values are never codes).
    longest: usize,
    /// Bit `n` set when some ASCII code is `n` bytes long (an ASCII value of another length
    /// is no code).
    ascii_lengths: u64,
    /// Bit `b` set when some ASCII code starts with byte `b` (lower case): an ASCII value
    /// starting with another byte, in either case, is no code.
    ascii_firsts: u128,
    /// Day number of the oldest plausible date.
    pub oldest_day: i32,
    /// Largest plausible duration, minutes.
    pub max_minutes: f64,
}

impl Rules {
    /// Rules from the missing-value codes, the oldest plausible day and the largest duration.
    pub fn new(codes: &[String], oldest_day: i32, max_minutes: f64) -> Rules {
        let missing: Vec<String> = codes
            .iter()
            .map(|c| c.trim().to_lowercase())
            .filter(|c| !c.is_empty())
            .collect();
        Rules {
            longest: missing.iter().map(String::len).max().unwrap_or(0),
            ascii_lengths: missing
                .iter()
                .filter(|c| c.is_ascii() && c.len() < 64)
                .fold(0, |m, c| m | 1 << c.len()),
            ascii_firsts: missing
                .iter()
                .filter(|c| c.is_ascii())
                .fold(0, |m, c| m | 1 << c.as_bytes()[0]),
            missing,
            oldest_day,
            max_minutes,
        }
    }

    /// True when `v` (trimmed) is a missing-value code.
    pub fn is_code(&self, v: &str) -> bool {
        if v.len() > self.longest {
            return false;
        }
        if v.is_ascii() {
            let first = v.as_bytes().first().map_or(0, u8::to_ascii_lowercase);
            return (v.len() >= 64 || self.ascii_lengths & (1 << v.len()) != 0)
                && self.ascii_firsts & (1 << first) != 0
                && self.missing.iter().any(|c| v.eq_ignore_ascii_case(c));
        }
        let lower = v.to_lowercase();
        self.missing.contains(&lower)
    }

    /// The value, trimmed; `None` when blank or a missing-value code.
    pub fn value<'a>(&self, v: Option<&'a str>) -> Option<&'a str> {
        trimmed(v).filter(|s| !self.is_code(s))
    }

    /// An ID value: blank, a missing-value code, or the ID trimmed and in NFC (UAX #15), so
    /// that the same name typed in composed and decomposed form is one person.
    pub fn id<'a>(&self, v: Option<&'a str>) -> IdValue<'a> {
        let Some(s) = trimmed(v) else {
            return IdValue::Blank;
        };
        if self.is_code(s) {
            return IdValue::Code(s);
        }
        if s.is_ascii() {
            return IdValue::Id(std::borrow::Cow::Borrowed(s), false);
        }
        use unicode_normalization::{is_nfc_quick, IsNormalized, UnicodeNormalization};
        if is_nfc_quick(s.chars()) == IsNormalized::Yes {
            return IdValue::Id(std::borrow::Cow::Borrowed(s), false);
        }
        let n: String = s.nfc().collect();
        let changed = n != s;
        IdValue::Id(std::borrow::Cow::Owned(n), changed)
    }
}

impl Default for Rules {
    fn default() -> Self {
        Rules::new(&[], i32::MIN, f64::INFINITY)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Codes match whatever their case and length, ASCII or not, long or short; a value of a
    /// length no code has, or starting with a letter no code starts with, is never one. (The
    /// reader's own rule: no external source.)
    #[test]
    fn codes_of_every_length() {
        let long = "x".repeat(70);
        let codes = ["NA", "Unknown", "non renseigné", long.as_str()].map(String::from);
        let r = Rules::new(&codes, 0, 1.0);
        for v in [
            "na",
            "NA",
            "unknown",
            "UNKNOWN",
            "Non Renseigné",
            long.as_str(),
        ] {
            assert!(r.is_code(v), "{v}");
        }
        let longer = "x".repeat(71);
        for v in [
            "n",
            "nan",
            "MA",
            "Pnknown",
            "unknow",
            "non renseigne",
            longer.as_str(),
            &long[1..],
        ] {
            assert!(!r.is_code(v), "{v}");
        }
        assert!(!Rules::new(&[], 0, 1.0).is_code(""));
    }
}
