//! `chains` reports: forward and backward tracing as text, JSON and tables for the writer,
//! with the windows used, the measured backward-versus-forward gain, and the caution.

use serde_json::{json, Value};

use crate::analysis::chains::{Backward, Forward, Gain, Windows};
use crate::dataset::Dataset;
use crate::export::{Cell, ExportTable, Kind};
use crate::ingest::dates::iso;
use crate::metrics::chains::Step;
use crate::report::tables::Ids;

/// What a chains list can and cannot say.
pub const CAUTION: &str = "A chain says only that the dates allow it: each exposure came after the one before, inside the pathogen's periods. It does not say that anyone was infected. Exposures without a date are not used, so a missing date can hide a chain; dates that are wrong make wrong chains. Check with the people concerned before acting.";

/// What the backward ranking means.
pub const BACKWARD_MEANING: &str = "Possible sources are people a case met in the days in which the case could have been infected (before onset, inside the incubation period). They are ranked by how many of the cases they met in those days (a common source first), then by the earliest such meeting, then by their number of contacts. Being listed is not evidence of infection: people with many contacts meet many cases by chance.";

/// A chain in words: `A 2026-03-01 > B 2026-03-03 > C` (the date is that of the exposure to
/// the next person).
pub fn chain_text(ids: &Ids, chain: &[Step]) -> String {
    let mut s = String::new();
    for st in chain {
        s.push_str(&format!("{} {} > ", ids.show(st.from), iso(st.day)));
    }
    if let Some(last) = chain.last() {
        s.push_str(&ids.show(last.to));
    }
    s
}

fn opt(x: Option<f64>) -> Value {
    x.filter(|v| v.is_finite()).map_or(Value::Null, Value::from)
}

fn show(x: Option<f64>) -> String {
    x.map_or("-".into(), |v| format!("{v:.2}"))
}

/// The gain as JSON.
pub fn gain_json(g: &Gain) -> Value {
    json!({
        "forward_people": g.forward_people,
        "forward_mean_contacts": opt(g.forward_mean_degree),
        "forward_case_share": opt(g.forward_case_share),
        "backward_people": g.backward_people,
        "backward_mean_contacts": opt(g.backward_mean_degree),
        "backward_case_share": opt(g.backward_case_share),
        "mean_degree": opt(g.mean_degree),
        "edge_end_mean": opt(g.edge_end_mean),
    })
}

/// The gain in words.
pub fn gain_text(g: &Gain) -> String {
    format!(
        "Backward against forward, from every case (one step each way):\n  \
         forward reaches {} people with {} contacts on average ({} of them cases)\n  \
         backward reaches {} possible sources with {} contacts on average ({} of them cases)\n  \
         configuration model: a random person has <k> = {} contacts; the person at the end of a random exposure <k^2>/<k> = {}\n  \
         (the source of an infection is found through one of their contacts, so it tends to be someone with many)\n",
        g.forward_people,
        show(g.forward_mean_degree),
        pct(g.forward_case_share),
        g.backward_people,
        show(g.backward_mean_degree),
        pct(g.backward_case_share),
        show(g.mean_degree),
        show(g.edge_end_mean),
    )
}

fn pct(x: Option<f64>) -> String {
    x.map_or("-".into(), |v| format!("{:.0} %", v * 100.0))
}

fn windows_json(w: &Windows) -> Value {
    json!({
        "pathogen": w.pathogen,
        "min_gap_days": w.rules.min_gap,
        "max_gap_days": w.rules.max_gap,
        "generations": w.rules.generations,
        "infectious_before_onset_days": w.before_onset,
        "infectious_after_onset_days": w.after_onset,
        "infected_days_before_onset": [w.infection.0, w.infection.1],
        "source": w.source,
    })
}

/// Forward tracing as JSON (everyone reached).
pub fn forward_json(ids: &Ids, f: &Forward, w: &Windows, g: &Gain) -> Value {
    let reached: Vec<Value> = f
        .reached
        .iter()
        .map(|r| {
            json!({
                "person_id": ids.show(r.node),
                "generation": r.generation,
                "earliest_exposure": iso(r.earliest),
                "listed": r.listed.word(),
                "contacts": r.degree,
                "chain": r.chain.iter().map(|s| json!({
                    "from": ids.show(s.from), "to": ids.show(s.to), "date": iso(s.day)
                })).collect::<Vec<_>>(),
            })
        })
        .collect();
    json!({
        "direction": "forward",
        "caution": CAUTION,
        "as_of": iso(ids.d.as_of),
        "windows": windows_json(w),
        "seeds": f.seeds.len(),
        "seeds_without_date": f.undated_seeds,
        "reached_people": f.reached.len(),
        "not_listed": f.reached.iter().filter(|r| r.listed == crate::analysis::chains::Listed::New).count(),
        "by_generation": by_generation(f),
        "reached": reached,
        "gain": gain_json(g),
    })
}

