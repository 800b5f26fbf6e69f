//! The Person pane: one person, their score parts, state, history, and their contacts or
//! their chains (forward: whom the dates allow them to have exposed; backward: whom they met
//! before onset).

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Row, Table, Wrap};
use ratatui::Frame;

use super::*;
use crate::ingest::dates;
use crate::tui::app::{App, PersonView};
use crate::tui::model::Model;
use crate::tui::state::PersonList;
use crate::tui::theme::Theme;
use crate::tui::ui::block;

pub fn render(frame: &mut Frame, area: Rect, _m: &Model, app: &App, th: &Theme) {
    let Some(p) = &app.person else {
        frame.render_widget(
            Paragraph::new(vec![
                Line::from("No person open."),
                Line::from("Open one from the Priority pane (Enter), or find one with /."),
            ])
            .block(block("6 Person".into(), th)),
            area,
        );
        return;
    };
    let [top, bottom] = Layout::vertical([Constraint::Length(12), Constraint::Min(5)]).areas(area);
    let [about, score, state] = Layout::horizontal([
        Constraint::Percentage(34),
        Constraint::Percentage(33),
        Constraint::Percentage(33),
    ])
    .areas(top);
    render_about(frame, about, app, p, th);
    render_score(frame, score, p, th);
    render_state(frame, state, p, th);
    match p.list {
        PersonList::Contacts => render_contacts(frame, bottom, p, th),
        _ => render_chains(frame, bottom, p, th),
    }
}

/// Who the person is: rank, contacts, window and the people-table attributes.
fn render_about(frame: &mut Frame, area: Rect, app: &App, p: &PersonView, th: &Theme) {
    let mut lines: Vec<Line> = p
        .attrs
        .iter()
        .map(|(k, v)| Line::from(format!("  {k}: {v}")))
        .collect();
    if let Some((rank, r)) = &p.ranked {
        lines.insert(
            0,
            Line::from(Span::styled(
                format!(
                    "  rank {rank} · {} contacts · window end {} ({} days left){}",
                    r.degree,
                    r.window_end.map(dates::iso).unwrap_or_else(|| "–".into()),
                    days(r.days_left),
                    if r.overdue { " · OVERDUE" } else { "" }
                ),
                if r.overdue { th.warn } else { th.title },
            )),
        );
    }
    let depth = app.history.len();
    frame.render_widget(
        Paragraph::new(lines)
            .wrap(Wrap { trim: true })
            .block(block(format!("6 Person — {} · depth {depth}", p.id), th)),
        area,
    );
}

/// The score and what each component adds.
fn render_score(frame: &mut Frame, area: Rect, p: &PersonView, th: &Theme) {
    let lines: Vec<Line> = p
        .parts
        .iter()
        .map(|part| {
            Line::from(format!(
                "  {:<14} {:>9.2} → {:.3}",
                part.name, part.raw, part.contribution
            ))
        })
        .collect();
    let total = p.ranked.as_ref().map(|(_, r)| r.score).unwrap_or(0.0);
    frame.render_widget(
        Paragraph::new(lines).block(block(
            format!("Score {total:.3}: raw value → contribution"),
            th,
        )),
        area,
    );
}

/// The workspace state and the last changes.
fn render_state(frame: &mut Frame, area: Rect, p: &PersonView, th: &Theme) {
    let mut lines = Vec::new();
    match &p.state {
        Some(s) => {
            lines.push(Line::from(format!(
                "  follow-up: {}",
                s.followup.as_deref().unwrap_or("–")
            )));
            lines.push(Line::from(format!("  flags: {}", s.flags.join(", "))));
            lines.push(Line::from(format!(
                "  note: {}",
                s.note.as_deref().unwrap_or("–")
            )));
        }
        None => lines.push(Line::from(
            "  nothing recorded yet (f flag, u follow-up, n note)",
        )),
    }
    for c in p.history.iter().rev().take(5) {
        lines.push(Line::from(Span::styled(
            format!(
                "  {} {} {}: {} → {}",
                c.at.get(..16).unwrap_or(&c.at),
                c.user,
                c.field,
                c.old_value.as_deref().unwrap_or("–"),
                c.new_value.as_deref().unwrap_or("–")
            ),
            th.dim,
        )));
    }
    frame.render_widget(
        Paragraph::new(lines)
            .wrap(Wrap { trim: true })
            .block(block("Follow-up (workspace) and history".into(), th)),
        area,
    );
}

