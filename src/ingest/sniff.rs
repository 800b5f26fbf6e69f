//! Sniffing delimited text: byte-order mark, comment lines before the header, the separator
//! and whether the first line is a header.
//!
//! Detection only looks at the first lines; every decision can be overridden in the config
//! (`[csv]`) or on the command line, and the decision taken is reported by `hubwatch check`.

pub use crate::config::Separator;

/// Bytes of a UTF-8 byte-order mark.
pub const BOM: &[u8] = b"\xEF\xBB\xBF";

/// Iterate over lines: (byte offset of the line start, the line without `\n` and `\r`).
pub fn lines(bytes: &[u8]) -> impl Iterator<Item = (usize, &[u8])> {
    let mut pos = 0;
    std::iter::from_fn(move || {
        if pos >= bytes.len() {
            return None;
        }
        let start = pos;
        let end = memchr::memchr(b'\n', &bytes[pos..]).map_or(bytes.len(), |i| pos + i);
        pos = end + 1;
        Some((start, trim_cr(&bytes[start..end])))
    })
}

/// Drop one trailing carriage return.
pub fn trim_cr(line: &[u8]) -> &[u8] {
    line.strip_suffix(b"\r").unwrap_or(line)
}

/// True when the line is empty or holds only spaces and tabs.
pub fn is_blank(line: &[u8]) -> bool {
    line.iter().all(|b| *b == b' ' || *b == b'\t')
}

/// True when the line starts with the comment prefix (an empty prefix never matches).
pub fn is_comment(line: &[u8], prefix: &[u8]) -> bool {
    !prefix.is_empty() && line.starts_with(prefix)
}

/// Split one line into fields, honouring double quotes for byte separators.
pub fn split_fields(line: &[u8], sep: Separator) -> Vec<String> {
    match sep {
        Separator::Whitespace => line
            .split(|b| *b == b' ' || *b == b'\t')
            .filter(|f| !f.is_empty())
            .map(|f| String::from_utf8_lossy(f).into_owned())
            .collect(),
        Separator::Byte(s) => {
            let mut out = Vec::new();
            let mut cur = Vec::new();
            let mut in_quotes = false;
            let mut i = 0;
            while i < line.len() {
                let b = line[i];
                if b == b'"' {
                    if in_quotes && line.get(i + 1) == Some(&b'"') {
                        cur.push(b'"');
                        i += 1;
                    } else {
                        in_quotes = !in_quotes;
                    }
                } else if b == s && !in_quotes {
                    out.push(String::from_utf8_lossy(&cur).into_owned());
                    cur.clear();
                } else {
                    cur.push(b);
                }
                i += 1;
            }
            out.push(String::from_utf8_lossy(&cur).into_owned());
            out
        }
    }
}

/// Count fields on a line (quote-aware for byte separators) without allocating.
pub fn count_fields(line: &[u8], sep: Separator) -> usize {
    match sep {
        Separator::Whitespace => line
            .split(|b| *b == b' ' || *b == b'\t')
            .filter(|f| !f.is_empty())
            .count(),
        Separator::Byte(s) => {
            if memchr::memchr(b'"', line).is_none() {
                return memchr::memchr_iter(s, line).count() + 1;
            }
            let mut n = 1;
            let mut in_quotes = false;
            for &b in line {
                if b == b'"' {
                    in_quotes = !in_quotes;
                } else if b == s && !in_quotes {
                    n += 1;
                }
            }
            n
        }
    }
}

