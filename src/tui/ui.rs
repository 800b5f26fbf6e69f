//! Drawing. Reads the model and the state, formats numbers and lays out widgets; computes
//! nothing (every figure comes ready from `model` or `app`).

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::symbols::Marker;
use ratatui::text::{Line, Span};
use ratatui::widgets::{
    Axis, Block, Chart, Clear, Dataset, GraphType, LegendPosition, Paragraph, Row, Table, Wrap,
};
use ratatui::Frame;

use crate::analysis::planning::MODEL_CAUTION_SHORT;
use crate::ingest::dates;
use crate::report::fmt::{pct, short as f};
use crate::tui::app::{App, Overlay, Purpose, CUTOFFS, MIN_SIZE};
use crate::tui::keys::{self, Pane};
use crate::tui::model::Model;
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

fn block<'a>(title: String, th: &Theme) -> Block<'a> {
    Block::bordered()
        .title(Span::styled(title, th.title))
        .border_style(th.border)
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
    frame.render_widget(Paragraph::new(Line::from(tabs)), a.tabs);
    let (pathogen, days) = (&m.list.window.pathogen, m.list.window.days);
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
        Pane::Overview => overview(frame, a.body, m, app, th),
        Pane::Degrees => degrees(frame, a.body, m, app, th),
        Pane::Neighbours => neighbours(frame, a.body, m, app, th),
        Pane::Clusters => clusters(frame, a.body, m, app, th),
        Pane::Priority => priority(frame, a.body, m, app, th),
        Pane::Person => person(frame, a.body, m, app, th),
        Pane::Outlook => outlook(frame, a.body, m, app, th),
    }
    // Status: prompt, message, or the caution.
    let status = if let Some(input) = &app.input {
        let label = match input.purpose {
            Purpose::Search => "find ID",
            Purpose::Flag => "flag (Enter: \"call first\"; a flag the person has is removed)",
            Purpose::Note => "note",
            Purpose::Export => "export the list as shown to",
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
    };
    frame.render_widget(Paragraph::new(status), a.status);
    let footer: Vec<Span> = keys::footer(app.pane)
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

fn overview(frame: &mut Frame, area: Rect, m: &Model, _app: &App, th: &Theme) {
    let [left, right] =
        Layout::horizontal([Constraint::Percentage(50), Constraint::Percentage(50)]).areas(area);
    let d = &m.d;
    let s = &m.summary;
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
        left,
    );
    let st = &m.stats;
    let w = &m.whole;
    let r_line = match m.null.get() {
        Some(null) => format!(
            "  r = {} ± {} (jackknife SE); null model {} ± {}",
            f(st.r, 3),
            f(st.r_se, 3),
            f(null.mean, 3),
            f(null.sd, 3)
        ),
        None => format!(
            "  r = {} ± {} (jackknife SE); null model: computing …",
            f(st.r, 3),
            f(st.r_se, 3)
        ),
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
            m.list.window.pathogen, m.list.window.days, m.list.window.source
        )),
        Line::from(format!("  ranking preset: {}", m.list.preset.0)),
        Line::from(format!("  workspace: {}", m.workspace_path.display())),
    ];
    frame.render_widget(
        Paragraph::new(lines)
            .wrap(Wrap { trim: false })
            .block(block("Figures".into(), th)),
        right,
    );
}

