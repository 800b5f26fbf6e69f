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

use super::mapping::{self, ColumnRef, Mapping};
use super::view::View;
use crate::config::{Config, EXPOSURE_FIELDS, PEOPLE_FIELDS};
use crate::error::{Error, Result};

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

/// Unicode White_Space, the characters Rust's `str::trim` removes (both engines' regular
/// expressions read `\x{..}`).
const WS: &str = r"[\t\n\x{0B}\f\r \x{85}\x{A0}\x{1680}\x{2000}-\x{200A}\x{2028}\x{2029}\x{202F}\x{205F}\x{3000}]";

/// The largest finite double: a value above it is +infinity (portable across both engines).
const MAX_DOUBLE: &str = "1.7976931348623157E308";

/// Writes SQL text in one dialect.
struct W {
    d: Dialect,
}

impl W {
    fn lit(&self, s: &str) -> String {
        match self.d {
            Dialect::DuckDb => format!("'{}'", s.replace('\'', "''")),
            Dialect::Spark => format!("'{}'", s.replace('\\', "\\\\").replace('\'', "\\'")),
        }
    }

    fn ident(&self, s: &str) -> String {
        match self.d {
            Dialect::DuckDb => format!("\"{}\"", s.replace('"', "\"\"")),
            Dialect::Spark => format!("`{}`", s.replace('`', "``")),
        }
    }

    fn text(&self) -> &'static str {
        match self.d {
            Dialect::DuckDb => "VARCHAR",
            Dialect::Spark => "STRING",
        }
    }

    /// The value trimmed like `str::trim`; NULL when blank.
    fn trimmed(&self, expr: &str) -> String {
        let pat = self.lit(&format!("^{WS}+|{WS}+$"));
        let cast = format!("CAST({expr} AS {})", self.text());
        match self.d {
            Dialect::DuckDb => format!("NULLIF(regexp_replace({cast}, {pat}, '', 'g'), '')"),
            Dialect::Spark => format!("NULLIF(regexp_replace({cast}, {pat}, ''), '')"),
        }
    }

    /// Unicode NFC of a value.
    fn nfc(&self, expr: &str) -> String {
        match self.d {
            Dialect::DuckDb => format!("nfc_normalize({expr})"),
            // ICU4J ships with Spark 4; `compose(s, false)` is NFC.
            Dialect::Spark => format!(
                "CASE WHEN {expr} IS NULL THEN NULL \
                 ELSE reflect('com.ibm.icu.text.Normalizer', 'compose', {expr}, false) END"
            ),
        }
    }

    fn regex_match(&self, expr: &str, pattern: &str) -> String {
        let p = self.lit(pattern);
        match self.d {
            Dialect::DuckDb => format!("regexp_matches({expr}, {p})"),
            Dialect::Spark => format!("({expr} RLIKE {p})"),
        }
    }

    fn create(&self, name: &str, select: &str) -> String {
        match self.d {
            Dialect::DuckDb => format!("CREATE OR REPLACE TEMP TABLE {name} AS\n{select};\n\n"),
            Dialect::Spark => {
                format!("CREATE OR REPLACE TEMPORARY VIEW {name} AS\n{select};\n\n")
            }
        }
    }

    /// Materialise a table that later steps read several times (Spark recomputes a view).
    fn keep(&self, name: &str) -> String {
        match self.d {
            Dialect::DuckDb => String::new(),
            Dialect::Spark => format!("CACHE TABLE {name};\n\n"),
        }
    }

    fn write(&self, dir: &str, table: &str) -> String {
        match self.d {
            Dialect::DuckDb => format!(
                "COPY hw_{table} TO {} (FORMAT PARQUET);\n",
                self.lit(&format!("{}/{table}.parquet", dir.trim_end_matches('/')))
            ),
            Dialect::Spark => format!(
                "INSERT OVERWRITE DIRECTORY {} USING parquet SELECT * FROM hw_{table};\n",
                self.lit(&format!("{}/{table}", dir.trim_end_matches('/')))
            ),
        }
    }

    /// The row's place: the given column, else the engine's own row order.
    fn order(&self, col: Option<&str>) -> String {
        match (col, self.d) {
            (Some(c), _) => format!("CAST({} AS BIGINT)", self.ident(c)),
            (None, Dialect::DuckDb) => "row_number() OVER ()".into(),
            (None, Dialect::Spark) => "monotonically_increasing_id()".into(),
        }
    }
}

/// A mapped table: the columns known, the mapping, and the SQL expression of each field.
struct Mapped {
    columns: Vec<String>,
    mapping: Mapping,
}

