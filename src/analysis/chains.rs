//! Forward and backward tracing along dated exposures, for one dataset: the windows from the
//! pathogen's periods (or the user's), the seeds and targets from the people table, the
//! people reached with their chains, the possible sources with the cases they could have
//! infected, and the measured gain of backward over forward tracing.
//!
//! The walks themselves are `metrics::chains`; this module decides who starts them and on
//! which days.

use std::collections::HashMap;

use crate::analysis::priority::PriorityConfig;
use crate::dataset::Dataset;
use crate::error::{Error, Result};
use crate::ingest::dates;
use crate::metrics::chains::{self, Candidate, Reach, Rules, Seed, Step, Target};

/// What the user asked of the windows (None: from the configuration and the pathogen).
#[derive(Debug, Clone, Default)]
pub struct ChainRequest {
    /// Pathogen preset (default: the configuration's).
    pub pathogen: Option<String>,
    /// Fewest days from exposure to passing it on.
    pub min_gap: Option<u32>,
    /// Most days from exposure to passing it on.
    pub max_gap: Option<u32>,
    /// Longest chain followed.
    pub generations: Option<u16>,
    /// Forbid a chain to continue on the day a person was exposed.
    pub no_same_day: bool,
    /// Backward: look this many days before the reference date (instead of the incubation).
    pub days: Option<u32>,
}

/// The windows in force, and where they come from.
#[derive(Debug, Clone, PartialEq)]
pub struct Windows {
    /// Pathogen preset name.
    pub pathogen: String,
    /// How chains continue.
    pub rules: Rules,
    /// A case passes it on from this many days before their onset ...
    pub before_onset: i32,
    /// ... to this many after.
    pub after_onset: i32,
    /// Backward: a case was infected from `infection.0` to `infection.1` days before their
    /// reference date (inclusive).
    pub infection: (i32, i32),
    /// Where each figure comes from.
    pub source: String,
}

impl Windows {
    /// The windows of `req` under `config`; an error names what is missing.
    pub fn settle(config: &PriorityConfig, req: &ChainRequest) -> Result<Windows> {
        let name = req
            .pathogen
            .clone()
            .unwrap_or_else(|| config.pathogen.clone());
        let p = config.pathogen(&name)?;
        let periods = p.incubation_days.zip(p.infectious_days);
        let need = |what: &str| {
            Error::Usage(format!(
                "pathogen \"{name}\" has no incubation_days and infectious_days in the priority settings: {what}"
            ))
        };
        let (min_gap, max_gap) = match (req.min_gap, req.max_gap, periods) {
            (Some(a), Some(b), _) => (a as i32, b as i32),
            (a, b, Some(([inc_lo, inc_hi], [before, after]))) => (
                a.map_or((inc_lo as i32 - before as i32).max(0), |a| a as i32),
                b.map_or(inc_hi as i32 + after as i32, |b| b as i32),
            ),
            _ => {
                return Err(need(
                    "give both --min-gap and --max-gap, or add the periods",
                ))
            }
        };
        if max_gap < min_gap {
            return Err(Error::Usage(format!(
                "--max-gap ({max_gap}) is shorter than --min-gap ({min_gap})"
            )));
        }
        let same_day = config.chains.same_day && !req.no_same_day;
        let min_gap = if same_day { min_gap } else { min_gap.max(1) };
        let ([inc_lo, inc_hi], [before, after]) = periods.unwrap_or(([0, 0], [0, 0]));
        let infection = match req.days {
            Some(d) => (0, d as i32),
            None if periods.is_some() => (inc_lo as i32, inc_hi as i32),
            None => return Err(need("give --days, or add the periods")),
        };
        let mut source = match (&p.periods_source, periods) {
            (Some(s), Some(_)) => s.clone(),
            _ => "no periods in the settings".into(),
        };
        if req.min_gap.is_some() || req.max_gap.is_some() {
            source.push_str("; gap set on the command line");
        }
        if req.days.is_some() {
            source.push_str("; backward window set with --days");
        }
        Ok(Windows {
            pathogen: name,
            rules: Rules {
                min_gap,
                max_gap,
                generations: req.generations.unwrap_or(config.chains.generations).max(1),
            },
            before_onset: before as i32,
            after_onset: after as i32,
            infection,
            source,
        })
    }

