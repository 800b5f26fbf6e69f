//! Settings: the column synonyms, CSV reading options, date layout and ID rules.
//!
//! Defaults live in `config/default.toml`, compiled into the binary, so the file the user
//! copies and the behaviour they get never drift apart. A user file is laid over the defaults
//! key by key; unknown keys are rejected.

use std::collections::BTreeMap;
use std::path::Path;

use encoding_rs::{Encoding, UTF_16BE, UTF_16LE, WINDOWS_1252};
use serde::Deserialize;

use crate::error::{Error, Result};

/// The default configuration, as shipped in `config/default.toml`.
pub const DEFAULT_TOML: &str = include_str!("../config/default.toml");

/// Every canonical field hubwatch understands, people fields first.
pub const PEOPLE_FIELDS: [&str; 9] = [
    "person_id",
    "role",
    "onset_date",
    "report_date",
    "status",
    "area",
    "age_group",
    "followup_status",
    "household_id",
];

/// Canonical fields of the exposures table.
pub const EXPOSURE_FIELDS: [&str; 7] = [
    "source_id",
    "target_id",
    "exposure_date",
    "first_exposure_date",
    "setting",
    "duration_min",
    "transmission",
];

/// The complete configuration.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Config {
    /// Canonical field name -> header synonyms, in order of preference.
    pub columns: BTreeMap<String, Vec<String>>,
    /// Delimited-text options.
    pub csv: CsvConfig,
    /// Date layout.
    pub dates: DatesConfig,
    /// ID handling.
    pub ids: IdsConfig,
    /// Encodings, file roles, missing-value codes and reading limits.
    pub input: InputConfig,
    /// The dashboard.
    pub dashboard: DashboardConfig,
    /// The workspace.
    pub workspace: WorkspaceConfig,
}

/// Workspace settings.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct WorkspaceConfig {
    /// Snapshots of loads kept (the newest; at least 2).
    pub keep_snapshots: usize,
    /// Places at the top of the list whose entries and exits `changes` reports.
    pub changes_top: usize,
}

/// Dashboard settings.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DashboardConfig {
    /// "dark", "light" or "mono".
    pub theme: String,
    /// Reach curves follow at most this many people per strategy.
    pub reach_limit: usize,
    /// Repeats of the random strategies.
    pub reach_repeats: usize,
}

/// How delimited text is read.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CsvConfig {
    /// "auto", a one-character separator, or "whitespace".
    pub separator: String,
    /// Comment prefix; empty for none.
    pub comment_prefix: String,
    /// "auto", "yes" or "no".
    pub header: String,
}

/// How dates are parsed.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DatesConfig {
    /// strftime layout, or empty for ISO 8601.
    pub format: String,
    /// A date more than this many years before the as-of date is implausible.
    pub oldest_years: u32,
}

/// How inputs are read: encoding, roles, missing-value codes, limits.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct InputConfig {
    /// "auto" or an encoding label (utf-8, utf-16le, windows-1252, iso-8859-1, …).
    pub encoding: String,
    /// Values that mean "missing" in any field (compared ignoring case and surrounding
    /// spaces); an empty value is always missing.
    pub missing_values: Vec<String>,
    /// File names (or paths) that are people tables whatever their columns.
    pub people: Vec<String>,
    /// File names (or paths) that are exposures tables whatever their columns.
    pub exposures: Vec<String>,
    /// A line longer than this many bytes is quarantined without being held whole.
    pub max_line_bytes: u64,
    /// A compressed file that expands past this many bytes is refused.
    pub max_decompressed_bytes: u64,
    /// A duration above this many minutes is implausible (a field problem).
    pub max_duration_min: f64,
}

/// How person IDs are compared.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct IdsConfig {
    /// Whether "p01" and "P01" are different people.
    pub case_sensitive: bool,
}

impl Default for Config {
    fn default() -> Self {
        // The shipped file is checked by a unit test, so this cannot fail at run time.
        toml::from_str(DEFAULT_TOML).expect("config/default.toml is valid")
    }
}

