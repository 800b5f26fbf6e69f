//! Warnings of a load: nothing is changed, but a person should look. IDs that differ only by
//! letter case, character width or spaces (probably one person typed two ways), and the test
//! of whether an ID looks like a missing-value code (used with the contact counts, see
//! `dataset`).

use unicode_normalization::UnicodeNormalization;

use super::ledger::Warning;
use crate::ids::IdMap;

/// How many example groups a warning names.
const EXAMPLES: usize = 5;

/// The ID as compared for near-collisions: compatibility-normalised (full-width letters become
/// plain ones), lower case, with every space removed.
fn fold(id: &str) -> String {
    if id.is_ascii() {
        return id
            .bytes()
            .filter(|b| !b.is_ascii_whitespace())
            .map(|b| b.to_ascii_lowercase() as char)
            .collect();
    }
    id.nfkc()
        .flat_map(char::to_lowercase)
        .filter(|c| !c.is_whitespace())
        .collect()
}

/// A hash of the folded ID, without building the folded text for plain ASCII IDs.
fn fold_hash(id: &str, state: &foldhash::fast::FixedState) -> u64 {
    use std::hash::{BuildHasher, Hasher};
    let mut h = state.build_hasher();
    if id.is_ascii() {
        let mut buf = [0u8; 64];
        let mut n = 0;
        for b in id.bytes().filter(|b| !b.is_ascii_whitespace()) {
            if n == buf.len() {
                h.write(&buf);
                n = 0;
            }
            buf[n] = b.to_ascii_lowercase();
            n += 1;
        }
        h.write(&buf[..n]);
    } else {
        h.write(fold(id).as_bytes());
    }
    h.finish()
}

/// IDs that are different people to hubwatch but differ only by case, width or spaces.
/// `beside` when it runs beside other work that keeps both cores busy (the merge of pairs):
/// it then sorts on this thread alone.
pub fn id_collisions(ids: &IdMap, beside: bool) -> Option<Warning> {
    let state = foldhash::fast::FixedState::with_seed(7);
    // The IDs sorted by folded hash (a stable radix sort, so in ID order where the hashes are
    // equal): IDs with equal hashes sit together, and equal hashes are confirmed on the folded
    // text. Two sorted arrays take less memory than a hash map of the same pairs (this runs
    // beside the merge of pairs). With a comparison sort of (hash, ID) instead, the whole
    // check took 8 ms at 200,000 people and 86 ms at 2 million, against 6 and 67 ms.
    let mut hashes: Vec<u64> = (0..ids.len() as u32)
        .map(|i| fold_hash(ids.name(i), &state))
        .collect();
    let mut order: Vec<u32> = (0..ids.len() as u32).collect();
    match beside {
        true => crate::sort::radix_sort_by_key_here(&mut hashes, &mut order),
        false => crate::sort::radix_sort_by_key(&mut hashes, &mut order),
    }
    // (index of the second member, first member, the others), ordered by when the group
    // would be noticed reading IDs in order.
    let mut found: Vec<(u32, u32, Vec<u32>)> = Vec::new();
    let mut start = 0;
    for same in hashes.chunk_by(|a, b| a == b) {
        let run = &order[start..start + same.len()];
        start += same.len();
        if run.len() < 2 {
            continue;
        }
        let head = run[0];
        let folded = fold(ids.name(head));
        // A different folded text under the same hash is a collision, not a near-duplicate
        // (rare; not reported).
        let rest: Vec<u32> = run[1..]
            .iter()
            .copied()
            .filter(|&i| fold(ids.name(i)) == folded)
            .collect();
        if let Some(&second) = rest.first() {
            found.push((second, head, rest));
        }
    }
    found.sort_unstable_by_key(|g| g.0);
    let groups: Vec<(u32, Vec<u32>)> = found.into_iter().map(|(_, h, r)| (h, r)).collect();
    if groups.is_empty() {
        return None;
    }
    let ids_involved: usize = groups.iter().map(|g| 1 + g.1.len()).sum();
    let examples: Vec<String> = groups
        .iter()
        .take(EXAMPLES)
        .map(|(h, rest)| {
            std::iter::once(h)
                .chain(rest)
                .map(|&i| format!("\"{}\"", ids.name(i)))
                .collect::<Vec<_>>()
                .join(" / ")
        })
        .collect();
    Some(Warning {
        code: "ids_differ_only_by_case_width_or_spaces",
        message: format!(
            "{} groups of IDs ({ids_involved} IDs) differ only by letter case, character width or spaces, \
             and are counted as different people: {}{}. If each group is one person, correct the export \
             (or use --ids-ignore-case for letter case)",
            groups.len(),
            examples.join("; "),
            if groups.len() > EXAMPLES { "; …" } else { "" }
        ),
        count: groups.len() as u64,
    })
}

/// True when an ID reads like a placeholder for "unknown": all nines or all zeros, a question
/// mark, a dash, or a word such as unknown, none, missing (common practice, no source).
pub fn looks_like_code(id: &str) -> bool {
    let t = id.trim();
    if t.is_empty() {
        return true;
    }
    if t.chars().all(|c| c == '9') || t.chars().all(|c| c == '0') {
        return true;
    }
    if t.chars()
        .all(|c| matches!(c, '?' | '-' | '.' | '_' | '*' | 'x' | 'X'))
    {
        return true;
    }
    let l = t.to_lowercase();
    matches!(
        l.as_str(),
        "unknown"
            | "unk"
            | "none"
            | "missing"
            | "na"
            | "n/a"
            | "nan"
            | "null"
            | "nil"
            | "not known"
            | "no id"
            | "noid"
            | "anon"
            | "anonymous"
            | "other"
            | "tbd"
            | "n.a."
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn near_collisions_are_grouped() {
        let mut ids = IdMap::new(true);
        for s in ["P01", "p01", "Q 7", "Q7", "ＡＢ", "AB", "Z"] {
            ids.intern(s);
        }
        let w = id_collisions(&ids, false).unwrap();
        assert_eq!(w.count, 3, "{}", w.message);
        assert!(w.message.contains("\"P01\" / \"p01\""), "{}", w.message);
    }

    #[test]
    fn codes_are_recognised() {
        for c in ["99", "999", "0", "?", "--", "Unknown", "N/A", "xx"] {
            assert!(looks_like_code(c), "{c}");
        }
        for c in ["P99", "909", "Anna", "17"] {
            assert!(!looks_like_code(c), "{c}");
        }
    }
}
