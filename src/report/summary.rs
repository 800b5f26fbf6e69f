//! `hubwatch summary` as text: the headline figures, the degree distribution, the friendship
//! paradox, mixing, clustering, the fits and the case statistics, each with its caveat.

use std::fmt::Write as _;

use crate::analysis::stats::{DegreeFits, NetworkStats};
use crate::analysis::summary::Summary;
use crate::dataset::Dataset;
use crate::metrics::fits;
use crate::report::fmt::{plus_minus, range, show, Style};

/// The best whole-distribution fit with its parameters, in words.
fn fit_line(f: &DegreeFits) -> String {
    let param = |fit: &fits::Fit, name: &str| {
        fit.params
            .iter()
            .find(|(n, _)| *n == name)
            .map(|(_, v)| show(*v, 2))
            .unwrap_or_default()
    };
    match f.best {
        Some("negative_binomial") => format!(
            "negative binomial, mean {}, dispersion k {} (95% CI {})",
            param(&f.negative_binomial.fit, "R"),
            param(&f.negative_binomial.fit, "k"),
            range(
                f.negative_binomial.k_low,
                f.negative_binomial.k_high,
                2,
                Style::Words
            )
        ),
        Some("poisson") => format!("Poisson, mean {}", param(&f.poisson, "lambda")),
        Some("geometric") => format!("geometric, p {}", param(&f.geometric, "p")),
        _ => "undefined (no model could be fitted)".to_string(),
    }
}

/// Plain-text rendering of the summary.
pub fn summary_text(sum: &Summary, net: &NetworkStats, d: &Dataset) -> String {
    let mut s = String::new();
    write_counts(&mut s, sum, d);
    write_shape(&mut s, net);
    write_cases(&mut s, &net.cases);
    let _ = writeln!(
        s,
        "\nThe configuration-model reading of these figures assumes uncorrelated degrees and a\n\
         tree-like network; compare r with its randomisations and mind the clustering."
    );
    let _ = writeln!(s, "\n{}", crate::CAUTION);
    s
}

/// The files, then people, contacts, rows and components.
fn write_counts(s: &mut String, sum: &Summary, d: &Dataset) {
    let _ = writeln!(
        s,
        "hubwatch summary (as of {}; network of {}: {} exposure rows)",
        sum.as_of, sum.view.description, sum.view.exposure_rows
    );
    for f in &d.ledger.files {
        let _ = writeln!(s, "  {:<9} {}", f.role.name(), f.path.display());
    }
    let _ = writeln!(s);
    let share = sum
        .components
        .largest_share
        .map(|x| format!("{:.1}%", 100.0 * x))
        .unwrap_or_else(|| "-".into());
    let rows = [
        ("people", sum.people.to_string()),
        (
            "  of which implied (only in exposures)",
            sum.implied.to_string(),
        ),
        ("  of which isolated (no contact)", sum.isolated.to_string()),
        ("distinct contact pairs", sum.contacts.to_string()),
        ("highest number of contacts", sum.max_degree.to_string()),
        (
            "clusters (connected components)",
            sum.components.count.to_string(),
        ),
        (
            "largest cluster",
            format!("{} people ({share})", sum.components.largest),
        ),
        (
            "exposure rows read / used / merged / quarantined",
            format!(
                "{} / {} / {} / {}",
                sum.rows.exposures.read,
                sum.rows.exposures.used,
                sum.rows.exposures.merged,
                sum.rows.exposures.quarantined
            ),
        ),
        (
            "field problems (see `hubwatch check`)",
            (sum.rows.exposures.field_problems + sum.rows.people.field_problems).to_string(),
        ),
    ];
    for (k, v) in rows {
        let _ = writeln!(s, "  {k:<50} {v}");
    }
}

/// Degrees, the friendship paradox, mixing, clustering and the best fit.
fn write_shape(s: &mut String, net: &NetworkStats) {
    let nb = &net.neighbours;
    let r = plus_minus(net.r, net.r_se, 3);
    let null = match (net.null.mean, net.null.sd) {
        (Ok(_), Ok(_)) => format!(
            "{} ({} randomisations)",
            plus_minus(net.null.mean, net.null.sd, 3),
            net.null.replicates
        ),
        (m, _) => show(m, 3),
    };
    let more = nb.share_more.map(|x| 100.0 * x);
    let stats = [
        ("mean contacts per person <k>", show(net.degree.mean, 2)),
        (
            "contacts of a person reached along an exposure",
            show(net.degree.edge_end_mean, 2),
        ),
        (
            "  of which other than the exposure (mean excess)",
            show(net.degree.mean_excess, 2),
        ),
        (
            "people whose contacts have more contacts (%)",
            show(more, 1),
        ),
        ("degree assortativity r ± jackknife SE", r),
        ("  r in degree-preserving randomisations", null),
        (
            "clustering: transitivity / mean local",
            format!(
                "{} / {}",
                show(net.clustering.transitivity, 3),
                show(net.clustering.mean_local, 3)
            ),
        ),
        (
            "people who bridge parts of a cluster",
            net.bridges.len().to_string(),
        ),
        (
            "highest k-core",
            net.cores.iter().max().copied().unwrap_or(0).to_string(),
        ),
        (
            "best fit of the degree distribution (AIC)",
            fit_line(&net.fits),
        ),
    ];
    let _ = writeln!(s, "\nNetwork shape");
    for (k, v) in stats {
        let _ = writeln!(s, "  {k:<50} {v}");
    }
}

/// Case statistics: SAR, offspring, serial interval.
fn write_cases(s: &mut String, c: &crate::analysis::casedata::CaseStats) {
    let _ = writeln!(s, "\nCases");
    match c.missing {
        Some(why) => {
            let _ = writeln!(s, "  {:<50} undefined ({why})", "case statistics");
        }
        None => {
            let sar = match (c.sar.p, c.sar.wilson) {
                (Ok(p), Ok((lo, hi))) => format!(
                    "{:.1}% ({} of {}; 95% CI {}, Wilson)",
                    100.0 * p,
                    c.sar.x,
                    c.sar.n,
                    range(Ok(lo), Ok(hi), 1, Style::Percent)
                ),
                (p, _) => show(p, 3),
            };
            let off = match &c.offspring {
                Some(o) => format!(
                    "{} links; mean {} secondary cases per case",
                    c.links,
                    show(o.sample.mean(), 2)
                ),
                None => "undefined (no infector -> infectee links)".to_string(),
            };
            let si = match (c.serial.mean, c.serial.sd) {
                (Ok(m), Ok(sd)) => format!("mean {m:.1} days, SD {sd:.1} ({} pairs)", c.serial.n),
                (m, _) => show(m, 1),
            };
            for (k, v) in [
                ("cases", c.cases.to_string()),
                ("secondary attack rate among traced contacts", sar),
                ("offspring", off),
                ("serial interval", si),
            ] {
                let _ = writeln!(s, "  {k:<50} {v}");
            }
        }
    }
}
