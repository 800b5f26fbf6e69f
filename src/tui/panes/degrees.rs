//! The Degrees pane: p_k and q_k with the fitted distributions, and the fits table.

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::symbols::Marker;
use ratatui::text::Line;
use ratatui::widgets::{Axis, Chart, Dataset, GraphType, LegendPosition, Row, Table};
use ratatui::Frame;

use super::*;
use crate::report::fmt::short as f;
use crate::tui::app::{App, CUTOFFS};
use crate::tui::model::Model;
use crate::tui::theme::Theme;
use crate::tui::ui::block;

pub fn render(frame: &mut Frame, area: Rect, m: &Model, app: &App, th: &Theme) {
    if computing(frame, area, m, app, th) {
        return;
    }
    let sc = app.scope(m);
    let [charts, table] = Layout::vertical([Constraint::Min(8), Constraint::Length(9)]).areas(area);
    let [left, right] =
        Layout::horizontal([Constraint::Percentage(50), Constraint::Percentage(50)]).areas(charts);
    let kmax = cutoff_k(&sc.histogram, CUTOFFS[app.cutoff]);
    let log = app.log_scale;
    let pts = |v: &[f64]| -> Vec<(f64, f64)> {
        v.iter()
            .enumerate()
            .take(kmax + 1)
            .map(|(k, &p)| (k as f64, y_of(p, log)))
            .collect()
    };
    let p = pts(&sc.p);
    let q = pts(&sc.q);
    let fits = &m.stats.fits;
    let fit_pts = |fit: &crate::metrics::fits::Fit| -> Vec<(f64, f64)> {
        (0..=kmax as u64)
            .filter_map(|k| fit.pmf(k).ok().map(|y| (k as f64, y_of(y, log))))
            .collect()
    };
    let whole = app.scope.is_none();
    let pois = if whole {
        fit_pts(&fits.poisson)
    } else {
        Vec::new()
    };
    let geom = if whole {
        fit_pts(&fits.geometric)
    } else {
        Vec::new()
    };
    let nb = if whole {
        fit_pts(&fits.negative_binomial.fit)
    } else {
        Vec::new()
    };
    let ymax =
        sc.p.iter()
            .chain(sc.q.iter())
            .take(2 * (kmax + 1))
            .cloned()
            .fold(0.0, f64::max);
    let x_axis = || {
        Axis::default()
            .bounds([0.0, kmax as f64 + 1.0])
            .labels(vec![
                Line::from("0"),
                Line::from(format!("{}", kmax / 2)),
                Line::from(format!("{kmax}")),
            ])
            .style(th.dim)
    };
    let tail_people: u64 = sc.histogram.iter().skip(kmax + 1).sum();
    let tail = if tail_people > 0 {
        format!(
            " · tail k > {kmax}: {tail_people} people, max {}",
            sc.histogram.len() - 1
        )
    } else {
        String::new()
    };
    let scale = if log { "log scale" } else { "linear" };
    let mut sets = vec![Dataset::default()
        .name("█ observed p_k")
        .marker(Marker::HalfBlock)
        .graph_type(GraphType::Bar)
        .style(th.series[0])
        .data(&p)];
    if whole {
        sets.push(
            Dataset::default()
                .name("• Poisson")
                .marker(Marker::Dot)
                .graph_type(GraphType::Scatter)
                .style(th.series[1])
                .data(&pois),
        );
        sets.push(
            Dataset::default()
                .name("▄ geometric")
                .marker(Marker::Bar)
                .graph_type(GraphType::Scatter)
                .style(th.series[2])
                .data(&geom),
        );
        sets.push(
            Dataset::default()
                .name("⠒ neg. binomial")
                .marker(Marker::Braille)
                .graph_type(GraphType::Line)
                .style(th.series[3])
                .data(&nb),
        );
    }
    frame.render_widget(
        Chart::new(sets)
            .block(block(
                format!(
                    "2 Degrees — p_k: share with k contacts · {} · {scale}{tail}",
                    sc.label
                ),
                th,
            ))
            .x_axis(x_axis())
            .y_axis(y_axis(y_of(ymax, false), log, th))
            .legend_position(Some(LegendPosition::TopRight))
            .hidden_legend_constraints((Constraint::Ratio(2, 3), Constraint::Ratio(2, 3))),
        left,
    );
    frame.render_widget(
        Chart::new(vec![Dataset::default()
            .name("█ q_k")
            .marker(Marker::HalfBlock)
            .graph_type(GraphType::Bar)
            .style(th.series[1])
            .data(&q)])
        .block(block(
            "q_k: other contacts of someone reached by an exposure".into(),
            th,
        ))
        .x_axis(x_axis())
        .y_axis(y_axis(y_of(ymax, false), log, th))
        .legend_position(Some(LegendPosition::TopRight))
        .hidden_legend_constraints((Constraint::Ratio(2, 3), Constraint::Ratio(2, 3))),
        right,
    );
    let param = |fit: &crate::metrics::fits::Fit| {
        fit.params
            .iter()
            .map(|(n, v)| format!("{n} = {}", f(*v, 3)))
            .collect::<Vec<_>>()
            .join(", ")
    };
    let nbf = &fits.negative_binomial;
    let mut rows = vec![
        Row::new(vec![
            "Poisson".to_string(),
            param(&fits.poisson),
            f(fits.poisson.aic, 1),
        ]),
        Row::new(vec![
            "geometric".to_string(),
            param(&fits.geometric),
            f(fits.geometric.aic, 1),
        ]),
        Row::new(vec![
            "negative binomial".to_string(),
            format!(
                "{} (k 95% CI {} to {})",
                param(&nbf.fit),
                f(nbf.k_low, 3),
                f(nbf.k_high, 3)
            ),
            f(nbf.fit.aic, 1),
        ]),
    ];
    rows.push(Row::new(vec![
        "power-law tail".to_string(),
        match &fits.power_law {
            Ok(pl) => format!(
                "alpha = {:.2} ± {:.2} for k ≥ {} ({} people), KS {:.3}",
                pl.alpha, pl.se, pl.x_min, pl.n_tail, pl.ks
            ),
            Err(why) => why.to_string(),
        },
        "–".to_string(),
    ]));
    let verdict = match fits.best {
        Some(b) => {
            format!("lowest AIC: {b} (whole network; c cycles the tail cut-off, g log scale)")
        }
        None => "no fit".to_string(),
    };
    frame.render_widget(
        Table::new(
            rows,
            [
                Constraint::Length(18),
                Constraint::Min(30),
                Constraint::Length(12),
            ],
        )
        .header(Row::new(vec!["model", "parameters", "AIC"]).style(th.title))
        .block(block(format!("Fits — {verdict}"), th))
        .style(th.text),
        table,
    );
}
