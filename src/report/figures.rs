//! The figures for the wall: what each one shows, as numbers (series of points, bars, guide
//! lines), with its title, axis labels and caption. The drawing (`plot`) lays these out and
//! adds nothing; the tests compare the numbers here with `summary --json`.

use crate::analysis::planning::Plan;
use crate::analysis::stats::NetworkStats;
use crate::dataset::Dataset;
use crate::error::Result;
use crate::ingest::dates;
use crate::metrics::Stat;
use crate::report::fmt::short;

/// How a series is drawn (each also differs in shape or dash, so that it reads in greyscale).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Mark {
    /// Solid line.
    Line,
    /// Dashed line.
    Dashed,
    /// Markers only (shape by series).
    Points,
}

/// One series of points.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    /// Legend text.
    pub label: String,
    /// (x, y) in data units.
    pub points: Vec<(f64, f64)>,
    /// How it is drawn.
    pub mark: Mark,
    /// Colour group: series of one group share a colour (a strategy on the network and in the
    /// model, say) and differ by dash.
    pub group: usize,
}

/// A guide line across the plot.
#[derive(Debug, Clone, PartialEq)]
pub struct Guide {
    /// Legend text.
    pub label: String,
    /// True: vertical at x = value; false: horizontal at y = value.
    pub vertical: bool,
    /// Where.
    pub value: f64,
    /// Colour group (after the series' colours; the two ends of a band share one).
    pub group: usize,
}

/// One figure.
#[derive(Debug, Clone, PartialEq)]
pub struct Figure {
    /// File stem (`degree-distribution` -> `degree-distribution.svg`).
    pub name: String,
    /// Title.
    pub title: String,
    /// X axis label with unit.
    pub x_label: String,
    /// Y axis label with unit.
    pub y_label: String,
    /// Logarithmic axes.
    pub log: (bool, bool),
    /// Series (lines and markers).
    pub series: Vec<Series>,
    /// Bars: (label, value), for a bar chart instead of series.
    pub bars: Vec<(String, f64)>,
    /// Guide lines.
    pub guides: Vec<Guide>,
    /// Caption line: as-of date, view, window, inputs.
    pub caption: String,
    /// Legend in the lower left corner (else the upper right), where the data leave room.
    pub legend_low: bool,
    /// A matrix drawn as a heat map with the values in the cells (instead of series).
    pub matrix: Option<Matrix>,
    /// Stacked bars (instead of series).
    pub stacked: Option<Stacked>,
}

/// A square matrix of counts between groups.
#[derive(Debug, Clone, PartialEq)]
pub struct Matrix {
    /// Group labels, for rows and columns alike.
    pub groups: Vec<String>,
    /// `values[i][j]`.
    pub values: Vec<Vec<f64>>,
}

/// Bars at categories, each stacked from layers.
#[derive(Debug, Clone, PartialEq)]
pub struct Stacked {
    /// Category labels along x (shown every `label_every`).
    pub x: Vec<String>,
    /// Show every n-th label.
    pub label_every: usize,
    /// (layer label, value at each category).
    pub layers: Vec<(String, Vec<f64>)>,
}

/// The SHA-256 of each input file of `d` (None for the built-in sample), in ledger order: the
/// slow part of a caption on a large export, so callers can run it beside other work.
pub fn input_hashes(files: &[std::path::PathBuf]) -> Result<Vec<Option<String>>> {
    files
        .iter()
        .map(|p| match p.exists() {
            true => crate::export::file_sha256(p).map(Some),
            false => Ok(None),
        })
        .collect()
}

/// The input files' paths, in ledger order (for [`input_hashes`]).
pub fn input_paths(d: &Dataset) -> Vec<std::path::PathBuf> {
    d.ledger.files.iter().map(|f| f.path.clone()).collect()
}

/// The caption every figure carries: as-of date, view, monitoring window (when known) and the
/// input files with their SHA-256 (from [`input_hashes`]) shortened to 12 hex digits.
pub fn caption(d: &Dataset, window: Option<(u32, &str)>, hashes: &[Option<String>]) -> String {
    let mut parts = vec![
        format!("as of {}", dates::iso(d.as_of)),
        format!("view: {}", d.view.0.describe()),
    ];
    if let Some((days, pathogen)) = window {
        parts.push(format!("window {days} days ({pathogen})"));
    }
    for (f, sum) in d.ledger.files.iter().zip(hashes) {
        let name = f
            .path
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default();
        parts.push(match sum {
            Some(sum) => format!("{name} sha256 {}", &sum[..12.min(sum.len())]),
            // The bundled sample's name already says it is built in.
            None => name,
        });
    }
    parts.join(" · ")
}