impl Mapped {
    fn new(
        spec: &TableSpec,
        config: &Config,
        overrides: &[(String, ColumnRef)],
        fields: &[&str],
        required: &[&str],
    ) -> Result<Mapped> {
        let columns = match &spec.columns {
            Some(c) => c.clone(),
            None => default_columns(overrides, fields, required),
        };
        let mapping = mapping::resolve(&columns, config, overrides, fields);
        for f in required {
            if mapping.get(f).is_none() {
                return Err(Error::Usage(format!(
                    "table {}: no column for {f}; give --column {f}=COLUMN (columns known: {})",
                    spec.name,
                    columns.join(", ")
                )));
            }
        }
        Ok(Mapped { columns, mapping })
    }

    /// The header shown for a field (a joined column reads `a+b`).
    fn header(&self, field: &str) -> Option<String> {
        self.mapping
            .get(field)
            .map(|i| self.mapping.column_name(&self.columns, i).to_string())
    }

    /// The field's value, trimmed, NULL when blank (composite IDs joined like a file's).
    fn field(&self, w: &W, field: &str) -> String {
        let Some(i) = self.mapping.get(field) else {
            return format!("CAST(NULL AS {})", w.text());
        };
        match self.columns.get(i) {
            Some(c) => w.trimmed(&w.ident(c)),
            None => {
                let parts = &self.mapping.joined[i - self.columns.len()].1;
                let trimmed: Vec<String> = parts
                    .iter()
                    .map(|&c| w.trimmed(&w.ident(&self.columns[c])))
                    .collect();
                let any_blank = trimmed
                    .iter()
                    .map(|t| format!("{t} IS NULL"))
                    .collect::<Vec<_>>()
                    .join(" OR ");
                let sep = w.lit(&mapping::JOIN.to_string());
                let escaped: Vec<String> = trimmed
                    .iter()
                    .map(|t| {
                        format!(
                            "replace(replace({t}, {}, {}), {sep}, {})",
                            w.lit("\\"),
                            w.lit("\\\\"),
                            w.lit(&format!("\\{}", mapping::JOIN))
                        )
                    })
                    .collect();
                let joined = escaped.join(&format!(", {sep}, "));
                w.trimmed(&format!(
                    "CASE WHEN {any_blank} THEN NULL ELSE concat({joined}) END"
                ))
            }
        }
    }

    /// Every column's text joined with commas (a quarantined row as read).
    fn raw(&self, w: &W) -> String {
        let parts: Vec<String> = self
            .columns
            .iter()
            .map(|c| format!("coalesce(CAST({} AS {}), '')", w.ident(c), w.text()))
            .collect();
        format!("concat_ws(',', {})", parts.join(", "))
    }
}

/// Without a column list: the required fields under their canonical names, and the columns the
/// overrides name.
fn default_columns(
    overrides: &[(String, ColumnRef)],
    fields: &[&str],
    required: &[&str],
) -> Vec<String> {
    let mut cols: Vec<String> = Vec::new();
    fn names(r: &ColumnRef, out: &mut Vec<String>) {
        match r {
            ColumnRef::Name(n) => out.push(n.clone()),
            ColumnRef::Position(_) => {}
            ColumnRef::Composite(parts, _) => parts.iter().for_each(|p| names(p, out)),
        }
    }
    for (f, r) in overrides {
        if fields.contains(&f.as_str()) {
            names(r, &mut cols);
        }
    }
    for f in required {
        if !overrides.iter().any(|(o, _)| o == f) {
            cols.push(f.to_string());
        }
    }
    let mut seen = std::collections::HashSet::new();
    cols.retain(|c| seen.insert(c.clone()));
    cols
}

/// The value rules of the load as SQL pieces.
struct Rules {
    codes: Vec<String>,
    as_of: String,
    oldest: String,
    max_minutes: f64,
    case_sensitive: bool,
}

impl Rules {
    fn is_code(&self, w: &W, v: &str) -> String {
        if self.codes.is_empty() {
            return "FALSE".into();
        }
        let list: Vec<String> = self.codes.iter().map(|c| w.lit(c)).collect();
        format!("coalesce(lower({v}) IN ({}), FALSE)", list.join(", "))
    }

    /// The value unless it is a missing-value code.
    fn value(&self, w: &W, v: &str) -> String {
        format!("CASE WHEN {} THEN NULL ELSE {v} END", self.is_code(w, v))
    }

    /// The comparison key of an ID (lower case when IDs ignore case).
    fn key(&self, v: &str) -> String {
        match self.case_sensitive {
            true => v.to_string(),
            false => format!("lower({v})"),
        }
    }