/// The person's contacts, sorted, the selected one highlighted.
fn render_contacts(frame: &mut Frame, area: Rect, p: &PersonView, th: &Theme) {
    let page = area.height.saturating_sub(3) as usize;
    let rows: Vec<Row> = p
        .contacts
        .iter()
        .enumerate()
        .skip(p.pos.offset)
        .take(page)
        .map(|(i, c)| {
            let row = Row::new(vec![
                c.id.clone(),
                c.degree.to_string(),
                c.first.map(dates::iso).unwrap_or_else(|| "–".into()),
                c.last.map(dates::iso).unwrap_or_else(|| "–".into()),
                c.minutes
                    .map(|x| format!("{x:.0}"))
                    .unwrap_or_else(|| "–".into()),
                c.rows.to_string(),
                c.settings.clone(),
                c.named.to_string(),
                c.followup.clone(),
            ]);
            list_row(row, i == p.pos.selected, th)
        })
        .collect();
    let (col, desc) = p.sort;
    frame.render_widget(
        Table::new(
            rows,
            [
                Constraint::Length(12),
                Constraint::Length(8),
                Constraint::Length(11),
                Constraint::Length(11),
                Constraint::Length(8),
                Constraint::Length(5),
                Constraint::Length(18),
                Constraint::Length(14),
                Constraint::Min(10),
            ],
        )
        .header(
            Row::new(vec![
                "contact",
                "contacts",
                "first",
                "last",
                "minutes",
                "rows",
                "settings",
                "who named",
                "follow-up",
            ])
            .style(th.title),
        )
        .block(block(
            format!(
                "Contacts: {} · sorted by {}{} · Enter opens one · c: chains",
                p.contacts.len(),
                col.name(),
                if desc {
                    " (high first)"
                } else {
                    " (low first)"
                }
            ),
            th,
        )),
        area,
    );
}

/// The person's forward chains or backward sources (c cycles), the selected one highlighted.
fn render_chains(frame: &mut Frame, area: Rect, p: &PersonView, th: &Theme) {
    let page = area.height.saturating_sub(4) as usize;
    let forward = p.list == PersonList::Forward;
    let rows: Vec<Row> = p
        .chains
        .iter()
        .enumerate()
        .skip(p.pos.offset)
        .take(page)
        .map(|(i, c)| {
            let row = Row::new(vec![
                c.id.clone(),
                c.count.to_string(),
                dates::iso(c.day),
                c.contacts.to_string(),
                c.listed.to_string(),
                c.via.clone(),
            ]);
            list_row(row, i == p.pos.selected, th)
        })
        .collect();
    let (count, day, via) = match forward {
        true => (
            "gen",
            "earliest",
            "chain to the earliest date (who exposed whom, when)",
        ),
        false => ("cases", "met", "when"),
    };
    let [note, table] = Layout::vertical([Constraint::Length(1), Constraint::Min(3)]).areas(area);
    frame.render_widget(
        Paragraph::new(Line::from(Span::styled(
            format!(" {}", p.chains_note),
            th.dim,
        ))),
        note,
    );
    frame.render_widget(
        Table::new(
            rows,
            [
                Constraint::Length(12),
                Constraint::Length(6),
                Constraint::Length(11),
                Constraint::Length(9),
                Constraint::Length(15),
                Constraint::Min(20),
            ],
        )
        .header(Row::new(vec!["person", count, day, "contacts", "listed", via]).style(th.title))
        .block(block(
            format!(
                "{}: {} · possible, not proven · Enter opens one · c: {}",
                if forward {
                    "Chains forward"
                } else {
                    "Sources backward"
                },
                p.chains.len(),
                if forward {
                    "sources backward"
                } else {
                    "contacts"
                }
            ),
            th,
        )),
        table,
    );
}
