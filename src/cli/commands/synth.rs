//! `hubwatch synth`: write an invented outbreak export.

use std::path::Path;

use crate::cli::{emit, parse_day, today};
use crate::error::Result;
use crate::synth;

/// Write the export and say what was planted.
pub fn run(people: usize, seed: u64, out: &Path, end: Option<&str>) -> Result<()> {
    let end = match end {
        Some(v) => parse_day("--end", v)?,
        None => today(),
    };
    let m = synth::generate(out, &synth::SynthOptions::new(people, seed, end))?;
    emit(&format!(
        "wrote {} people rows and {} exposure rows ({} distinct pairs, {} cases) to {}\n\
         planted: {} self-exposures, {} blank targets, {} bad dates, {} bad durations, {} implied people, {} repeated people, {} blank person IDs\n",
        m.people_rows,
        m.exposure_rows,
        m.pairs,
        m.cases,
        out.display(),
        m.self_exposures,
        m.blank_targets,
        m.bad_dates,
        m.bad_durations,
        m.implied_people,
        m.repeated_people,
        m.blank_people
    ))
}
