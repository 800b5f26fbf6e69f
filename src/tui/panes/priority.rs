//! The Priority pane: the filtered, sorted follow-up list with its marks.

use ratatui::layout::{Constraint, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Row, Table, Wrap};
use ratatui::Frame;

use super::*;
use crate::analysis::priority::Mark;
use crate::ingest::dates;
use crate::tui::app::App;
use crate::tui::model::{Listing, Model};
use crate::tui::theme::Theme;
use crate::tui::ui::block;

// Columns by width: on narrow screens the "mostly", "cases met" and "window end" columns
// go, so that IDs are never cut.
const COLUMNS: [(&str, u16); 11] = [
    ("rank", 7),
    ("ID", 12),
    ("score", 7),
    ("mostly", 13),
    ("contacts", 8),
    ("cases met", 9),
    ("window end", 11),
    ("days left", 9),
    ("marks", 5),
    ("follow-up", 12),
    ("flags", 10),
];

/// The cells of ranked entry `ri` (every column; the caller keeps those shown).
fn cells(m: &Model, l: &Listing, app: &App, ri: u32) -> [String; 11] {
    let r = &l.list.ranked[ri as usize];
    let marks: String = r.marks().map(Mark::letter).collect();
    [
        (ri + 1).to_string(),
        m.d.ids.name(r.node).to_string(),
        format!("{:.3}", r.score),
        l.main_reason[ri as usize].to_string(),
        r.degree.to_string(),
        format!("{}", r.raw[1]),
        r.window_end.map(dates::iso).unwrap_or_else(|| "–".into()),
        days(r.days_left),
        marks,
        app.followup(m, r.node),
        app.flags(m, r.node),
    ]
}

/// While the worker ranks the list (or when it could not), say so.
fn waiting(frame: &mut Frame, area: Rect, m: &Model, th: &Theme) {
    let (title, text) = match m.listing.get() {
        Some(Err(e)) => (
            " 5 Priority · not ranked ",
            vec![
                Line::from(""),
                Line::from(Span::styled(
                    format!("  The list could not be ranked: {e}"),
                    th.warn,
                )),
            ],
        ),
        _ => (
            " 5 Priority · ranking ",
            vec![
                Line::from(""),
                Line::from(Span::styled(
                    format!(
                        "  Still ranking: the priority list of {} people, with its sort orders \
                         and filters.",
                        m.d.people()
                    ),
                    th.text,
                )),
                Line::from(Span::styled(
                    "  It is worked out in the background and appears here by itself (about \
                     a second per ten million exposure rows); the Overview, Degrees, \
                     Neighbours and Clusters panes can be used meanwhile.",
                    th.dim,
                )),
            ],
        ),
    };
    let p = Paragraph::new(text)
        .wrap(Wrap { trim: false })
        .block(block(title.to_string(), th));
    frame.render_widget(p, area);
}

/// Lay out the pane.
pub fn render(frame: &mut Frame, area: Rect, m: &Model, app: &App, th: &Theme) {
    let Some(l) = m.listed().filter(|_| app.listed) else {
        waiting(frame, area, m, th);
        return;
    };
    let page = area.height.saturating_sub(3) as usize;
    let wide = area.width >= 118;
    let shown = |c: usize| wide || !matches!(c, 3 | 5 | 6);
    let pos = app.prio;
    let rows: Vec<Row> = app
        .rows
        .iter()
        .enumerate()
        .skip(pos.offset)
        .take(page)
        .map(|(i, &ri)| {
            let r = &l.list.ranked[ri as usize];
            let row = Row::new(
                cells(m, l, app, ri)
                    .into_iter()
                    .enumerate()
                    .filter(|(c, _)| shown(*c))
                    .map(|(_, s)| s),
            );
            if i == pos.selected {
                row.style(th.selected)
            } else if r.overdue {
                row.style(th.warn)
            } else {
                row.style(th.text)
            }
        })
        .collect();
    let (col, desc) = app.sort;
    let title = format!(
        "5 Priority — {} of {} people · sorted by {}{} · preset {} · row {}",
        app.rows.len(),
        l.list.ranked.len(),
        col.name(),
        if desc { " (reversed)" } else { "" },
        l.list.preset.0,
        if app.rows.is_empty() {
            0
        } else {
            pos.selected + 1
        },
    );
    frame.render_widget(
        Table::new(
            rows,
            COLUMNS
                .iter()
                .enumerate()
                .filter(|(c, _)| shown(*c))
                .map(|(c, &(_, w))| {
                    if c == COLUMNS.len() - 1 {
                        Constraint::Min(w)
                    } else {
                        Constraint::Length(w)
                    }
                }),
        )
        .header(
            Row::new(
                COLUMNS
                    .iter()
                    .enumerate()
                    .filter(|(c, _)| shown(*c))
                    .map(|(_, &(name, _))| name),
            )
            .style(th.title),
        )
        .block(block(title, th).title_bottom(Span::styled(
            "marks: H more contacts than a typical contact's contact · B bridge · ! window over, not completed",
            th.dim,
        ))),
        area,
    );
}
