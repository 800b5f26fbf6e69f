//! `hubwatch sql`: the reader's rules written as SQL, for an engine that already holds the raw
//! tables (DuckDB, Spark SQL). Run there, the script makes the aggregate tables that
//! [`super::aggregates`] reads back: the ledger, the people (ID -> node), the contact pairs and
//! the degree tables. The rules are the ones this module's neighbours apply to a file: IDs
//! trimmed, blank or a missing-value code -> quarantined, both ends the same person ->
//! quarantined, IDs in Unicode NFC, ISO 8601 dates checked for shape, calendar, the as-of date
//! and the oldest plausible day, minutes checked as numbers, settings compared without case,
//! unordered pairs merged with their rows, dates, minutes, settings and links.
//!
//! What an engine table cannot give is stated, not guessed: a table has no lines, so a row's
//! place is the `--row-order` column (or the engine's own row order), and the day/month
//! ambiguity check of a file does not apply (such values are counted as unreadable dates).

mod network;
mod rows;
mod text;

use super::mapping::ColumnRef;
use super::view::View;
use crate::config::{Config, EXPOSURE_FIELDS, PEOPLE_FIELDS};
use crate::error::{Error, Result};
use text::{Mapped, Rules, W};

/// The version of the aggregate tables' layout (written into `meta`, checked on reading).
pub const LAYOUT_VERSION: &str = "1";

/// The SQL dialect to write.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Dialect {
    /// DuckDB (1.x and later).
    DuckDb,
    /// Spark SQL (3.5 and later; Unicode normalisation through the ICU library Spark 4 ships).
    Spark,
}

impl Dialect {
    /// Parse `duckdb` or `spark`.
    pub fn parse(s: &str) -> Result<Dialect> {
        match s.to_ascii_lowercase().as_str() {
            "duckdb" => Ok(Dialect::DuckDb),
            "spark" => Ok(Dialect::Spark),
            other => Err(Error::Usage(format!(
                "--dialect {other}: expected duckdb or spark"
            ))),
        }
    }

    /// The name written into the tables' metadata.
    pub fn name(self) -> &'static str {
        match self {
            Dialect::DuckDb => "duckdb",
            Dialect::Spark => "spark",
        }
    }
}

/// One raw table in the engine.
#[derive(Debug, Clone)]
pub struct TableSpec {
    /// The table's name as the engine knows it (used as written: it may be qualified).
    pub name: String,
    /// The table's columns, where given (`--exposures-columns`); the mapping is then made the
    /// way a file's header is mapped, and quarantined rows show every column.
    pub columns: Option<Vec<String>>,
}

/// Everything the script depends on.
#[derive(Debug, Clone)]
pub struct SqlRequest {
    /// The dialect.
    pub dialect: Dialect,
    /// The exposures table.
    pub exposures: TableSpec,
    /// The people table, if any.
    pub people: Option<TableSpec>,
    /// A column of both tables that gives each row's place in the export (a line number).
    pub row_order: Option<String>,
    /// `--column` overrides.
    pub overrides: Vec<(String, ColumnRef)>,
    /// The as-of date (day number): later dates are future dates.
    pub as_of: i32,
    /// The sub-network whose pairs the tables hold (the ledger counts every row).
    pub view: View,
    /// Where the engine writes the Parquet tables (none: the script only makes the tables).
    pub parquet_dir: Option<String>,
}

/// The aggregate tables, in the order the script writes them (file names without `.parquet`).
pub const TABLES: [&str; 13] = [
    "meta",
    "ledger",
    "quarantine",
    "problems",
    "nodes",
    "settings",
    "pairs",
    "pair_settings",
    "spans",
    "days",
    "degrees",
    "joint",
    "neighbour_sums",
];

/// Unicode White_Space: the characters Rust's `str::trim` removes, as code points.
pub(super) const WHITE_SPACE: [u32; 25] = [
    0x09, 0x0A, 0x0B, 0x0C, 0x0D, 0x20, 0x85, 0xA0, 0x1680, 0x2000, 0x2001, 0x2002, 0x2003, 0x2004,
    0x2005, 0x2006, 0x2007, 0x2008, 0x2009, 0x200A, 0x2028, 0x2029, 0x202F, 0x205F, 0x3000,
];

