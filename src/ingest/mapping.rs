//! Which column of a table holds which canonical field: header synonyms from the config,
//! overridden by `--column FIELD=HEADER` or `--column FIELD=N` (1-based column number).

use std::collections::BTreeMap;
use std::path::Path;

use crate::config::{Config, EXPOSURE_FIELDS, PEOPLE_FIELDS};
use crate::error::{Error, Result};

/// A user override for one field.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ColumnRef {
    /// A header name (matched like the synonyms).
    Name(String),
    /// A 1-based column position.
    Position(usize),
    /// Several columns joined into one value (`household+member`): the parts in order, and
    /// the text as given (used as is when a header is literally named so).
    Composite(Vec<ColumnRef>, String),
}

/// The separator of a composite value's parts; a part holding it (or the escape) has it
/// escaped with a backslash, so two different pairs of parts never join to the same ID.
pub const JOIN: char = '/';

/// Join the parts of a composite value: `None` when any part is blank.
pub fn join_parts(parts: &[Option<&str>]) -> Option<String> {
    let mut out = String::new();
    for (i, p) in parts.iter().enumerate() {
        let p = p.map(str::trim).filter(|p| !p.is_empty())?;
        if i > 0 {
            out.push(JOIN);
        }
        for c in p.chars() {
            if c == JOIN || c == '\\' {
                out.push('\\');
            }
            out.push(c);
        }
    }
    Some(out)
}

/// Parse one `--column FIELD=HEADER|N` argument.
pub fn parse_override(arg: &str) -> Result<(String, ColumnRef)> {
    let (field, col) = arg
        .split_once('=')
        .ok_or_else(|| Error::Usage(format!("--column {arg}: expected FIELD=HEADER or FIELD=N")))?;
    let field = field.trim().to_string();
    if !PEOPLE_FIELDS.contains(&field.as_str()) && !EXPOSURE_FIELDS.contains(&field.as_str()) {
        return Err(Error::Usage(format!(
            "--column {arg}: unknown field `{field}`; known fields: {}, {}",
            PEOPLE_FIELDS.join(", "),
            EXPOSURE_FIELDS.join(", ")
        )));
    }
    let col = col.trim();
    let one = |c: &str| -> Result<ColumnRef> {
        let c = c.trim();
        if c.is_empty() {
            return Err(Error::Usage(format!(
                "--column {arg}: an empty column name; write FIELD=HEADER, FIELD=N or FIELD=A+B"
            )));
        }
        match c.parse::<usize>() {
            Ok(0) => Err(Error::Usage(format!(
                "--column {arg}: column numbers start at 1"
            ))),
            Ok(n) => Ok(ColumnRef::Position(n)),
            Err(_) => Ok(ColumnRef::Name(c.to_string())),
        }
    };
    let r = if col.contains('+') && col.len() > 1 {
        let parts = col.split('+').map(one).collect::<Result<Vec<_>>>()?;
        ColumnRef::Composite(parts, col.to_string())
    } else {
        one(col)?
    };
    Ok((field, r))
}

/// Fold a header for comparison: lower case, without spaces, underscores, hyphens and dots.
pub fn fold_header(h: &str) -> String {
    h.chars()
        .filter(|c| !matches!(c, ' ' | '_' | '-' | '.' | '\u{feff}'))
        .flat_map(char::to_lowercase)
        .collect()
}

/// Field name -> column index for one table.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Mapping {
    /// Canonical field -> 0-based column index. A composite field's index is past the file's
    /// columns: `columns.len() + k` for the k-th entry of `joined`.
    pub fields: BTreeMap<String, usize>,
    /// Joined columns: (name shown, the file's columns joined, in order).
    pub joined: Vec<(String, Vec<usize>)>,
}

impl Mapping {
    /// Column index of a field, if mapped.
    pub fn get(&self, field: &str) -> Option<usize> {
        self.fields.get(field).copied()
    }