/// Parse built-in defaults and lay the user's file (if any) over them, key by key.
pub(crate) fn layered(defaults: &str, what: &str, user_file: Option<&Path>) -> Result<toml::Table> {
    let mut merged: toml::Table =
        toml::from_str(defaults).map_err(|e| Error::Config(format!("built-in {what}: {e}")))?;
    if let Some(path) = user_file {
        let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
        let user: toml::Table =
            toml::from_str(&text).map_err(|e| Error::Config(format!("{}: {e}", path.display())))?;
        overlay(&mut merged, user);
    }
    Ok(merged)
}

impl Config {
    /// Load the defaults, then lay the user's file (if any) over them.
    pub fn load(user_file: Option<&Path>) -> Result<Config> {
        let merged = layered(DEFAULT_TOML, "defaults", user_file)?;
        let config: Config = toml::Value::Table(merged).try_into().map_err(|e| {
            let file = user_file
                .map(|p| p.display().to_string())
                .unwrap_or_default();
            Error::Config(format!("{file}: {e}"))
        })?;
        config.validate()?;
        Ok(config)
    }

    /// Check values that serde cannot: known field names, separator spelling.
    pub fn validate(&self) -> Result<()> {
        for field in self.columns.keys() {
            if !PEOPLE_FIELDS.contains(&field.as_str())
                && !EXPOSURE_FIELDS.contains(&field.as_str())
            {
                return Err(Error::Config(format!(
                    "[columns] has unknown field `{field}`; known fields: {}, {}",
                    PEOPLE_FIELDS.join(", "),
                    EXPOSURE_FIELDS.join(", ")
                )));
            }
        }
        Separator::parse_setting(&self.csv.separator)?;
        EncodingSetting::parse(&self.input.encoding)?;
        if self.input.max_line_bytes < 64 {
            return Err(Error::Config(
                "[input] max_line_bytes must be at least 64".into(),
            ));
        }
        if self.input.max_duration_min.is_nan() || self.input.max_duration_min <= 0.0 {
            return Err(Error::Config(
                "[input] max_duration_min must be above 0".into(),
            ));
        }
        if !matches!(self.dashboard.theme.as_str(), "dark" | "light" | "mono") {
            return Err(Error::Config(format!(
                "[dashboard] theme = \"{}\": use \"dark\", \"light\" or \"mono\"",
                self.dashboard.theme
            )));
        }
        if !matches!(self.csv.header.as_str(), "auto" | "yes" | "no") {
            return Err(Error::Config(format!(
                "[csv] header = \"{}\": use \"auto\", \"yes\" or \"no\"",
                self.csv.header
            )));
        }
        Ok(())
    }

    /// The synonyms of one canonical field (empty if none are configured).
    pub fn synonyms(&self, field: &str) -> &[String] {
        self.columns.get(field).map(Vec::as_slice).unwrap_or(&[])
    }
}

/// Lay `user` over `base`: tables merge key by key, any other value replaces.
fn overlay(base: &mut toml::Table, user: toml::Table) {
    for (key, value) in user {
        match (base.get_mut(&key), value) {
            (Some(toml::Value::Table(b)), toml::Value::Table(u)) => overlay(b, u),
            (_, v) => {
                base.insert(key, v);
            }
        }
    }
}

/// How fields are separated on a line.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Separator {
    /// One byte: `,` `;` `\t` `|` or a single space.
    Byte(u8),
    /// Runs of spaces and tabs, leading and trailing ones ignored (sensor-study exports).
    Whitespace,
}

impl Separator {
    /// Parse the `[csv] separator` setting; `None` means "auto".
    pub fn parse_setting(s: &str) -> Result<Option<Separator>> {
        Ok(Some(match s {
            "auto" | "" => return Ok(None),
            "," => Separator::Byte(b','),
            ";" => Separator::Byte(b';'),
            "\t" | "\\t" | "tab" => Separator::Byte(b'\t'),
            "|" => Separator::Byte(b'|'),
            " " | "space" => Separator::Byte(b' '),
            "whitespace" => Separator::Whitespace,
            other => {
                return Err(Error::Config(format!(
                    "separator \"{other}\" is not supported: use auto, \",\", \";\", \"\\t\", \"|\", \" \" or whitespace"
                )))
            }
        }))
    }

