//! `hubwatch synth`: an invented outbreak export for demos, tests and benchmarks.
//!
//! The scenario is our own: people live in households (everyone in a household meets everyone
//! else), most go to a workplace or school (each meets a few colleagues), and everyone has
//! community contacts wired by the configuration model on a negative-binomial degree sequence
//! (heavy-tailed: a few people meet many). Exposures spread over six weeks before the as-of
//! date; an infection runs along exposures in date order from a few index cases, so cases carry
//! onset dates and infector -> infectee rows exist. A small, stated share of dirty rows is
//! planted and counted in `manifest.json`.
//!
//! Memory is O(people + pairs): pairs are held as compact integers, exposure rows are streamed
//! straight to disk.

use std::io::Write;
use std::path::Path;

use rand::seq::SliceRandom;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Gamma, Poisson};
use serde::Serialize;

use crate::error::{Error, Result};

/// Generator settings.
#[derive(Debug, Clone)]
pub struct SynthOptions {
    /// Number of people.
    pub people: usize,
    /// Random seed (same seed, same files).
    pub seed: u64,
    /// Last day of the scenario (day number since 0001-01-01).
    pub end_day: i32,
    /// Mean community degree of the negative-binomial sequence.
    pub community_mean: f64,
    /// Dispersion k of the community degrees (smaller = more heavy-tailed).
    pub community_k: f64,
}

impl SynthOptions {
    /// Defaults for `people` people: community mean 2.5, k = 0.4.
    pub fn new(people: usize, seed: u64, end_day: i32) -> SynthOptions {
        SynthOptions {
            people,
            seed,
            end_day,
            community_mean: 2.5,
            community_k: 0.4,
        }
    }
}

/// What was written, including every dirty row planted on purpose.
#[derive(Debug, Clone, Default, Serialize, PartialEq, Eq)]
pub struct Manifest {
    /// People rows written (including planted repeats and blank IDs).
    pub people_rows: u64,
    /// Distinct people.
    pub people: u64,
    /// Exposure rows written.
    pub exposure_rows: u64,
    /// Distinct contact pairs among valid rows.
    pub pairs: u64,
    /// Cases (index cases and infected contacts).
    pub cases: u64,
    /// Infector -> infectee links (rows with transmission = yes).
    pub links: u64,
    /// Planted: exposure rows whose two IDs are the same person.
    pub self_exposures: u64,
    /// Planted: exposure rows with a blank target ID.
    pub blank_targets: u64,
    /// Planted: exposure rows with an impossible or unreadable date.
    pub bad_dates: u64,
    /// Planted: exposure rows with a negative or non-numeric duration.
    pub bad_durations: u64,
    /// Planted: people named only in the exposures table (one valid row each).
    pub implied_people: u64,
    /// Planted: people rows repeating an ID with a conflicting area.
    pub repeated_people: u64,
    /// Planted: people rows with a blank ID.
    pub blank_people: u64,
}

const SETTINGS: [&str; 5] = [
    "household",
    "workplace",
    "school",
    "community",
    "healthcare",
];
const AREAS: [&str; 6] = [
    "Brackenford",
    "Gorrins Cross",
    "Saltmere",
    "Wyndle Green",
    "Corran Heights",
    "Pellmoss",
];
const AGES: [&str; 5] = ["0-4", "5-17", "18-34", "35-59", "60+"];
const WEEKS: i32 = 6;

/// A contact pair with its setting and first day (offset from the scenario start).
#[derive(Clone, Copy)]
struct Pair {
    a: u32,
    b: u32,
    setting: u8,
    day: u16,
    /// An infection passed along this pair (from a to b).
    link: bool,
}

/// Write `people.csv`, `exposures.csv` and `manifest.json` into `dir`.
pub fn generate(dir: &Path, opts: &SynthOptions) -> Result<Manifest> {
    if opts.people < 2 {
        return Err(Error::Usage("synth needs at least 2 people".into()));
    }
    std::fs::create_dir_all(dir).map_err(|e| Error::io(dir, e))?;
    let mut rng = ChaCha8Rng::seed_from_u64(opts.seed);
    let n = opts.people;
    let span = WEEKS * 7;
    let start = opts.end_day - span;
    let dates: Vec<String> = (0..=span + 14)
        .map(|d| crate::ingest::dates::iso(start + d))
        .collect();

    let (household, age, area, mut pairs) = households(&mut rng, n, span);
    group_pairs(&mut rng, &age, span, &mut pairs);
    community_pairs(&mut rng, opts, span, &mut pairs)?;
    let (onset, links) = infect(&mut rng, n, span, &mut pairs);
    let mut m = Manifest {
        links,
        ..Manifest::default()
    };
    let people = People {
        household: &household,
        age: &age,
        area: &area,
        onset: &onset,
    };
    write_people(dir, &mut rng, &people, &dates, &mut m)?;
    write_exposures(dir, &mut rng, &pairs, (&dates, span, n), &mut m)?;
    let manifest = serde_json::to_string_pretty(&m).unwrap_or_default();
    crate::export::write_private(&dir.join("manifest.json"), (manifest + "\n").as_bytes())?;
    Ok(m)
}