    /// The field mapped to column `i`, if any.
    pub fn field_of(&self, i: usize) -> Option<&str> {
        self.fields
            .iter()
            .find(|(_, &c)| c == i)
            .map(|(f, _)| f.as_str())
    }

    /// The name of column `i`: the file's header, or a joined column's `a+b`.
    pub fn column_name<'a>(&'a self, columns: &'a [String], i: usize) -> &'a str {
        match columns.get(i) {
            Some(c) => c,
            None => self
                .joined
                .get(i - columns.len())
                .map_or("?", |(n, _)| n.as_str()),
        }
    }
}

/// Resolve every field of `fields` that this table has. Overrides win; a name override that
/// matches no header is an error for required fields only when the table plays that role,
/// which the caller decides, so here it is simply left unmapped.
pub fn resolve(
    columns: &[String],
    config: &Config,
    overrides: &[(String, ColumnRef)],
    fields: &[&str],
) -> Mapping {
    let folded: Vec<String> = columns.iter().map(|c| fold_header(c)).collect();
    let mut out = Mapping::default();
    let mut taken = vec![false; columns.len()];
    // Overrides first.
    for (field, r) in overrides {
        if !fields.contains(&field.as_str()) {
            continue;
        }
        let find = |r: &ColumnRef| match r {
            ColumnRef::Position(n) => (*n <= columns.len()).then(|| n - 1),
            ColumnRef::Name(name) => {
                let f = fold_header(name);
                folded.iter().position(|c| *c == f)
            }
            ColumnRef::Composite(..) => None,
        };
        let idx = match r {
            ColumnRef::Composite(parts, text) => match find(&ColumnRef::Name(text.clone())) {
                Some(i) => Some(i),
                None => {
                    let cols: Option<Vec<usize>> = parts.iter().map(find).collect();
                    cols.map(|cols| {
                        let name = cols
                            .iter()
                            .map(|&c| columns[c].as_str())
                            .collect::<Vec<_>>()
                            .join("+");
                        out.joined.push((name, cols));
                        columns.len() + out.joined.len() - 1
                    })
                }
            },
            r => find(r),
        };
        if let Some(i) = idx {
            out.fields.insert(field.clone(), i);
            if let Some(t) = taken.get_mut(i) {
                *t = true;
            }
        }
    }
    // Then synonyms, in the order given, never reusing a column.
    for field in fields {
        if out.fields.contains_key(*field) {
            continue;
        }
        for syn in config.synonyms(field) {
            let f = fold_header(syn);
            if let Some(i) = folded
                .iter()
                .enumerate()
                .position(|(i, c)| *c == f && !taken[i])
            {
                out.fields.insert(field.to_string(), i);
                taken[i] = true;
                break;
            }
        }
    }
    out
}

/// The error for a required field with no column: lists the headers and suggests the closest.
pub fn missing_field_error(
    path: &Path,
    columns: &[String],
    field: &str,
    config: &Config,
    headerless: bool,
) -> Error {
    let found = if columns.is_empty() {
        "(none)".to_string()
    } else {
        columns
            .iter()
            .map(|c| format!("\"{c}\""))
            .collect::<Vec<_>>()
            .join(", ")
    };
    let hint = if headerless {
        format!(
            " The file has no header line; map columns by position, e.g. --column {field}=2 \
             (column numbers start at 1)."
        )
    } else {
        match closest(columns, field, config) {
            Some(c) => format!(" Closest header: \"{c}\"; if that is it, add --column {field}=\"{c}\"."),
            None => format!(" Map it with --column {field}=HEADER, or add the header to [columns] {field} in a config file."),
        }
    };
    Error::MissingField {
        path: path.to_path_buf(),
        field: field.to_string(),
        found,
        hint,
    }
}