    /// A short human name, for reports.
    pub fn describe(self) -> &'static str {
        match self {
            Separator::Byte(b',') => "comma",
            Separator::Byte(b';') => "semicolon",
            Separator::Byte(b'\t') => "tab",
            Separator::Byte(b'|') => "pipe",
            Separator::Byte(b' ') => "single space",
            Separator::Byte(_) => "other",
            Separator::Whitespace => "whitespace",
        }
    }
}

/// The encoding setting: decide by the bytes, or a named encoding.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EncodingSetting {
    /// A byte-order mark, else UTF-8 when the bytes are valid UTF-8, else detection.
    Auto,
    /// ISO-8859-1 in the strict sense: every byte is the code point of the same number.
    Latin1,
    /// An encoding known to the WHATWG Encoding Standard.
    Named(&'static Encoding),
}

impl EncodingSetting {
    /// Parse `auto` or an encoding label (`utf-8`, `utf-16le`, `utf-16be`, `windows-1252`,
    /// `cp1252`, `iso-8859-1`, `latin1`, `iso-8859-15`, …).
    pub fn parse(label: &str) -> Result<EncodingSetting> {
        let l = label.trim().to_ascii_lowercase();
        match l.as_str() {
            "" | "auto" => Ok(EncodingSetting::Auto),
            "iso-8859-1" | "iso8859-1" | "latin1" | "latin-1" | "l1" => Ok(EncodingSetting::Latin1),
            "cp1252" => Ok(EncodingSetting::Named(WINDOWS_1252)),
            "utf16le" => Ok(EncodingSetting::Named(UTF_16LE)),
            "utf16be" => Ok(EncodingSetting::Named(UTF_16BE)),
            _ => Encoding::for_label(l.as_bytes())
                .map(EncodingSetting::Named)
                .ok_or_else(|| {
                    Error::Config(format!(
                        "encoding \"{label}\" is not known: use auto, utf-8, utf-16le, utf-16be, windows-1252, iso-8859-1 or another WHATWG label"
                    ))
                }),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use encoding_rs::WINDOWS_1252;

    #[test]
    fn labels_parse() {
        assert_eq!(
            EncodingSetting::parse("auto").unwrap(),
            EncodingSetting::Auto
        );
        assert_eq!(
            EncodingSetting::parse("Latin1").unwrap(),
            EncodingSetting::Latin1
        );
        assert_eq!(
            EncodingSetting::parse("cp1252").unwrap(),
            EncodingSetting::Named(WINDOWS_1252)
        );
        assert!(EncodingSetting::parse("klingon").is_err());
    }

    #[test]
    fn shipped_defaults_parse_and_validate() {
        let c = Config::load(None).unwrap();
        assert!(c.synonyms("person_id").iter().any(|s| s == "person_id"));
        for f in PEOPLE_FIELDS.iter().chain(EXPOSURE_FIELDS.iter()) {
            assert!(!c.synonyms(f).is_empty(), "no synonyms for {f}");
        }
    }

    #[test]
    fn user_file_overrides_one_key_and_rejects_unknown_keys() {
        let dir = tempfile::tempdir().unwrap();
        let good = dir.path().join("good.toml");
        std::fs::write(&good, "[dates]\nformat = \"%d/%m/%Y\"\n").unwrap();
        let c = Config::load(Some(&good)).unwrap();
        assert_eq!(c.dates.format, "%d/%m/%Y");
        assert!(c.ids.case_sensitive);

        let bad = dir.path().join("bad.toml");
        std::fs::write(&bad, "[dates]\nfromat = \"%d\"\n").unwrap();
        let err = Config::load(Some(&bad)).unwrap_err().to_string();
        assert!(err.contains("bad.toml") && err.contains("fromat"), "{err}");

        let badfield = dir.path().join("badfield.toml");
        std::fs::write(&badfield, "[columns]\nperson = [\"x\"]\n").unwrap();
        let err = Config::load(Some(&badfield)).unwrap_err().to_string();
        assert!(err.contains("unknown field `person`"), "{err}");
    }
}
