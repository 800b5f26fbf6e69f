//! The priority list and what the Priority pane reads of it (rank positions, the sorted
//! orders, the filter index, each entry's main reason, the day's dues): ranked on a worker
//! after the first frame, since the Overview, Degrees, Neighbours and Clusters panes do not
//! need it (at 10 million rows it takes about 1.2 s).

use crate::analysis::daywork::{DayInput, Due};
use crate::analysis::filters::FilterIndex;
use crate::analysis::priority::{cap, scale_by, Preset, Ranked, COMPONENTS};
use crate::analysis::ranking::{followup_map, rank_settled, RankRequest, RankedList, Settings};
use crate::analysis::stats::NetworkStats;
use crate::dataset::Dataset;
use crate::error::Result;
use crate::workspace::PersonState;
use rayon::prelude::*;

/// The ranked list of everyone (no filters; the dashboard filters) and its indexes.
pub struct Listing {
    /// The list.
    pub list: RankedList,
    /// Position of each person in `list.ranked` (u32::MAX: not ranked).
    pub rank_pos: Vec<u32>,
    /// Indices into `list.ranked`, in ID order.
    pub by_id: Vec<u32>,
    /// Every filterable value per ranked entry, in rank order (the one filter engine).
    pub index: FilterIndex,
    /// Ranked indices sorted by contacts (most first), cases met (most first) and days left
    /// (fewest first), ties in rank order.
    pub orders: [Vec<u32>; 3],
    /// Per ranked entry: the score component that contributes most ("why is this person
    /// here?").
    pub main_reason: Vec<&'static str>,
    /// What today's counts read of the list (to count again after follow-up changes).
    pub dues: Vec<Due>,
}

impl Listing {
    /// Rank everyone and index the list; also the day's work's input, which reads the list
    /// (`id_rank`: each person's place in ID order).
    pub fn build(
        d: &Dataset,
        stats: &NetworkStats,
        req: &RankRequest,
        states: &[PersonState],
        settled: Settings,
        id_rank: &[u32],
    ) -> Result<(Listing, DayInput)> {
        let t = std::time::Instant::now();
        let lap = |what: &str| crate::report::stage_lap("list", what, t);
        let list = rank_settled(d, stats, req, states, settled)?;
        lap("ranking");
        let mut rank_pos = vec![u32::MAX; d.people()];
        for (i, r) in list.ranked.iter().enumerate() {
            rank_pos[r.node as usize] = i as u32;
        }
        let orders = sorted_orders(&list.ranked);
        lap("orders");
        let by_id = in_id_order(&list.ranked, id_rank);
        let index = FilterIndex::build(d, stats, &list.ranked, &followup_map(states));
        lap("index");
        let main_reason = main_reasons(&list.ranked, &list.preset.1);
        let input = DayInput::without_names(stats, &list.ranked);
        let dues = input.dues.clone();
        lap("day's work input");
        let listing = Listing {
            list,
            rank_pos,
            by_id,
            index,
            orders,
            main_reason,
            dues,
        };
        Ok((listing, input))
    }
}

/// The list sorted by contacts, cases met and days left (ties in rank order). Each is an
/// unstable sort of (key, rank position) pairs, which are all distinct, so it gives the stable
/// order; the three run on both cores.
fn sorted_orders(ranked: &[Ranked]) -> [Vec<u32>; 3] {
    let by = |key: &(dyn Fn(&Ranked) -> u64 + Sync)| {
        let mut v: Vec<(u64, u32)> = ranked
            .par_iter()
            .enumerate()
            .map(|(i, r)| (key(r), i as u32))
            .collect();
        v.par_sort_unstable();
        v.into_iter().map(|(_, i)| i).collect::<Vec<u32>>()
    };
    // Descending as ascending integers: the complement of `total_cmp`'s order.
    let desc = |x: f64| {
        let b = x.to_bits();
        !(if b >> 63 == 1 { !b } else { b | 1 << 63 })
    };
    let ((by_degree, by_cases), by_days) = rayon::join(
        || {
            rayon::join(
                || by(&|r| u64::from(u32::MAX - r.degree)),
                || by(&|r| desc(r.raw[1])),
            )
        },
        || by(&|r| (i64::from(r.days_left.unwrap_or(i32::MAX)) - i64::from(i32::MIN)) as u64),
    );
    [by_degree, by_cases, by_days]
}