/// Pick the separator from sample lines (comments and blank lines already removed; the first
/// line is the header or the first row).
///
/// A byte separator qualifies when the first line and at least 80% of the sample lines hold the
/// same number of fields (at least two), so one broken row cannot hide the separator; among
/// those the best agreement, then the most fields, wins. Runs of spaces and tabs win over a tab
/// when they split the lines just as consistently into more fields. A file with none of these
/// has one column.
pub fn detect_separator(sample: &[&[u8]]) -> Separator {
    let agreement = |sep: Separator| -> Option<(usize, usize)> {
        let first = count_fields(sample.first()?, sep);
        let agree = sample
            .iter()
            .filter(|l| count_fields(l, sep) == first)
            .count();
        (first >= 2 && agree * 5 >= sample.len() * 4).then_some((agree, first))
    };
    let mut best: Option<(Separator, usize, usize)> = None;
    for cand in [b',', b'\t', b';', b'|'] {
        if let Some((agree, fields)) = agreement(Separator::Byte(cand)) {
            if best.is_none_or(|(_, a, f)| (agree, fields) > (a, f)) {
                best = Some((Separator::Byte(cand), agree, fields));
            }
        }
    }
    let runs = agreement(Separator::Whitespace);
    match (best, runs) {
        (Some((Separator::Byte(b'\t'), a, f)), Some((ra, rf))) if (ra, rf) > (a, f) => {}
        (Some((sep, _, _)), _) => return sep,
        (None, None) => return Separator::Byte(b','),
        (None, Some(_)) => {}
    }
    let irregular = sample.iter().any(|l| {
        l.windows(2)
            .any(|w| matches!(w, [b' ' | b'\t', b' ' | b'\t']))
            || l.first().is_some_and(|b| *b == b' ' || *b == b'\t')
            || l.last().is_some_and(|b| *b == b' ' || *b == b'\t')
            || l.contains(&b'\t')
    });
    if irregular {
        Separator::Whitespace
    } else {
        Separator::Byte(b' ')
    }
}

/// True when a field reads as a number (used to tell a data line from a header).
pub fn looks_numeric(field: &str) -> bool {
    let t = field.trim();
    !t.is_empty() && t.parse::<f64>().is_ok()
}

/// Decide whether the first line is a header: "auto" says yes unless a field is a number.
pub fn detect_header(setting: &str, first_fields: &[String]) -> bool {
    match setting {
        "yes" => true,
        "no" => false,
        _ => !first_fields.iter().any(|f| looks_numeric(f)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn det(lines: &[&str]) -> Separator {
        let v: Vec<&[u8]> = lines.iter().map(|l| l.as_bytes()).collect();
        detect_separator(&v)
    }

    #[test]
    fn separators_are_detected() {
        assert_eq!(det(&["a,b,c", "1,2,3"]), Separator::Byte(b','));
        assert_eq!(det(&["a;b;c", "1;2,5;3"]), Separator::Byte(b';'));
        assert_eq!(det(&["a\tb", "1\t2"]), Separator::Byte(b'\t'));
        assert_eq!(det(&["a|b", "1|2"]), Separator::Byte(b'|'));
        assert_eq!(det(&["1 2 3", "4 5 6"]), Separator::Byte(b' '));
        assert_eq!(det(&["1  2 3", " 4 5 6"]), Separator::Whitespace);
        assert_eq!(det(&["\"x,y\",b", "1,2"]), Separator::Byte(b','));
        // One ragged line among many does not hide the separator.
        let mut lines = vec!["a,b,c"; 9];
        lines.push("a,b,c,d,e");
        assert_eq!(det(&lines), Separator::Byte(b','));
        // A tab inside whitespace runs on data lines only: whitespace runs, not tab.
        assert_eq!(
            det(&["a   b c  d", "  1\t 2  3   4", "5 6\t7 8"]),
            Separator::Whitespace
        );
        // A single column.
        assert_eq!(det(&["id", "A1"]), Separator::Byte(b','));
    }

    #[test]
    fn fields_split_with_quotes() {
        let f = split_fields(b"\"a,b\",\"say \"\"hi\"\"\",c", Separator::Byte(b','));
        assert_eq!(f, vec!["a,b", "say \"hi\"", "c"]);
        assert_eq!(count_fields(b"\"a,b\",c", Separator::Byte(b',')), 2);
        assert_eq!(
            split_fields(b"  1\t 2  3 ", Separator::Whitespace),
            vec!["1", "2", "3"]
        );
    }

    #[test]
    fn header_detection() {
        let hdr = vec!["person_id".to_string(), "role".to_string()];
        let data = vec!["31220".to_string(), "1558".to_string(), "3B".to_string()];
        assert!(detect_header("auto", &hdr));
        assert!(!detect_header("auto", &data));
        assert!(detect_header("yes", &data));
    }
}
