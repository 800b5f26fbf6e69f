//! All network statistics of one dataset, computed once (their JSON form, the contract of
//! `hubwatch summary --json`, is `report::json`).

use crate::dataset::Dataset;
use crate::ingest::reconcile::AttrColumn;
use crate::metrics::{degree, fits, mixing, neighbours, structure, Stat};

/// Settings of the statistics that have a cost or a random part.
#[derive(Debug, Clone, Copy)]
pub struct MetricOptions {
    /// Degree-preserving randomisations for the null model (0 = skip).
    pub null_replicates: usize,
    /// Swap attempts per pair in each randomisation.
    pub null_swaps_per_edge: usize,
    /// Seed of the null model's random numbers.
    pub seed: u64,
}

impl Default for MetricOptions {
    fn default() -> Self {
        MetricOptions {
            null_replicates: 5,
            null_swaps_per_edge: 10,
            seed: 1,
        }
    }
}

/// Every statistic of the network.
#[derive(Debug, Clone)]
pub struct NetworkStats {
    /// Degree of each person.
    pub degrees: Vec<u32>,
    /// Degree distribution and moments.
    pub degree: degree::DegreeStats,
    /// Neighbour degrees and the paradox.
    pub neighbours: neighbours::Neighbours,
    /// Degree assortativity r.
    pub r: Stat,
    /// Its jackknife standard error (variant A).
    pub r_se: Stat,
    /// r under the degree-preserving null model.
    pub null: mixing::NullModel,
    /// Clustering.
    pub clustering: structure::Clustering,
    /// k-core number of each person.
    pub cores: Vec<u32>,
    /// Articulation points.
    pub bridges: Vec<u32>,
    /// Component of each person, and component sizes.
    pub components: (Vec<u32>, Vec<u32>),
    /// Mixing by people's attributes (area, age group) where present.
    pub attribute_mixing: Vec<(String, mixing::AttributeMixing)>,
    /// Degree assortativity within each setting's sub-network.
    pub r_by_setting: Vec<(String, Stat)>,
    /// Fits of the degree distribution.
    pub fits: DegreeFits,
    /// Case statistics (attack rate, offspring, serial interval).
    pub cases: super::casedata::CaseStats,
}

/// Fits of the degree distribution and which describes it best.
#[derive(Debug, Clone)]
pub struct DegreeFits {
    /// Poisson.
    pub poisson: fits::Fit,
    /// Geometric.
    pub geometric: fits::Fit,
    /// Negative binomial with the profile interval for k.
    pub negative_binomial: fits::NegBin,
    /// Power-law tail (x_min by KS), or why none was fitted.
    pub power_law: Result<fits::PowerLaw, &'static str>,
    /// Model with the lowest AIC among the three whole-distribution models.
    pub best: Option<&'static str>,
}

/// Smallest tail the power-law fit accepts (short tails give unstable alpha and small KS).
pub const MIN_TAIL: u64 = 10;

/// Fit the degree distribution (its histogram) with every model.
pub fn fit_degrees(histogram: &[u64]) -> DegreeFits {
    let s = fits::Sample::from_counts(histogram.to_vec());
    let poisson = fits::poisson(&s);
    let geometric = fits::geometric(&s);
    let negative_binomial = fits::negative_binomial(&s);
    let best = [&poisson, &geometric, &negative_binomial.fit]
        .into_iter()
        .filter_map(|f| f.aic.ok().map(|a| (f.model, a)))
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .map(|(m, _)| m);
    DegreeFits {
        poisson,
        geometric,
        negative_binomial,
        power_law: fits::power_law(&s, MIN_TAIL),
        best,
    }
}

/// How many people `degree.top` lists.
pub const TOP: usize = 20;

/// People attributes whose mixing is reported.
const MIXING_ATTRIBUTES: [&str; 2] = ["area", "age_group"];

