//! The Degrees pane: p_k and q_k with the fitted distributions, and the fits table.
//!
//! [`view`] computes everything the pane shows (points, fitted values, the tail cut-off, the
//! chart maximum, the table's cells) when the state changes; [`render`] only lays it out.

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::symbols::Marker;
use ratatui::text::Line;
use ratatui::widgets::{Axis, Chart, Dataset, GraphType, LegendPosition, Row, Table};
use ratatui::Frame;

use super::*;
use crate::metrics::fits::Fit;
use crate::report::fmt::{plus_minus, range, short as f, Style};
use crate::tui::app::{App, CUTOFFS};
use crate::tui::model::Model;
use crate::tui::theme::Theme;
use crate::tui::ui::block;

/// Everything the Degrees pane shows, ready to lay out.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct DegreesView {
    /// Largest k shown.
    pub kmax: usize,
    /// Log scale.
    pub log: bool,
    /// Observed p_k and q_k as chart points.
    pub p: Vec<(f64, f64)>,
    /// q_k.
    pub q: Vec<(f64, f64)>,
    /// Fitted Poisson, geometric and negative binomial p_k (whole network only; else empty).
    pub fits: [Vec<(f64, f64)>; 3],
    /// Top of the y axis (linear units).
    pub ymax: f64,
    /// Title of the p_k chart.
    pub title: String,
    /// Rows of the fits table: model, parameters, AIC.
    pub rows: Vec<[String; 3]>,
    /// Title of the fits table.
    pub verdict: String,
}

/// A degree fit's parameters; the negative binomial's mean is named as what it is here (the
/// mean number of contacts: "R" is kept for offspring fits).
fn params(fit: &Fit) -> String {
    fit.params
        .iter()
        .map(|(n, v)| {
            let n = if *n == "R" { "mean" } else { n };
            format!("{n} = {}", f(*v, 3))
        })
        .collect::<Vec<_>>()
        .join(", ")
}

/// The pane's figures for the state.
pub fn view(m: &Model, app: &App) -> DegreesView {
    let sc = app.scope(m);
    let kmax = cutoff_k(&sc.histogram, CUTOFFS[app.cutoff]);
    let log = app.log_scale;
    let pts = |v: &[f64]| -> Vec<(f64, f64)> {
        v.iter()
            .enumerate()
            .take(kmax + 1)
            .map(|(k, &p)| (k as f64, y_of(p, log)))
            .collect()
    };
    let fits = &m.stats.fits;
    let fit_pts = |fit: &Fit| -> Vec<(f64, f64)> {
        (0..=kmax as u64)
            .filter_map(|k| fit.pmf(k).ok().map(|y| (k as f64, y_of(y, log))))
            .collect()
    };
    let fitted = match app.scope.is_none() {
        true => [
            fit_pts(&fits.poisson),
            fit_pts(&fits.geometric),
            fit_pts(&fits.negative_binomial.fit),
        ],
        false => Default::default(),
    };
    let ymax = sc.p.iter().chain(sc.q.iter()).take(2 * (kmax + 1)).cloned();
    let tail_people: u64 = sc.histogram.iter().skip(kmax + 1).sum();
    let tail = match tail_people {
        0 => String::new(),
        n => format!(
            " · tail k > {kmax}: {n} people, max {}",
            sc.histogram.len() - 1
        ),
    };
    let scale = if log { "log scale" } else { "linear" };
    DegreesView {
        kmax,
        log,
        p: pts(&sc.p),
        q: pts(&sc.q),
        fits: fitted,
        ymax: y_of(ymax.fold(0.0, f64::max), false),
        title: format!(
            "2 Degrees — p_k: share with k contacts · {} · {scale}{tail}",
            sc.label
        ),
        rows: fit_rows(m),
        verdict: match fits.best {
            Some(b) => format!(
                "Fits — lowest AIC: {b} (whole network; c cycles the tail cut-off, g log scale)"
            ),
            None => "Fits — no fit".to_string(),
        },
    }
}