/// The largest finite double: a value above it is +infinity (portable across both engines).
pub(super) const MAX_DOUBLE: &str = "1.7976931348623157E308";
/// The SQL script.
pub fn generate(req: &SqlRequest, config: &Config) -> Result<String> {
    if !config.dates.format.is_empty() {
        return Err(Error::Usage(format!(
            "the SQL reads dates in ISO 8601 (YYYY-MM-DD) only; this configuration reads \
             dates as {:?} ([dates] format): convert the dates in the engine first",
            config.dates.format
        )));
    }
    let w = W { d: req.dialect };
    let rules = super::rules(config, req.as_of);
    let r = Rules {
        codes: config
            .input
            .missing_values
            .iter()
            .map(|c| c.trim().to_lowercase())
            .filter(|c| !c.is_empty())
            .collect(),
        as_of: super::dates::iso(req.as_of),
        oldest: super::dates::iso(rules.oldest_day),
        max_minutes: rules.max_minutes,
        case_sensitive: config.ids.case_sensitive,
    };
    let ex = Mapped::new(
        &req.exposures,
        config,
        &req.overrides,
        &EXPOSURE_FIELDS,
        &["source_id", "target_id"],
    )?;
    let people = match &req.people {
        Some(p) => Some((
            p,
            Mapped::new(p, config, &req.overrides, &PEOPLE_FIELDS, &["person_id"])?,
        )),
        None => None,
    };
    let mut s = String::new();
    s.push_str(&header(req, &ex, people.as_ref().map(|p| &p.1)));
    s.push_str(&rows::exposure_rows(&w, &r, req, &ex));
    let attrs = match &people {
        Some((spec, pm)) => {
            let (sql, attrs) = rows::people_rows(&w, &r, req, spec, pm);
            s.push_str(&sql);
            attrs
        }
        None => {
            s.push_str(&w.create(
                "hw_p",
                &format!(
                    "SELECT CAST(NULL AS BIGINT) AS ord, CAST(NULL AS {t}) AS id, CAST(NULL AS {t}) AS key WHERE 1 = 0",
                    t = w.text()
                ),
            ));
            Vec::new()
        }
    };
    s.push_str(&network::nodes(&w, &attrs));
    s.push_str(&network::pairs(&w, req));
    s.push_str(&network::degrees(&w, &attrs));
    s.push_str(&network::ledger(&w, people.is_some()));
    s.push_str(&meta(&w, req, &r, &ex, people.as_ref().map(|p| &p.1)));
    if let Some(dir) = &req.parquet_dir {
        s.push_str(
            "-- The aggregate tables as Parquet, for `hubwatch summary --aggregates DIR`.\n",
        );
        for t in TABLES {
            s.push_str(&w.write(dir, t));
        }
    }
    Ok(s)
}

fn header(req: &SqlRequest, ex: &Mapped, people: Option<&Mapped>) -> String {
    let mapping = |m: &Mapped| {
        m.mapping
            .fields
            .keys()
            .map(|f| format!("{f} = {}", m.header(f).unwrap_or_default()))
            .collect::<Vec<_>>()
            .join(", ")
    };
    let mut h = format!(
        "-- hubwatch aggregate tables, layout {LAYOUT_VERSION}, dialect {}.\n\
         -- Exposures: {} ({}).\n",
        req.dialect.name(),
        req.exposures.name,
        mapping(ex)
    );
    if let (Some(p), Some(pm)) = (&req.people, people) {
        h.push_str(&format!("-- People: {} ({}).\n", p.name, mapping(pm)));
    }
    h.push_str(&format!(
        "-- As of {}; network: {}.\n-- Each statement ends with a semicolon at the end of a line.\n\n",
        super::dates::iso(req.as_of),
        req.view.describe()
    ));
    h
}

fn meta(w: &W, req: &SqlRequest, r: &Rules, ex: &Mapped, people: Option<&Mapped>) -> String {
    let mut rows: Vec<(String, String)> = vec![
        ("layout".into(), LAYOUT_VERSION.into()),
        ("dialect".into(), req.dialect.name().into()),
        ("as_of".into(), r.as_of.clone()),
        ("oldest_day".into(), r.oldest.clone()),
        ("max_minutes".into(), format!("{:?}", r.max_minutes)),
        ("case_sensitive".into(), r.case_sensitive.to_string()),
        ("exposures_table".into(), req.exposures.name.clone()),
        (
            "row_order".into(),
            req.row_order.clone().unwrap_or_else(|| "engine".into()),
        ),
        ("view".into(), req.view.describe()),
        ("view_settings".into(), req.view.settings.join("\u{1f}")),
        (
            "view_exclude_settings".into(),
            req.view.exclude_settings.join("\u{1f}"),
        ),
        (
            "view_from".into(),
            req.view.from.map(super::dates::iso).unwrap_or_default(),
        ),
        (
            "view_to".into(),
            req.view.to.map(super::dates::iso).unwrap_or_default(),
        ),
    ];
    for f in ex.mapping.fields.keys() {
        rows.push((format!("exposures:{f}"), ex.header(f).unwrap_or_default()));
    }
    if let (Some(p), Some(pm)) = (&req.people, people) {
        rows.push(("people_table".into(), p.name.clone()));
        for f in pm.mapping.fields.keys() {
            rows.push((format!("people:{f}"), pm.header(f).unwrap_or_default()));
        }
    }
    let values: Vec<String> = rows
        .iter()
        .map(|(k, v)| format!("({}, {})", w.lit(k), w.lit(v)))
        .collect();
    w.create(
        "hw_meta",
        &format!(
            "SELECT * FROM (VALUES {}) AS m(key, value)",
            values.join(",\n  ")
        ),
    )
}