    /// The state of a date value: NULL (no value), 'ok', or the problem's kind.
    fn date_state(&self, w: &W, v: &str) -> String {
        let shape = w.regex_match(v, "^[0-9]{4}-[0-9]{2}-[0-9]{2}([Tt ]|$)");
        let int = |a: u32, n: u32| format!("TRY_CAST(substr({v}, {a}, {n}) AS INT)");
        let (y, m, d) = (int(1, 4), int(6, 2), int(9, 2));
        let days_in_month = format!(
            "CASE WHEN {m} IN (4, 6, 9, 11) THEN 30 WHEN {m} = 2 THEN \
             (CASE WHEN ({y} % 4 = 0 AND {y} % 100 <> 0) OR {y} % 400 = 0 THEN 29 ELSE 28 END) \
             ELSE 31 END"
        );
        let iso = format!("substr({v}, 1, 10)");
        format!(
            "CASE WHEN {v} IS NULL THEN NULL \
             WHEN NOT {shape} THEN 'unreadable_date' \
             WHEN NOT ({m} BETWEEN 1 AND 12 AND {d} BETWEEN 1 AND ({days_in_month})) THEN 'impossible_date' \
             WHEN {iso} > {as_of} THEN 'future_date' \
             WHEN {iso} < {oldest} THEN 'implausible_date' \
             ELSE 'ok' END",
            as_of = w.lit(&self.as_of),
            oldest = w.lit(&self.oldest),
        )
    }

