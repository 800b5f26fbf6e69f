//! Network statistics: pure functions over the finished graph (no IO, no polars).
//!
//! Conventions (from the methods sheet the project follows): population moments over all N
//! people, isolated people included; a result that is 0/0 or otherwise undefined is a
//! [`Stat`] error carrying the reason, never 0, never NaN, never a panic; comparisons that
//! decide ties are made in integers.

pub mod casedata;
pub mod cases;
pub mod degree;
pub mod fits;
pub mod mixing;
pub mod neighbours;
pub mod network;
pub mod outlook;
pub mod reach;
pub mod structure;

/// A statistic that may be undefined; the error is the reason, in words.
pub type Stat = Result<f64, &'static str>;

/// Insert `key: value`, or `key: null` and `key_undefined: reason`, into a JSON object.
pub fn put(obj: &mut serde_json::Map<String, serde_json::Value>, key: &str, v: Stat) {
    match v {
        Ok(x) if x.is_finite() => {
            obj.insert(key.to_string(), serde_json::json!(x));
        }
        Ok(_) => {
            obj.insert(key.to_string(), serde_json::Value::Null);
            obj.insert(format!("{key}_undefined"), "not a finite number".into());
        }
        Err(reason) => {
            obj.insert(key.to_string(), serde_json::Value::Null);
            obj.insert(format!("{key}_undefined"), reason.into());
        }
    }
}
