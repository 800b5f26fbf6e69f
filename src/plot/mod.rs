//! Draws the figures of `report::figures` as SVG (and PNG) with plotters. Lays out what the view
//! model says and computes nothing of its own: logarithmic axes are drawn as log10 of the data
//! with the ticks labelled in the data's units.
//!
//! Colours: the Okabe-Ito palette for colour-blind readers (Okabe and Ito, "Color Universal
//! Design", 2008; hex values from memory), and every series also differs by marker shape or
//! dash, so the figures read in greyscale.

use plotters::coord::Shift;
use plotters::prelude::*;

use crate::error::{Error, Result};
use crate::report::figures::{Figure, Mark, Matrix, Stacked};

/// Okabe-Ito: black, orange, sky blue, bluish green, vermillion, blue, reddish purple, yellow.
const PALETTE: [RGBColor; 8] = [
    RGBColor(0, 0, 0),
    RGBColor(230, 159, 0),
    RGBColor(86, 180, 233),
    RGBColor(0, 158, 115),
    RGBColor(213, 94, 0),
    RGBColor(0, 114, 178),
    RGBColor(204, 121, 167),
    RGBColor(240, 228, 66),
];

/// Figure size in pixels.
pub const SIZE: (u32, u32) = (1000, 640);

fn err(e: impl std::fmt::Display) -> Error {
    Error::Usage(format!("drawing a figure failed: {e}"))
}

/// The figure as an SVG document (after [`use_font`]).
pub fn svg(fig: &Figure) -> Result<String> {
    let mut out = String::new();
    {
        let root = SVGBackend::with_string(&mut out, SIZE).into_drawing_area();
        draw(&root, fig)?;
        root.present().map_err(err)?;
    }
    Ok(out)
}

/// Use this TrueType font for measuring text (both formats) and drawing it (PNG); call once
/// before drawing. SVG files name the family `sans-serif`, so a viewer draws them with its own.
pub fn use_font(font: &'static [u8]) -> Result<()> {
    plotters::style::register_font("sans-serif", FontStyle::Normal, font)
        .map_err(|_| Error::Usage("the font file could not be read as TrueType".into()))
}

/// [`find_font`] and [`use_font`] once per process (the dashboard writes figures on keys).
pub fn ensure_font() -> Result<()> {
    static DONE: std::sync::OnceLock<std::result::Result<(), String>> = std::sync::OnceLock::new();
    DONE.get_or_init(|| {
        find_font(None)
            .and_then(use_font)
            .map_err(|e| e.to_string())
    })
    .clone()
    .map_err(Error::Usage)
}

/// The figure as a PNG image (after [`use_font`]).
pub fn png(fig: &Figure) -> Result<Vec<u8>> {
    let (w, h) = SIZE;
    let mut rgb = vec![255u8; (w * h * 3) as usize];
    {
        let root = BitMapBackend::with_buffer(&mut rgb, SIZE).into_drawing_area();
        draw(&root, fig)?;
        root.present().map_err(err)?;
    }
    let mut bytes = Vec::new();
    {
        let mut enc = png::Encoder::new(&mut bytes, w, h);
        enc.set_color(png::ColorType::Rgb);
        enc.set_depth(png::BitDepth::Eight);
        let mut writer = enc.write_header().map_err(err)?;
        writer.write_image_data(&rgb).map_err(err)?;
    }
    Ok(bytes)
}

/// A TrueType font to lay text out with: the file given, else the first of the common system
/// fonts.
pub fn find_font(given: Option<&std::path::Path>) -> Result<&'static [u8]> {
    const COMMON: [&str; 3] = [
        "/usr/share/fonts/truetype/dejavu/DejaVuSans.ttf",
        "/usr/share/fonts/TTF/DejaVuSans.ttf",
        "/usr/share/fonts/dejavu/DejaVuSans.ttf",
    ];
    let path = match given {
        Some(p) => p.to_path_buf(),
        None => COMMON
            .iter()
            .map(std::path::PathBuf::from)
            .find(|p| p.exists())
            .ok_or_else(|| {
                Error::Usage(
                    "figures need a TrueType font to lay text out: none of the common ones is \
                     installed (DejaVu Sans, Debian package fonts-dejavu-core); give one with \
                     --font FILE"
                        .into(),
                )
            })?,
    };
    let bytes = std::fs::read(&path).map_err(|e| Error::io(&path, e))?;
    Ok(Box::leak(bytes.into_boxed_slice()))
}