    /// The state of a minutes value (`x` is the value read as a double).
    fn minutes_state(&self, v: &str, x: &str) -> String {
        let over = if self.max_minutes.is_finite() {
            format!(
                "WHEN {x} > {:?} THEN 'implausible_number' ",
                self.max_minutes
            )
        } else {
            String::new()
        };
        format!(
            "CASE WHEN {v} IS NULL THEN NULL \
             WHEN {x} IS NULL OR isnan({x}) OR {x} > {MAX_DOUBLE} THEN 'unreadable_number' \
             WHEN {x} < 0 THEN 'negative_number' \
             {over}ELSE 'ok' END"
        )
    }
}

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
    s.push_str(&exposure_rows(&w, &r, req, &ex));
    let attrs = match &people {
        Some((spec, pm)) => {
            let (sql, attrs) = people_rows(&w, &r, req, spec, pm);
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
    s.push_str(&nodes(&w, &attrs));
    s.push_str(&pairs(&w, req));
    s.push_str(&degrees(&w, &attrs));
    s.push_str(&ledger(&w, &attrs, people.is_some()));
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

/// Exposure rows: trimmed values, the reason a row cannot be used, then the usable rows with
/// their fields checked.
fn exposure_rows(w: &W, r: &Rules, req: &SqlRequest, ex: &Mapped) -> String {
    let mut s = String::new();
    s.push_str("-- Exposure rows, values trimmed (blank -> NULL).\n");
    s.push_str(&w.create(
        "hw_x0",
        &format!(
            "SELECT {ord} AS ord, {src} AS s, {tgt} AS t, {last} AS last_v, {first} AS first_v, \
             {set} AS setting_v, {min} AS minutes_v, {flag} AS flag_v, {raw} AS raw\nFROM {table}",
            ord = w.order(req.row_order.as_deref()),
            src = ex.field(w, "source_id"),
            tgt = ex.field(w, "target_id"),
            last = ex.field(w, "exposure_date"),
            first = ex.field(w, "first_exposure_date"),
            set = ex.field(w, "setting"),
            min = ex.field(w, "duration_min"),
            flag = ex.field(w, "transmission"),
            raw = ex.raw(w),
            table = req.exposures.name,
        ),
    ));
    s.push_str(
        "-- Why a row cannot form an exposure (source checked first), and the IDs in NFC.\n",
    );
    let code = |v: &str| r.is_code(w, v);
    s.push_str(&w.create(
        "hw_x1",
        &format!(
            "SELECT *, \
             CASE WHEN s IS NULL OR {sc} THEN 'source_id' WHEN t IS NULL OR {tc} THEN 'target_id' END AS reason_field, \
             CASE WHEN s IS NULL THEN 'missing_id' WHEN {sc} THEN 'missing_value_code' \
             WHEN t IS NULL THEN 'missing_id' WHEN {tc} THEN 'missing_value_code' \
             WHEN {sk} = {tk} THEN 'self_exposure' END AS reason, \
             CASE WHEN {sc} THEN s WHEN {tc} THEN t END AS reason_code\n\
             FROM (SELECT *, {sn} AS s_id, {tn} AS t_id FROM hw_x0) x",
            sc = code("s"),
            tc = code("t"),
            sk = r.key("s_id"),
            tk = r.key("t_id"),
            sn = w.nfc("s"),
            tn = w.nfc("t"),
        ),
    ));
    s.push_str(&w.keep("hw_x1"));
    // Field values of usable rows (codes -> NULL), then their states.
    let v = |c: &str| r.value(w, c);
    s.push_str("-- Usable rows: dates, minutes, settings and links checked.\n");
    s.push_str(&w.create(
        "hw_x2",
        &format!(
            "SELECT ord, s, t, s_id, t_id, {sk} AS s_key, {tk} AS t_key, lv, fv, sv, mv, xv, \
             {ls} AS l_state, {fs} AS f0_state, {ms} AS m_state, TRY_CAST(mv AS DOUBLE) AS mx\n\
             FROM (SELECT ord, s, t, s_id, t_id, {lv} AS lv, {fv} AS fv, {sv} AS sv, {mv} AS mv, \
             {xv} AS xv FROM hw_x1 WHERE reason IS NULL) u",
            sk = r.key("s_id"),
            tk = r.key("t_id"),
            lv = v("last_v"),
            fv = v("first_v"),
            sv = v("setting_v"),
            mv = v("minutes_v"),
            xv = v("flag_v"),
            ls = r.date_state(w, "lv"),
            fs = r.date_state(w, "fv"),
            ms = r.minutes_state("mv", "TRY_CAST(mv AS DOUBLE)"),
        ),
    ));
    let flag = "lower(xv)";
    s.push_str(&w.create(
        "hw_x3",
        &format!(
            "SELECT ord, s, t, s_id, t_id, s_key, t_key, lv, fv, sv, mv, xv, l_state, m_state, \
             CASE WHEN f0_state = 'ok' AND l_state = 'ok' AND substr(fv, 1, 10) > substr(lv, 1, 10) \
             THEN 'first_after_last_exposure' ELSE f0_state END AS f_state, \
             CASE WHEN l_state = 'ok' THEN substr(lv, 1, 10) END AS l_day, \
             CASE WHEN f0_state = 'ok' AND NOT (l_state = 'ok' AND substr(fv, 1, 10) > substr(lv, 1, 10)) \
             THEN substr(fv, 1, 10) END AS f_day, \
             CASE WHEN m_state = 'ok' THEN CAST(CAST(mx AS FLOAT) AS DOUBLE) END AS minutes, \
             sv AS setting_label, lower(sv) AS setting_key, \
             CASE WHEN xv IS NULL OR {flag} IN ('no', 'n', 'false', 'f', '0') THEN 0 \
             WHEN {flag} IN ('yes', 'y', 'true', 't', '1') THEN 1 ELSE 0 END AS link, \
             CASE WHEN xv IS NULL OR {flag} IN ('no', 'n', 'false', 'f', '0', 'yes', 'y', 'true', 't', '1') \
             THEN NULL ELSE 'unreadable_flag' END AS x_state\nFROM hw_x2"
        ),
    ));
    s.push_str(&w.keep("hw_x3"));
    let header = |f: &str| w.lit(&ex.header(f).unwrap_or_default());
    s.push_str("-- Field problems of the exposure rows (the row was still used).\n");
    let t = w.text();
    let none = format!("CAST(NULL AS {t}), CAST(NULL AS {t}), CAST(NULL AS BIGINT)");
    let mut parts = vec![
        format!(
            "SELECT 'exposures' AS role, ord, {} AS column_name, lv AS value, l_state AS kind, \
             CAST(NULL AS {t}) AS detail, CAST(NULL AS {t}) AS person, CAST(NULL AS BIGINT) AS first_ord \
             FROM hw_x3 WHERE l_state <> 'ok'",
            header("exposure_date")
        ),
        format!(
            "SELECT 'exposures', ord, {}, fv, f_state, CASE WHEN f_state = 'first_after_last_exposure' \
             THEN l_day END, CAST(NULL AS {t}), CAST(NULL AS BIGINT) FROM hw_x3 WHERE f_state <> 'ok'",
            header("first_exposure_date")
        ),
        format!(
            "SELECT 'exposures', ord, {}, mv, m_state, {none} FROM hw_x3 WHERE m_state <> 'ok'",
            header("duration_min")
        ),
        format!(
            "SELECT 'exposures', ord, {}, lower(xv), x_state, {none} FROM hw_x3 WHERE x_state IS NOT NULL",
            header("transmission")
        ),
    ];
    parts.iter_mut().for_each(|p| p.push('\n'));
    s.push_str(&w.create("hw_xproblems", &parts.join("UNION ALL\n")));
    s
}

/// People rows: the ID rules, the attribute values (dates checked), the first value kept and
/// later different values counted as conflicts. Returns the attribute names (canonical where
/// mapped) with their SQL column aliases.
fn people_rows(
    w: &W,
    r: &Rules,
    req: &SqlRequest,
    spec: &TableSpec,
    pm: &Mapped,
) -> (String, Vec<(String, String)>) {
    let mut s = String::new();
    let id_col = pm.mapping.get("person_id").expect("required");
    // Attribute columns: every column but the ID (composite columns after the table's own).
    let n = pm.columns.len() + pm.mapping.joined.len();
    let mut attrs: Vec<(String, String, String, bool)> = Vec::new(); // (name, alias, header, date)
    for c in (0..n).filter(|&c| c != id_col) {
        let field = pm
            .mapping
            .fields
            .iter()
            .find(|(_, &i)| i == c)
            .map(|(f, _)| f.clone());
        let header = pm.mapping.column_name(&pm.columns, c).to_string();
        let name = field.clone().unwrap_or_else(|| header.clone());
        let date = matches!(field.as_deref(), Some("onset_date" | "report_date"));
        attrs.push((name, format!("a{}", attrs.len()), header, date));
    }
    let expr = |c: usize| -> String {
        match pm.columns.get(c) {
            Some(col) => w.trimmed(&w.ident(col)),
            None => {
                let field = pm
                    .mapping
                    .fields
                    .iter()
                    .find(|(_, &i)| i == c)
                    .map(|(f, _)| f.clone())
                    .unwrap_or_default();
                pm.field(w, &field)
            }
        }
    };
    let cols: Vec<String> = (0..n)
        .filter(|&c| c != id_col)
        .zip(&attrs)
        .map(|(c, (_, alias, _, _))| format!("{} AS {alias}_v", r.value(w, &expr(c))))
        .collect();
    s.push_str("-- People rows, values trimmed; a row without an ID is quarantined.\n");
    s.push_str(&w.create(
        "hw_p0",
        &format!(
            "SELECT {ord} AS ord, {id} AS p, {raw} AS raw{sep}{cols}\nFROM {table}",
            ord = w.order(req.row_order.as_deref()),
            id = pm.field(w, "person_id"),
            raw = pm.raw(w),
            sep = if cols.is_empty() { "" } else { ", " },
            cols = cols.join(", "),
            table = spec.name,
        ),
    ));
    let states: Vec<String> = attrs
        .iter()
        .map(|(_, a, _, date)| match date {
            true => format!(
                "{a}_v, {st} AS {a}_state, CASE WHEN {st} = 'ok' THEN substr({a}_v, 1, 10) END AS {a}",
                st = r.date_state(w, &format!("{a}_v"))
            ),
            false => format!("CAST(NULL AS {}) AS {a}_state, {a}_v AS {a}", w.text()),
        })
        .collect();
    s.push_str(&w.create(
        "hw_p1",
        &format!(
            "SELECT *, CASE WHEN p IS NULL THEN 'missing_id' WHEN {pc} THEN 'missing_value_code' END AS reason, \
             CASE WHEN {pc} THEN p END AS reason_code FROM hw_p0",
            pc = r.is_code(w, "p")
        ),
    ));
    s.push_str(&w.create(
        "hw_p2",
        &format!(
            "SELECT ord, p, id, {key} AS key{sep}{states}\nFROM (SELECT *, {nfc} AS id FROM hw_p1 WHERE reason IS NULL) u",
            key = r.key("id"),
            nfc = w.nfc("p"),
            sep = if states.is_empty() { "" } else { ", " },
            states = states.join(", "),
        ),
    ));
    s.push_str(&w.keep("hw_p2"));
    // The first value of each attribute per person, and the later values that differ.
    let kept: Vec<String> = attrs
        .iter()
        .map(|(_, a, _, _)| match w.d {
            Dialect::DuckDb => format!("arg_min({a}, ord) FILTER (WHERE {a} IS NOT NULL) AS {a}"),
            Dialect::Spark => format!("min_by({a}, ord) FILTER (WHERE {a} IS NOT NULL) AS {a}"),
        })
        .collect();
    s.push_str(&w.create(
        "hw_p",
        &format!(
            "SELECT key, min(ord) AS ord, {first_id} AS id{sep}{kept}\nFROM hw_p2 GROUP BY key",
            first_id = match w.d {
                Dialect::DuckDb => "arg_min(id, ord)",
                Dialect::Spark => "min_by(id, ord)",
            },
            sep = if kept.is_empty() { "" } else { ", " },
            kept = kept.join(", "),
        ),
    ));
    let mut problems: Vec<String> = Vec::new();
    for (_, a, header, date) in &attrs {
        let h = w.lit(header);
        if *date {
            problems.push(format!(
                "SELECT 'people' AS role, ord, {h} AS column_name, {a}_v AS value, {a}_state AS kind, \
                 CAST(NULL AS {t}) AS detail, CAST(NULL AS {t}) AS person, CAST(NULL AS BIGINT) AS first_ord \
                 FROM hw_p2 WHERE {a}_state <> 'ok'",
                t = w.text()
            ));
        }
        problems.push(format!(
            "SELECT 'people' AS role, x.ord AS ord, {h} AS column_name, x.{a} AS value, \
             'conflicting_value' AS kind, k.{a} AS detail, x.id AS person, k.ord AS first_ord \
             FROM hw_p2 x JOIN hw_p k ON x.key = k.key WHERE x.{a} IS NOT NULL AND x.{a} <> k.{a}"
        ));
    }
    if problems.is_empty() {
        problems.push(format!(
            "SELECT 'people' AS role, CAST(NULL AS BIGINT) AS ord, CAST(NULL AS {t}) AS column_name, \
             CAST(NULL AS {t}) AS value, CAST(NULL AS {t}) AS kind, CAST(NULL AS {t}) AS detail, \
             CAST(NULL AS {t}) AS person, CAST(NULL AS BIGINT) AS first_ord WHERE 1 = 0",
            t = w.text()
        ));
    }
    s.push_str("-- Field problems of the people rows.\n");
    s.push_str(&w.create("hw_pproblems", &problems.join("\nUNION ALL\n")));
    let names = attrs
        .into_iter()
        .map(|(name, alias, _, _)| (name, alias))
        .collect();
    (s, names)
}

/// People first (in the order of their first row), then people known only from exposures (in
/// the order of their first mention, source before target): the node numbers a file gives.
fn nodes(w: &W, attrs: &[(String, String)]) -> String {
    let mut s = String::new();
    s.push_str("-- Node numbers: the people table first, then IDs first seen in exposures.\n");
    let first_of = match w.d {
        Dialect::DuckDb => "arg_min(id, ord * 2 + side)",
        Dialect::Spark => "min_by(id, struct(ord, side))",
    };
    let min_pos = match w.d {
        Dialect::DuckDb => "min(ord * 2 + side)",
        Dialect::Spark => "min(struct(ord, side))",
    };
    s.push_str(&w.create(
        "hw_implied",
        &format!(
            "SELECT key, {first_of} AS id, {min_pos} AS pos FROM (\
             SELECT s_key AS key, s_id AS id, ord, 0 AS side FROM hw_x3 \
             UNION ALL SELECT t_key, t_id, ord, 1 FROM hw_x3) o \
             WHERE key NOT IN (SELECT key FROM hw_p) GROUP BY key"
        ),
    ));
    let attr_cols: Vec<String> = attrs.iter().map(|(_, a)| format!(", {a}")).collect();
    let null_cols: Vec<String> = attrs
        .iter()
        .map(|(_, a)| format!(", CAST(NULL AS {}) AS {a}", w.text()))
        .collect();
    s.push_str(&w.create(
        "hw_node_keys",
        &format!(
            "SELECT CAST(row_number() OVER (ORDER BY ord) - 1 AS BIGINT) AS node, key, id, TRUE AS listed{a} FROM hw_p\n\
             UNION ALL\n\
             SELECT CAST((SELECT count(*) FROM hw_p) + row_number() OVER (ORDER BY pos) - 1 AS BIGINT), key, id, FALSE{n} FROM hw_implied",
            a = attr_cols.concat(),
            n = null_cols.concat(),
        ),
    ));
    s.push_str(&w.keep("hw_node_keys"));
    s
}

/// Rows on node numbers, the view, then the pairs and their parts.
fn pairs(w: &W, req: &SqlRequest) -> String {
    let mut s = String::new();
    let v = &req.view;
    let mut cond: Vec<String> = Vec::new();
    let lits = |names: &[String]| {
        names
            .iter()
            .map(|n| w.lit(&n.to_lowercase()))
            .collect::<Vec<_>>()
            .join(", ")
    };
    if !v.settings.is_empty() {
        cond.push(format!(
            "coalesce(setting_key IN ({}), FALSE)",
            lits(&v.settings)
        ));
    }
    if !v.exclude_settings.is_empty() {
        cond.push(format!(
            "NOT coalesce(setting_key IN ({}), FALSE)",
            lits(&v.exclude_settings)
        ));
    }
    let day = "coalesce(l_day, f_day)";
    if let Some(f) = v.from {
        cond.push(format!("{day} >= {}", w.lit(&super::dates::iso(f))));
    }
    if let Some(t) = v.to {
        cond.push(format!("{day} <= {}", w.lit(&super::dates::iso(t))));
    }
    let in_view = match cond.is_empty() {
        true => "TRUE".to_string(),
        false => format!("coalesce({}, FALSE)", cond.join(" AND ")),
    };
    s.push_str("-- Settings: numbered in the order first seen, compared without case.\n");
    let first_label = match w.d {
        Dialect::DuckDb => "arg_min(setting_label, ord)",
        Dialect::Spark => "min_by(setting_label, ord)",
    };
    s.push_str(&w.create(
        "hw_settings",
        &format!(
            "SELECT CAST(row_number() OVER (ORDER BY first_ord) AS INT) AS code, label, key FROM (\
             SELECT setting_key AS key, {first_label} AS label, min(ord) AS first_ord FROM hw_x3 \
             WHERE setting_key IS NOT NULL GROUP BY setting_key) g"
        ),
    ));
    s.push_str("-- Usable rows on node numbers; in_view: the row is in the network asked for.\n");
    s.push_str(&w.create(
        "hw_rows",
        &format!(
            "SELECT least(ns.node, nt.node) AS a, greatest(ns.node, nt.node) AS b, ns.node < nt.node AS src_is_a, \
             x.l_day, x.f_day, x.minutes, coalesce(st.code, 0) AS setting, x.link, {in_view} AS in_view\n\
             FROM hw_x3 x JOIN hw_node_keys ns ON x.s_key = ns.key JOIN hw_node_keys nt ON x.t_key = nt.key \
             LEFT JOIN hw_settings st ON x.setting_key = st.key"
        ),
    ));
    s.push_str(&w.keep("hw_rows"));
    s.push_str("-- Contact pairs: unordered, the rows merged.\n");
    s.push_str(&w.create(
        "hw_pairs",
        "SELECT a, b, count(*) AS rows, CAST(sum(CASE WHEN src_is_a THEN 1 ELSE 0 END) AS BIGINT) AS a_named_b, \
         min(least(coalesce(f_day, l_day), coalesce(l_day, f_day))) AS first_day, max(l_day) AS last_day, \
         sum(minutes) AS minutes, \
         CAST(sum(CASE WHEN link = 1 AND src_is_a THEN 1 ELSE 0 END) AS BIGINT) AS links_ab, \
         CAST(sum(CASE WHEN link = 1 AND NOT src_is_a THEN 1 ELSE 0 END) AS BIGINT) AS links_ba\n\
         FROM hw_rows WHERE in_view GROUP BY a, b",
    ));
    s.push_str(&w.keep("hw_pairs"));
    s.push_str(&w.create(
        "hw_pair_settings",
        "SELECT DISTINCT a, b, setting AS code FROM hw_rows WHERE in_view AND setting > 0",
    ));
    s.push_str("-- The distinct date spans of pairs that have more than one.\n");
    s.push_str(&w.create(
        "hw_spans",
        "SELECT a, b, span_first, span_last FROM (\
         SELECT a, b, span_first, span_last, count(*) OVER (PARTITION BY a, b) AS n FROM (\
         SELECT DISTINCT a, b, least(coalesce(f_day, l_day), coalesce(l_day, f_day)) AS span_first, \
         greatest(coalesce(f_day, l_day), coalesce(l_day, f_day)) AS span_last \
         FROM hw_rows WHERE in_view AND coalesce(f_day, l_day) IS NOT NULL) d) m WHERE n > 1",
    ));
    s.push_str(&w.create(
        "hw_days",
        "SELECT coalesce(l_day, f_day) AS day, setting, count(*) AS rows FROM hw_rows \
         WHERE in_view AND coalesce(l_day, f_day) IS NOT NULL GROUP BY coalesce(l_day, f_day), setting",
    ));
    s
}

/// Degrees, the joint degree counts of the pairs' ends and each person's sum of contacts'
/// degrees (the tables the degree statistics need when the pairs do not fit in memory).
fn degrees(w: &W, attrs: &[(String, String)]) -> String {
    let mut s = String::new();
    s.push_str("-- Degrees (people without contacts: 0).\n");
    s.push_str(&w.create(
        "hw_node_degree",
        "SELECT n.node, coalesce(d.k, 0) AS k FROM hw_node_keys n LEFT JOIN (\
         SELECT node, count(*) AS k FROM (SELECT a AS node FROM hw_pairs UNION ALL SELECT b FROM hw_pairs) e \
         GROUP BY node) d ON n.node = d.node",
    ));
    s.push_str(&w.keep("hw_node_degree"));
    let named: Vec<String> = attrs
        .iter()
        .map(|(name, a)| format!(", n.{a} AS {}", w.ident(&format!("attr:{name}"))))
        .collect();
    s.push_str(&w.create(
        "hw_nodes",
        &format!(
            "SELECT n.node, n.id, n.listed, d.k{} FROM hw_node_keys n JOIN hw_node_degree d ON n.node = d.node",
            named.concat()
        ),
    ));
    s.push_str(&w.create(
        "hw_degrees",
        "SELECT k, count(*) AS people FROM hw_node_degree GROUP BY k",
    ));
    s.push_str(
        "-- e(j, k): ends of pairs by the degrees at both ends (each pair counted both ways).\n",
    );
    s.push_str(&w.create(
        "hw_joint",
        "SELECT j, k, count(*) AS ends FROM (\
         SELECT da.k AS j, db.k AS k FROM hw_pairs p JOIN hw_node_degree da ON p.a = da.node JOIN hw_node_degree db ON p.b = db.node \
         UNION ALL \
         SELECT db.k, da.k FROM hw_pairs p JOIN hw_node_degree da ON p.a = da.node JOIN hw_node_degree db ON p.b = db.node) e \
         GROUP BY j, k",
    ));
    s.push_str(
        "-- Each person's degree and the sum of their contacts' degrees, counted by (k, sum).\n",
    );
    s.push_str(&w.create(
        "hw_neighbour_sums",
        "SELECT k, total, count(*) AS people FROM (\
         SELECT e.node, d.k, CAST(sum(o.k) AS BIGINT) AS total FROM (\
         SELECT a AS node, b AS other FROM hw_pairs UNION ALL SELECT b, a FROM hw_pairs) e \
         JOIN hw_node_degree d ON e.node = d.node JOIN hw_node_degree o ON e.other = o.node \
         GROUP BY e.node, d.k) t GROUP BY k, total",
    ));
    s
}

/// The ledger: counts per table and reason, and the quarantined rows and field problems.
fn ledger(w: &W, _attrs: &[(String, String)], has_people: bool) -> String {
    let mut s = String::new();
    s.push_str("-- Quarantined rows, with the reason, the field and the code as written.\n");
    let mut q = vec![
        "SELECT 'exposures' AS role, ord, reason, reason_field AS field, reason_code AS code, raw FROM hw_x1 WHERE reason IS NOT NULL"
            .to_string(),
    ];
    if has_people {
        q.push("SELECT 'people', ord, reason, 'person_id', reason_code, raw FROM hw_p1 WHERE reason IS NOT NULL".into());
    }
    s.push_str(&w.create("hw_quarantine", &q.join("\nUNION ALL\n")));
    let mut p = vec!["SELECT * FROM hw_xproblems".to_string()];
    if has_people {
        p.push("SELECT * FROM hw_pproblems".into());
    }
    s.push_str(&w.create("hw_problems", &p.join("\nUNION ALL\n")));
    s.push_str("-- Row counts: read = used + merged + quarantined for each table.\n");
    let mut l = vec![
        "SELECT 'exposures' AS role, 'read' AS item, CAST(count(*) AS BIGINT) AS n FROM hw_x1".to_string(),
        "SELECT 'exposures', 'used', CAST(count(*) AS BIGINT) FROM (SELECT DISTINCT a, b FROM hw_rows) d".into(),
        "SELECT 'exposures', 'merged', CAST((SELECT count(*) FROM hw_rows) - (SELECT count(*) FROM (SELECT DISTINCT a, b FROM hw_rows) d) AS BIGINT)".into(),
        "SELECT 'exposures', 'quarantined', CAST(count(*) AS BIGINT) FROM hw_x1 WHERE reason IS NOT NULL".into(),
        "SELECT 'exposures', 'ids_normalised', CAST(coalesce(sum(CASE WHEN s_id <> s THEN 1 ELSE 0 END + CASE WHEN t_id <> t THEN 1 ELSE 0 END), 0) AS BIGINT) FROM hw_x3".into(),
    ];
    if has_people {
        l.extend([
            "SELECT 'people', 'read', CAST(count(*) AS BIGINT) FROM hw_p1".to_string(),
            "SELECT 'people', 'used', CAST(count(*) AS BIGINT) FROM hw_p".into(),
            "SELECT 'people', 'merged', CAST((SELECT count(*) FROM hw_p2) - (SELECT count(*) FROM hw_p) AS BIGINT)".into(),
            "SELECT 'people', 'quarantined', CAST(count(*) AS BIGINT) FROM hw_p1 WHERE reason IS NOT NULL".into(),
            "SELECT 'people', 'ids_normalised', CAST(coalesce(sum(CASE WHEN id <> p THEN 1 ELSE 0 END), 0) AS BIGINT) FROM hw_p2".into(),
        ]);
    }
    l.push("SELECT role, concat('quarantined:', reason), CAST(count(*) AS BIGINT) FROM hw_quarantine GROUP BY role, reason".into());
    l.push("SELECT role, concat('problem:', kind), CAST(count(*) AS BIGINT) FROM hw_problems GROUP BY role, kind".into());
    s.push_str(&w.create("hw_ledger", &l.join("\nUNION ALL\n")));
    s
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
    for (f, _) in &ex.mapping.fields {
        rows.push((format!("exposures:{f}"), ex.header(f).unwrap_or_default()));
    }
    if let (Some(p), Some(pm)) = (&req.people, people) {
        rows.push(("people_table".into(), p.name.clone()));
        for (f, _) in &pm.mapping.fields {
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