fn ok(s: Stat) -> Option<f64> {
    s.ok().filter(|x| x.is_finite())
}

/// Points (k, v[k]) with v[k] > 0 when `positive` (for logarithmic axes).
fn indexed(v: &[f64], positive: bool) -> Vec<(f64, f64)> {
    v.iter()
        .enumerate()
        .filter(|(_, &y)| y.is_finite() && (!positive || y > 0.0))
        .map(|(k, &y)| (k as f64, y))
        .collect()
}

/// The degree distribution p_k, the excess degree distribution q_k, and the fitted
/// distributions over p_k; `log`: on logarithmic axes (zeros left out), with the power-law tail
/// where it was fitted.
pub fn degree_distribution(s: &NetworkStats, log: bool, caption: &str) -> Figure {
    let (p, q) = (s.degree.p(), s.degree.q());
    let kmax = p.len().saturating_sub(1);
    let fit = |label: &str, f: &crate::metrics::fits::Fit, group: usize| Series {
        label: label.to_string(),
        points: (0..=kmax as u64)
            .filter_map(|k| ok(f.pmf(k)).map(|y| (k as f64, y)))
            .filter(|&(_, y)| !log || y > 0.0)
            .collect(),
        mark: Mark::Dashed,
        group,
    };
    let f = &s.fits;
    let mut series = vec![
        Series {
            label: "p_k: share of people with k contacts".into(),
            points: indexed(&p, log),
            mark: Mark::Points,
            group: 0,
        },
        Series {
            label: "q_k: excess degree at the end of a random exposure".into(),
            points: indexed(&q, log),
            mark: Mark::Points,
            group: 1,
        },
        fit("negative binomial fit", &f.negative_binomial.fit, 2),
        fit("Poisson fit", &f.poisson, 3),
        fit("geometric fit", &f.geometric, 4),
    ];
    if log {
        if let Ok(tail) = &f.power_law {
            // p_k ~ C k^-alpha from x_min, scaled to meet p at x_min.
            let (xmin, alpha) = (tail.x_min as usize, tail.alpha);
            if let Some(&p0) = p.get(xmin).filter(|&&v| v > 0.0) {
                series.push(Series {
                    label: format!("power-law tail, alpha {alpha:.2} from k = {xmin}"),
                    points: (xmin..=kmax)
                        .map(|k| (k as f64, p0 * (k as f64 / xmin as f64).powf(-alpha)))
                        .collect(),
                    mark: Mark::Line,
                    group: 5,
                });
            }
        }
    }
    Figure {
        name: if log {
            "degree-distribution-loglog".into()
        } else {
            "degree-distribution".into()
        },
        title: "Contacts per person: p_k and the excess degree q_k".into(),
        x_label: "k (contacts of a person; excess: other contacts)".into(),
        y_label: "share".into(),
        log: (log, log),
        series,
        bars: Vec::new(),
        guides: Vec::new(),
        caption: caption.to_string(),
        legend_low: log,
        matrix: None,
        stacked: None,
    }
}

/// k_nn(k) against the flat line <k^2>/<k> of a network without degree correlations.
pub fn neighbour_degree(s: &NetworkStats, caption: &str) -> Figure {
    let null = match (ok(s.null.mean), ok(s.null.sd)) {
        (Some(m), Some(sd)) => format!("; degree-preserving null {m:.3} ± {sd:.3}"),
        _ => "; null model not run".into(),
    };
    let flat = ok(s.degree.edge_end_mean);
    Figure {
        name: "neighbour-degree".into(),
        title: "Contacts' mean number of contacts by own number".into(),
        x_label: "k (own contacts)".into(),
        y_label: "k_nn (contacts' mean contacts)".into(),
        log: (false, false),
        series: vec![Series {
            label: format!(
                "k_nn(k), observed: r = {} ± {} (jackknife){null}",
                short(s.r, 3),
                short(s.r_se, 3)
            ),
            points: s
                .neighbours
                .knn
                .iter()
                .map(|&(k, v)| (f64::from(k), v))
                .collect(),
            mark: Mark::Points,
            group: 0,
        }],
        bars: Vec::new(),
        guides: flat
            .map(|v| Guide {
                label: format!("<k²>/<k> = {v:.2}: no degree correlation"),
                vertical: false,
                value: v,
                group: 0,
            })
            .into_iter()
            .collect(),
        caption: caption.to_string(),
        legend_low: true,
        matrix: None,
        stacked: None,
    }
}