fn log10(v: f64) -> f64 {
    v.log10()
}

/// Data to drawing coordinates (log10 on a logarithmic axis; non-positive values dropped there).
fn to_plot(fig: &Figure, (x, y): (f64, f64)) -> Option<(f64, f64)> {
    let (lx, ly) = fig.log;
    if (lx && x <= 0.0) || (ly && y <= 0.0) || !x.is_finite() || !y.is_finite() {
        return None;
    }
    Some((if lx { log10(x) } else { x }, if ly { log10(y) } else { y }))
}

/// The drawn range of the data and guides, padded a little.
fn ranges(fig: &Figure) -> ((f64, f64), (f64, f64)) {
    // On a logarithmic y axis the observed points (markers) set the range when there are any:
    // a fitted curve that falls many decades below the data would squash it.
    let observed = fig.log.1 && fig.series.iter().any(|s| s.mark == Mark::Points);
    let pts: Vec<(f64, f64)> = fig
        .series
        .iter()
        .filter(|s| !observed || s.mark == Mark::Points)
        .flat_map(|s| s.points.iter())
        .filter_map(|&p| to_plot(fig, p))
        .collect();
    let span = |v: &mut dyn Iterator<Item = f64>, log: bool| {
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for x in v {
            lo = lo.min(x);
            hi = hi.max(x);
        }
        if !lo.is_finite() {
            return (0.0, 1.0);
        }
        if !log {
            lo = lo.min(0.0);
        }
        let pad = ((hi - lo) * 0.05).max(if log { 0.1 } else { 1e-9 });
        (lo - if log { pad } else { 0.0 }, hi + pad)
    };
    let guide = |vertical: bool, log: bool| {
        fig.guides
            .iter()
            .filter(move |g| g.vertical == vertical)
            .map(move |g| if log { log10(g.value) } else { g.value })
            .filter(|v| v.is_finite())
    };
    let x = span(
        &mut pts.iter().map(|p| p.0).chain(guide(true, fig.log.0)),
        fig.log.0,
    );
    let y = span(
        &mut pts.iter().map(|p| p.1).chain(guide(false, fig.log.1)),
        fig.log.1,
    );
    (x, y)
}

/// Tick label of an axis value (on a logarithmic axis, two significant digits).
fn tick(v: f64, log: bool) -> String {
    let x = if log { 10f64.powf(v) } else { v };
    if log && (0.01..1000.0).contains(&x) {
        let digits = (1 - x.log10().floor() as i32).max(0) as usize;
        let r = format!("{x:.digits$}");
        return match r.contains('.') {
            true => r.trim_end_matches('0').trim_end_matches('.').to_string(),
            false => r,
        };
    }
    if log {
        return format!("{x:.0e}");
    }
    if x == 0.0 {
        return "0".into();
    }
    if x.abs() >= 1e5 || x.abs() < 1e-4 {
        return format!("{x:.0e}");
    }
    // Up to four decimals, trailing zeros dropped: ticks 0.005 apart stay distinct.
    let r = format!("{x:.4}");
    match r.contains('.') {
        true => r.trim_end_matches('0').trim_end_matches('.').to_string(),
        false => r,
    }
}

/// The chart of a figure in `area`: its title on top, room for the axis labels (`y_room`
/// pixels for the y labels), over the given ranges.
fn frame<'a, DB: DrawingBackend>(
    area: &'a DrawingArea<DB, Shift>,
    fig: &Figure,
    title_size: u32,
    y_room: u32,
    (x, y): (std::ops::Range<f64>, std::ops::Range<f64>),
) -> Result<
    ChartContext<
        'a,
        DB,
        Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>,
    >,
>
where
    DB::ErrorType: 'static,
{
    ChartBuilder::on(area)
        .caption(&fig.title, ("sans-serif", title_size))
        .margin(14)
        .x_label_area_size(48)
        .y_label_area_size(y_room)
        .build_cartesian_2d(x, y)
        .map_err(err)
}

