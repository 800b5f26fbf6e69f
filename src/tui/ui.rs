//! Drawing. Reads the model and the state, formats numbers and lays out widgets; computes
//! nothing (every figure comes ready from `model` or `app`).

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Clear, Paragraph, Wrap};
use ratatui::Frame;

use crate::ingest::dates;
use crate::tui::app::{App, Overlay, Purpose, MIN_SIZE};
use crate::tui::keys::{self, Pane};
use crate::tui::model::Model;
use crate::tui::panes;
use crate::tui::theme::Theme;

/// The screen's regions.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Areas {
    /// Pane tabs.
    pub tabs: Rect,
    /// As-of date, view, window and filters.
    pub context: Rect,
    /// The pane.
    pub body: Rect,
    /// Message or prompt.
    pub status: Rect,
    /// Keys of this pane.
    pub footer: Rect,
}

/// Split the screen (shared by drawing and mouse handling).
pub fn areas(area: Rect) -> Areas {
    let [tabs, context, body, status, footer] = Layout::vertical([
        Constraint::Length(1),
        Constraint::Length(1),
        Constraint::Min(0),
        Constraint::Length(1),
        Constraint::Length(1),
    ])
    .areas(area);
    Areas {
        tabs,
        context,
        body,
        status,
        footer,
    }
}

/// Which pane a click at column `x` of the tab bar means.
pub fn tab_at(x: u16) -> Option<Pane> {
    let mut start = 0u16;
    for p in Pane::ALL {
        let w = tab_label(p).chars().count() as u16 + 1;
        if x >= start && x < start + w {
            return Some(p);
        }
        start += w;
    }
    None
}

fn tab_label(p: Pane) -> String {
    format!(" {} {} ", p.index() + 1, p.name())
}

pub fn block<'a>(title: String, th: &Theme) -> Block<'a> {
    Block::bordered()
        .title(Span::styled(title, th.title))
        .border_style(th.border)
}

/// The status line: the open prompt, the last message, or the caution.
fn status_line<'a>(app: &'a App, th: &Theme) -> Line<'a> {
    if let Some(input) = &app.input {
        let label = match input.purpose {
            Purpose::Search => "find ID",
            Purpose::Flag => "flag (Enter: \"call first\"; a flag the person has is removed)",
            Purpose::Note => "note",
            Purpose::Export => "export the list as shown to",
            Purpose::Figure => "write this pane's figure (.svg or .png) to",
        };
        Line::from(vec![
            Span::styled(format!("{label}: "), th.title),
            Span::styled(format!("{}▏", input.text), th.text),
            Span::styled("  Enter ok · Esc cancel", th.dim),
        ])
    } else if let Some(msg) = &app.message {
        let style = if msg.error { th.warn } else { th.good };
        let mark = if msg.error { "! " } else { "✓ " };
        Line::from(Span::styled(format!("{mark}{}", msg.text), style))
    } else {
        Line::from(Span::styled(
            "Supports, does not replace, public-health judgement · sensitive personal data",
            th.dim,
        ))
    }
}

/// The tab bar, the pane shown in brackets.
fn tab_line(app: &App, th: &Theme) -> Line<'static> {
    let tabs: Vec<Span> = Pane::ALL
        .iter()
        .flat_map(|&p| {
            let label = tab_label(p);
            let span = if p == app.pane {
                Span::styled(format!("[{}]", label.trim()), th.selected)
            } else {
                Span::styled(label, th.text)
            };
            [span, Span::raw(" ")]
        })
        .collect();
    Line::from(tabs)
}

