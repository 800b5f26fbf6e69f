//! The Overview pane: what was loaded (files, rows, network), the headline figures, and the
//! day's work: what is due today and what changed since the last load.

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Wrap};
use ratatui::Frame;

use crate::analysis::daywork::{DayWork, Today};
use crate::ingest::dates;
use crate::report::fmt::{pct, plus_minus_short, short as f};
use crate::tui::app::App;
use crate::tui::model::Model;
use crate::tui::theme::Theme;
use crate::tui::ui::block;

pub fn render(frame: &mut Frame, area: Rect, m: &Model, app: &App, th: &Theme) {
    let [left, right] =
        Layout::horizontal([Constraint::Percentage(50), Constraint::Percentage(50)]).areas(area);
    let split = |a: Rect| Layout::vertical([Constraint::Length(23), Constraint::Min(6)]).areas(a);
    let ([loaded, today], [figures, changes]) = (split(left), split(right));
    render_loaded(frame, loaded, m, th);
    render_figures(frame, figures, m, th);
    render_day(frame, (today, changes), m, app, th);
}

/// The day's work (left) and the changes since the last load (right), once the worker has
/// counted them.
fn render_day(frame: &mut Frame, (left, right): (Rect, Rect), m: &Model, app: &App, th: &Theme) {
    let (today, changes) = match m.day.get() {
        None => {
            let wait = vec![Line::from(Span::styled("  computing …", th.dim))];
            (wait.clone(), wait)
        }
        Some(Err(e)) => {
            let err = vec![Line::from(Span::styled(format!("  {e}"), th.warn))];
            (err.clone(), err)
        }
        Some(Ok(w)) => (
            today_lines(m, app.today_now.as_ref().unwrap_or(&w.today), th),
            change_lines(w, th),
        ),
    };
    frame.render_widget(
        Paragraph::new(today)
            .wrap(Wrap { trim: false })
            .block(block(
                match app.today_now {
                    Some(_) => "The day's work (with this session's follow-up)",
                    None => "The day's work (at load; `hubwatch today` lists it)",
                }
                .into(),
                th,
            )),
        left,
    );
    frame.render_widget(
        Paragraph::new(changes)
            .wrap(Wrap { trim: false })
            .block(block("Since the last load (`hubwatch changes`)".into(), th)),
        right,
    );
}

fn share(a: usize, b: usize) -> String {
    match b {
        0 => "–".into(),
        _ => format!("{:.0}% ({a} of {b})", 100.0 * a as f64 / b as f64),
    }
}

fn today_lines(m: &Model, t: &Today, th: &Theme) -> Vec<Line<'static>> {
    let mut lines = vec![
        Line::from(format!(
            "  monitoring ends today {} · tomorrow {} · in 2-3 days {}",
            t.ending_today.len(),
            t.ending_tomorrow.len(),
            t.ending_in_3_days.len()
        )),
        Line::from(format!(
            "  overdue {} · many contacts, not reached {} · unreachable 2+ days {}",
            t.overdue.len(),
            t.hubs_to_call.len(),
            t.unreachable_2_days.len()
        )),
        Line::from(format!(
            "  reached within 24 h of first appearing: {}",
            share(t.all.reached_24, t.all.seen_24)
        )),
        Line::from(format!(
            "  within 48 h: {} · last 14 days reached {} · completed {}",
            share(t.all.reached_48, t.all.seen_48),
            t.all.reached,
            t.all.completed
        )),
        Line::from(Span::styled(
            "  windows end: not completed; to call: high-degree, not reached or unreachable; times from the audit",
            th.dim,
        )),
    ];
    if !t.first.is_empty() {
        lines.push(Line::from(Span::styled(
            "  first on today's list (list order):",
            th.title,
        )));
        for (v, why) in &t.first {
            lines.push(Line::from(format!(
                "  {:<12} {}",
                m.d.ids.name(*v),
                why.join(", ")
            )));
        }
    }
    lines
}

fn change_lines(w: &DayWork, th: &Theme) -> Vec<Line<'static>> {
    if let Some(p) = &w.problem {
        return vec![Line::from(Span::styled(
            format!("  no comparison: {p}"),
            th.warn,
        ))];
    }
    let (Some(e), Some(c)) = (&w.earlier, &w.changes) else {
        return vec![Line::from(Span::styled(
            "  nothing to compare with yet: this is the first load recorded here",
            th.dim,
        ))];
    };
    vec![
        Line::from(Span::styled(
            format!("  compared with load {} (as of {})", e.id, e.as_of),
            th.dim,
        )),
        Line::from(format!(
            "  new people {} · gone {} · new exposures between known people {}",
            c.new_people.len(),
            c.gone.len(),
            c.new_exposures.len()
        )),
        Line::from(format!(
            "  became high-degree {} · no longer {} · new bridges {}",
            c.became_high_degree.len(),
            c.no_longer_high_degree.len(),
            c.new_bridges.len()
        )),
        Line::from(format!(
            "  clusters merged {} · split {} · into the top {} {} · out {}",
            c.merged.len(),
            c.split.len(),
            c.top,
            c.into_top.len(),
            c.out_of_top.len()
        )),
    ]
}

