//! The Outlook pane: threshold, expected outbreak size and residual R against people reached.
//!
//! [`view`] decides what the chart shows (the curves thinned to at most about 400 points, the
//! range: zoomed to where the strategies cross R = 1, or everyone followed) and whether R0 is
//! above the threshold; [`render`] lays it out.

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::symbols::Marker;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Axis, Chart, Dataset, GraphType, LegendPosition, Paragraph, Wrap};
use ratatui::Frame;

use crate::analysis::planning::{Plan, MODEL_CAUTION_SHORT};
use crate::report::fmt::{pct, short as f};
use crate::tui::app::App;
use crate::tui::model::Model;
use crate::tui::theme::Theme;
use crate::tui::ui::block;

/// Lay out the pane (a note while the worker is still computing the outlook).
pub fn render(frame: &mut Frame, area: Rect, m: &Model, app: &App, th: &Theme) {
    let Some(plan) = m.plan() else {
        let text = vec![
            Line::from(""),
            Line::from(Span::styled(
                format!(
                    "  Still computing: the outlook (residual R as up to {} people are reached, \
                     for each strategy, and the expected outbreak size over T).",
                    m.plan_reach
                ),
                th.text,
            )),
            Line::from(Span::styled(
                "  It is worked out in the background and appears here by itself; the other \
                 panes can be used meanwhile.",
                th.dim,
            )),
        ];
        let p = Paragraph::new(text)
            .wrap(Wrap { trim: false })
            .block(block(" Outlook · computing ".to_string(), th));
        frame.render_widget(p, area);
        return;
    };
    let [top, chart] = Layout::vertical([Constraint::Length(14), Constraint::Min(8)]).areas(area);
    let [figs, reach] =
        Layout::horizontal([Constraint::Percentage(50), Constraint::Percentage(50)]).areas(top);
    render_figures(frame, figs, plan, app, th);
    render_reach(frame, reach, plan, app, th);
    render_chart(frame, chart, plan, app, th);
}

/// What the Outlook pane's chart and verdict show.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct OutlookView {
    /// T of the curves (0 when unknown).
    pub t: f64,
    /// R0 above 1 at T.
    pub above: bool,
    /// Residual R per strategy, (people reached, R), thinned.
    pub series: Vec<Vec<(f64, f64)>>,
    /// Right end of the x axis.
    pub x_max: usize,
    /// Top of the y axis.
    pub y_max: f64,
    /// The range in words, for the title ("" when everyone is shown).
    pub range: String,
}

/// The chart's range: a little past the last R = 1 crossing of any strategy (graph or model),
/// or everyone followed when asked, or when no strategy crosses.
fn x_range(app: &App, limit: usize) -> usize {
    let last = app
        .outlook
        .below
        .iter()
        .flat_map(|(_, real, model)| [*real, *model])
        .flatten()
        .max();
    match last {
        Some(n) if !app.reach_all => (n + n / 2).max(10).min(limit),
        _ => limit,
    }
}

/// The pane's figures for the state (empty until the outlook is computed).
pub fn view(m: &Model, app: &App) -> OutlookView {
    let Some(plan) = m.plan() else {
        return OutlookView::default();
    };
    let t = app.outlook.t.unwrap_or(0.0);
    let limit = plan.strategies.first().map(|s| s.len()).unwrap_or(0);
    let x_max = x_range(app, limit);
    let series: Vec<Vec<(f64, f64)>> = plan
        .strategies
        .iter()
        .map(|s| {
            let end = x_max.min(s.len());
            let step = (end / 400).max(1);
            (0..=end)
                .step_by(step)
                .map(|n| (n as f64, t * s.curve.kappa[n].unwrap_or(0.0)))
                .collect()
        })
        .collect();
    let y_max = series
        .iter()
        .flat_map(|s| s.iter().map(|p| p.1))
        .fold(1.5, f64::max);
    let range = match x_max < limit {
        true => format!(" · first {x_max} of {limit} (z shows all)"),
        false => String::new(),
    };
    OutlookView {
        t,
        above: app
            .outlook
            .at_t
            .as_ref()
            .is_some_and(|at| at.r0.unwrap_or(0.0) > 1.0),
        series,
        x_max,
        y_max,
        range,
    }
}