/// The three versions of the friendship paradox: mean contacts of a person, of the person at
/// the end of a random exposure, of a person's contacts on average.
pub fn paradox(s: &NetworkStats, caption: &str) -> Figure {
    let bar = |label: &str, v: Stat| (label.to_string(), ok(v).unwrap_or(0.0));
    Figure {
        name: "friendship-paradox".into(),
        title: format!(
            "Why your contacts have more contacts than you (share of people whose contacts have more: {})",
            ok(s.neighbours.share_more).map_or("undefined".into(), |x| format!("{:.0}%", 100.0 * x))
        ),
        x_label: "".into(),
        y_label: "mean number of contacts".into(),
        log: (false, false),
        series: Vec::new(),
        bars: vec![
            bar("a person <k>", s.degree.mean),
            bar("end of an exposure <k²>/<k>", s.degree.edge_end_mean),
            bar("a person's contacts (mean)", s.neighbours.contact_mean),
        ],
        guides: Vec::new(),
        caption: caption.to_string(),
        legend_low: false,
        matrix: None,
        stacked: None,
    }
}

/// Cluster sizes in rank order, on logarithmic axes.
pub fn components(s: &NetworkStats, caption: &str) -> Figure {
    let mut sizes: Vec<u32> = s.components.1.clone();
    sizes.sort_unstable_by(|a, b| b.cmp(a));
    Figure {
        name: "cluster-sizes".into(),
        title: format!("Cluster sizes by rank ({} clusters)", sizes.len()),
        x_label: "rank (largest first)".into(),
        y_label: "people in the cluster".into(),
        log: (true, true),
        series: vec![Series {
            label: "cluster size".into(),
            points: sizes
                .iter()
                .enumerate()
                .map(|(i, &n)| (i as f64 + 1.0, f64::from(n)))
                .collect(),
            mark: Mark::Points,
            group: 0,
        }],
        bars: Vec::new(),
        guides: Vec::new(),
        caption: caption.to_string(),
        legend_low: false,
        matrix: None,
        stacked: None,
    }
}

/// The guides of the figures over T: the threshold, the estimated T and its band, each its
/// own colour group.
fn t_guides(plan: &Plan) -> Vec<Guide> {
    let mut guides = Vec::new();
    if let Some(tc) = ok(plan.at_t.threshold) {
        guides.push(Guide {
            label: format!("threshold T_c = {tc:.3}"),
            vertical: true,
            value: tc,
            group: 0,
        });
    }
    if let Some(t) = plan.t {
        guides.push(Guide {
            label: format!("estimated T = {t:.3}"),
            vertical: true,
            value: t,
            group: 1,
        });
    }
    if let crate::analysis::planning::TSource::SecondaryAttackRate { band, .. } = &plan.source {
        for (end, v) in [("low", band.0), ("high", band.1)] {
            guides.push(Guide {
                label: format!("T band, {end} end (Wilson 95%) = {v:.3}"),
                vertical: true,
                value: v,
                group: 2,
            });
        }
    }
    guides
}

/// R0 over the transmissibility T, with the threshold, the estimated T and its band.
pub fn outlook_t(plan: &Plan, caption: &str) -> Figure {
    let pts = |f: &dyn Fn(&crate::metrics::outlook::Outlook) -> Stat| {
        plan.curve
            .iter()
            .filter_map(|o| ok(f(o)).map(|y| (o.t, y)))
            .collect::<Vec<_>>()
    };
    let mut guides = t_guides(plan);
    guides.push(Guide {
        label: "R0 = 1".into(),
        vertical: false,
        value: 1.0,
        group: 3,
    });
    Figure {
        name: "outlook-transmissibility".into(),
        title: "R0 over the transmissibility T (configuration model)".into(),
        x_label: "T (chance an exposure passes infection on)".into(),
        y_label: "R0 (people infected by one case)".into(),
        log: (false, false),
        series: vec![Series {
            label: "R0 = T κ".into(),
            points: pts(&|o| o.r0),
            mark: Mark::Line,
            group: 0,
        }],
        bars: Vec::new(),
        guides,
        caption: caption.to_string(),
        legend_low: false,
        matrix: None,
        stacked: None,
    }
}