/// Files, rows and the network, with the caution.
fn render_loaded(frame: &mut Frame, area: Rect, m: &Model, th: &Theme) {
    let (d, s) = (&m.d, &m.summary);
    let l = &d.ledger;
    let mut lines = vec![Line::from(Span::styled("Files", th.title))];
    for file in &l.files {
        lines.push(Line::from(format!(
            "  {} — {:?}, {}",
            file.path.display(),
            file.role,
            file.format
        )));
    }
    for (path, why) in &l.ignored {
        lines.push(Line::from(Span::styled(
            format!("  ignored {}: {why}", path.display()),
            th.dim,
        )));
    }
    lines.push(Line::from(""));
    lines.push(Line::from(Span::styled(
        "Rows (read = used + merged + quarantined)",
        th.title,
    )));
    for (name, c) in [("exposures", &l.exposures), ("people", &l.people)] {
        lines.push(Line::from(format!(
            "  {name:<9} {} = {} + {} + {}   field problems {}",
            c.read, c.used, c.merged, c.quarantined, c.field_problems
        )));
    }
    lines.push(Line::from(Span::styled(
        "  r: list the quarantined rows and field problems",
        th.dim,
    )));
    lines.push(Line::from(""));
    lines.push(Line::from(Span::styled("Network", th.title)));
    lines.push(Line::from(format!(
        "  people {} · contacts {} · implied {} · isolated {}",
        s.people, s.contacts, s.implied, s.isolated
    )));
    lines.push(Line::from(format!(
        "  components {} · largest {} ({})",
        s.components.count,
        s.components.largest,
        pct(s.components.largest_share.ok_or("none"))
    )));
    lines.push(Line::from(""));
    lines.push(Line::from(Span::styled(crate::CAUTION, th.warn)));
    frame.render_widget(
        Paragraph::new(lines)
            .wrap(Wrap { trim: false })
            .block(block("1 Overview — what was loaded".into(), th)),
        area,
    );
}

/// The headline figures and the settings of this view.
fn render_figures(frame: &mut Frame, area: Rect, m: &Model, th: &Theme) {
    let (d, s) = (&m.d, &m.summary);
    let st = &m.stats;
    let w = &m.whole;
    let r = plus_minus_short(st.r, st.r_se, 3);
    let r_line = match m.null.get() {
        Some(null) => format!(
            "  r = {r} (jackknife SE); null model {}",
            plus_minus_short(null.mean, null.sd, 3)
        ),
        None => format!("  r = {r} (jackknife SE); null model: computing …"),
    };
    let fig = |label: &str, v: String| {
        Line::from(vec![
            Span::styled(format!("  {label:<44}"), th.text),
            Span::styled(v, th.title),
        ])
    };
    let lines = vec![
        Line::from(Span::styled("Headline figures", th.title)),
        fig("mean contacts <k>", f(w.mean, 2)),
        fig(
            "contacts at the end of an exposure <k²>/<k>",
            f(w.edge_end_mean, 2),
        ),
        fig("mean excess degree (<k²> − <k>)/<k>", f(w.mean_excess, 2)),
        fig("their contacts have more contacts", pct(w.shares.0)),
        fig("their contacts' mean contacts", f(w.contact_mean, 2)),
        Line::from(Span::styled("  degree mixing:", th.text)),
        Line::from(r_line),
        fig("transitivity", f(st.clustering.transitivity, 3)),
        fig(
            "largest cluster share",
            pct(s.components.largest_share.ok_or("none")),
        ),
        fig(
            "bridges (articulation points)",
            st.bridges.len().to_string(),
        ),
        Line::from(""),
        Line::from(Span::styled("Settings of this view", th.title)),
        Line::from(format!("  as of {}", dates::iso(d.as_of))),
        Line::from(format!("  view: {}", d.view.0.describe())),
        Line::from(format!(
            "  window: {} {} days ({})",
            m.window.pathogen, m.window.days, m.window.source
        )),
        Line::from(format!("  ranking preset: {}", m.preset)),
        Line::from(format!("  workspace: {}", m.workspace_path.display())),
    ];
    frame.render_widget(
        Paragraph::new(lines)
            .wrap(Wrap { trim: false })
            .block(block("Figures".into(), th)),
        area,
    );
}