/// Households of 1 to 6 people with an area and age groups; every pair in a household meets.
fn households(
    rng: &mut ChaCha8Rng,
    n: usize,
    span: i32,
) -> (Vec<u32>, Vec<u8>, Vec<u8>, Vec<Pair>) {
    let mut household = vec![0u32; n];
    let mut age = vec![0u8; n];
    let mut area = vec![0u8; n];
    let mut pairs: Vec<Pair> = Vec::with_capacity(n * 3);
    let mut i = 0usize;
    let mut hh = 0u32;
    while i < n {
        let size = [1, 1, 2, 2, 2, 3, 3, 4, 4, 5, 6][rng.random_range(0..11)].min(n - i);
        let a = rng.random_range(0..AREAS.len()) as u8;
        for p in i..i + size {
            household[p] = hh;
            area[p] = a;
            age[p] = rng.random_range(0..AGES.len()) as u8;
            for q in i..p {
                pairs.push(Pair {
                    a: q as u32,
                    b: p as u32,
                    setting: 0,
                    day: rng.random_range(0..span as u16),
                    link: false,
                });
            }
        }
        hh += 1;
        i += size;
    }
    (household, age, area, pairs)
}

/// Workplaces (adults) and schools (children): groups of 8..40, each member meets 3 others.
fn group_pairs(rng: &mut ChaCha8Rng, age: &[u8], span: i32, pairs: &mut Vec<Pair>) {
    let n = age.len();
    for (setting, ages) in [(1u8, [2u8, 3]), (2u8, [1u8, 1])] {
        let mut members: Vec<u32> = (0..n as u32)
            .filter(|&p| ages.contains(&age[p as usize]) && rng.random_bool(0.8))
            .collect();
        members.shuffle(rng);
        for group in members.chunks(rng.random_range(8..40)) {
            if group.len() < 2 {
                continue;
            }
            for &p in group {
                for _ in 0..3 {
                    let q = group[rng.random_range(0..group.len())];
                    if q != p {
                        pairs.push(Pair {
                            a: p,
                            b: q,
                            setting,
                            day: rng.random_range(0..span as u16),
                            link: false,
                        });
                    }
                }
            }
        }
    }
}

/// Community: configuration model on a negative-binomial degree sequence.
fn community_pairs(
    rng: &mut ChaCha8Rng,
    opts: &SynthOptions,
    span: i32,
    pairs: &mut Vec<Pair>,
) -> Result<()> {
    let n = opts.people;
    let gamma = Gamma::new(opts.community_k, opts.community_mean / opts.community_k)
        .map_err(|e| Error::Usage(format!("synth: bad community parameters: {e}")))?;
    let mut stubs: Vec<u32> = Vec::new();
    for p in 0..n as u32 {
        let lambda: f64 = gamma.sample(rng);
        let k = if lambda > 0.0 {
            Poisson::new(lambda)
                .map(|d| d.sample(rng) as u64)
                .unwrap_or(0)
        } else {
            0
        };
        for _ in 0..k.min(500) {
            stubs.push(p);
        }
    }
    stubs.shuffle(rng);
    for s in stubs.chunks_exact(2) {
        if s[0] != s[1] {
            let setting = if rng.random_bool(0.05) { 4 } else { 3 };
            pairs.push(Pair {
                a: s[0],
                b: s[1],
                setting,
                day: rng.random_range(0..span as u16),
                link: false,
            });
        }
    }
    drop(stubs);

    Ok(())
}

/// Infection along pairs in date order from a few index cases; the pairs that transmitted
/// are marked and named infector first. Each person's onset (u16::MAX: none) and the links.
fn infect(rng: &mut ChaCha8Rng, n: usize, span: i32, pairs: &mut [Pair]) -> (Vec<u16>, u64) {
    pairs.sort_unstable_by_key(|p| p.day);
    let mut onset = vec![u16::MAX; n];
    let seeds = (n / 100).max(3);
    for _ in 0..seeds {
        let p = rng.random_range(0..n);
        onset[p] = rng.random_range(0..7);
    }
    let risk = [0.5, 0.2, 0.2, 0.12, 0.2];
    let mut links = 0u64;
    for pr in pairs.iter_mut() {
        let (a, b) = (pr.a as usize, pr.b as usize);
        let infectious =
            |x: usize| onset[x] != u16::MAX && pr.day + 2 >= onset[x] && pr.day <= onset[x] + 10;
        let (src, dst) = if infectious(a) && onset[b] == u16::MAX {
            (a, b)
        } else if infectious(b) && onset[a] == u16::MAX {
            (b, a)
        } else {
            continue;
        };
        if rng.random_bool(risk[pr.setting as usize]) {
            let o = pr.day + rng.random_range(2..10);
            if i32::from(o) <= span {
                onset[dst] = o;
                // Name the infector as the source of the row.
                pr.a = src as u32;
                pr.b = dst as u32;
                pr.link = true;
                links += 1;
            }
        }
    }

    (onset, links)
}

