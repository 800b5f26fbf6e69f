//! `hubwatch brief`: one self-contained HTML page to send or print (A4): the caution, the
//! headline figures, the row ledger, the top of the list (pseudonymised unless raw IDs were
//! asked for, which the page then says in a warning), follow-up progress from the workspace, the
//! outlook with its model caution, the assumptions, and the figures inline as SVG. No scripts,
//! no fonts or files fetched from anywhere.

use std::fmt::Write as _;

use crate::analysis::planning::MODEL_CAUTION;
use crate::ingest::dates;
use crate::ingest::ledger::Role;
use crate::report::fmt::short;
use crate::report::Report;
use crate::workspace::FOLLOWUP_STATES;

/// How IDs appear on the page.
pub enum Names<'a> {
    /// Keyed pseudonyms (HMAC-SHA256); `stable`: the key is the user's (the same key gives the
    /// same pseudonyms on another day), else a one-off key of this run.
    Pseudonyms {
        /// The key.
        key: &'a [u8],
        /// Whether the key is the user's own.
        stable: bool,
    },
    /// The export's own IDs (asked for explicitly; the page warns).
    Raw,
}

/// Text made safe inside HTML.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

const STYLE: &str = "
body { font-family: sans-serif; margin: 2em auto; max-width: 60em; color: #111; line-height: 1.4; }
h1 { font-size: 1.6em; margin-bottom: 0.2em; }
h2 { font-size: 1.2em; border-bottom: 1px solid #999; margin-top: 1.6em; }
.caution { border: 2px solid #d55e00; padding: 0.6em 0.9em; background: #fff7f0; }
.warning { border: 2px solid #000; padding: 0.6em 0.9em; background: #f0e442; font-weight: bold; }
.meta { color: #444; font-size: 0.9em; }
table { border-collapse: collapse; margin: 0.6em 0; }
td, th { border: 1px solid #bbb; padding: 0.2em 0.6em; text-align: left; }
td.n, th.n { text-align: right; font-variant-numeric: tabular-nums; }
figure { margin: 1em 0; page-break-inside: avoid; }
figure svg { width: 100%; height: auto; border: 1px solid #ddd; }
figcaption { font-size: 0.85em; color: #444; }
@page { size: A4; margin: 14mm; }
@media print {
  body { margin: 0; max-width: none; font-size: 10pt; }
  h2 { page-break-after: avoid; }
  table { page-break-inside: avoid; }
  .caution, .warning { background: none; }
}
";

/// The page. `figures`: (title, SVG document) in order; `top`: people listed.
pub fn html(r: &Report, figures: &[(String, String)], names: &Names, top: usize) -> String {
    let d = &r.d;
    let s = &r.stats;
    let mut h = String::new();
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <title>hubwatch brief, as of {as_of}</title>\n<style>{STYLE}</style>\n</head>\n<body>\n\
         <h1>Contact network brief</h1>\n<p class=\"meta\">as of {as_of} · view: {view} · written {now}</p>\n\
         <p class=\"caution\">{caution}</p>\n",
        as_of = dates::iso(d.as_of),
        view = escape(&d.view.0.describe()),
        now = chrono::Utc::now().format("%Y-%m-%d %H:%M UTC"),
        caution = escape(crate::CAUTION),
    );
    match names {
        Names::Raw => h.push_str(
            "<p class=\"warning\">This page shows the export's own person IDs (asked for with \
             --raw-ids). It identifies people: share it only with staff entitled to see them, \
             and keep it as you keep the export.</p>\n",
        ),
        Names::Pseudonyms { stable, .. } => {
            let _ = writeln!(
                h,
                "<p class=\"meta\">Person IDs are pseudonyms (HMAC-SHA256 under {}); the \
                 export's IDs are not on this page.</p>",
                match stable {
                    true => "your key: the same key gives the same pseudonyms in other files",
                    false => "a key made for this page only and not kept",
                }
            );
        }
    }

    // Headline figures.
    let sm = &r.summary;
    h.push_str("<h2>Headline figures</h2>\n<table>\n");
    let row = |h: &mut String, k: &str, v: String| {
        let _ = writeln!(
            h,
            "<tr><th>{}</th><td class=\"n\">{}</td></tr>",
            escape(k),
            escape(&v)
        );
    };
    row(&mut h, "people", sm.people.to_string());
    row(&mut h, "contact pairs", sm.contacts.to_string());
    row(
        &mut h,
        "mean contacts per person <k>",
        short(s.degree.mean, 2),
    );
    row(
        &mut h,
        "mean contacts at the end of a random exposure <k²>/<k>",
        short(s.degree.edge_end_mean, 2),
    );
    row(
        &mut h,
        "a person's contacts' mean contacts",
        short(s.neighbours.contact_mean, 2),
    );
    row(
        &mut h,
        "degree assortativity r (± jackknife SE)",
        format!("{} ± {}", short(s.r, 3), short(s.r_se, 3)),
    );
    let largest = s.components.1.iter().max().copied().unwrap_or(0);
    row(
        &mut h,
        "clusters; largest",
        format!("{}; {} people", s.components.1.len(), largest),
    );
    h.push_str("</table>\n");

    // Row ledger.
    h.push_str("<h2>Rows read and used</h2>\n<table>\n<tr><th>table</th><th class=\"n\">read</th><th class=\"n\">used</th><th class=\"n\">merged into a pair</th><th class=\"n\">quarantined</th><th class=\"n\">field problems</th></tr>\n");
    for (name, c) in [
        ("people", &d.ledger.people),
        ("exposures", &d.ledger.exposures),
    ] {
        let _ = writeln!(
            h,
            "<tr><td>{name}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td></tr>",
            c.read, c.used, c.merged, c.quarantined, c.field_problems
        );
    }
    h.push_str("</table>\n");
    let reasons: Vec<String> = [(Role::People, "people"), (Role::Exposures, "exposures")]
        .iter()
        .filter_map(|&(role, name)| {
            let counts = d.ledger.quarantine_counts(role);
            (!counts.is_empty()).then(|| {
                let list: Vec<String> = counts.iter().map(|(c, n)| format!("{c} {n}")).collect();
                format!("{name}: {}", list.join(", "))
            })
        })
        .collect();
    if !reasons.is_empty() {
        let _ = writeln!(
            h,
            "<p class=\"meta\">Quarantined by reason ({}). Every quarantined row is listed, with \
             its file and line, by <code>hubwatch check --quarantine FILE</code>.</p>",
            escape(&reasons.join("; "))
        );
    }

    // The top of the list.
    if let Some(list) = &r.list {
        let _ = writeln!(
            h,
            "<h2>Whom to call first: the top {} of {}</h2>\n<p class=\"meta\">preset \
             \"{}\"; monitoring window {} days ({}); {} overdue (window over, follow-up not \
             completed)</p>\n<table>\n<tr><th class=\"n\">rank</th><th>person</th><th class=\"n\">score</th><th class=\"n\">contacts</th><th>window ends</th><th>flags</th></tr>",
            top.min(list.ranked.len()),
            list.people,
            escape(&list.preset.0),
            list.window.days,
            escape(&list.window.pathogen),
            list.overdue
        );
        for (i, x) in list.ranked.iter().take(top).enumerate() {
            let id = d.ids.name(x.node);
            let shown = match names {
                Names::Raw => id.to_string(),
                Names::Pseudonyms { key, .. } => crate::export::pseudonym(key, id),
            };
            let mut flags = Vec::new();
            if x.high_degree {
                flags.push("many contacts");
            }
            if x.bridge {
                flags.push("bridge");
            }
            if x.overdue {
                flags.push("overdue");
            }
            let _ = writeln!(
                h,
                "<tr><td class=\"n\">{}</td><td><code>{}</code></td><td class=\"n\">{:.3}</td><td class=\"n\">{}</td><td>{}</td><td>{}</td></tr>",
                i + 1,
                escape(&shown),
                x.score,
                x.degree,
                x.window_end.map(dates::iso).unwrap_or_default(),
                flags.join(", ")
            );
        }
        h.push_str("</table>\n");
    }

    // Follow-up progress from the workspace.
    let mut counts = [0usize; FOLLOWUP_STATES.len()];
    for st in &r.states {
        if let Some(i) = st
            .followup
            .as_deref()
            .and_then(|f| FOLLOWUP_STATES.iter().position(|&x| x == f))
        {
            counts[i] += 1;
        }
    }
    h.push_str("<h2>Follow-up (from the workspace)</h2>\n<table>\n<tr>");
    for s in FOLLOWUP_STATES {
        let _ = write!(h, "<th class=\"n\">{}</th>", escape(s));
    }
    h.push_str("<th class=\"n\">overdue</th></tr>\n<tr>");
    for c in counts {
        let _ = write!(h, "<td class=\"n\">{c}</td>");
    }
    let overdue = r.list.as_ref().map_or(0, |l| l.overdue);
    let _ = write!(h, "<td class=\"n\">{overdue}</td>");
    h.push_str("</tr>\n</table>\n<p class=\"meta\">States set in the workspace (the others have none recorded there); overdue: window over and follow-up not completed, counted over the whole list.</p>\n");

    // Outlook.
    if let Some(plan) = &r.plan {
        h.push_str("<h2>Outlook</h2>\n");
        let _ = writeln!(
            h,
            "<p>Mean excess degree κ {}; epidemic threshold T_c {}; {}. At that T: R0 {}, \
             expected final size {} of people.</p>",
            short(plan.at_t.kappa, 3),
            short(plan.at_t.threshold, 3),
            escape(&crate::report::outlook::assumption(plan)),
            short(plan.at_t.r0, 2),
            plan.at_t
                .final_size
                .ok()
                .map_or("undefined".into(), |x| format!("{:.1}%", 100.0 * x)),
        );
        if let Some(t) = plan.t {
            for sc in &plan.strategies {
                let n = sc.below_one(t);
                let _ = writeln!(
                    h,
                    "<p class=\"meta\">{}: {}</p>",
                    escape(sc.strategy.name()),
                    n.map_or(
                        format!("R stays above 1 within the {} people followed", sc.len()),
                        |n| format!("reach {n} people to bring R below 1")
                    )
                );
            }
        }
        let _ = writeln!(h, "<p class=\"caution\">{}</p>", escape(MODEL_CAUTION));
    }

    // Figures.
    h.push_str("<h2>Figures</h2>\n");
    for (title, svg) in figures {
        // The SVG document without its XML declaration, inline.
        let body = svg
            .find("<svg")
            .map_or(svg.as_str(), |i| &svg[i..])
            .to_string();
        let _ = writeln!(
            h,
            "<figure>\n{body}\n<figcaption>{}</figcaption>\n</figure>",
            escape(title)
        );
    }
    let _ = writeln!(
        h,
        "<h2>Assumptions</h2>\n<p class=\"meta\">Contacts are the distinct pairs of people in the \
         exposure rows in view (repeated rows merged; rows without two valid IDs or with one \
         person on both sides quarantined). Degrees count pairs, not rows. The outlook assumes \
         a configuration-model network; see its caution above.</p>\n<p class=\"caution\">{}</p>\n</body>\n</html>",
        escape(crate::CAUTION)
    );
    h
}