fn by_generation(f: &Forward) -> Vec<usize> {
    let top = f.reached.iter().map(|r| r.generation).max().unwrap_or(0) as usize;
    let mut n = vec![0; top];
    for r in &f.reached {
        n[r.generation as usize - 1] += 1;
    }
    n
}

/// Forward tracing as text (the first `top`; 0: all).
pub fn forward_text(ids: &Ids, f: &Forward, w: &Windows, g: &Gain, top: usize) -> String {
    let mut s = format!(
        "Forward along dated exposures from {} {} ({} without an onset or report date: all their dated exposures count)\n{}\n\n",
        f.seeds.len(),
        if f.seeds.len() == 1 { "person" } else { "people" },
        f.undated_seeds,
        w.describe()
    );
    let gens = by_generation(f);
    let new = f
        .reached
        .iter()
        .filter(|r| r.listed == crate::analysis::chains::Listed::New)
        .count();
    s.push_str(&format!(
        "{} people reached ({}); {} of them not listed in the people table yet\n\n",
        f.reached.len(),
        gens.iter()
            .enumerate()
            .map(|(i, n)| format!("generation {}: {n}", i + 1))
            .collect::<Vec<_>>()
            .join(", "),
        new
    ));
    let shown = if top == 0 {
        f.reached.len()
    } else {
        top.min(f.reached.len())
    };
    if shown > 0 {
        s.push_str(&format!(
            "{:>4}  {:<14} {:>3} {:<10} {:>8}  {:<14} chain\n",
            "#", "person", "gen", "earliest", "contacts", "listed"
        ));
    }
    for (i, r) in f.reached.iter().take(shown).enumerate() {
        s.push_str(&format!(
            "{:>4}  {:<14} {:>3} {:<10} {:>8}  {:<14} {}\n",
            i + 1,
            ids.show(r.node),
            r.generation,
            iso(r.earliest),
            r.degree,
            r.listed.word(),
            chain_text(ids, &r.chain)
        ));
    }
    if shown < f.reached.len() {
        s.push_str(&format!(
            "... {} more (--top 0 for all, --json or --out for everything)\n",
            f.reached.len() - shown
        ));
    }
    s.push('\n');
    s.push_str(&gain_text(g));
    s.push_str(&format!("\n{CAUTION}\n"));
    s
}

/// Backward tracing as JSON (every source).
pub fn backward_json(ids: &Ids, b: &Backward, w: &Windows, g: &Gain) -> Value {
    let sources: Vec<Value> = b
        .sources
        .iter()
        .map(|src| {
            json!({
                "person_id": ids.show(src.node),
                "cases": src.targets.len(),
                "earliest": iso(src.earliest),
                "contacts": src.degree,
                "listed": src.listed.word(),
                "met": src.targets.iter().map(|&(c, day)| json!({"case": ids.show(c), "date": iso(day)})).collect::<Vec<_>>(),
            })
        })
        .collect();
    json!({
        "direction": "backward",
        "caution": CAUTION,
        "meaning": BACKWARD_MEANING,
        "as_of": iso(ids.d.as_of),
        "windows": windows_json(w),
        "targets": b.targets.len(),
        "targets_without_date": b.undated.iter().map(|&v| ids.show(v)).collect::<Vec<_>>(),
        "common_sources": b.sources.iter().filter(|s| s.targets.len() > 1).count(),
        "sources": sources,
        "gain": gain_json(g),
    })
}