/// The fits table: each model's parameters and AIC, and the power-law tail.
fn fit_rows(m: &Model) -> Vec<[String; 3]> {
    let fits = &m.stats.fits;
    let nb = &fits.negative_binomial;
    vec![
        [
            "Poisson".into(),
            params(&fits.poisson),
            f(fits.poisson.aic, 1),
        ],
        [
            "geometric".into(),
            params(&fits.geometric),
            f(fits.geometric.aic, 1),
        ],
        [
            "negative binomial".into(),
            format!(
                "{} (k 95% CI {})",
                params(&nb.fit),
                range(nb.k_low, nb.k_high, 3, Style::Cell)
            ),
            f(nb.fit.aic, 1),
        ],
        [
            "power-law tail".into(),
            match &fits.power_law {
                Ok(pl) => format!(
                    "alpha = {} for k ≥ {} ({} people), KS {:.3}",
                    plus_minus(Ok(pl.alpha), Ok(pl.se), 2),
                    pl.x_min,
                    pl.n_tail,
                    pl.ks
                ),
                Err(why) => why.to_string(),
            },
            "–".into(),
        ],
    ]
}

/// One chart of points over k.
fn chart<'a>(sets: Vec<Dataset<'a>>, title: String, v: &DegreesView, th: &Theme) -> Chart<'a> {
    let k = v.kmax;
    let x = Axis::default()
        .bounds([0.0, k as f64 + 1.0])
        .labels(vec![
            Line::from("0"),
            Line::from(format!("{}", k / 2)),
            Line::from(format!("{k}")),
        ])
        .style(th.dim);
    Chart::new(sets)
        .block(block(title, th))
        .x_axis(x)
        .y_axis(y_axis(v.ymax, v.log, th))
        .legend_position(Some(LegendPosition::TopRight))
        .hidden_legend_constraints((Constraint::Ratio(2, 3), Constraint::Ratio(2, 3)))
}

fn series<'a>(
    name: &'a str,
    marker: Marker,
    kind: GraphType,
    style: ratatui::style::Style,
    data: &'a [(f64, f64)],
) -> Dataset<'a> {
    Dataset::default()
        .name(name)
        .marker(marker)
        .graph_type(kind)
        .style(style)
        .data(data)
}

/// Lay out the pane.
pub fn render(frame: &mut Frame, area: Rect, m: &Model, app: &App, th: &Theme) {
    if computing(frame, area, m, app, th) {
        return;
    }
    let v = &app.views.degrees;
    let [charts, table] = Layout::vertical([Constraint::Min(8), Constraint::Length(9)]).areas(area);
    let [left, right] =
        Layout::horizontal([Constraint::Percentage(50), Constraint::Percentage(50)]).areas(charts);
    let mut sets = vec![series(
        "█ observed p_k",
        Marker::HalfBlock,
        GraphType::Bar,
        th.series[0],
        &v.p,
    )];
    if !v.fits[0].is_empty() {
        sets.push(series(
            "• Poisson",
            Marker::Dot,
            GraphType::Scatter,
            th.series[1],
            &v.fits[0],
        ));
        sets.push(series(
            "▄ geometric",
            Marker::Bar,
            GraphType::Scatter,
            th.series[2],
            &v.fits[1],
        ));
        sets.push(series(
            "⠒ neg. binomial",
            Marker::Braille,
            GraphType::Line,
            th.series[3],
            &v.fits[2],
        ));
    }
    frame.render_widget(chart(sets, v.title.clone(), v, th), left);
    let q = vec![series(
        "█ q_k",
        Marker::HalfBlock,
        GraphType::Bar,
        th.series[1],
        &v.q,
    )];
    let q_title = "q_k: other contacts of someone reached by an exposure".to_string();
    frame.render_widget(chart(q, q_title, v, th), right);
    let rows = v.rows.iter().map(|r| Row::new(r.to_vec()));
    let widths = [
        Constraint::Length(18),
        Constraint::Min(30),
        Constraint::Length(12),
    ];
    frame.render_widget(
        Table::new(rows, widths)
            .header(Row::new(vec!["model", "parameters", "AIC"]).style(th.title))
            .block(block(v.verdict.clone(), th))
            .style(th.text),
        table,
    );
}
