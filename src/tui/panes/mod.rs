//! One file per pane; each `render` lays out the pane from the model and the state. The chart
//! helpers shared by several panes are here.

pub mod clusters;
pub mod degrees;
pub mod neighbours;
pub mod outlook;
pub mod overview;
pub mod person;
pub mod priority;

use ratatui::layout::Rect;
use ratatui::text::Line;
use ratatui::widgets::{Axis, Paragraph};
use ratatui::Frame;

use crate::tui::app::App;
use crate::tui::model::Model;
use crate::tui::theme::Theme;
use crate::tui::ui::block;

/// Largest k shown: the smallest k with at least `share` of people at or below it.
pub fn cutoff_k(hist: &[u64], share: f64) -> usize {
    let total: u64 = hist.iter().sum();
    if share >= 1.0 || total == 0 {
        return hist.len().saturating_sub(1);
    }
    let mut acc = 0u64;
    for (k, &c) in hist.iter().enumerate() {
        acc += c;
        if acc as f64 >= share * total as f64 {
            return k;
        }
    }
    hist.len().saturating_sub(1)
}

pub fn y_of(p: f64, log: bool) -> f64 {
    if log {
        if p > 0.0 {
            p.log10().max(-6.0) + 6.0
        } else {
            0.0
        }
    } else {
        p
    }
}

pub fn y_axis<'a>(max: f64, log: bool, th: &Theme) -> Axis<'a> {
    let labels: Vec<Line> = if log {
        vec!["1e-6".into(), "1e-3".into(), "1".into()]
    } else {
        vec![
            "0".into(),
            format!("{:.2}", max / 2.0).into(),
            format!("{max:.2}").into(),
        ]
    };
    Axis::default()
        .bounds([0.0, if log { 6.0 } else { max.max(1e-9) }])
        .labels(labels)
        .style(th.dim)
}

/// While the filtered figures are on their way from the worker, say so instead of showing
/// figures for the wrong people; true when it did.
pub fn computing(frame: &mut Frame, area: Rect, m: &Model, app: &App, th: &Theme) -> bool {
    if app.scope_pending.is_none() {
        return false;
    }
    let title = format!("{} {}", app.pane.index() + 1, app.pane.name());
    frame.render_widget(
        Paragraph::new(format!(
            "Computing the figures for the people the filters keep ({}) …",
            app.filter_text(m)
        ))
        .block(block(title, th)),
        area,
    );
    true
}

/// A list row in the selection's style when it is the selected one, else in plain text.
pub fn list_row<'a>(
    row: ratatui::widgets::Row<'a>,
    selected: bool,
    th: &Theme,
) -> ratatui::widgets::Row<'a> {
    row.style(if selected { th.selected } else { th.text })
}

pub fn days(x: Option<i32>) -> String {
    x.map(|d| d.to_string()).unwrap_or_else(|| "–".into())
}
