//! `hubwatch check`: account for every input row; optionally write the quarantine file
//! through the one writer.

use std::path::Path;

use crate::cli::{emit, to_json, LoadArgs};
use crate::error::Result;
use crate::export;
use crate::ingest::dates;
use crate::report::{check, meta::Meta, tables};

/// Print the check report; write every quarantined row and field problem to `quarantine`.
pub fn run(load: &LoadArgs, quarantine: Option<&Path>, as_json: bool) -> Result<()> {
    let d = load.load()?;
    if let Some(path) = quarantine {
        let meta = Meta::new(&d, "quarantine").inputs(&d)?.finish();
        export::write(
            &tables::quarantine_table(&d),
            &meta,
            export::Format::Csv,
            path,
            true,
        )?;
    }
    let r = check::check_report(&d.ledger);
    emit(&if as_json {
        to_json(&r)?
    } else {
        check::check_text(&r, &dates::iso(d.as_of))
    })
}
