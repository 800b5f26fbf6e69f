//! The Neighbours pane: k_nn(k), the observed neighbour degrees against q_k, the friendship
//! paradox and the mixing matrix.

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::symbols::Marker;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Axis, Chart, Dataset, GraphType, LegendPosition, Paragraph};
use ratatui::Frame;

use super::*;
use crate::report::fmt::{pct, plus_minus_short, short as f};
use crate::tui::app::{App, CUTOFFS};
use crate::tui::model::{Model, ScopeStats};
use crate::tui::theme::Theme;
use crate::tui::ui::block;

/// The two charts' points and ranges, computed when the state changes.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct NeighboursView {
    /// Largest k shown.
    pub kmax: usize,
    /// Log scale.
    pub log: bool,
    /// k_nn(k) up to kmax.
    pub knn: Vec<(f64, f64)>,
    /// The flat line <k²>/<k> of an uncorrelated network.
    pub flat: [(f64, f64); 2],
    /// Top of the k_nn axis.
    pub knn_max: f64,
    /// Observed other contacts of a contact, and q_k, up to kmax.
    pub observed: Vec<(f64, f64)>,
    /// q_k.
    pub predicted: Vec<(f64, f64)>,
    /// Top of that axis.
    pub excess_max: f64,
}

/// The pane's figures for the state.
pub fn view(m: &Model, app: &App) -> NeighboursView {
    let sc = app.scope(m);
    let kmax = cutoff_k(&sc.histogram, CUTOFFS[app.cutoff]).max(1);
    let log = app.log_scale;
    let knn: Vec<(f64, f64)> = sc
        .knn
        .iter()
        .filter(|(k, _)| (*k as usize) <= kmax)
        .map(|&(k, v)| (k as f64, v))
        .collect();
    let flat_y = sc.edge_end_mean.unwrap_or(0.0);
    let pts = |v: &[f64]| -> Vec<(f64, f64)> {
        v.iter()
            .enumerate()
            .take(kmax)
            .map(|(k, &p)| (k as f64, y_of(p, log)))
            .collect()
    };
    NeighboursView {
        kmax,
        log,
        knn_max: knn.iter().map(|p| p.1).fold(flat_y, f64::max) * 1.1,
        knn,
        flat: [(0.0, flat_y), (kmax as f64 + 1.0, flat_y)],
        observed: pts(&sc.contact_excess),
        predicted: pts(&sc.q),
        excess_max: sc
            .contact_excess
            .iter()
            .chain(sc.q.iter())
            .cloned()
            .fold(0.0, f64::max),
    }
}

/// Lay out the pane.
pub fn render(frame: &mut Frame, area: Rect, m: &Model, app: &App, th: &Theme) {
    if computing(frame, area, m, app, th) {
        return;
    }
    let sc = app.scope(m);
    let [charts, bottom] =
        Layout::vertical([Constraint::Min(8), Constraint::Length(10)]).areas(area);
    let [left, right] =
        Layout::horizontal([Constraint::Percentage(50), Constraint::Percentage(50)]).areas(charts);
    let v = &app.views.neighbours;
    render_knn(frame, left, sc, v, th);
    render_excess(frame, right, v, th);
    render_bottom(frame, bottom, m, sc, th);
}

/// k_nn(k) against the flat line an uncorrelated network gives.
fn render_knn(frame: &mut Frame, area: Rect, sc: &ScopeStats, v: &NeighboursView, th: &Theme) {
    let (knn, flat, ymax, kmax) = (&v.knn, &v.flat, v.knn_max, v.kmax);
    frame.render_widget(
        Chart::new(vec![
            Dataset::default()
                .name("• k_nn(k) observed")
                .marker(Marker::Dot)
                .graph_type(GraphType::Scatter)
                .style(th.series[0])
                .data(knn),
            Dataset::default()
                .name("─ uncorrelated: <k²>/<k>")
                .marker(Marker::Braille)
                .graph_type(GraphType::Line)
                .style(th.series[1])
                .data(flat),
        ])
        .block(block(
            format!(
                "3 Neighbours — k_nn(k): contacts' mean contacts · {}",
                sc.label
            ),
            th,
        ))
        .x_axis(
            Axis::default()
                .bounds([0.0, kmax as f64 + 1.0])
                .labels(vec![Line::from("0"), Line::from(format!("{kmax}"))])
                .style(th.dim),
        )
        .y_axis(
            Axis::default()
                .bounds([0.0, ymax.max(1.0)])
                .labels(vec![Line::from("0"), Line::from(format!("{ymax:.1}"))])
                .style(th.dim),
        )
        .legend_position(Some(LegendPosition::TopRight))
        .hidden_legend_constraints((Constraint::Ratio(2, 3), Constraint::Ratio(2, 3))),
        area,
    );
}