    /// In words, for reports.
    pub fn describe(&self) -> String {
        format!(
            "pathogen {}: a person exposed on day a can pass it on from day a+{} to a+{}; a case from {} days before to {} days after onset; infected {}-{} days before onset; chains of at most {} steps ({})",
            self.pathogen,
            self.rules.min_gap,
            self.rules.max_gap,
            self.before_onset,
            self.after_onset,
            self.infection.0,
            self.infection.1,
            self.rules.generations,
            self.source
        )
    }
}

/// Whether a person is in the people table, and as what.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Listed {
    /// A case in the people table.
    Case,
    /// In the people table, not as a case (a traced contact).
    Contact,
    /// Only in the exposures table: not yet listed.
    New,
}

impl Listed {
    /// The word used in reports and exports.
    pub fn word(self) -> &'static str {
        match self {
            Listed::Case => "case",
            Listed::Contact => "listed contact",
            Listed::New => "not listed",
        }
    }
}

/// Per person: is a case, reference date (onset, else report date); and everyone's exposures
/// sorted by day, built on the first search from many people and kept for the next.
pub struct People {
    /// Role is "case".
    pub is_case: Vec<bool>,
    /// Onset date, else report date.
    pub reference: Vec<Option<i32>>,
    timeline: std::sync::OnceLock<chains::Timeline>,
}

impl People {
    /// Read from the people table's columns.
    pub fn of(d: &Dataset) -> People {
        let n = d.people();
        let date = |field: &str| d.attrs.column(field);
        let (onset, report, role) = (date("onset_date"), date("report_date"), date("role"));
        let value = |c: Option<usize>, i: usize| c.and_then(|c| d.attrs.values[c].get(i));
        let day = |c: Option<usize>, i: usize| value(c, i).and_then(|v| dates::parse_iso(v).ok());
        People {
            is_case: (0..n)
                .map(|i| value(role, i).is_some_and(|v| v.trim().eq_ignore_ascii_case("case")))
                .collect(),
            reference: (0..n)
                .map(|i| day(onset, i).or_else(|| day(report, i)))
                .collect(),
            timeline: std::sync::OnceLock::new(),
        }
    }

    /// Every case.
    pub fn cases(&self) -> Vec<u32> {
        (0..self.is_case.len() as u32)
            .filter(|&i| self.is_case[i as usize])
            .collect()
    }

    /// How a node is listed.
    pub fn listed(&self, d: &Dataset, v: u32) -> Listed {
        match (self.is_case[v as usize], d.is_implied(v)) {
            (true, _) => Listed::Case,
            (false, false) => Listed::Contact,
            (false, true) => Listed::New,
        }
    }
}

/// Resolve person IDs to nodes; an unknown ID is an error naming it.
pub fn nodes_of(d: &Dataset, ids: &[String]) -> Result<Vec<u32>> {
    ids.iter()
        .map(|id| {
            d.ids
                .get(id.trim())
                .ok_or_else(|| Error::Usage(format!("no person with ID \"{}\"", id.trim())))
        })
        .collect()
}

/// One person reached forward.
#[derive(Debug, Clone, PartialEq)]
pub struct Reached {
    /// Node.
    pub node: u32,
    /// Fewest steps of any chain to them.
    pub generation: u16,
    /// Earliest day they could have been exposed.
    pub earliest: i32,
    /// The chain giving that day, from a seed.
    pub chain: Vec<Step>,
    /// In the people table, and as what.
    pub listed: Listed,
    /// Contacts of their own.
    pub degree: u32,
}

/// Forward tracing from some people.
pub struct Forward {
    /// The seeds' nodes.
    pub seeds: Vec<u32>,
    /// Seeds without an onset or report date (every dated exposure of theirs counts).
    pub undated_seeds: usize,
    /// Everyone reached but the seeds: by generation, earliest day, more contacts, then ID.
    pub reached: Vec<Reached>,
    /// (person, day) states the search settled.
    pub states: usize,
}

