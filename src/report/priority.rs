//! `hubwatch priority` as text and JSON: the ranked list with the settings it was made with and
//! the components of every score.

use std::fmt::Write as _;

use crate::analysis::priority::{Mark, Part};
use crate::analysis::ranking::RankedList;
use crate::dataset::Dataset;
use crate::ingest::dates;

/// The ranked list as text: rank, ID, score, contacts, window end, flags, the main reasons.
pub fn priority_text(d: &Dataset, list: &RankedList, top: usize) -> String {
    let (ranked, (preset, p), w) = (&list.ranked, &list.preset, &list.window);
    let mut s = String::new();
    let _ = writeln!(
        s,
        "hubwatch priority (as of {}; preset \"{preset}\"; monitoring window {} days for {}: {})",
        dates::iso(d.as_of),
        w.days,
        w.pathogen,
        w.source
    );
    let _ = writeln!(
        s,
        "{} people on the list; {} overdue (window over, follow-up not completed)\n",
        list.people, list.overdue
    );
    let _ = writeln!(
        s,
        "{:>4}  {:<12} {:>6} {:>8}  {:<22} {:<24} main reasons",
        "rank", "person", "score", "contacts", "window ends (days left)", "flags"
    );
    let shown = if top == 0 {
        ranked.len()
    } else {
        top.min(ranked.len())
    };
    for (i, r) in ranked.iter().take(shown).enumerate() {
        let window = match (r.window_end, r.days_left) {
            (Some(e), Some(left)) => format!("{} ({left})", dates::iso(e)),
            _ => "no dated exposure".to_string(),
        };
        let flags: Vec<&str> = r.marks().map(Mark::word).collect();
        let parts_of = r.parts(p);
        let mut parts: Vec<&Part> = parts_of.iter().filter(|p| p.contribution > 0.0).collect();
        parts.sort_by(|a, b| b.contribution.total_cmp(&a.contribution));
        let reasons: Vec<String> = parts
            .iter()
            .take(3)
            .map(|p| format!("{} +{:.2}", p.name, p.contribution))
            .collect();
        let _ = writeln!(
            s,
            "{:>4}  {:<12} {:>6.2} {:>8}  {:<22} {:<24} {}",
            i + 1,
            d.ids.name(r.node),
            r.score,
            r.degree,
            window,
            flags.join(", "),
            reasons.join(", ")
        );
    }
    let _ = writeln!(s, "\n{}", crate::CAUTION);
    s
}

/// The ranked list as JSON, with every component of every score.
pub fn priority_json(d: &Dataset, list: &RankedList, top: usize) -> serde_json::Value {
    let (ranked, (preset, p), w) = (&list.ranked, &list.preset, &list.window);
    let shown = if top == 0 {
        ranked.len()
    } else {
        top.min(ranked.len())
    };
    let iso = |x: Option<i32>| x.map(dates::iso);
    serde_json::json!({
        "as_of": dates::iso(d.as_of),
        "caution": crate::CAUTION,
        "preset": preset,
        "weights": p.weights,
        "caps": p.caps,
        "window": {"pathogen": w.pathogen, "days": w.days, "source": w.source},
        "people": list.people,
        "overdue": list.overdue,
        "list": ranked.iter().take(shown).enumerate().map(|(i, r)| serde_json::json!({
            "rank": i + 1,
            "id": d.ids.name(r.node),
            "score": r.score,
            "degree": r.degree,
            "last_exposure": iso(r.last_exposure),
            "window_end": iso(r.window_end),
            "days_left": r.days_left,
            "overdue": r.overdue,
            "high_degree": r.high_degree,
            "bridge": r.bridge,
            "parts": r.parts(p),
        })).collect::<Vec<_>>(),
    })
}