/// The label of category `labels[i]` at axis value `v` when `v` is the whole number `i` and
/// a multiple of `every` (categories sit at 0, 1, 2 ...; other ticks get no label).
fn category(labels: &[String], v: f64, every: usize) -> String {
    let i = v.round();
    match (i - v).abs() < 1e-6 && i >= 0.0 && (i as usize).is_multiple_of(every.max(1)) {
        true => labels.get(i as usize).cloned().unwrap_or_default(),
        false => String::new(),
    }
}

fn draw<DB: DrawingBackend>(root: &DrawingArea<DB, Shift>, fig: &Figure) -> Result<()>
where
    DB::ErrorType: 'static,
{
    root.fill(&WHITE).map_err(err)?;
    let (_, h) = root.dim_in_pixel();
    let (main, foot) = root.split_vertically(h - 28);
    foot.draw(&Text::new(
        fig.caption.clone(),
        (12, 6),
        ("sans-serif", 13).into_font().color(&RGBColor(60, 60, 60)),
    ))
    .map_err(err)?;
    if !fig.bars.is_empty() {
        return draw_bars(&main, fig);
    }
    if let Some(m) = &fig.matrix {
        return draw_matrix(&main, fig, m);
    }
    if let Some(st) = &fig.stacked {
        return draw_stacked(&main, fig, st);
    }
    let ((x0, x1), (y0, y1)) = ranges(fig);
    let mut chart = frame(&main, fig, 20, 70, (x0..x1, y0..y1))?;
    let (lx, ly) = fig.log;
    chart
        .configure_mesh()
        .x_desc(&fig.x_label)
        .y_desc(&fig.y_label)
        .x_label_formatter(&|v| tick(*v, lx))
        .y_label_formatter(&|v| tick(*v, ly))
        .light_line_style(RGBColor(235, 235, 235))
        .draw()
        .map_err(err)?;
    let mut shape = 0usize;
    for s in &fig.series {
        let colour = PALETTE[s.group % PALETTE.len()];
        // Points outside the drawn range are left out (a curve ends at the frame).
        let pts: Vec<(f64, f64)> = s
            .points
            .iter()
            .filter_map(|&p| to_plot(fig, p))
            .filter(|p| (y0..=y1).contains(&p.1) && (x0..=x1).contains(&p.0))
            .collect();
        let style = ShapeStyle::from(&colour).stroke_width(2);
        match s.mark {
            Mark::Line => {
                chart
                    .draw_series(LineSeries::new(pts, style))
                    .map_err(err)?
                    .label(&s.label)
                    .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 24, y)], style));
            }
            Mark::Dashed => {
                chart
                    .draw_series(DashedLineSeries::new(pts, 8, 5, style))
                    .map_err(err)?
                    .label(&s.label)
                    .legend(move |(x, y)| {
                        EmptyElement::at((x, y))
                            + PathElement::new(vec![(0, 0), (9, 0)], style)
                            + PathElement::new(vec![(15, 0), (24, 0)], style)
                    });
            }
            Mark::Points => {
                let which = shape;
                shape += 1;
                // Circle, triangle, cross, square, cycling: series differ in greyscale.
                let fill = style.filled();
                let anno = match which % 4 {
                    0 => chart
                        .draw_series(pts.iter().map(|&p| Circle::new(p, 4, fill)))
                        .map_err(err)?
                        .legend(move |(x, y)| Circle::new((x + 12, y), 4, fill)),
                    1 => chart
                        .draw_series(pts.iter().map(|&p| TriangleMarker::new(p, 5, style)))
                        .map_err(err)?
                        .legend(move |(x, y)| TriangleMarker::new((x + 12, y), 5, style)),
                    2 => chart
                        .draw_series(pts.iter().map(|&p| Cross::new(p, 4, style)))
                        .map_err(err)?
                        .legend(move |(x, y)| Cross::new((x + 12, y), 4, style)),
                    _ => chart
                        .draw_series(pts.iter().map(|&p| {
                            EmptyElement::at(p) + Rectangle::new([(-3, -3), (3, 3)], style)
                        }))
                        .map_err(err)?
                        .legend(move |(x, y)| {
                            Rectangle::new([(x + 9, y - 3), (x + 15, y + 3)], style)
                        }),
                };
                anno.label(&s.label);
            }
        }
    }
    let groups = fig.series.iter().map(|s| s.group + 1).max().unwrap_or(0);
    for (i, g) in fig.guides.iter().enumerate() {
        // Guides take the colours after the series', and are dotted.
        let colour = PALETTE[(groups + g.group) % PALETTE.len()];
        let style = ShapeStyle::from(&colour).stroke_width(1);
        let v = if (g.vertical && lx) || (!g.vertical && ly) {
            log10(g.value)
        } else {
            g.value
        };
        if !v.is_finite() {
            continue;
        }
        let line = if g.vertical {
            vec![(v, y0), (v, y1)]
        } else {
            vec![(x0, v), (x1, v)]
        };
        // Guides are dotted (short dashes), each with its own spacing.
        let gap = 3 + 2 * i as u32;
        chart
            .draw_series(DashedLineSeries::new(line, 3, gap, style))
            .map_err(err)?
            .label(&g.label)
            .legend(move |(x, y)| {
                EmptyElement::at((x, y))
                    + PathElement::new(vec![(0, 0), (3, 0)], style)
                    + PathElement::new(vec![(9, 0), (12, 0)], style)
                    + PathElement::new(vec![(18, 0), (21, 0)], style)
            });
    }
    chart
        .configure_series_labels()
        .position(match fig.legend_low {
            true => SeriesLabelPosition::LowerLeft,
            false => SeriesLabelPosition::UpperRight,
        })
        .background_style(WHITE.mix(0.85))
        .border_style(RGBColor(160, 160, 160))
        .label_font(("sans-serif", 14))
        .draw()
        .map_err(err)?;
    Ok(())
}

