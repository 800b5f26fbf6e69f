//! Which exposure rows form the network: a sub-network by setting and by date. The people stay
//! the same (N does not change) and the ledger still accounts for every row.

use super::dates;
use super::reconcile::NO_DATE;
use super::rows::ExposureRows;
use crate::error::{Error, Result};

/// A sub-network: exposure rows kept by setting and by date. The people stay the same (N does
/// not change); the ledger always accounts for every input row.
#[derive(Debug, Clone, Default, PartialEq, Eq, serde::Serialize)]
pub struct View {
    /// Keep only rows whose setting is one of these (case-insensitive); empty = any.
    pub settings: Vec<String>,
    /// Drop rows whose setting is one of these.
    pub exclude_settings: Vec<String>,
    /// First day of the exposure-date window (rows without a date fall outside any window).
    pub from: Option<i32>,
    /// Last day of the window.
    pub to: Option<i32>,
}

impl View {
    /// True when every row is kept.
    pub fn is_all(&self) -> bool {
        *self == View::default()
    }

    /// A short description for reports.
    pub fn describe(&self) -> String {
        let mut parts = Vec::new();
        if !self.settings.is_empty() {
            parts.push(format!("setting {}", self.settings.join(" or ")));
        }
        if !self.exclude_settings.is_empty() {
            parts.push(format!(
                "every setting but {}",
                self.exclude_settings.join(", ")
            ));
        }
        match (self.from, self.to) {
            (Some(a), Some(b)) => {
                parts.push(format!("exposures {} to {}", dates::iso(a), dates::iso(b)))
            }
            (Some(a), None) => parts.push(format!("exposures from {}", dates::iso(a))),
            (None, Some(b)) => parts.push(format!("exposures until {}", dates::iso(b))),
            (None, None) => {}
        }
        if parts.is_empty() {
            "all exposures".into()
        } else {
            parts.join("; ")
        }
    }
}

/// The code of a setting label (case-insensitive; code c is `labels[c - 1]`), or an error
/// naming the export's settings.
pub fn setting_code(labels: &[String], name: &str) -> Result<u16> {
    labels
        .iter()
        .position(|l| l.eq_ignore_ascii_case(name))
        .map(|i| (i + 1) as u16)
        .ok_or_else(|| {
            Error::Usage(format!(
                "no exposure has setting \"{name}\"; settings in this export: {}",
                labels.join(", ")
            ))
        })
}

/// Which rows of `rows` the view keeps; unknown setting names are an error naming the known ones.
pub fn mask(view: &View, rows: &ExposureRows, labels: &[String]) -> Result<Vec<bool>> {
    let code_of = |name: &String| setting_code(labels, name);
    let include: Vec<u16> = view.settings.iter().map(code_of).collect::<Result<_>>()?;
    let exclude: Vec<u16> = view
        .exclude_settings
        .iter()
        .map(code_of)
        .collect::<Result<_>>()?;
    Ok((0..rows.keys.len())
        .map(|r| {
            let code = rows.fields.setting.get(r).copied().unwrap_or(0);
            if (!include.is_empty() && !include.contains(&code)) || exclude.contains(&code) {
                return false;
            }
            if view.from.is_none() && view.to.is_none() {
                return true;
            }
            let last = rows.fields.last.get(r).copied().unwrap_or(NO_DATE);
            let day = if last != NO_DATE {
                last
            } else {
                rows.fields.first.get(r).copied().unwrap_or(NO_DATE)
            };
            day != NO_DATE && view.from.is_none_or(|f| day >= f) && view.to.is_none_or(|t| day <= t)
        })
        .collect())
}