/// The expected final size over T, with the same guides.
pub fn outlook_final_size(plan: &Plan, caption: &str) -> Figure {
    Figure {
        name: "outlook-final-size".into(),
        title: "Expected final size over the transmissibility T (configuration model)".into(),
        x_label: "T (chance an exposure passes infection on)".into(),
        y_label: "S (share of people ever infected)".into(),
        log: (false, false),
        series: vec![Series {
            label: "expected final size S".into(),
            points: plan
                .curve
                .iter()
                .filter_map(|o| ok(o.final_size).map(|y| (o.t, y)))
                .collect(),
            mark: Mark::Line,
            group: 1,
        }],
        bars: Vec::new(),
        guides: t_guides(plan),
        caption: caption.to_string(),
        legend_low: false,
        matrix: None,
        stacked: None,
    }
}

/// Residual R against people reached, for every strategy (graph and configuration model).
pub fn outlook_reach(plan: &Plan, caption: &str) -> Option<Figure> {
    let t = plan.t?;
    let mut series = Vec::new();
    for (group, s) in plan.strategies.iter().enumerate() {
        let n = s.len();
        let step = (n / 400).max(1);
        let crossing = |n: Option<usize>| {
            n.map_or("R stays above 1".to_string(), |n| {
                format!("R < 1 from {n} reached")
            })
        };
        series.push(Series {
            label: format!(
                "{} (network): {}",
                s.strategy.name(),
                crossing(s.below_one(t))
            ),
            points: (0..=n)
                .step_by(step)
                .filter_map(|i| ok(s.r(t, i)).map(|r| (i as f64, r)))
                .collect(),
            mark: Mark::Line,
            group,
        });
        series.push(Series {
            label: format!(
                "{} (configuration model): {}",
                s.strategy.name(),
                crossing(s.model_below_one(t))
            ),
            points: (0..=n)
                .step_by(step)
                .filter_map(|i| ok(s.model_kappa[i]).map(|k| (i as f64, t * k)))
                .collect(),
            mark: Mark::Dashed,
            group,
        });
    }
    Some(Figure {
        name: "outlook-reach".into(),
        title: format!("Residual R as people are reached (T = {t:.3})"),
        x_label: "people reached (removed from the network)".into(),
        y_label: "residual R".into(),
        log: (false, false),
        series,
        bars: Vec::new(),
        guides: vec![Guide {
            label: "R = 1".into(),
            vertical: false,
            value: 1.0,
            group: 0,
        }],
        caption: caption.to_string(),
        legend_low: false,
        matrix: None,
        stacked: None,
    })
}

/// What a random contact's other contacts look like: the observed share, followed from each
/// person to their contacts, against q_k of the configuration model.
pub fn excess_observed(s: &NetworkStats, caption: &str) -> Figure {
    Figure {
        name: "excess-degree-observed".into(),
        title: "Contacts' other contacts: observed against the configuration model's q_k".into(),
        x_label: "k (a contact's other contacts)".into(),
        y_label: "share".into(),
        log: (false, false),
        series: vec![
            Series {
                label: "observed (from each person to their contacts)".into(),
                points: indexed(&s.neighbours.contact_excess, false),
                mark: Mark::Points,
                group: 0,
            },
            Series {
                label: "q_k = (k+1) p_(k+1) / <k>".into(),
                points: indexed(&s.degree.q(), false),
                mark: Mark::Line,
                group: 1,
            },
        ],
        bars: Vec::new(),
        guides: Vec::new(),
        caption: caption.to_string(),
        legend_low: false,
        matrix: None,
        stacked: None,
    }
}