/// Draw the whole screen.
pub fn draw(frame: &mut Frame, m: &Model, app: &App, th: &Theme) {
    let area = frame.area();
    if area.width < MIN_SIZE.0 || area.height < MIN_SIZE.1 {
        let text = vec![
            Line::from(Span::styled("hubwatch", th.title)),
            Line::from(format!(
                "Make the window at least {}×{} (it is {}×{}).",
                MIN_SIZE.0, MIN_SIZE.1, area.width, area.height
            )),
            Line::from("q quits."),
        ];
        frame.render_widget(Paragraph::new(text).wrap(Wrap { trim: true }), area);
        return;
    }
    let a = areas(area);
    frame.render_widget(Paragraph::new(tab_line(app, th)), a.tabs);
    let (pathogen, days) = (&m.window.pathogen, m.window.days);
    let context = format!(
        "as of {} · view: {} · window: {pathogen} {days} days · filters: {}",
        dates::iso(m.d.as_of),
        m.d.view.0.describe(),
        app.filter_text(m)
    );
    frame.render_widget(
        Paragraph::new(Line::from(Span::styled(context, th.dim))),
        a.context,
    );
    match app.pane {
        Pane::Overview => panes::overview::render(frame, a.body, m, app, th),
        Pane::Degrees => panes::degrees::render(frame, a.body, m, app, th),
        Pane::Neighbours => panes::neighbours::render(frame, a.body, m, app, th),
        Pane::Clusters => panes::clusters::render(frame, a.body, m, app, th),
        Pane::Priority => panes::priority::render(frame, a.body, m, app, th),
        Pane::Person => panes::person::render(frame, a.body, m, app, th),
        Pane::Outlook => panes::outlook::render(frame, a.body, m, app, th),
    }
    frame.render_widget(Paragraph::new(status_line(app, th)), a.status);
    let footer: Vec<Span> = footer_fit(keys::footer(app.pane), a.footer.width as usize)
        .into_iter()
        .flat_map(|(k, h)| {
            [
                Span::styled(k, th.title),
                Span::styled(format!(" {h}  "), th.dim),
            ]
        })
        .collect();
    frame.render_widget(Paragraph::new(Line::from(footer)), a.footer);
    match app.overlay {
        Overlay::None => {}
        Overlay::Help => help(frame, a.body, th),
        Overlay::Quarantine(pos) => quarantine(frame, a.body, m, pos, th),
    }
}

fn centred(area: Rect, w: u16, h: u16) -> Rect {
    let w = w.min(area.width);
    let h = h.min(area.height);
    Rect {
        x: area.x + (area.width - w) / 2,
        y: area.y + (area.height - h) / 2,
        width: w,
        height: h,
    }
}

fn help(frame: &mut Frame, area: Rect, th: &Theme) {
    let lines: Vec<Line> = keys::help_lines()
        .into_iter()
        .map(|(scope, keys, help)| {
            Line::from(vec![
                Span::styled(format!("{:<11.11}", scope), th.dim),
                Span::styled(format!("{keys:<20}"), th.title),
                Span::styled(help.to_string(), th.text),
            ])
        })
        .collect();
    frame.render_widget(Clear, area);
    let b = block("Keys (any key closes)".into(), th);
    let inner = b.inner(area);
    frame.render_widget(b, area);
    // As many columns as the height needs.
    let per = (inner.height as usize).max(1);
    let columns = lines.len().div_ceil(per).max(1);
    let parts =
        Layout::horizontal(vec![Constraint::Ratio(1, columns as u32); columns]).split(inner);
    for (i, chunk) in lines.chunks(per).enumerate() {
        frame.render_widget(Paragraph::new(chunk.to_vec()), parts[i]);
    }
}

fn quarantine(frame: &mut Frame, area: Rect, m: &Model, pos: usize, th: &Theme) {
    let l = &m.d.ledger;
    let r = centred(area, area.width.saturating_sub(4), area.height);
    let page = r.height.saturating_sub(2) as usize;
    let lines: Vec<Line> = m
        .quarantine_lines
        .iter()
        .skip(pos)
        .take(page)
        .map(|(text, field)| {
            Line::from(Span::styled(
                text.as_str(),
                if *field { th.dim } else { th.text },
            ))
        })
        .collect();
    frame.render_widget(Clear, r);
    frame.render_widget(
        Paragraph::new(lines).block(block(
            format!(
                "Quarantined rows {} and field problems {} (↑↓ scroll, Esc closes)",
                l.quarantined.len(),
                l.problems.len()
            ),
            th,
        )),
        r,
    );
}

/// The footer's keys that fit in `width` columns, in the table's order; when some are left
/// out, the help key ("?") is kept, since the overlay lists them all.
pub fn footer_fit(items: Vec<(String, &'static str)>, width: usize) -> Vec<(String, &'static str)> {
    let len = |(k, h): &(String, &str)| k.chars().count() + h.chars().count() + 3;
    if items.iter().map(len).sum::<usize>() <= width {
        return items;
    }
    let help = items.iter().find(|(k, _)| k == "?").cloned();
    let mut used = help.as_ref().map_or(0, len);
    let mut out = Vec::new();
    for it in items.into_iter().filter(|(k, _)| k != "?") {
        if used + len(&it) > width {
            break;
        }
        used += len(&it);
        out.push(it);
    }
    out.extend(help);
    out
}

/// The plain text of a rendered buffer (for tests and the tmux notes).
pub fn buffer_text(buf: &ratatui::buffer::Buffer) -> String {
    let area = buf.area;
    let mut out = String::new();
    for y in 0..area.height {
        let mut line = String::new();
        for x in 0..area.width {
            line.push_str(buf[(x, y)].symbol());
        }
        out.push_str(line.trim_end());
        out.push('\n');
    }
    out
}