/// A bar chart: one bar per entry, its value written above it, labels under the axis.
fn draw_bars<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, fig: &Figure) -> Result<()>
where
    DB::ErrorType: 'static,
{
    let n = fig.bars.len();
    let top = fig.bars.iter().map(|b| b.1).fold(0.0f64, f64::max) * 1.15;
    let top = if top > 0.0 { top } else { 1.0 };
    let mut chart = frame(area, fig, 18, 70, (-0.5..n as f64 - 0.5, 0.0..top))?;
    let labels: Vec<String> = fig.bars.iter().map(|b| b.0.clone()).collect();
    chart
        .configure_mesh()
        .disable_x_mesh()
        .x_labels(n)
        .x_label_formatter(&|v| category(&labels, *v, 1))
        .y_desc(&fig.y_label)
        .light_line_style(RGBColor(235, 235, 235))
        .draw()
        .map_err(err)?;
    for (i, (_, v)) in fig.bars.iter().enumerate() {
        let x = i as f64;
        let colour = PALETTE[(i + 1) % PALETTE.len()];
        // Fill and a distinct hatch-free outline; the value is written on each bar, so the
        // chart reads without colour.
        chart
            .draw_series(std::iter::once(Rectangle::new(
                [(x - 0.3, 0.0), (x + 0.3, *v)],
                colour.filled(),
            )))
            .map_err(err)?;
        chart
            .draw_series(std::iter::once(Rectangle::new(
                [(x - 0.3, 0.0), (x + 0.3, *v)],
                ShapeStyle::from(&BLACK).stroke_width(1),
            )))
            .map_err(err)?;
        chart
            .draw_series(std::iter::once(Text::new(
                format!("{v:.2}"),
                (x - 0.1, *v + top * 0.02),
                ("sans-serif", 16),
            )))
            .map_err(err)?;
    }
    Ok(())
}