/// The people of the scenario, for the people table.
struct People<'a> {
    household: &'a [u32],
    age: &'a [u8],
    area: &'a [u8],
    onset: &'a [u16],
}

fn id(p: usize) -> String {
    format!("P{p:07}")
}

/// The people table, with planted repeated people and one blank ID.
fn write_people(
    dir: &Path,
    rng: &mut ChaCha8Rng,
    pp: &People,
    dates: &[String],
    m: &mut Manifest,
) -> Result<()> {
    let (household, age, area, onset) = (pp.household, pp.age, pp.area, pp.onset);
    let n = household.len();
    crate::export::write_streamed(&dir.join("people.csv"), |w| {
        writeln!(
            w,
            "person_id,role,onset_date,status,area,age_group,followup_status,household_id"
        )?;
        let planted_people = (n / 500).max(1);
        for p in 0..n {
            let case = onset[p] != u16::MAX;
            m.cases += u64::from(case);
            let on = if case {
                dates[onset[p] as usize].as_str()
            } else {
                ""
            };
            let (role, status) = if case {
                ("case", "confirmed")
            } else {
                ("contact", "")
            };
            let follow = ["to call", "reached", "", "unreachable"][rng.random_range(0..4)];
            writeln!(
                w,
                "{},{role},{on},{status},{},{},{follow},H{:06}",
                id(p),
                AREAS[area[p] as usize],
                AGES[age[p] as usize],
                household[p]
            )?;
            m.people_rows += 1;
            if p % (n / planted_people).max(1) == 1 && m.repeated_people < planted_people as u64 {
                let other = AREAS[(area[p] as usize + 1) % AREAS.len()];
                writeln!(
                    w,
                    "{},{role},{on},{status},{other},{},{follow},H{:06}",
                    id(p),
                    AGES[age[p] as usize],
                    household[p]
                )?;
                m.repeated_people += 1;
                m.people_rows += 1;
            }
        }
        writeln!(w, " ,contact,,,Saltmere,18-34,,")?;
        m.blank_people = 1;
        m.people_rows += 1;
        m.people = n as u64;
        Ok(())
    })
}

/// Exposures: each pair gives 1..4 rows on nearby days, some written in reverse order, with
/// planted dirty rows; the distinct pairs are counted for the manifest.
fn write_exposures(
    dir: &Path,
    rng: &mut ChaCha8Rng,
    pairs: &[Pair],
    (dates, span, n): (&[String], i32, usize),
    m: &mut Manifest,
) -> Result<()> {
    let mut keys: Vec<u64> = Vec::with_capacity(pairs.len());
    crate::export::write_streamed(&dir.join("exposures.csv"), |w| {
        writeln!(
            w,
            "source_id,target_id,exposure_date,setting,duration_min,transmission"
        )?;
        // About 0.2% of rows are dirty (4 per group), at least two groups.
        let groups = (pairs.len() / 1000).max(2);
        let dirty_every = (pairs.len() / groups).max(1);
        for (k, pr) in pairs.iter().enumerate() {
            keys.push(u64::from(pr.a.min(pr.b)) << 32 | u64::from(pr.a.max(pr.b)));
            let reps = 1 + (rng.random::<u32>() % 8).saturating_sub(4).min(3);
            for r in 0..reps {
                let day = (i32::from(pr.day) + r as i32).min(span) as usize;
                let (s, t) = if r > 0 && rng.random_bool(0.3) {
                    (pr.b, pr.a)
                } else {
                    (pr.a, pr.b)
                };
                let minutes: u32 = match pr.setting {
                    0 => rng.random_range(60..600),
                    1 | 2 => rng.random_range(15..240),
                    _ => rng.random_range(5..120),
                };
                // The infection row: the first row of the pair, written infector first.
                let link = if pr.link && r == 0 && s == pr.a {
                    "yes"
                } else {
                    "no"
                };
                writeln!(
                    w,
                    "{},{},{},{},{minutes},{link}",
                    id(s as usize),
                    id(t as usize),
                    dates[day],
                    SETTINGS[pr.setting as usize]
                )?;
                m.exposure_rows += 1;
            }
            if k % dirty_every == dirty_every / 2 {
                let (a, b) = (id(pr.a as usize), id(pr.b as usize));
                let d = &dates[pr.day as usize];
                writeln!(w, "{a},{a},{d},community,10,no")?;
                writeln!(w, "{a}, ,{d},community,10,no")?;
                writeln!(w, "{a},{b},2024-02-30,community,10,no")?;
                writeln!(w, "{b},{a},{d},community,-15,no")?;
                // A contact named by a case but not (yet) registered in the people table.
                let unregistered = id(n + m.implied_people as usize);
                writeln!(w, "{a},{unregistered},{d},community,20,no")?;
                keys.push(u64::MAX - m.implied_people);
                m.self_exposures += 1;
                m.blank_targets += 1;
                m.bad_dates += 1;
                m.bad_durations += 1;
                m.implied_people += 1;
                m.exposure_rows += 5;
            }
        }
        Ok(())
    })?;
    keys.sort_unstable();
    keys.dedup();
    m.pairs = keys.len() as u64;
    Ok(())
}