/// Compute every statistic. The independent parts run as tasks on all cores (triangle counting
/// itself split across them); each result is the same as computed alone.
pub fn compute(d: &Dataset, opts: &MetricOptions) -> NetworkStats {
    // The adjacency may still be in the making (see `graph::AdjacencyCell`): the degrees are
    // known already, and a task that needs the adjacency waits for it on first use.
    let degrees = d.graph.degrees().to_vec();
    let deg = &degrees[..];
    let g = &d.graph;
    let (mut clustering, mut cores, mut bridges, mut components) = (None, None, None, None);
    let (mut mixing, mut r_set, mut null, mut rest) = (None, None, None, None);
    let mut near = None;
    // With HUBWATCH_STAGES set, each task says on stderr when it started and ended.
    let t0 = std::time::Instant::now();
    let timed = |what: &'static str, task: &mut dyn FnMut()| {
        let start = t0.elapsed().as_secs_f64();
        task();
        if std::env::var_os("HUBWATCH_STAGES").is_some() {
            let end = t0.elapsed().as_secs_f64();
            eprintln!("statistics: {what} {start:.3}-{end:.3} s");
        }
    };
    rayon::scope(|s| {
        let (c, k, b, p) = (&mut clustering, &mut cores, &mut bridges, &mut components);
        // The one long sequential task goes first, so that the second core takes it at once
        // (the first core works from the other end: the short tasks, those that need no
        // adjacency last spawned, so done first while it may still be being built);
        // clustering, whose triangle count splits across cores, comes next and fills both
        // cores at the end.
        s.spawn(move |_| {
            timed("cut points", &mut || {
                let (cut, parts) = structure::cut_points_and_components(g);
                (*b, *p) = (Some(cut), Some(parts));
            })
        });
        s.spawn(move |_| {
            timed("clustering", &mut || {
                *c = Some(structure::clustering(g, deg))
            })
        });
        s.spawn(move |_| {
            timed("k-cores", &mut || {
                *k = Some(structure::core_numbers(g, deg))
            })
        });
        let nb = &mut near;
        s.spawn(move |_| {
            timed("neighbours", &mut || {
                *nb = Some(neighbours::neighbours(g, deg))
            })
        });
        let (m, rs, nm, re) = (&mut mixing, &mut r_set, &mut null, &mut rest);
        s.spawn(move |_| timed("attribute mixing", &mut || *m = Some(attribute_mixing(d))));
        s.spawn(move |_| timed("r by setting", &mut || *rs = Some(r_by_setting(d, deg))));
        s.spawn(move |_| {
            timed("null model", &mut || {
                let (a, b) = (&d.edges.a, &d.edges.b);
                let (r, se) = (opts.null_swaps_per_edge, opts.seed);
                *nm = Some(mixing::null_model(a, b, deg, opts.null_replicates, r, se));
            })
        });
        s.spawn(move |_| timed("degree figures", &mut || *re = Some(degree_parts(d, deg))));
    });
    let (cases, fits, degree, r, r_se) = rest.expect("task ran");
    NetworkStats {
        cases,
        fits,
        degree,
        neighbours: near.expect("task ran"),
        r,
        r_se,
        null: null.expect("task ran"),
        clustering: clustering.expect("task ran"),
        cores: cores.expect("task ran"),
        bridges: bridges.expect("task ran"),
        components: components.expect("task ran"),
        attribute_mixing: mixing.expect("task ran"),
        r_by_setting: r_set.expect("task ran"),
        degrees,
    }
}

/// The degree-based figures that need no adjacency: case statistics, the distribution and its
/// fits, r and its standard error.
type DegreeParts = (
    super::casedata::CaseStats,
    DegreeFits,
    degree::DegreeStats,
    Stat,
    Stat,
);

fn degree_parts(d: &Dataset, deg: &[u32]) -> DegreeParts {
    let (a, b) = (&d.edges.a, &d.edges.b);
    let degree = degree::degree_stats(deg);
    let fits = fit_degrees(&degree.histogram);
    // r and its standard error from the pairs counted by their end degrees: one pass over
    // the pairs (reading two degrees at random each) for both, and the same integer sums as
    // a pass of its own would give.
    let joint = mixing::joint_degree_counts(a, b, deg);
    (
        super::casedata::case_stats(d),
        fits,
        degree,
        mixing::assortativity_from_joint(&joint),
        mixing::jackknife_from_joint(&joint),
    )
}

/// Mixing by each people attribute present (area, age group), groups in sorted order.
fn attribute_mixing(d: &Dataset) -> Vec<(String, mixing::AttributeMixing)> {
    let (names, attrs): (Vec<String>, Vec<mixing::Grouping>) = MIXING_ATTRIBUTES
        .iter()
        .filter_map(|name| {
            let col = d.attrs.column(name)?;
            let values = &d.attrs.values[col];
            // The value codes the people hold (a handful of groups, millions of people),
            // relabelled so that groups are in sorted order of their text.
            let codes = &values.codes()[..d.people().min(values.len())];
            let mut held = vec![false; values.distinct_len()];
            for &c in codes.iter().filter(|&&c| c != AttrColumn::NONE) {
                held[c as usize] = true;
            }
            let mut labels: Vec<(&str, u32)> = (0..held.len() as u32)
                .filter(|&c| held[c as usize])
                .map(|c| (values.text(c), c))
                .collect();
            labels.sort_unstable();
            let mut group = vec![0u32; held.len()];
            for (r, (_, old)) in labels.iter().enumerate() {
                group[*old as usize] = r as u32;
            }
            let labels = labels.into_iter().map(|(l, _)| l.to_string()).collect();
            let missing = AttrColumn::NONE;
            let attr = mixing::Grouping {
                codes,
                missing,
                group,
                labels,
            };
            Some((name.to_string(), attr))
        })
        .unzip();
    let (a, b) = (&d.edges.a, &d.edges.b);
    let mixings = mixing::attribute_mixing((a, b), d.people(), attrs);
    names.into_iter().zip(mixings).collect()
}

/// The pairs of every setting are gathered in one pass over the pairs when their lists take at
/// most this many bytes together.
const SETTING_LISTS_BYTES: usize = 128 << 20;

/// Otherwise, the settings' per-person degree counts held at once (two passes over the pairs
/// for as many settings as fit, for each batch of them).
const SETTING_DEGREES_BYTES: usize = 256 << 20;