/// The seeds' windows: a case's infectious period around the reference date, else unbounded.
pub fn seeds(people: &People, w: &Windows, nodes: &[u32]) -> (Vec<Seed>, usize) {
    let mut undated = 0;
    let seeds = nodes
        .iter()
        .map(|&v| match people.reference[v as usize] {
            Some(r) => Seed {
                node: v,
                from: r - w.before_onset,
                to: r + w.after_onset,
            },
            None => {
                undated += 1;
                Seed {
                    node: v,
                    from: i32::MIN,
                    to: i32::MAX,
                }
            }
        })
        .collect();
    (seeds, undated)
}

/// From more seeds than this, the search builds the day-sorted timeline of exposures first.
const MANY_SEEDS: usize = 64;

/// The walk from `nodes` under `w` (the raw reach, for callers that need only who).
pub fn reach(d: &Dataset, people: &People, w: &Windows, nodes: &[u32]) -> (Reach, usize) {
    let (s, undated) = seeds(people, w, nodes);
    // From a few people, walk their pairs; from many, sort everyone's exposures by day first.
    let r = match s.len() > MANY_SEEDS {
        true => {
            let t = people
                .timeline
                .get_or_init(|| chains::Timeline::build(&d.graph, &d.edges));
            chains::search(t, &s, &w.rules)
        }
        false => chains::forward(&d.graph, &d.edges, &s, &w.rules),
    };
    (r, undated)
}

/// Forward tracing from `nodes`.
pub fn forward(d: &Dataset, people: &People, w: &Windows, nodes: &[u32]) -> Forward {
    let (r, undated_seeds) = reach(d, people, w, nodes);
    let mut is_seed = vec![false; d.people()];
    for &v in nodes {
        is_seed[v as usize] = true;
    }
    let mut reached: Vec<Reached> = r
        .reached()
        .filter(|&v| !is_seed[v as usize])
        .filter_map(|v| {
            let (earliest, _) = r.earliest(v)?;
            Some(Reached {
                node: v,
                generation: r.generation(v)?,
                earliest,
                chain: r.chain(v),
                listed: people.listed(d, v),
                degree: d.graph.out_degree(v) as u32,
            })
        })
        .collect();
    reached.sort_by(|a, b| {
        (a.generation, a.earliest, std::cmp::Reverse(a.degree))
            .cmp(&(b.generation, b.earliest, std::cmp::Reverse(b.degree)))
            .then_with(|| d.ids.name(a.node).cmp(d.ids.name(b.node)))
    });
    let mut seeds: Vec<u32> = nodes.to_vec();
    seeds.sort_unstable();
    seeds.dedup();
    Forward {
        seeds,
        undated_seeds,
        reached,
        states: r.states(),
    }
}

/// A possible source, with the targets they met inside the targets' windows.
#[derive(Debug, Clone, PartialEq)]
pub struct Source {
    /// Node.
    pub node: u32,
    /// (target node, earliest day they met inside the target's window), by day.
    pub targets: Vec<(u32, i32)>,
    /// Earliest of those days.
    pub earliest: i32,
    /// Contacts of their own.
    pub degree: u32,
    /// In the people table, and as what.
    pub listed: Listed,
}

/// Backward tracing to some cases.
pub struct Backward {
    /// Targets searched, with their window (first and last day).
    pub targets: Vec<Target>,
    /// Targets left out: no onset or report date.
    pub undated: Vec<u32>,
    /// Possible sources: common sources of several targets first, then earlier, then more
    /// contacts, then ID.
    pub sources: Vec<Source>,
}