/// Indices into the ranked list in ID order (`id_rank`: each person's place in ID order).
fn in_id_order(ranked: &[Ranked], id_rank: &[u32]) -> Vec<u32> {
    let mut by_id = vec![u32::MAX; id_rank.len()];
    for (i, r) in ranked.iter().enumerate() {
        by_id[id_rank[r.node as usize] as usize] = i as u32;
    }
    by_id.retain(|&i| i != u32::MAX);
    by_id
}

/// Per ranked entry: the score component that contributes most (the last of equal ones, as
/// `Iterator::max_by` picks), without building every part.
fn main_reasons(ranked: &[Ranked], preset: &Preset) -> Vec<&'static str> {
    let scale = COMPONENTS.map(|name| {
        let weight = preset.weights.get(name).copied().unwrap_or(0.0);
        (cap(name, preset), weight)
    });
    let mut out = Vec::new();
    ranked
        .par_iter()
        .map(|r| {
            let mut best: Option<(usize, f64)> = None;
            for (i, (&(cap, w), raw)) in scale.iter().zip(r.raw).enumerate() {
                let c = scale_by(cap, raw) * w;
                if best.is_none_or(|(_, b)| c.total_cmp(&b).is_ge()) {
                    best = Some((i, c));
                }
            }
            best.map_or("", |(i, _)| COMPONENTS[i])
        })
        .collect_into_vec(&mut out);
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn entry(i: usize, degree: u32, cases: f64, days_left: Option<i32>, raw: [f64; 9]) -> Ranked {
        let mut raw = raw;
        raw[1] = cases;
        Ranked {
            node: i as u32,
            score: 0.0,
            raw,
            degree,
            last_exposure: None,
            window_end: None,
            days_left,
            overdue: false,
            high_degree: false,
            bridge: false,
        }
    }

    proptest! {
        /// The three column orders equal the plain stable sorts (ties in rank order).
        #[test]
        fn orders_are_the_stable_sorts(
            v in proptest::collection::vec((0u32..5, 0u32..4, proptest::option::of(-3i32..3)), 0..200)
        ) {
            let ranked: Vec<Ranked> = v
                .iter()
                .enumerate()
                .map(|(i, &(k, c, d))| entry(i, k, f64::from(c), d, [0.0; 9]))
                .collect();
            let base: Vec<u32> = (0..ranked.len() as u32).collect();
            let mut by_degree = base.clone();
            by_degree.sort_by_key(|&i| std::cmp::Reverse(ranked[i as usize].degree));
            let mut by_cases = base.clone();
            by_cases.sort_by(|&a, &b| ranked[b as usize].raw[1].total_cmp(&ranked[a as usize].raw[1]));
            let mut by_days = base;
            by_days.sort_by_key(|&i| ranked[i as usize].days_left.unwrap_or(i32::MAX));
            prop_assert_eq!(sorted_orders(&ranked), [by_degree, by_cases, by_days]);
        }

        /// The main reason is the component `Ranked::parts` gives the largest contribution
        /// (the last of equal ones, as `max_by` picks).
        #[test]
        fn main_reason_is_the_largest_part(
            raws in proptest::collection::vec(proptest::array::uniform9(0u8..4), 1..50)
        ) {
            let config = crate::analysis::priority::PriorityConfig::load(None).unwrap();
            let preset = config.preset("balanced").unwrap();
            let ranked: Vec<Ranked> = raws
                .iter()
                .enumerate()
                .map(|(i, r)| {
                    let raw = r.map(|x| f64::from(x) / 2.0);
                    entry(i, 1, raw[1], None, raw)
                })
                .collect();
            let want: Vec<&str> = ranked
                .iter()
                .map(|r| {
                    r.parts(preset)
                        .into_iter()
                        .max_by(|a, b| a.contribution.total_cmp(&b.contribution))
                        .map(|p| p.name)
                        .unwrap_or("")
                })
                .collect();
            prop_assert_eq!(main_reasons(&ranked, preset), want);
        }
    }
}
