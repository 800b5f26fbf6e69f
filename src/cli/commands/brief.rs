//! `hubwatch brief`: the one-page HTML brief, written privately and atomically by the one
//! writer.

use crate::analysis::planning::{PlanOptions, Strategy};
use crate::cli::args::BriefArgs;
use crate::cli::commands::priority::ranking_parts;
use crate::cli::emit;
use crate::error::{Error, Result};
use crate::report::brief::{html, Names};
use crate::report::{figures, Report};

/// Compute the report, draw its figures and write the page.
pub fn run(b: &BriefArgs) -> Result<()> {
    if b.out.exists() && !b.force {
        return Err(Error::Usage(format!(
            "{} exists; add --force to replace it",
            b.out.display()
        )));
    }
    crate::plot::use_font(crate::plot::find_font(b.font.as_deref())?)?;
    // The user's key when there is one (stable pseudonyms); else a one-off key of this run.
    let own = match (&b.key_file, std::env::var_os("HUBWATCH_PSEUDONYM_KEY")) {
        (None, None) => None,
        _ => Some(crate::export::pseudonym_key(b.key_file.as_deref())?),
    };
    let one_off: Vec<u8> = {
        use rand::RngCore;
        let mut k = vec![0u8; 32];
        rand::rng().fill_bytes(&mut k);
        k
    };
    let names = match (b.raw_ids, &own) {
        (true, _) => Names::Raw,
        (false, Some(k)) => Names::Pseudonyms {
            key: k,
            stable: true,
        },
        (false, None) => Names::Pseudonyms {
            key: &one_off,
            stable: false,
        },
    };
    let d = b.load.load()?;
    let mut parts = ranking_parts(&b.load, &b.rank, b.workspace.as_deref())?;
    parts.plan = Some(PlanOptions {
        transmissibility: b.transmissibility,
        strategies: Strategy::ALL.to_vec(),
        ..Default::default()
    });
    // The inputs' checksums for the captions are read beside the statistics.
    let paths = figures::input_paths(&d);
    let (r, hashes) = std::thread::scope(|sc| {
        let hashing = sc.spawn(|| figures::input_hashes(&paths));
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
    let mut svgs = Vec::new();
    for fig in figures::all(&r.d, &r.stats, r.plan.as_ref(), windows, &caption) {
        svgs.push((fig.title.clone(), crate::plot::svg(&fig)?));
    }
    let page = html(&r, &svgs, &names, b.top);
    crate::export::write_private(&b.out, page.as_bytes())?;
    emit(&format!(
        "wrote the brief ({} figures, {} people listed{}) to {}\n",
        svgs.len(),
        b.top.min(r.list.as_ref().map_or(0, |l| l.ranked.len())),
        if b.raw_ids {
            ", raw IDs"
        } else {
            ", pseudonymised"
        },
        b.out.display()
    ))
}
