//! Property tests: ledger identities, and results independent of row order and ID spelling.

use crate::common;

use std::fs;

use common::{edge_set, load};
use proptest::prelude::*;

fn write_export(
    dir: &std::path::Path,
    name: &str,
    rows: &[(u8, u8)],
    upper: bool,
) -> std::path::PathBuf {
    let mut s = String::from("source_id,target_id\n");
    for (a, b) in rows {
        let id = |x: u8| {
            if upper {
                format!("P{x:02}")
            } else {
                format!("  P{x:02} ")
            }
        };
        s.push_str(&format!(
            "{},{}\n",
            id(*a),
            if *b == 255 { String::new() } else { id(*b) }
        ));
    }
    let p = dir.join(name);
    fs::write(&p, s).unwrap();
    p
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    #[test]
    fn ledger_balances_and_order_and_spelling_do_not_matter(
        rows in proptest::collection::vec((0u8..30, prop_oneof![0u8..30, Just(255u8)]), 1..120),
        seed in any::<u64>(),
    ) {
        let dir = tempfile::tempdir().unwrap();
        let a = write_export(dir.path(), "a.csv", &rows, true);
        let mut shuffled = rows.clone();
        // A deterministic shuffle from the seed.
        let mut x = seed | 1;
        for i in (1..shuffled.len()).rev() {
            x ^= x << 13; x ^= x >> 7; x ^= x << 17;
            shuffled.swap(i, (x % (i as u64 + 1)) as usize);
        }
        let b = write_export(dir.path(), "b.csv", &shuffled, false);
        let da = load(&[&a], &[]);
        let db = load(&[&b], &[]);
        let c = da.ledger.exposures;
        prop_assert!(c.balanced());
        prop_assert_eq!(c.read, rows.len() as u64);
        let selfs = rows.iter().filter(|(s, t)| s == t).count() as u64;
        let blanks = rows.iter().filter(|(_, t)| *t == 255).count() as u64;
        prop_assert_eq!(c.quarantined, selfs + blanks);
        prop_assert_eq!(c.used as usize, da.edges.len());
        // Same pairs, same multiplicities, same ledger after shuffling and re-spacing IDs.
        prop_assert_eq!(edge_set(&da), edge_set(&db));
        prop_assert_eq!(c, db.ledger.exposures);
        // The statistics do not depend on row order or ID spacing either.
        let (sa, sb) = (
            hubwatch::analysis::stats::compute(&da, &hubwatch::analysis::stats::MetricOptions { null_replicates: 0, ..Default::default() }),
            hubwatch::analysis::stats::compute(&db, &hubwatch::analysis::stats::MetricOptions { null_replicates: 0, ..Default::default() }),
        );
        prop_assert_eq!(&sa.degree, &sb.degree);
        prop_assert_eq!(sa.r, sb.r);
        prop_assert_eq!(sa.clustering.transitivity, sb.clustering.transitivity);
        prop_assert_eq!(sa.bridges.len(), sb.bridges.len());
        let mut ca = sa.cores.clone();
        let mut cb = sb.cores.clone();
        ca.sort_unstable();
        cb.sort_unstable();
        prop_assert_eq!(ca, cb);
        // Degrees sum to twice the pairs.
        let total: usize = (0..da.people() as u32).map(|n| da.graph.out_degree(n)).sum();
        prop_assert_eq!(total, 2 * da.edges.len());
    }
}