/// Largest k shown: the smallest k with at least `share` of people at or below it.
fn cutoff_k(hist: &[u64], share: f64) -> usize {
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

fn y_of(p: f64, log: bool) -> f64 {
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

fn y_axis<'a>(max: f64, log: bool, th: &Theme) -> Axis<'a> {
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
fn computing(frame: &mut Frame, area: Rect, m: &Model, app: &App, th: &Theme) -> bool {
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

fn degrees(frame: &mut Frame, area: Rect, m: &Model, app: &App, th: &Theme) {
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

fn neighbours(frame: &mut Frame, area: Rect, m: &Model, app: &App, th: &Theme) {
    if computing(frame, area, m, app, th) {
        return;
    }
    let sc = app.scope(m);
    let [charts, bottom] =
        Layout::vertical([Constraint::Min(8), Constraint::Length(10)]).areas(area);
    let [left, right] =
        Layout::horizontal([Constraint::Percentage(50), Constraint::Percentage(50)]).areas(charts);
    let kmax = cutoff_k(&sc.histogram, CUTOFFS[app.cutoff]).max(1);
    let knn: Vec<(f64, f64)> = sc
        .knn
        .iter()
        .filter(|(k, _)| (*k as usize) <= kmax)
        .map(|&(k, v)| (k as f64, v))
        .collect();
    let flat_y = sc.edge_end_mean.unwrap_or(0.0);
    let flat = [(0.0, flat_y), (kmax as f64 + 1.0, flat_y)];
    let ymax = knn.iter().map(|p| p.1).fold(flat_y, f64::max) * 1.1;
    frame.render_widget(
        Chart::new(vec![
            Dataset::default()
                .name("• k_nn(k) observed")
                .marker(Marker::Dot)
                .graph_type(GraphType::Scatter)
                .style(th.series[0])
                .data(&knn),
            Dataset::default()
                .name("─ uncorrelated: <k²>/<k>")
                .marker(Marker::Braille)
                .graph_type(GraphType::Line)
                .style(th.series[1])
                .data(&flat),
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
        left,
    );
    let log = app.log_scale;
    let obs: Vec<(f64, f64)> = sc
        .contact_excess
        .iter()
        .enumerate()
        .take(kmax)
        .map(|(k, &p)| (k as f64, y_of(p, log)))
        .collect();
    let pred: Vec<(f64, f64)> =
        sc.q.iter()
            .enumerate()
            .take(kmax)
            .map(|(k, &p)| (k as f64, y_of(p, log)))
            .collect();
    let ymax2 = sc
        .contact_excess
        .iter()
        .chain(sc.q.iter())
        .cloned()
        .fold(0.0, f64::max);
    frame.render_widget(
        Chart::new(vec![
            Dataset::default()
                .name("█ observed")
                .marker(Marker::HalfBlock)
                .graph_type(GraphType::Bar)
                .style(th.series[0])
                .data(&obs),
            Dataset::default()
                .name("⠒ predicted q_k")
                .marker(Marker::Braille)
                .graph_type(GraphType::Line)
                .style(th.series[1])
                .data(&pred),
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
        right,
    );
    let [paradox, mixing] =
        Layout::horizontal([Constraint::Percentage(45), Constraint::Percentage(55)]).areas(bottom);
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
            "  degree mixing r (whole network) {} ± {}",
            f(m.stats.r, 3),
            f(m.stats.r_se, 3)
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
        let head: String = groups.iter().map(|g| format!(" {:>8.8}", g)).collect();
        lines.push(Line::from(format!("  {:<10}{head}", "")));
        for (i, g) in groups.iter().enumerate() {
            let row: String = (0..groups.len())
                .map(|j| format!(" {:>8}", mx.pairs[i][j]))
                .collect();
            lines.push(Line::from(format!("  {:<10.10}{row}", g)));
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

fn clusters(frame: &mut Frame, area: Rect, m: &Model, app: &App, th: &Theme) {
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
            if i == pos.selected {
                r.style(th.selected)
            } else {
                r.style(th.text)
            }
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

fn days(x: Option<i32>) -> String {
    x.map(|d| d.to_string()).unwrap_or_else(|| "–".into())
}

fn priority(frame: &mut Frame, area: Rect, m: &Model, app: &App, th: &Theme) {
    let page = area.height.saturating_sub(3) as usize;
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
            let r = &m.list.ranked[ri as usize];
            let mut marks = String::new();
            if r.high_degree {
                marks.push('H');
            }
            if r.bridge {
                marks.push('B');
            }
            if r.overdue {
                marks.push('!');
            }
            let cells = [
                (ri + 1).to_string(),
                m.d.ids.name(r.node).to_string(),
                format!("{:.3}", r.score),
                m.main_reason[ri as usize].to_string(),
                r.degree.to_string(),
                format!("{}", r.raw[1]),
                r.window_end.map(dates::iso).unwrap_or_else(|| "–".into()),
                days(r.days_left),
                marks,
                app.followup(m, r.node),
                app.flags(m, r.node),
            ];
            let row = Row::new(
                cells
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
        m.list.ranked.len(),
        col.name(),
        if desc { " (reversed)" } else { "" },
        m.list.preset.0,
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

fn person(frame: &mut Frame, area: Rect, m: &Model, app: &App, th: &Theme) {
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
        about,
    );
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
        score,
    );
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
        state,
    );
    let page = bottom.height.saturating_sub(3) as usize;
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
            if i == p.pos.selected {
                row.style(th.selected)
            } else {
                row.style(th.text)
            }
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
                "Contacts: {} · sorted by {}{} · Enter opens one",
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
        bottom,
    );
    let _ = m;
}

fn outlook(frame: &mut Frame, area: Rect, m: &Model, app: &App, th: &Theme) {
    let [top, chart] = Layout::vertical([Constraint::Length(14), Constraint::Min(8)]).areas(area);
    let [figs, reach] =
        Layout::horizontal([Constraint::Percentage(50), Constraint::Percentage(50)]).areas(top);
    let o = &app.outlook;
    let mut lines = vec![Line::from(Span::styled(format!("  {}", o.source), th.text))];
    let plan = &m.plan;
    lines.push(Line::from(format!(
        "  mean excess degree κ {} · threshold T_c {}",
        f(plan.at_t.kappa, 3),
        f(plan.at_t.threshold, 3)
    )));
    match &o.at_t {
        Some(at) => {
            let r0 = at.r0.unwrap_or(0.0);
            let (word, style) = if r0 > 1.0 {
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
            if r0 <= 1.0 {
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
        figs,
    );
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
        reach,
    );
    let t = o.t.unwrap_or(0.0);
    let markers = [Marker::Braille, Marker::Dot, Marker::Bar, Marker::Block];
    let glyph = ["⠒", "•", "▄", "█"];
    let series: Vec<Vec<(f64, f64)>> = plan
        .strategies
        .iter()
        .map(|s| {
            let step = (s.len() / 400).max(1);
            (0..=s.len())
                .step_by(step)
                .map(|n| (n as f64, t * s.curve.kappa[n].unwrap_or(0.0)))
                .collect()
        })
        .collect();
    let one = [(0.0, 1.0), (limit as f64, 1.0)];
    let mut sets: Vec<Dataset> = plan
        .strategies
        .iter()
        .zip(&series)
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
    let ymax = series
        .iter()
        .flat_map(|s| s.iter().map(|p| p.1))
        .fold(1.5, f64::max);
    frame.render_widget(
        Chart::new(sets)
            .block(block(
                format!("Residual R = T·κ′ against people reached (T = {t:.2}; + − ] [ move T, 0 resets)"),
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
        chart,
    );
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
    let file = |i: usize| {
        l.files
            .get(i)
            .map(|f| f.path.display().to_string())
            .unwrap_or_default()
    };
    let lines: Vec<Line> = l
        .quarantined
        .iter()
        .map(|q| {
            Line::from(Span::styled(
                format!(
                    " quarantined  {}:{}  {}  {}",
                    file(q.file),
                    q.line,
                    q.reason.code(),
                    q.raw
                ),
                th.text,
            ))
        })
        .chain(l.problems.iter().map(|p| {
            Line::from(Span::styled(
                format!(
                    " field        {}:{}  {} = {:?}  {}",
                    file(p.file),
                    p.line,
                    p.column,
                    p.value,
                    p.reason
                ),
                th.dim,
            ))
        }))
        .skip(pos)
        .take(page)
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
