//! `hubwatch chains forward|backward`: tracing along dated exposures, as text or JSON, and
//! optionally the list through the one writer.

use crate::analysis::chains::{self, People, Windows};
use crate::analysis::priority::PriorityConfig;
use crate::cli::args::ChainDirection;
use crate::cli::{emit, to_json};
use crate::error::Result;
use crate::export as ex;
use crate::report::chains as rep;
use crate::report::tables::Ids;

/// Run one direction.
pub fn run(direction: &ChainDirection) -> Result<()> {
    let (common, req) = match direction {
        ChainDirection::Forward(f) => (&f.common, f.common.request(f.generations, None)),
        ChainDirection::Backward(b) => (&b.common, b.common.request(None, b.days)),
    };
    let config = PriorityConfig::load(common.priority_config.as_deref())?;
    let w = Windows::settle(&config, &req)?;
    // A wrong --out is said before the load.
    common.output.checked_format()?;
    let key = match common.pseudonymise {
        true => Some(ex::pseudonym_key(common.key_file.as_deref())?),
        false => None,
    };
    let t = std::time::Instant::now();
    let lap = |what: &str| crate::report::stage_lap("chains", what, t);
    let d = common.load.load()?;
    lap("loaded");
    let people = People::of(&d);
    lap("people read");
    let gain = chains::gain(&d, &people, &w, d.graph.degrees());
    lap("gain measured");
    let shown = Ids {
        d: &d,
        key: None,
        direct_identifiers: &[],
    };
    let written = Ids {
        d: &d,
        key: key.as_deref(),
        direct_identifiers: &config.export.direct_identifiers,
    };
    let (text, table, name) = match direction {
        ChainDirection::Forward(f) => {
            let nodes = match f.from_cases {
                true => people.cases(),
                false => chains::nodes_of(&d, &f.from_person)?,
            };
            let fw = chains::forward(&d, &people, &w, &nodes);
            lap("forward done");
            let text = match common.output.json {
                true => to_json(&rep::forward_json(&shown, &fw, &w, &gain))?,
                false => rep::forward_text(&shown, &fw, &w, &gain, common.top),
            };
            let table = common
                .output
                .out
                .is_some()
                .then(|| rep::forward_table(&written, &fw));
            (text, table, "forward")
        }
        ChainDirection::Backward(b) => {
            let nodes = match b.to_cases {
                true => people.cases(),
                false => chains::nodes_of(&d, &b.to_person)?,
            };
            let bw = chains::backward(&d, &people, &w, &nodes);
            lap("backward done");
            let text = match common.output.json {
                true => to_json(&rep::backward_json(&shown, &bw, &w, &gain))?,
                false => rep::backward_text(&shown, &bw, &w, &gain, common.top),
            };
            let table = common
                .output
                .out
                .is_some()
                .then(|| rep::backward_table(&written, &bw));
            (text, table, "backward")
        }
    };
    lap("reported");
    if let Some(table) = table {
        let mut meta = rep::meta(&d, name, &w);
        if key.is_some() {
            meta = meta.with(
                "pseudonymised",
                "person IDs replaced by HMAC-SHA256 under a key that is not stored",
            );
        }
        common.output.write(&table, &meta.inputs(&d)?.finish())?;
    }
    emit(&text)
}
