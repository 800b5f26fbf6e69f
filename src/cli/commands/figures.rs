//! `hubwatch figures`: the report's figures as SVG and/or PNG files in a folder, each written
//! privately and atomically by the one writer. [`report_and_figures`] also serves `brief`.

use crate::analysis::planning::{PlanOptions, Strategy};
use crate::cli::args::{FigureArgs, FigureFormat, FiguresArgs};
use crate::cli::commands::priority::ranking_parts;
use crate::cli::emit;
use crate::error::{Error, Result};
use crate::export;
use crate::report::figures::{self, Figure};
use crate::report::meta::{input_hashes, input_paths};
use crate::report::Report;

/// Load, compute the report (statistics, list and outlook) and its figures, the inputs'
/// checksums read beside the statistics; returns them with the checksums (in ledger order).
pub fn report_and_figures(a: &FigureArgs) -> Result<(Report, Vec<Figure>, Vec<Option<String>>)> {
    if let Some(t) = a.transmissibility {
        if !(0.0..=1.0).contains(&t) {
            return Err(Error::Usage(format!(
                "--transmissibility {t}: T is a probability, give a value from 0 to 1"
            )));
        }
    }
    // A missing font is said before any work.
    crate::plot::use_font(crate::plot::find_font(a.font.as_deref())?)?;
    let d = a.load.load()?;
    let mut parts = ranking_parts(&a.load, &a.rank, a.workspace.as_deref())?;
    // The null model of r only when asked (its band in the neighbour-degree figure).
    parts.metrics = crate::analysis::stats::MetricOptions {
        null_replicates: a.null_replicates,
        ..Default::default()
    };
    parts.plan = Some(PlanOptions {
        transmissibility: a.transmissibility,
        strategies: Strategy::ALL.to_vec(),
        max_reach: a.max_reach,
        ..Default::default()
    });
    let paths = input_paths(&d);
    let (r, hashes) = std::thread::scope(|sc| {
        let hashing = sc.spawn(|| input_hashes(&paths));
        let r = Report::build(d, parts);
        let hashes = hashing
            .join()
            .unwrap_or_else(|p| std::panic::resume_unwind(p));
        (r, hashes)
    });
    let (r, hashes) = (r?, hashes?);
    let window = r
        .list
        .as_ref()
        .map(|l| (l.window.days, l.window.pathogen.as_str()));
    let caption = figures::caption(&r.d, window, &hashes);
    let windows = r.list.as_ref().map(|l| {
        (
            l.ranked.iter().filter_map(|x| x.window_end).collect(),
            l.window.days,
        )
    });
    let all = figures::all(&r.d, &r.stats, r.plan.as_ref(), windows, &caption);
    Ok((r, all, hashes))
}

/// Compute the report and write its figures.
pub fn run(f: &FiguresArgs) -> Result<()> {
    std::fs::create_dir_all(&f.out).map_err(|e| Error::io(&f.out, e))?;
    let (r, all, hashes) = report_and_figures(&f.from)?;
    let mut files = Vec::new();
    for fig in &all {
        if matches!(f.format, FigureFormat::Svg | FigureFormat::Both) {
            files.push((
                f.out.join(format!("{}.svg", fig.name)),
                crate::plot::svg(fig)?.into_bytes(),
            ));
        }
        if matches!(f.format, FigureFormat::Png | FigureFormat::Both) {
            files.push((
                f.out.join(format!("{}.png", fig.name)),
                crate::plot::png(fig)?,
            ));
        }
    }
    let meta = crate::report::meta::Meta::new(&r.d, "figure data")
        .inputs_hashed(&r.d, &hashes)
        .finish();
    let tables: Vec<_> = f
        .with_data
        .iter()
        .flat_map(|&format| {
            all.iter().map(move |fig| {
                (
                    f.out
                        .join(format!("{}.data.{}", fig.name, format.extension())),
                    figures::data_table(fig),
                    format,
                )
            })
        })
        .collect();
    if !f.force {
        let taken = files
            .iter()
            .map(|(p, _)| p)
            .chain(tables.iter().map(|(p, _, _)| p))
            .find(|p| p.exists());
        if let Some(p) = taken {
            return Err(Error::Usage(format!(
                "{} exists; add --force to replace the figures",
                p.display()
            )));
        }
    }
    let mut text = String::new();
    for (p, bytes) in &files {
        export::write_private(p, bytes)?;
        text.push_str(&format!("wrote {}\n", p.display()));
    }
    for (p, table, format) in &tables {
        export::write(table, &meta, *format, p, true)?;
        text.push_str(&format!("wrote {}\n", p.display()));
    }
    emit(&text)
}