/// Who meets whom: contact pairs between the groups of each people attribute (area, age
/// group), as heat maps with the counts in the cells.
pub fn mixing_matrices(s: &NetworkStats, caption: &str) -> Vec<Figure> {
    s.attribute_mixing
        .iter()
        .filter(|(_, m)| !m.groups.is_empty())
        .map(|(field, m)| Figure {
            name: format!("mixing-{}", field.replace('_', "-")),
            title: format!(
                "Contact pairs by {} (assortativity r = {}; {} pairs with a value missing)",
                field.replace('_', " "),
                short(m.r, 3),
                m.unknown
            ),
            x_label: field.replace('_', " "),
            y_label: field.replace('_', " "),
            log: (false, false),
            series: Vec::new(),
            bars: Vec::new(),
            guides: Vec::new(),
            caption: caption.to_string(),
            legend_low: false,
            matrix: Some(Matrix {
                groups: m.groups.clone(),
                values: m
                    .pairs
                    .iter()
                    .map(|row| row.iter().map(|&x| x as f64).collect())
                    .collect(),
            }),
            stacked: None,
        })
        .collect()
}

/// Setting by setting: people with contacts in both settings (the diagonal: people with
/// contacts in that setting), a heat map with the counts in the cells. The people off the
/// diagonal carry spread from one setting into another.
pub fn settings_overlap(d: &Dataset, caption: &str) -> Option<Figure> {
    let n = d.settings.len();
    if n < 2 {
        return None;
    }
    let e = &d.edges;
    let mut seen: Vec<Vec<bool>> = vec![vec![false; n]; d.people()];
    for i in 0..e.len() {
        for &c in e.settings(i) {
            let c = c as usize - 1;
            seen[e.a[i] as usize][c] = true;
            seen[e.b[i] as usize][c] = true;
        }
    }
    let mut values = vec![vec![0.0; n]; n];
    for person in &seen {
        for (x, &sx) in person.iter().enumerate() {
            if !sx {
                continue;
            }
            for (y, &sy) in person.iter().enumerate() {
                if sy {
                    values[x][y] += 1.0;
                }
            }
        }
    }
    Some(Figure {
        name: "settings-overlap".into(),
        title: "People with contacts in both settings (diagonal: in that setting)".into(),
        x_label: "setting".into(),
        y_label: "setting".into(),
        log: (false, false),
        series: Vec::new(),
        bars: Vec::new(),
        guides: Vec::new(),
        caption: caption.to_string(),
        legend_low: false,
        matrix: Some(Matrix {
            groups: d.settings.clone(),
            values,
        }),
        stacked: None,
    })
}

/// Exposures (usable rows in view) per day by the date of the exposure (its last date, else
/// its first), stacked by setting, over the 42 days up to the as-of date; undated rows and those
/// outside are counted in the title. None when no exposure falls in those days.
pub fn exposures_per_day(d: &Dataset, caption: &str) -> Option<Figure> {
    const DAYS: i32 = 42;
    let first = d.as_of - DAYS + 1;
    let mut layers: Vec<Vec<f64>> = vec![vec![0.0; DAYS as usize]; d.settings.len() + 1];
    let (mut dated, mut outside) = (0u64, 0u64);
    for &(day, setting, count) in &d.exposures_by_day {
        dated += count;
        if day < first || day > d.as_of {
            outside += count;
            continue;
        }
        let layer = (setting as usize).min(d.settings.len());
        layers[layer][(day - first) as usize] += count as f64;
    }
    let undated = d.view.1.saturating_sub(dated);
    let mut named: Vec<(String, Vec<f64>)> = d
        .settings
        .iter()
        .cloned()
        .zip(layers.iter().skip(1).cloned())
        .collect();
    named.push(("no setting".into(), layers[0].clone()));
    named.retain(|(_, v)| v.iter().any(|&x| x > 0.0));
    if named.is_empty() {
        return None;
    }
    Some(Figure {
        name: "exposures-per-day".into(),
        title: format!(
            "Exposures per day, by setting ({undated} undated, {outside} outside these {DAYS} days)"
        ),
        x_label: "date of exposure (the last, where a row gives two)".into(),
        y_label: "exposures (rows)".into(),
        log: (false, false),
        series: Vec::new(),
        bars: Vec::new(),
        guides: Vec::new(),
        caption: caption.to_string(),
        legend_low: false,
        matrix: None,
        stacked: Some(Stacked {
            x: (first..=d.as_of).map(dates::iso).collect(),
            label_every: 7,
            layers: named,
        }),
    })
}

