//! The Clusters pane: components by size and the bridges of the highlighted one.

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::Line;
use ratatui::widgets::{Paragraph, Row, Table};
use ratatui::Frame;

use super::list_row;
use crate::tui::app::App;
use crate::tui::model::Model;
use crate::tui::theme::Theme;
use crate::tui::ui::block;

pub fn render(frame: &mut Frame, area: Rect, m: &Model, app: &App, th: &Theme) {
    let [list, side] =
        Layout::horizontal([Constraint::Percentage(60), Constraint::Percentage(40)]).areas(area);
    let page = list.height.saturating_sub(3) as usize;
    let pos = app.clusters;
    let rows: Vec<Row> = m
        .clusters
        .iter()
        .enumerate()
        .skip(pos.offset)
        .take(page)
        .map(|(i, c)| {
            let mark = if app.filters.cluster == Some(c.label) {
                "▶ "
            } else {
                "  "
            };
            let r = Row::new(vec![
                format!("{mark}#{}", c.label + 1),
                c.size.to_string(),
                c.contacts.to_string(),
                c.bridges.to_string(),
                format!("{} ({})", c.hub.0, c.hub.1),
            ]);
            list_row(r, i == pos.selected, th)
        })
        .collect();
    frame.render_widget(
        Table::new(
            rows,
            [
                Constraint::Length(10),
                Constraint::Length(9),
                Constraint::Length(9),
                Constraint::Length(8),
                Constraint::Min(12),
            ],
        )
        .header(
            Row::new(vec![
                "cluster",
                "people",
                "contacts",
                "bridges",
                "most contacts",
            ])
            .style(th.title),
        )
        .block(block(
            format!(
                "4 Clusters — {} components by size (Enter filters every pane to one)",
                m.clusters.len()
            ),
            th,
        )),
        list,
    );
    let mut lines: Vec<Line> = app
        .cluster_bridges
        .iter()
        .map(|(id, k)| Line::from(format!("  {id}  ({k} contacts)")))
        .collect();
    if lines.is_empty() {
        lines.push(Line::from("  none: no single person splits this cluster"));
    }
    frame.render_widget(
        Paragraph::new(lines).block(block(
            "Bridges in the highlighted cluster (removing one splits it)".into(),
            th,
        )),
        side,
    );
}