/// Backward tracing to `nodes`.
pub fn backward(d: &Dataset, people: &People, w: &Windows, nodes: &[u32]) -> Backward {
    let mut undated = Vec::new();
    let mut targets = Vec::new();
    for &v in nodes {
        match people.reference[v as usize] {
            Some(r) => targets.push(Target {
                node: v,
                from: r - w.infection.1,
                to: r - w.infection.0,
            }),
            None => undated.push(v),
        }
    }
    targets.sort_by_key(|t| t.node);
    targets.dedup_by_key(|t| t.node);
    let found = chains::backward(&d.graph, &d.edges, &targets);
    let mut by_source: HashMap<u32, Vec<(u32, i32)>> = HashMap::new();
    for Candidate {
        target,
        source,
        day,
    } in found
    {
        by_source
            .entry(source)
            .or_default()
            .push((targets[target].node, day));
    }
    let mut sources: Vec<Source> = by_source
        .into_iter()
        .map(|(node, mut t)| {
            t.sort_by_key(|&(v, day)| (day, v));
            Source {
                node,
                earliest: t[0].1,
                targets: t,
                degree: d.graph.out_degree(node) as u32,
                listed: people.listed(d, node),
            }
        })
        .collect();
    sources.sort_by(|a, b| {
        (
            std::cmp::Reverse(a.targets.len()),
            a.earliest,
            std::cmp::Reverse(a.degree),
        )
            .cmp(&(
                std::cmp::Reverse(b.targets.len()),
                b.earliest,
                std::cmp::Reverse(b.degree),
            ))
            .then_with(|| d.ids.name(a.node).cmp(d.ids.name(b.node)))
    });
    Backward {
        targets,
        undated,
        sources,
    }
}

/// What backward tracing finds against forward tracing, from every case: who each reaches
/// in one step, and how many contacts those people have.
#[derive(Debug, Clone, PartialEq)]
pub struct Gain {
    /// Distinct people forward tracing reaches in one step.
    pub forward_people: usize,
    /// Their mean number of contacts (None: nobody).
    pub forward_mean_degree: Option<f64>,
    /// Share of them who are cases.
    pub forward_case_share: Option<f64>,
    /// Distinct possible sources backward tracing reaches.
    pub backward_people: usize,
    /// Their mean number of contacts.
    pub backward_mean_degree: Option<f64>,
    /// Share of them who are cases.
    pub backward_case_share: Option<f64>,
    /// <k> of the whole network (a random person, configuration model).
    pub mean_degree: Option<f64>,
    /// <k^2>/<k> (the person at the end of a random exposure, configuration model).
    pub edge_end_mean: Option<f64>,
}

/// Mean of `f` over `nodes` (None when empty).
fn mean_of(nodes: &[u32], f: impl Fn(u32) -> f64) -> Option<f64> {
    (!nodes.is_empty()).then(|| nodes.iter().map(|&v| f(v)).sum::<f64>() / nodes.len() as f64)
}

/// The gain, measured from every case under `w` (one step each way).
pub fn gain(d: &Dataset, people: &People, w: &Windows, degrees: &[u32]) -> Gain {
    let cases = people.cases();
    let one = Windows {
        rules: Rules {
            generations: 1,
            ..w.rules
        },
        ..w.clone()
    };
    let (r, _) = reach(d, people, &one, &cases);
    let fwd: Vec<u32> = r.reached().collect();
    let back = backward(d, people, w, &cases);
    let bwd: Vec<u32> = back.sources.iter().map(|s| s.node).collect();
    let k = |v: u32| f64::from(degrees[v as usize]);
    let case = |v: u32| f64::from(u8::from(people.is_case[v as usize]));
    let n = degrees.len() as f64;
    let (s1, s2) = degrees.iter().fold((0.0, 0.0), |(a, b), &x| {
        let x = f64::from(x);
        (a + x, b + x * x)
    });
    Gain {
        forward_people: fwd.len(),
        forward_mean_degree: mean_of(&fwd, k),
        forward_case_share: mean_of(&fwd, case),
        backward_people: bwd.len(),
        backward_mean_degree: mean_of(&bwd, k),
        backward_case_share: mean_of(&bwd, case),
        mean_degree: (n > 0.0).then(|| s1 / n),
        edge_end_mean: (s1 > 0.0).then(|| s2 / s1),
    }
}

/// Per person: 1.0 when a chain from a case reaches them (cases themselves excluded), else 0.
pub fn chain_component(d: &Dataset, w: &Windows) -> Vec<f64> {
    let people = People::of(d);
    let cases = people.cases();
    let (r, _) = reach(d, &people, w, &cases);
    let mut out = vec![0.0; d.people()];
    for v in r.reached() {
        if !people.is_case[v as usize] {
            out[v as usize] = 1.0;
        }
    }
    out
}
