//! `hubwatch summary --aggregates DIR` when the folder has no pair table: the degree
//! statistics as text and as the same JSON members as the full summary, and the figures that
//! are missing, each with its reason (the member `unavailable`).

use std::fmt::Write as _;

use serde_json::{json, Map, Value};

use crate::analysis::degree_tables::{DegreeTableStats, UNAVAILABLE};
use crate::ingest::aggregates::AggregateTables;
use crate::ingest::dates;
use crate::report::fmt::{plus_minus, show};
use crate::report::json;

/// The JSON object (members as in `summary --json`, where they can be computed).
pub fn to_json(t: &AggregateTables, st: &DegreeTableStats) -> Value {
    let mut o = Map::new();
    let n = t.ids.len();
    o.insert("people".into(), json!(n));
    o.insert("implied".into(), json!(n - t.people_in_table as usize));
    o.insert("contacts".into(), json!(st.contacts));
    o.insert(
        "isolated".into(),
        json!(st.degree.histogram.first().copied().unwrap_or(0)),
    );
    o.insert("max_degree".into(), json!(st.degree.max));
    o.insert(
        "rows".into(),
        json!({"exposures": t.ledger.exposures, "people": t.ledger.people}),
    );
    o.insert("as_of".into(), json!(dates::iso(t.as_of)));
    o.insert(
        "view".into(),
        json!({
            "description": t.view.describe(),
            "settings": t.view.settings,
            "exclude_settings": t.view.exclude_settings,
            "from": t.view.from.map(dates::iso),
            "to": t.view.to.map(dates::iso),
        }),
    );
    o.insert(
        "degree".into(),
        json::degree(&st.degree, &st.degrees, &t.ids),
    );
    json::degree_members(&st.degree, &st.neighbours, &mut o);
    o.insert(
        "assortativity".into(),
        Value::Object(json::assortativity(st.r, st.r_se)),
    );
    o.insert("fits".into(), json::fits_json(&st.fits));
    o.insert(
        "unavailable".into(),
        Value::Object(
            UNAVAILABLE
                .iter()
                .map(|(k, why)| (k.to_string(), json!(why)))
                .collect(),
        ),
    );
    o.insert(
        "source".into(),
        json!(format!(
            "degree tables made by SQL in {} ({}); no pair table",
            t.dialect,
            t.dir.display()
        )),
    );
    Value::Object(o)
}

/// The text.
pub fn to_text(t: &AggregateTables, st: &DegreeTableStats) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "hubwatch summary (as of {}; network of {}) from the degree tables in {}\n",
        dates::iso(t.as_of),
        t.view.describe(),
        t.dir.display()
    );
    let nb = &st.neighbours;
    let e = &t.ledger.exposures;
    let rows = [
        ("people", t.ids.len().to_string()),
        ("distinct contact pairs", st.contacts.to_string()),
        ("highest number of contacts", st.degree.max.to_string()),
        (
            "exposure rows read / used / merged / quarantined",
            format!("{} / {} / {} / {}", e.read, e.used, e.merged, e.quarantined),
        ),
        ("mean contacts per person <k>", show(st.degree.mean, 2)),
        (
            "contacts of a person reached along an exposure",
            show(st.degree.edge_end_mean, 2),
        ),
        (
            "  of which other than the exposure (mean excess)",
            show(st.degree.mean_excess, 2),
        ),
        (
            "people whose contacts have more contacts (%)",
            show(nb.share_more.map(|x| 100.0 * x), 1),
        ),
        (
            "degree assortativity r ± jackknife SE",
            plus_minus(st.r, st.r_se, 3),
        ),
    ];
    for (k, v) in rows {
        let _ = writeln!(s, "  {k:<50} {v}");
    }
    let _ = writeln!(s, "\nNot available without the pair table");
    for (k, why) in UNAVAILABLE {
        let _ = writeln!(s, "  {k:<50} {why}");
    }
    let _ = writeln!(s, "\n{}", crate::CAUTION);
    s
}
