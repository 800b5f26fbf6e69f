//! The pieces the script is written with: literals and identifiers per dialect, trimming and
//! NFC, the mapped columns of a table, and the value rules (codes, dates, minutes) as SQL.

use super::{Dialect, TableSpec, MAX_DOUBLE, WHITE_SPACE};
use crate::config::Config;
use crate::error::{Error, Result};
use crate::ingest::mapping::{self, ColumnRef, Mapping};

/// Writes SQL text in one dialect.
pub(super) struct W {
    pub(super) d: Dialect,
}

impl W {
    pub(super) fn lit(&self, s: &str) -> String {
        match self.d {
            Dialect::DuckDb => format!("'{}'", s.replace('\'', "''")),
            Dialect::Spark => format!("'{}'", s.replace('\\', "\\\\").replace('\'', "\\'")),
        }
    }

    pub(super) fn ident(&self, s: &str) -> String {
        match self.d {
            Dialect::DuckDb => format!("\"{}\"", s.replace('"', "\"\"")),
            Dialect::Spark => format!("`{}`", s.replace('`', "``")),
        }
    }

    pub(super) fn text(&self) -> &'static str {
        match self.d {
            Dialect::DuckDb => "VARCHAR",
            Dialect::Spark => "STRING",
        }
    }

    /// The value trimmed like `str::trim`; NULL when blank.
    /// Both engines trim a set of characters natively; the trim runs only on values that start
    /// or end with one of them (trimming every value cost six times more in DuckDB).
    pub(super) fn trimmed(&self, expr: &str) -> String {
        let v = format!("CAST({expr} AS {})", self.text());
        let set = match self.d {
            Dialect::DuckDb => {
                let chars: Vec<String> = WHITE_SPACE.iter().map(|c| format!("chr({c})")).collect();
                format!("({})", chars.join(" || "))
            }
            // Spark's string literals read \uXXXX escapes.
            Dialect::Spark => {
                let chars: String = WHITE_SPACE.iter().map(|c| format!("\\u{c:04X}")).collect();
                format!("'{chars}'")
            }
        };
        let (edge, trim) = match self.d {
            Dialect::DuckDb => (
                format!("contains({set}, left({v}, 1)) OR contains({set}, right({v}, 1))"),
                format!("trim({v}, {set})"),
            ),
            Dialect::Spark => (
                format!("instr({set}, left({v}, 1)) > 0 OR instr({set}, right({v}, 1)) > 0"),
                format!("trim(BOTH {set} FROM {v})"),
            ),
        };
        format!("NULLIF(CASE WHEN {edge} THEN {trim} ELSE {v} END, '')")
    }

    /// Unicode NFC of a value.
    pub(super) fn nfc(&self, expr: &str) -> String {
        match self.d {
            Dialect::DuckDb => format!("nfc_normalize({expr})"),
            // ICU4J ships with Spark 4; `compose(s, false)` is NFC.
            // ASCII (as many characters as bytes) is already NFC: the Java call is skipped.
            Dialect::Spark => format!(
                "CASE WHEN {expr} IS NULL OR length({expr}) = octet_length({expr}) THEN {expr} \
                 ELSE reflect('com.ibm.icu.text.Normalizer', 'compose', {expr}, false) END"
            ),
        }
    }

    pub(super) fn regex_match(&self, expr: &str, pattern: &str) -> String {
        let p = self.lit(pattern);
        match self.d {
            Dialect::DuckDb => format!("regexp_matches({expr}, {p})"),
            Dialect::Spark => format!("({expr} RLIKE {p})"),
        }
    }

    pub(super) fn create(&self, name: &str, select: &str) -> String {
        match self.d {
            Dialect::DuckDb => format!("CREATE OR REPLACE TEMP TABLE {name} AS\n{select};\n\n"),
            Dialect::Spark => {
                format!("CREATE OR REPLACE TEMPORARY VIEW {name} AS\n{select};\n\n")
            }
        }
    }

    /// A view: computed where it is read (what is not read is never computed).
    pub(super) fn view(&self, name: &str, select: &str) -> String {
        match self.d {
            Dialect::DuckDb => format!("CREATE OR REPLACE TEMP VIEW {name} AS\n{select};\n\n"),
            Dialect::Spark => format!("CREATE OR REPLACE TEMPORARY VIEW {name} AS\n{select};\n\n"),
        }
    }

    /// Materialise a table that later steps read several times (Spark recomputes a view).
    pub(super) fn keep(&self, name: &str) -> String {
        match self.d {
            Dialect::DuckDb => String::new(),
            Dialect::Spark => format!("CACHE TABLE {name};\n\n"),
        }
    }

    pub(super) fn write(&self, dir: &str, table: &str) -> String {
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
    pub(super) fn order(&self, col: Option<&str>) -> String {
        match (col, self.d) {
            (Some(c), _) => format!("CAST({} AS BIGINT)", self.ident(c)),
            (None, Dialect::DuckDb) => "row_number() OVER ()".into(),
            (None, Dialect::Spark) => "monotonically_increasing_id()".into(),
        }
    }
}

/// A mapped table: the columns known, the mapping, and the SQL expression of each field.
pub(super) struct Mapped {
    pub(super) columns: Vec<String>,
    pub(super) mapping: Mapping,
}

impl Mapped {
    pub(super) fn new(
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
    pub(super) fn header(&self, field: &str) -> Option<String> {
        self.mapping
            .get(field)
            .map(|i| self.mapping.column_name(&self.columns, i).to_string())
    }

    /// The field's value, trimmed, NULL when blank (composite IDs joined like a file's).
    pub(super) fn field(&self, w: &W, field: &str) -> String {
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
    pub(super) fn raw(&self, w: &W) -> String {
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
    pub(super) fn names(r: &ColumnRef, out: &mut Vec<String>) {
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
pub(super) struct Rules {
    pub(super) codes: Vec<String>,
    pub(super) as_of: String,
    pub(super) oldest: String,
    pub(super) max_minutes: f64,
    pub(super) case_sensitive: bool,
}

impl Rules {
    pub(super) fn is_code(&self, w: &W, v: &str) -> String {
        if self.codes.is_empty() {
            return "FALSE".into();
        }
        let list: Vec<String> = self.codes.iter().map(|c| w.lit(c)).collect();
        format!("coalesce(lower({v}) IN ({}), FALSE)", list.join(", "))
    }

    /// The value unless it is a missing-value code.
    pub(super) fn value(&self, w: &W, v: &str) -> String {
        format!("CASE WHEN {} THEN NULL ELSE {v} END", self.is_code(w, v))
    }

    /// The comparison key of an ID (lower case when IDs ignore case).
    pub(super) fn key(&self, v: &str) -> String {
        match self.case_sensitive {
            true => v.to_string(),
            false => format!("lower({v})"),
        }
    }

    /// The state of a date value: NULL (no value), 'ok', or the problem's kind.
    pub(super) fn date_state(&self, w: &W, v: &str) -> String {
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
    pub(super) fn minutes_state(&self, v: &str, x: &str) -> String {
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