/// Degree assortativity within each setting's own sub-network.
fn r_by_setting(d: &Dataset, deg: &[u32]) -> Vec<(String, Stat)> {
    r_by_setting_within(d, deg, (SETTING_LISTS_BYTES, SETTING_DEGREES_BYTES))
}

/// [`r_by_setting`], gathering every setting's pairs in one pass when their lists take at most
/// `lists` bytes; else holding at most `degrees` bytes of per-person degree counts at once.
fn r_by_setting_within(
    d: &Dataset,
    deg: &[u32],
    (lists, degrees): (usize, usize),
) -> Vec<(String, Stat)> {
    let e = &d.edges;
    let (a, b) = (&e.a, &e.b);
    let nset = d.settings.len();
    let entries = e.setting_codes.len();
    if entries * 8 > lists {
        let max = deg.iter().copied().max().unwrap_or(0);
        let rs = mixing::assortativity_within(
            (a, b),
            d.people(),
            (&e.setting_off, &e.setting_codes),
            (nset, max),
            degrees,
        );
        return d.settings.iter().cloned().zip(rs).collect();
    }
    // r of one setting from its pairs (in pair order), with degrees within the setting (in
    // cache for a few million people: a pass over each setting's own pairs beats the two
    // passes over all pairs above).
    let r_of = |sa: &[u32], sb: &[u32]| {
        let mut sd = vec![0u32; d.people()];
        for (i, (&x, &y)) in sa.iter().zip(sb).enumerate() {
            crate::prefetch::second_end_ahead(&sd, sb, i, 1);
            sd[x as usize] += 1;
            sd[y as usize] += 1;
        }
        mixing::assortativity(sa, sb, &sd)
    };
    // Every setting's pairs in one pass: a counting sort of the pairs' (pair, setting)
    // entries by setting, each setting's pairs in pair order as a pass of its own gives them.
    let of_setting = |c: u16| (1..=nset).contains(&usize::from(c));
    let mut start = vec![0usize; nset + 2];
    for &c in e.setting_codes.iter().filter(|&&c| of_setting(c)) {
        start[usize::from(c) + 1] += 1;
    }
    for c in 1..start.len() {
        start[c] += start[c - 1];
    }
    let mut next = start.clone();
    let (mut sa, mut sb) = (vec![0u32; entries], vec![0u32; entries]);
    for p in 0..e.len() {
        for &c in e.settings(p).iter().filter(|&&c| of_setting(c)) {
            let at = &mut next[usize::from(c)];
            (sa[*at], sb[*at]) = (a[p], b[p]);
            *at += 1;
        }
    }
    d.settings
        .iter()
        .enumerate()
        .map(|(i, label)| {
            let run = start[i + 1]..start[i + 2];
            (label.clone(), r_of(&sa[run.clone()], &sb[run]))
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// r within each setting, from the settings' pairs gathered in one pass or from their
    /// degrees held all at once, one setting at a time, two at a time or with 32-bit counts, is
    /// r over that setting's pairs alone with degrees counted among them, as
    /// `mixing::assortativity` gives it (the same integer sums; networkx checks the values
    /// themselves in `tests/crosscheck/networkx_check.py`).
    #[test]
    fn r_by_setting_in_batches_is_r_of_each_setting_alone() {
        use crate::ingest::{dates, table::ReadOptions, LoadOptions};
        let opts = LoadOptions {
            overrides: Vec::new(),
            as_of: dates::parse_iso("2030-01-01").expect("a date"),
            read: ReadOptions {
                sheet: None,
                chunk_rows: 0,
            },
            progress: false,
            view: Default::default(),
        };
        let config = crate::config::Config::default();
        let d = crate::dataset::load(&crate::sample::inputs(), &config, &opts).expect("sample");
        let e = &d.edges;
        let alone: Vec<(String, Stat)> = (0..d.settings.len())
            .map(|i| {
                let code = (i + 1) as u16;
                let (sa, sb): (Vec<u32>, Vec<u32>) = (0..e.len())
                    .filter(|&p| e.settings(p).contains(&code))
                    .map(|p| (e.a[p], e.b[p]))
                    .unzip();
                let mut sd = vec![0u32; d.people()];
                for (&x, &y) in sa.iter().zip(&sb) {
                    sd[x as usize] += 1;
                    sd[y as usize] += 1;
                }
                (d.settings[i].clone(), mixing::assortativity(&sa, &sb, &sd))
            })
            .collect();
        assert!(alone.len() >= 3 && alone.iter().all(|(_, r)| r.is_ok()));
        let deg = d.graph.degrees().to_vec();
        let lists = usize::MAX;
        assert_eq!(r_by_setting_within(&d, &deg, (lists, 0)), alone);
        for (degrees, max) in [(usize::MAX, &deg[..]), (0, &deg), (4 * d.people(), &deg)] {
            assert_eq!(r_by_setting_within(&d, max, (0, degrees)), alone);
        }
        assert_eq!(r_by_setting_within(&d, &[u32::MAX], (0, usize::MAX)), alone);
    }
}