/// People whose monitoring window ends on each of the next 21 days from the as-of date (the
/// as-of date included), from the ranked list's window ends. None when no window ends then.
pub fn windows_ending(
    d: &Dataset,
    window_end: impl Iterator<Item = i32>,
    days: u32,
    caption: &str,
) -> Option<Figure> {
    const AHEAD: i32 = 21;
    let mut counts = vec![0.0; AHEAD as usize];
    for end in window_end {
        let i = end - d.as_of;
        if (0..AHEAD).contains(&i) {
            counts[i as usize] += 1.0;
        }
    }
    if counts.iter().all(|&c| c == 0.0) {
        return None;
    }
    Some(Figure {
        name: "windows-ending".into(),
        title: format!("People whose {days}-day monitoring window ends, by day"),
        x_label: "last day of monitoring".into(),
        y_label: "people".into(),
        log: (false, false),
        series: Vec::new(),
        bars: Vec::new(),
        guides: Vec::new(),
        caption: caption.to_string(),
        legend_low: false,
        matrix: None,
        stacked: Some(Stacked {
            x: (0..AHEAD).map(|i| dates::iso(d.as_of + i)).collect(),
            label_every: 7,
            layers: vec![("people".into(), counts)],
        }),
    })
}

/// Every figure hubwatch draws for a report (the outlook ones when it was computed; the windows
/// when the list was ranked: (window end of each person ranked, window days)).
pub fn all(
    d: &Dataset,
    s: &NetworkStats,
    plan: Option<&Plan>,
    windows: Option<(Vec<i32>, u32)>,
    caption: &str,
) -> Vec<Figure> {
    let mut v = vec![
        degree_distribution(s, false, caption),
        degree_distribution(s, true, caption),
        excess_observed(s, caption),
        neighbour_degree(s, caption),
        paradox(s, caption),
        components(s, caption),
    ];
    v.extend(mixing_matrices(s, caption));
    v.extend(settings_overlap(d, caption));
    // The per-day figures only where some day has a count (an export without dates has none).
    v.extend(exposures_per_day(d, caption));
    if let Some((ends, days)) = windows {
        v.extend(windows_ending(d, ends.into_iter(), days, caption));
    }
    if let Some(p) = plan {
        v.push(outlook_t(p, caption));
        v.push(outlook_final_size(p, caption));
        v.extend(outlook_reach(p, caption));
    }
    v
}

/// The numbers behind a figure as a typed table: one row per point (series, x, y), per bar
/// (label, position, value) and per guide line (its value on x or y).
pub fn data_table(fig: &Figure) -> crate::export::ExportTable {
    use crate::export::{Cell, ExportTable, Kind};
    let mut rows = Vec::new();
    for s in &fig.series {
        for &(x, y) in &s.points {
            rows.push(vec![
                Cell::Text("series".into()),
                Cell::Text(s.label.clone()),
                Cell::Num(x),
                Cell::Num(y),
            ]);
        }
    }
    for (i, (label, v)) in fig.bars.iter().enumerate() {
        rows.push(vec![
            Cell::Text("bar".into()),
            Cell::Text(label.clone()),
            Cell::Num(i as f64),
            Cell::Num(*v),
        ]);
    }
    if let Some(m) = &fig.matrix {
        for (i, row) in m.values.iter().enumerate() {
            for (j, &v) in row.iter().enumerate() {
                rows.push(vec![
                    Cell::Text("cell".into()),
                    Cell::Text(format!("{} / {}", m.groups[i], m.groups[j])),
                    Cell::Num(j as f64),
                    Cell::Num(v),
                ]);
            }
        }
    }
    if let Some(st) = &fig.stacked {
        for (label, values) in &st.layers {
            for (i, &v) in values.iter().enumerate() {
                rows.push(vec![
                    Cell::Text("stack".into()),
                    Cell::Text(format!("{label} / {}", st.x[i])),
                    Cell::Num(i as f64),
                    Cell::Num(v),
                ]);
            }
        }
    }
    for g in &fig.guides {
        let (x, y) = match g.vertical {
            true => (Cell::Num(g.value), Cell::Empty),
            false => (Cell::Empty, Cell::Num(g.value)),
        };
        rows.push(vec![
            Cell::Text("guide".into()),
            Cell::Text(g.label.clone()),
            x,
            y,
        ]);
    }
    ExportTable {
        columns: ["part", "label", "x", "y"].map(String::from).to_vec(),
        rows,
        kinds: vec![Kind::Text, Kind::Text, Kind::Num, Kind::Num],
    }
}