/// The indicators at T, with the model caution.
fn render_figures(frame: &mut Frame, area: Rect, plan: &Plan, app: &App, th: &Theme) {
    let o = &app.outlook;
    let mut lines = vec![Line::from(Span::styled(format!("  {}", o.source), th.text))];
    lines.push(Line::from(format!(
        "  mean excess degree κ {} · threshold T_c {}",
        f(plan.at_t.kappa, 3),
        f(plan.at_t.threshold, 3)
    )));
    let v = &app.views.outlook;
    match &o.at_t {
        Some(at) => {
            let (word, style) = if v.above {
                ("above the threshold", th.warn)
            } else {
                ("below the threshold", th.good)
            };
            lines.push(Line::from(Span::styled(
                format!("  R0 = T·κ = {} ({word})", f(at.r0, 3)),
                style,
            )));
            lines.push(Line::from(format!(
                "  expected outbreak size {} of people · take-off probability {}",
                pct(at.final_size),
                pct(at.takeoff_probability)
            )));
            if !v.above {
                lines.push(Line::from(format!(
                    "  mean outbreak size below threshold: {}",
                    f(at.mean_outbreak_size, 1)
                )));
            }
        }
        None => lines.push(Line::from(Span::styled(
            "  T unknown: + sets one (no secondary attack rate in this export)",
            th.warn,
        ))),
    }
    if let Some((lo, hi)) = &plan.band {
        lines.push(Line::from(Span::styled(
            format!(
                "  over the SAR band: R0 {} to {} · size {} to {}",
                f(lo.r0, 2),
                f(hi.r0, 2),
                pct(lo.final_size),
                pct(hi.final_size)
            ),
            th.dim,
        )));
    }
    lines.push(Line::from(Span::styled(MODEL_CAUTION_SHORT, th.warn)));
    frame.render_widget(
        Paragraph::new(lines).wrap(Wrap { trim: true }).block(block(
            "7 Outlook — threshold and expected outbreak size".into(),
            th,
        )),
        area,
    );
}

/// Per strategy: how many people to reach to bring R below 1.
fn render_reach(frame: &mut Frame, area: Rect, plan: &Plan, app: &App, th: &Theme) {
    let o = &app.outlook;
    let mut lines = Vec::new();
    let limit = plan.strategies.first().map(|s| s.len()).unwrap_or(0);
    for (s, below, model) in &o.below {
        let real = match below {
            Some(n) => format!("reach {n} to bring R below 1"),
            None => format!("R stays ≥ 1 within {limit}"),
        };
        let model = match model {
            Some(n) => format!("model: {n}"),
            None => "model: not within".into(),
        };
        lines.push(Line::from(vec![
            Span::styled(format!("  {:<13}", s.name()), th.title),
            Span::styled(format!("{real:<32}"), th.text),
            Span::styled(model, th.dim),
        ]));
    }
    for s in &plan.strategies {
        lines.push(Line::from(Span::styled(
            format!("  {}: {}", s.strategy.name(), s.strategy.rule()),
            th.dim,
        )));
    }
    frame.render_widget(
        Paragraph::new(lines).wrap(Wrap { trim: true }).block(block(
            "Reaching people first (they no longer pass it on)".into(),
            th,
        )),
        area,
    );
}

/// Residual R against people reached, per strategy, with R = 1.
fn render_chart(frame: &mut Frame, area: Rect, plan: &Plan, app: &App, th: &Theme) {
    let v = &app.views.outlook;
    let t = v.t;
    let markers = [Marker::Braille, Marker::Dot, Marker::Bar, Marker::Block];
    let glyph = ["⠒", "•", "▄", "█"];
    let series = &v.series;
    let limit = v.x_max;
    let one = [(0.0, 1.0), (limit as f64, 1.0)];
    let mut sets: Vec<Dataset> = plan
        .strategies
        .iter()
        .zip(series)
        .enumerate()
        .map(|(i, (s, pts))| {
            Dataset::default()
                .name(format!("{} {}", glyph[i % 4], s.strategy.name()))
                .marker(markers[i % 4])
                .graph_type(GraphType::Line)
                .style(th.series[i % 5])
                .data(pts)
        })
        .collect();
    sets.push(
        Dataset::default()
            .name("─ R = 1")
            .marker(Marker::Braille)
            .graph_type(GraphType::Line)
            .style(th.dim)
            .data(&one),
    );
    let ymax = v.y_max;
    frame.render_widget(
        Chart::new(sets)
            .block(block(
                format!("Residual R = T·κ′ against people reached{} (T = {t:.2}; + − ] [ move T, 0 resets, z zoom)", v.range),
                th,
            ))
            .x_axis(
                Axis::default()
                    .bounds([0.0, limit.max(1) as f64])
                    .labels(vec![
                        Line::from("0"),
                        Line::from(format!("{}", limit / 2)),
                        Line::from(format!("{limit}")),
                    ])
                    .style(th.dim),
            )
            .y_axis(
                Axis::default()
                    .bounds([0.0, ymax])
                    .labels(vec![
                        Line::from("0"),
                        Line::from(format!("{:.2}", ymax / 2.0)),
                        Line::from(format!("{ymax:.2}")),
                    ])
                    .style(th.dim),
            )
            .legend_position(Some(LegendPosition::TopRight))
            .hidden_legend_constraints((Constraint::Ratio(2, 3), Constraint::Ratio(2, 3))),
        area,
    );
}