/// A heat map: darker is more (a single-hue ramp, so it reads in greyscale), the count written
/// in every cell in black or white by the cell's darkness.
fn draw_matrix<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    fig: &Figure,
    m: &Matrix,
) -> Result<()>
where
    DB::ErrorType: 'static,
{
    let n = m.groups.len();
    let max = m.values.iter().flatten().fold(0.0f64, |a, &b| a.max(b));
    let span = -0.5..n as f64 - 0.5;
    let mut chart = frame(area, fig, 18, 110, (span.clone(), span))?;
    let label = |v: &f64| category(&m.groups, *v, 1);
    chart
        .configure_mesh()
        .disable_mesh()
        .x_labels(n)
        .y_labels(n)
        .x_label_formatter(&label)
        .y_label_formatter(&label)
        .x_desc(&fig.x_label)
        .y_desc(&fig.y_label)
        .draw()
        .map_err(err)?;
    for (i, row) in m.values.iter().enumerate() {
        for (j, &v) in row.iter().enumerate() {
            let share = if max > 0.0 { v / max } else { 0.0 };
            // From near-white to the palette's blue.
            let mix = |hi: u8| (255.0 - share * (255.0 - f64::from(hi))).round() as u8;
            let fill = RGBColor(mix(0), mix(114), mix(178));
            let (x, y) = (j as f64, i as f64);
            chart
                .draw_series(std::iter::once(Rectangle::new(
                    [(x - 0.5, y - 0.5), (x + 0.5, y + 0.5)],
                    fill.filled(),
                )))
                .map_err(err)?;
            let ink = if share > 0.55 { WHITE } else { BLACK };
            chart
                .draw_series(std::iter::once(Text::new(
                    format!("{v:.0}"),
                    (x - 0.08, y + 0.05),
                    ("sans-serif", 15).into_font().color(&ink),
                )))
                .map_err(err)?;
        }
    }
    Ok(())
}

/// Stacked bars: one bar per category, layers bottom to top in order, each layer its colour and
/// a black outline, the layers named in the legend.
fn draw_stacked<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    fig: &Figure,
    st: &Stacked,
) -> Result<()>
where
    DB::ErrorType: 'static,
{
    let n = st.x.len();
    let totals: Vec<f64> = (0..n)
        .map(|i| st.layers.iter().map(|l| l.1[i]).sum())
        .collect();
    let top = totals.iter().fold(0.0f64, |a, &b| a.max(b)) * 1.1;
    let top = if top > 0.0 { top } else { 1.0 };
    let mut chart = frame(area, fig, 18, 70, (-0.5..n as f64 - 0.5, 0.0..top))?;
    chart
        .configure_mesh()
        .disable_x_mesh()
        .x_labels(n)
        .x_label_formatter(&|v| category(&st.x, *v, st.label_every))
        .x_desc(&fig.x_label)
        .y_desc(&fig.y_label)
        .light_line_style(RGBColor(235, 235, 235))
        .draw()
        .map_err(err)?;
    let mut base = vec![0.0f64; n];
    for (li, (label, values)) in st.layers.iter().enumerate() {
        let colour = PALETTE[(li + 1) % PALETTE.len()];
        let bars: Vec<Rectangle<(f64, f64)>> = (0..n)
            .filter(|&i| values[i] > 0.0)
            .map(|i| {
                let x = i as f64;
                Rectangle::new(
                    [(x - 0.4, base[i]), (x + 0.4, base[i] + values[i])],
                    colour.filled(),
                )
            })
            .collect();
        let outlines: Vec<Rectangle<(f64, f64)>> = (0..n)
            .filter(|&i| values[i] > 0.0)
            .map(|i| {
                let x = i as f64;
                Rectangle::new(
                    [(x - 0.4, base[i]), (x + 0.4, base[i] + values[i])],
                    ShapeStyle::from(&BLACK).stroke_width(1),
                )
            })
            .collect();
        chart
            .draw_series(bars)
            .map_err(err)?
            .label(label)
            .legend(move |(x, y)| {
                Rectangle::new([(x + 4, y - 5), (x + 18, y + 5)], colour.filled())
            });
        chart.draw_series(outlines).map_err(err)?;
        for i in 0..n {
            base[i] += values[i];
        }
    }
    if st.layers.len() > 1 {
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperLeft)
            .background_style(WHITE.mix(0.85))
            .border_style(RGBColor(160, 160, 160))
            .label_font(("sans-serif", 14))
            .draw()
            .map_err(err)?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tick_labels_stay_distinct_and_short() {
        let lin: Vec<String> = [0.0, 0.005, 0.01, 0.015, 0.045, 1.2, 35.0, 2.5e5]
            .iter()
            .map(|&v| tick(v, false))
            .collect();
        assert_eq!(
            lin,
            ["0", "0.005", "0.01", "0.015", "0.045", "1.2", "35", "2e5"]
        );
        // Logarithmic axes hold log10 of the value.
        let log: Vec<String> = [0.0, 0.2, 1.0, -1.0, -3.0, 3.0]
            .iter()
            .map(|&v| tick(v, true))
            .collect();
        assert_eq!(log, ["1", "1.6", "10", "0.1", "1e-3", "1e3"]);
    }
}
