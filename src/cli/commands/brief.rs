//! `hubwatch brief`: the one-page HTML brief, written privately and atomically by the one
//! writer.

use crate::cli::args::BriefArgs;
use crate::cli::commands::figures::report_and_figures;
use crate::cli::emit;
use crate::error::{Error, Result};
use crate::report::brief::{html, Names};

/// Compute the report, draw its figures and write the page.
pub fn run(b: &BriefArgs) -> Result<()> {
    if b.out.exists() && !b.force {
        return Err(Error::Usage(format!(
            "{} exists; add --force to replace it",
            b.out.display()
        )));
    }
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
    let (r, all, _) = report_and_figures(&b.from)?;
    let mut svgs = Vec::new();
    for fig in all {
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