fn closest<'a>(columns: &'a [String], field: &str, config: &Config) -> Option<&'a str> {
    let mut targets: Vec<String> = config
        .synonyms(field)
        .iter()
        .map(|s| fold_header(s))
        .collect();
    targets.push(fold_header(field));
    // A header that already names another field is never the suggestion.
    let taken = |c: &str| {
        let f = fold_header(c);
        config
            .columns
            .iter()
            .any(|(other, syns)| other != field && syns.iter().any(|s| fold_header(s) == f))
    };
    columns
        .iter()
        .filter(|c| !taken(c))
        .map(|c| {
            let f = fold_header(c);
            let score = targets
                .iter()
                .map(|t| {
                    let contains = !f.is_empty() && (t.contains(&f) || f.contains(t.as_str()));
                    strsim::jaro_winkler(&f, t).max(if contains { 0.9 } else { 0.0 })
                })
                .fold(0.0, f64::max);
            (c.as_str(), score)
        })
        .filter(|(_, s)| *s >= 0.75)
        .max_by(|a, b| a.1.total_cmp(&b.1))
        .map(|(c, _)| c)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cols(v: &[&str]) -> Vec<String> {
        v.iter().map(|s| s.to_string()).collect()
    }

    #[test]
    fn synonyms_match_ignoring_case_space_underscore() {
        let c = Config::default();
        let m = resolve(
            &cols(&["Person A", "PERSON-B", "Exposure Date"]),
            &c,
            &[],
            &EXPOSURE_FIELDS,
        );
        assert_eq!(m.get("source_id"), Some(0));
        assert_eq!(m.get("target_id"), Some(1));
        assert_eq!(m.get("exposure_date"), Some(2));
    }

    #[test]
    fn overrides_win_and_positions_work() {
        let c = Config::default();
        let o = vec![
            parse_override("source_id=2").unwrap(),
            parse_override("target_id=3").unwrap(),
        ];
        let m = resolve(
            &cols(&["column_1", "column_2", "column_3"]),
            &c,
            &o,
            &EXPOSURE_FIELDS,
        );
        assert_eq!(m.get("source_id"), Some(1));
        assert_eq!(m.get("target_id"), Some(2));
        assert!(parse_override("nonsense=1").is_err());
        assert!(parse_override("source_id=0").is_err());
        assert!(parse_override("source_id").is_err());
    }

    #[test]
    fn composite_columns_join_with_an_escaped_separator() {
        let c = Config::default();
        let o = vec![parse_override("person_id=hh+member").unwrap()];
        let m = resolve(&cols(&["hh", "member", "age"]), &c, &o, &PEOPLE_FIELDS);
        assert_eq!(m.get("person_id"), Some(3));
        assert_eq!(m.joined, vec![("hh+member".to_string(), vec![0, 1])]);
        // A header literally named "a+b" is taken as it is.
        let o = vec![parse_override("person_id=a+b").unwrap()];
        let m = resolve(&cols(&["a+b", "a", "b"]), &c, &o, &PEOPLE_FIELDS);
        assert_eq!((m.get("person_id"), m.joined.len()), (Some(0), 0));
        // Different parts never join to the same ID.
        assert_eq!(join_parts(&[Some("a/b"), Some("c")]).unwrap(), "a\\/b/c");
        assert_eq!(join_parts(&[Some("a"), Some("b/c")]).unwrap(), "a/b\\/c");
        assert_eq!(join_parts(&[Some("H1"), Some(" ")]), None);
        assert!(parse_override("person_id=a+").is_err());
    }

    #[test]
    fn missing_field_suggests_closest_header() {
        let c = Config::default();
        let e = missing_field_error(
            Path::new("x.csv"),
            &cols(&["src_id", "tgt"]),
            "source_id",
            &c,
            false,
        );
        let s = e.to_string();
        assert!(s.contains("Closest header: \"src_id\""), "{s}");
        assert!(s.contains("--column source_id=\"src_id\""), "{s}");
    }
}
