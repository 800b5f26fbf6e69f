//! The pair table and the tables keyed by pairs (settings, date spans): sorted by pair, every
//! pair between two known people, every row joined to its pair.

use std::path::Path;

use polars::prelude::*;

use super::columns::{bad, days_of, floats, ints, need, node_of};
use super::PairColumns;
use crate::error::Result;

pub(super) fn read_pairs(
    dir: &Path,
    df: &DataFrame,
    n: usize,
    n_settings: usize,
) -> Result<PairColumns> {
    let t = "pairs";
    let a = ints(df, dir, t, "a")?;
    let b = ints(df, dir, t, "b")?;
    // Engines write pairs in any order: sort them by (a, b) (radix, on one packed key).
    let mut keys: Vec<u64> = Vec::with_capacity(a.len());
    for (&x, &y) in a.iter().zip(&b) {
        let (x, y) = (node_of(x, n, dir, t)?, node_of(y, n, dir, t)?);
        if x >= y {
            return Err(bad(
                dir,
                t,
                format!("pair ({x}, {y}) is not written smaller node first"),
            ));
        }
        keys.push(u64::from(x) << 32 | u64::from(y));
    }
    let mut order: Vec<u32> = (0..a.len() as u32).collect();
    crate::sort::radix_sort_by_key(&mut keys, &mut order);
    let order: Vec<usize> = order.into_iter().map(|i| i as usize).collect();
    let pick_u32 = |v: Vec<i64>| -> Vec<u32> { order.iter().map(|&i| v[i] as u32).collect() };
    let mut p = PairColumns::default();
    for w in keys.windows(2) {
        if w[0] == w[1] {
            let (x, y) = (w[0] >> 32, w[0] & 0xffff_ffff);
            return Err(bad(dir, t, format!("pair ({x}, {y}) appears twice")));
        }
    }
    p.a = keys.iter().map(|k| (k >> 32) as u32).collect();
    p.b = keys.iter().map(|k| *k as u32).collect();
    p.rows = pick_u32(ints(df, dir, t, "rows")?);
    p.a_named_b = pick_u32(ints(df, dir, t, "a_named_b")?);
    p.links_ab = pick_u32(ints(df, dir, t, "links_ab")?);
    p.links_ba = pick_u32(ints(df, dir, t, "links_ba")?);
    let first = days_of(df, dir, t, "first_day")?;
    let last = days_of(df, dir, t, "last_day")?;
    let minutes = floats(df, dir, t, "minutes")?;
    p.first = order.iter().map(|&i| first[i]).collect();
    p.last = order.iter().map(|&i| last[i]).collect();
    p.minutes = order.iter().map(|&i| minutes[i]).collect();
    let ps = need(dir, "pair_settings")?;
    let (sa, sb, sc) = (
        ints(&ps, dir, "pair_settings", "a")?,
        ints(&ps, dir, "pair_settings", "b")?,
        ints(&ps, dir, "pair_settings", "code")?,
    );
    for (e, row) in pair_of_rows(&keys, &sa, &sb, dir, "pair_settings")? {
        let c = sc[row];
        if c < 1 || c as usize > n_settings {
            return Err(bad(
                dir,
                "pair_settings",
                format!("setting code {c} is not in the settings table"),
            ));
        }
        p.settings.push((e, c as u16));
    }
    p.settings.sort_unstable();
    p.settings.dedup();
    let sp = need(dir, "spans")?;
    let (xa, xb) = (ints(&sp, dir, "spans", "a")?, ints(&sp, dir, "spans", "b")?);
    let (f, l) = (
        days_of(&sp, dir, "spans", "span_first")?,
        days_of(&sp, dir, "spans", "span_last")?,
    );
    for (e, row) in pair_of_rows(&keys, &xa, &xb, dir, "spans")? {
        p.spans.push((e, f[row], l[row]));
    }
    p.spans.sort_unstable();
    Ok(p)
}

/// The pair (index into the sorted `keys`) of each row of a table keyed by (a, b), as
/// (pair, row) in pair order: the rows are radix-sorted and walked beside the pairs (a binary
/// search per row cost seconds at millions of rows).
fn pair_of_rows(
    keys: &[u64],
    a: &[i64],
    b: &[i64],
    dir: &Path,
    table: &str,
) -> Result<Vec<(u32, usize)>> {
    let mut row_keys: Vec<u64> = Vec::with_capacity(a.len());
    for (&x, &y) in a.iter().zip(b) {
        if !(0..=i64::from(u32::MAX)).contains(&x) || !(0..=i64::from(u32::MAX)).contains(&y) {
            return Err(bad(
                dir,
                table,
                format!("pair ({x}, {y}) is not in the pair table"),
            ));
        }
        row_keys.push((x as u64) << 32 | y as u64);
    }
    let mut rows: Vec<u32> = (0..a.len() as u32).collect();
    crate::sort::radix_sort_by_key(&mut row_keys, &mut rows);
    let mut out = Vec::with_capacity(rows.len());
    let mut e = 0usize;
    for (k, r) in row_keys.iter().zip(rows) {
        while e < keys.len() && keys[e] < *k {
            e += 1;
        }
        if keys.get(e) != Some(k) {
            let (x, y) = (k >> 32, k & 0xffff_ffff);
            return Err(bad(
                dir,
                table,
                format!("pair ({x}, {y}) is not in the pair table"),
            ));
        }
        out.push((e as u32, r as usize));
    }
    Ok(out)
}