/// Backward tracing as text (the first `top`; 0: all).
pub fn backward_text(ids: &Ids, b: &Backward, w: &Windows, g: &Gain, top: usize) -> String {
    let mut s = format!(
        "Backward along dated exposures to {} {}\n{}\n",
        b.targets.len(),
        if b.targets.len() == 1 {
            "case"
        } else {
            "cases"
        },
        w.describe()
    );
    if !b.undated.is_empty() {
        let names: Vec<String> = b.undated.iter().take(10).map(|&v| ids.show(v)).collect();
        s.push_str(&format!(
            "{} left out without an onset or report date: {}{}\n",
            b.undated.len(),
            names.join(", "),
            if b.undated.len() > 10 { ", ..." } else { "" }
        ));
    }
    let common = b.sources.iter().filter(|x| x.targets.len() > 1).count();
    s.push_str(&format!(
        "\n{} possible sources; {common} met more than one of the cases in their windows\n\n",
        b.sources.len()
    ));
    let shown = if top == 0 {
        b.sources.len()
    } else {
        top.min(b.sources.len())
    };
    if shown > 0 {
        s.push_str(&format!(
            "{:>4}  {:<14} {:>5} {:<10} {:>8}  {:<14} met\n",
            "#", "person", "cases", "earliest", "contacts", "listed"
        ));
    }
    for (i, src) in b.sources.iter().take(shown).enumerate() {
        let met: Vec<String> = src
            .targets
            .iter()
            .take(6)
            .map(|&(c, day)| format!("{} {}", ids.show(c), iso(day)))
            .collect();
        s.push_str(&format!(
            "{:>4}  {:<14} {:>5} {:<10} {:>8}  {:<14} {}{}\n",
            i + 1,
            ids.show(src.node),
            src.targets.len(),
            iso(src.earliest),
            src.degree,
            src.listed.word(),
            met.join("; "),
            if src.targets.len() > 6 { "; ..." } else { "" }
        ));
    }
    if shown < b.sources.len() {
        s.push_str(&format!(
            "... {} more (--top 0 for all, --json or --out for everything)\n",
            b.sources.len() - shown
        ));
    }
    s.push_str(&format!("\n{BACKWARD_MEANING}\n\n"));
    s.push_str(&gain_text(g));
    s.push_str(&format!("\n{CAUTION}\n"));
    s
}

/// Forward tracing as a table for the writer.
pub fn forward_table(ids: &Ids, f: &Forward) -> ExportTable {
    use Kind::*;
    let columns = [
        "rank",
        "person_id",
        "generation",
        "earliest_exposure",
        "listed",
        "contacts",
        "seed",
        "chain",
    ];
    let rows = f
        .reached
        .iter()
        .enumerate()
        .map(|(i, r)| {
            vec![
                Cell::Int(i as i64 + 1),
                Cell::Text(ids.show(r.node)),
                Cell::Int(i64::from(r.generation)),
                day(r.earliest),
                Cell::Text(r.listed.word().into()),
                Cell::Int(i64::from(r.degree)),
                r.chain
                    .first()
                    .map_or(Cell::Empty, |s| Cell::Text(ids.show(s.from))),
                Cell::Text(chain_text(ids, &r.chain)),
            ]
        })
        .collect();
    table(
        &columns,
        vec![Int, Text, Int, Date, Text, Int, Text, Text],
        rows,
    )
}

/// Backward tracing as a table for the writer.
pub fn backward_table(ids: &Ids, b: &Backward) -> ExportTable {
    use Kind::*;
    let columns = [
        "rank",
        "person_id",
        "cases",
        "earliest",
        "contacts",
        "listed",
        "met",
    ];
    let rows = b
        .sources
        .iter()
        .enumerate()
        .map(|(i, src)| {
            let met: Vec<String> = src
                .targets
                .iter()
                .map(|&(c, d)| format!("{} {}", ids.show(c), iso(d)))
                .collect();
            vec![
                Cell::Int(i as i64 + 1),
                Cell::Text(ids.show(src.node)),
                Cell::Int(src.targets.len() as i64),
                day(src.earliest),
                Cell::Int(i64::from(src.degree)),
                Cell::Text(src.listed.word().into()),
                Cell::Text(met.join("; ")),
            ]
        })
        .collect();
    table(&columns, vec![Int, Text, Int, Date, Int, Text, Text], rows)
}

fn table(columns: &[&str], kinds: Vec<Kind>, rows: Vec<Vec<Cell>>) -> ExportTable {
    ExportTable {
        columns: columns.iter().map(|c| c.to_string()).collect(),
        rows,
        kinds,
    }
}

fn day(x: i32) -> Cell {
    crate::ingest::dates::from_days(x).map_or(Cell::Empty, Cell::Date)
}

/// Metadata entries of a chains file.
pub fn meta(d: &Dataset, direction: &str, w: &Windows) -> crate::report::meta::Meta {
    crate::report::meta::Meta::new(d, &format!("chains {direction}"))
        .with("windows", w.describe())
        .with("chains_caution", CAUTION)
}