/// The observed neighbour degrees against q_k.
fn render_excess(frame: &mut Frame, area: Rect, v: &NeighboursView, th: &Theme) {
    let (obs, pred, ymax2, kmax, log) = (&v.observed, &v.predicted, v.excess_max, v.kmax, v.log);
    frame.render_widget(
        Chart::new(vec![
            Dataset::default()
                .name("█ observed")
                .marker(Marker::HalfBlock)
                .graph_type(GraphType::Bar)
                .style(th.series[0])
                .data(obs),
            Dataset::default()
                .name("⠒ predicted q_k")
                .marker(Marker::Braille)
                .graph_type(GraphType::Line)
                .style(th.series[1])
                .data(pred),
        ])
        .block(block(
            "Other contacts of a contact: observed vs q_k".into(),
            th,
        ))
        .x_axis(
            Axis::default()
                .bounds([0.0, kmax as f64])
                .labels(vec![Line::from("0"), Line::from(format!("{kmax}"))])
                .style(th.dim),
        )
        .y_axis(y_axis(ymax2, log, th))
        .legend_position(Some(LegendPosition::TopRight))
        .hidden_legend_constraints((Constraint::Ratio(2, 3), Constraint::Ratio(2, 3))),
        area,
    );
}

/// The friendship paradox and the mixing matrices.
fn render_bottom(frame: &mut Frame, area: Rect, m: &Model, sc: &ScopeStats, th: &Theme) {
    let [paradox, mixing] =
        Layout::horizontal([Constraint::Percentage(45), Constraint::Percentage(55)]).areas(area);
    let lines = vec![
        Line::from(format!(
            "  (a) end of a random exposure <k²>/<k>: {}",
            f(sc.edge_end_mean, 2)
        )),
        Line::from(format!(
            "  (b) a contact of a random person: {}",
            f(sc.contact_mean, 2)
        )),
        Line::from(format!("      against the mean <k>: {}", f(sc.mean, 2))),
        Line::from(format!(
            "  (c) their contacts have more: {} · fewer: {}",
            pct(sc.shares.0),
            pct(sc.shares.1),
        )),
        Line::from(format!("      as many: {}", pct(sc.shares.2))),
        Line::from(format!(
            "  degree mixing r (whole network) {}",
            plus_minus_short(m.stats.r, m.stats.r_se, 3)
        )),
    ];
    frame.render_widget(
        Paragraph::new(lines).block(block("Why your contacts have more contacts".into(), th)),
        paradox,
    );
    let mut lines: Vec<Line> = Vec::new();
    for (name, mx) in &m.stats.attribute_mixing {
        let groups = mx.groups.iter().take(6).collect::<Vec<_>>();
        lines.push(Line::from(Span::styled(
            format!("  {name}: r = {}", f(mx.r, 3)),
            th.title,
        )));
        // Columns by letter; each row names its letter and the group in full (the key).
        let code = |i: usize| char::from(b'A' + i as u8);
        let width = groups
            .iter()
            .map(|g| g.chars().count())
            .max()
            .unwrap_or(0)
            .min(24);
        let head: String = (0..groups.len())
            .map(|j| format!(" {:>6}", code(j)))
            .collect();
        lines.push(Line::from(format!("  {:<w$}{head}", "", w = width + 2)));
        for (i, g) in groups.iter().enumerate() {
            let row: String = (0..groups.len())
                .map(|j| format!(" {:>6}", mx.pairs[i][j]))
                .collect();
            lines.push(Line::from(format!(
                "  {} {:<width$.width$}{row}",
                code(i),
                g
            )));
        }
    }
    for (setting, r) in &m.stats.r_by_setting {
        lines.push(Line::from(format!("  r within {setting}: {}", f(*r, 3))));
    }
    if lines.is_empty() {
        lines.push(Line::from("  no area or age group in the people table"));
    }
    frame.render_widget(
        Paragraph::new(lines).block(block("Mixing (pairs between groups)".into(), th)),
        mixing,
    );
}
