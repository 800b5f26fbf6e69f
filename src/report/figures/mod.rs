//! The figures for the wall: what each one shows, as numbers (series of points, bars, guide
//! lines), with its title, axis labels and caption. The drawing (`plot`) lays these out and
//! adds nothing; the tests compare the numbers here with `summary --json`.

use crate::analysis::planning::Plan;
use crate::analysis::stats::NetworkStats;
use crate::dataset::Dataset;
use crate::ingest::dates;
use crate::metrics::Stat;

mod days;
mod network;
mod outlook;

pub use days::{exposures_per_day, windows_ending};
pub use network::{
    components, degree_distribution, excess_observed, mixing_matrices, neighbour_degree, paradox,
    settings_overlap,
};
pub use outlook::{outlook_final_size, outlook_reach, outlook_t};

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

impl Figure {
    /// A figure with its names and caption, linear axes and nothing drawn yet (the fields
    /// that differ are set beside it).
    pub fn new(
        name: impl Into<String>,
        title: impl Into<String>,
        x_label: impl Into<String>,
        y_label: impl Into<String>,
        caption: impl Into<String>,
    ) -> Figure {
        Figure {
            name: name.into(),
            title: title.into(),
            x_label: x_label.into(),
            y_label: y_label.into(),
            log: (false, false),
            series: Vec::new(),
            bars: Vec::new(),
            guides: Vec::new(),
            caption: caption.into(),
            legend_low: false,
            matrix: None,
            stacked: None,
        }
    }
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

/// The caption every figure carries: as-of date, view, monitoring window (when known) and the
/// input files with their SHA-256 (from [`super::meta::input_hashes`]) shortened to 12 hex digits.
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
