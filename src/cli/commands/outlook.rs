//! `hubwatch outlook`: threshold, expected outbreak size and reach-out curves; curve files
//! through the one writer.

use crate::analysis::planning::{PlanOptions, Strategy, MODEL_CAUTION};
use crate::cli::args::OutlookArgs;
use crate::cli::commands::priority::ranking_parts;
use crate::cli::{emit, to_json};
use crate::error::{Error, Result};
use crate::export;
use crate::report::{meta::Meta, outlook, Report};

/// Compute and print the outlook; write the curve files asked for.
pub fn run(o: &OutlookArgs) -> Result<()> {
    if let Some(t) = o.transmissibility {
        if !(0.0..=1.0).contains(&t) {
            return Err(Error::Usage(format!(
                "--transmissibility {t}: T is a probability, give a value from 0 to 1"
            )));
        }
    }
    // Refuse existing files before any work.
    for p in [&o.curves_out, &o.t_curve_out].into_iter().flatten() {
        export::format_for(p, o.format)?;
        if p.exists() && !o.force {
            return Err(Error::Usage(format!(
                "{} exists; add --force to replace it",
                p.display()
            )));
        }
    }
    let d = o.load.load()?;
    let strategies = if o.strategy.is_empty() {
        Strategy::ALL.to_vec()
    } else {
        o.strategy.clone()
    };
    let mut parts = ranking_parts(&o.load, &o.rank, o.workspace.as_deref())?;
    if !strategies.contains(&Strategy::Priority) {
        parts.rank = None;
    }
    parts.plan = Some(PlanOptions {
        transmissibility: o.transmissibility,
        strategies,
        max_reach: o.max_reach,
        repeats: o.repeats,
        seed: o.seed,
        ..Default::default()
    });
    let r = Report::build(d, parts)?;
    let plan = r.plan.as_ref().expect("outlook asked for");
    let meta = Meta::new(&r.d, "outlook")
        .with("model_caution", MODEL_CAUTION)
        .with("assumption", crate::report::outlook::assumption(plan))
        .finish();
    let mut written = String::new();
    if let Some(p) = &o.curves_out {
        let f = export::format_for(p, o.format)?;
        export::write(&outlook::reach_table(plan), &meta, f, p, o.force)?;
        written.push_str(&format!("wrote the reach curves to {}\n", p.display()));
    }
    if let Some(p) = &o.t_curve_out {
        let f = export::format_for(p, o.format)?;
        export::write(&outlook::t_table(plan), &meta, f, p, o.force)?;
        written.push_str(&format!("wrote the curve over T to {}\n", p.display()));
    }
    if o.json {
        emit(&to_json(&outlook::json(plan, &r.d.ids))?)?;
        if !written.is_empty() {
            eprint!("{written}");
        }
        Ok(())
    } else {
        emit(&format!("{}{written}", outlook::text(plan, &r.d.ids)))
    }
}
