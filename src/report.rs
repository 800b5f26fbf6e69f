//! Text and JSON renderings of the ledger (`hubwatch check`) and the summary, and the
//! quarantine file. Only formatting here: every figure comes from `ingest` or `summary`.

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::io::Write;
use std::path::Path;

use serde::Serialize;

use crate::error::{Error, Result};
use crate::ingest::ledger::{Counts, Ledger, Role};
use crate::ingest::Dataset;
use crate::summary::Summary;

/// How many examples of each reason `check` shows.
pub const EXAMPLES: usize = 3;

/// One example row for a reason.
#[derive(Debug, Serialize)]
pub struct Example {
    /// File path.
    pub file: String,
    /// 1-based line or record.
    pub line: u64,
    /// Column (field problems only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub column: Option<String>,
    /// Value or raw row.
    pub value: String,
    /// What happened.
    pub reason: String,
}

/// The JSON form of `hubwatch check`.
#[derive(Debug, Serialize)]
pub struct CheckReport<'a> {
    /// Files with role, format, mapping and counts.
    pub files: &'a [crate::ingest::ledger::FileReport],
    /// Totals per table.
    pub rows: BTreeMap<&'static str, Counts>,
    /// Quarantined rows per table and reason code.
    pub quarantined: BTreeMap<&'static str, BTreeMap<&'static str, u64>>,
    /// Field problems per table and kind code.
    pub field_problems: BTreeMap<&'static str, BTreeMap<&'static str, u64>>,
    /// The first examples per reason code.
    pub examples: BTreeMap<String, Vec<Example>>,
    /// Whether read = used + merged + quarantined holds for every file.
    pub balanced: bool,
    /// Files of a folder that were not used, with the reason.
    pub ignored: Vec<(String, String)>,
}

/// Build the check report.
pub fn check_report(ledger: &Ledger) -> CheckReport<'_> {
    let mut examples: BTreeMap<String, Vec<Example>> = BTreeMap::new();
    for q in &ledger.quarantined {
        let f = &ledger.files[q.file];
        let v = examples
            .entry(format!("{}.{}", f.role.name(), q.reason.code()))
            .or_default();
        if v.len() < EXAMPLES {
            v.push(Example {
                file: f.path.display().to_string(),
                line: q.line,
                column: None,
                value: q.raw.clone(),
                reason: q.reason.describe(),
            });
        }
    }
    for p in &ledger.problems {
        let f = &ledger.files[p.file];
        let v = examples
            .entry(format!("{}.{}", f.role.name(), p.kind.code()))
            .or_default();
        if v.len() < EXAMPLES {
            v.push(Example {
                file: f.path.display().to_string(),
                line: p.line,
                column: Some(p.column.clone()),
                value: p.value.clone(),
                reason: p.reason.clone(),
            });
        }
    }
    CheckReport {
        files: &ledger.files,
        rows: BTreeMap::from([("people", ledger.people), ("exposures", ledger.exposures)]),
        quarantined: BTreeMap::from([
            ("people", ledger.quarantine_counts(Role::People)),
            ("exposures", ledger.quarantine_counts(Role::Exposures)),
        ]),
        field_problems: BTreeMap::from([
            ("people", ledger.problem_counts(Role::People)),
            ("exposures", ledger.problem_counts(Role::Exposures)),
        ]),
        examples,
        balanced: ledger.files.iter().all(|f| f.counts.balanced()),
        ignored: ledger
            .ignored
            .iter()
            .map(|(p, w)| (p.display().to_string(), w.clone()))
            .collect(),
    }
}

/// Plain-text rendering of the check report.
pub fn check_text(r: &CheckReport, as_of: &str) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "hubwatch check (as of {as_of})\n\nFiles:");
    for f in r.files {
        let map: Vec<String> = f
            .mapping
            .iter()
            .map(|(k, v)| format!("{k}=\"{v}\""))
            .collect();
        let _ = writeln!(
            s,
            "  {:<9} {}\n            {}, {}; columns: {}",
            f.role.name(),
            f.path.display(),
            f.format,
            if f.header {
                "header line"
            } else {
                "no header line"
            },
            map.join(" ")
        );
    }
    for (p, why) in &r.ignored {
        let _ = writeln!(s, "  ignored   {p}\n            {why}");
    }
    let _ = writeln!(
        s,
        "\nRows            read       used     merged  quarantined  field problems"
    );
    for (name, c) in &r.rows {
        let _ = writeln!(
            s,
            "  {name:<9} {:>10} {:>10} {:>10} {:>12} {:>15}",
            c.read, c.used, c.merged, c.quarantined, c.field_problems
        );
    }
    let _ = writeln!(
        s,
        "  read = used + merged + quarantined: {}",
        if r.balanced {
            "holds for every file"
        } else {
            "DOES NOT HOLD (please report this)"
        }
    );
    for (title, table) in [
        ("Quarantined rows", &r.quarantined),
        (
            "Field problems (row kept, value left empty)",
            &r.field_problems,
        ),
    ] {
        let total: u64 = table.values().flat_map(|m| m.values()).sum();
        let _ = writeln!(s, "\n{title}: {total}");
        for (role, m) in table.iter() {
            for (code, n) in m {
                let _ = writeln!(s, "  {role} {code}: {n}");
                for e in r
                    .examples
                    .get(&format!("{role}.{code}"))
                    .into_iter()
                    .flatten()
                {
                    let col = e
                        .column
                        .as_ref()
                        .map(|c| format!(" column \"{c}\""))
                        .unwrap_or_default();
                    let _ = writeln!(
                        s,
                        "    {} line {}{col}: \"{}\" ({})",
                        e.file, e.line, e.value, e.reason
                    );
                }
            }
        }
    }
    s
}

/// A statistic for display: the value with `digits` decimals, or "undefined (reason)".
fn show(v: crate::metrics::Stat, digits: usize) -> String {
    match v {
        Ok(x) => format!("{x:.digits$}"),
        Err(reason) => format!("undefined ({reason})"),
    }
}

/// The best whole-distribution fit with its parameters, in words.
fn fit_line(f: &crate::metrics::network::DegreeFits) -> String {
    let param = |fit: &crate::metrics::fits::Fit, name: &str| {
        fit.params
            .iter()
            .find(|(n, _)| *n == name)
            .map(|(_, v)| show(*v, 2))
            .unwrap_or_default()
    };
    match f.best {
        Some("negative_binomial") => format!(
            "negative binomial, mean {}, dispersion k {} (95% CI {} to {})",
            param(&f.negative_binomial.fit, "R"),
            param(&f.negative_binomial.fit, "k"),
            show(f.negative_binomial.k_low, 2),
            show(f.negative_binomial.k_high, 2)
        ),
        Some("poisson") => format!("Poisson, mean {}", param(&f.poisson, "lambda")),
        Some("geometric") => format!("geometric, p {}", param(&f.geometric, "p")),
        _ => "undefined (no model could be fitted)".to_string(),
    }
}

/// Plain-text rendering of the summary.
pub fn summary_text(
    sum: &Summary,
    net: &crate::metrics::network::NetworkStats,
    d: &Dataset,
) -> String {
    let mut s = String::new();
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
    let nb = &net.neighbours;
    let r = match (net.r, net.r_se) {
        (Ok(r), Ok(se)) => format!("{r:.3} ± {se:.3}"),
        (r, _) => show(r, 3),
    };
    let null = match (net.null.mean, net.null.sd) {
        (Ok(m), Ok(sd)) => format!("{m:.3} ± {sd:.3} ({} randomisations)", net.null.replicates),
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
    let c = &net.cases;
    let _ = writeln!(s, "\nCases");
    match c.missing {
        Some(why) => {
            let _ = writeln!(s, "  {:<50} undefined ({why})", "case statistics");
        }
        None => {
            let sar = match (c.sar.p, c.sar.wilson) {
                (Ok(p), Ok((lo, hi))) => format!(
                    "{:.1}% ({} of {}; 95% CI {:.1}-{:.1}%, Wilson)",
                    100.0 * p,
                    c.sar.x,
                    c.sar.n,
                    100.0 * lo,
                    100.0 * hi
                ),
                (p, _) => show(p, 3),
            };
            let off = match &c.offspring {
                Some(o) => format!(
                    "{} links; mean {} secondary cases per case",
                    c.links,
                    show(o.mean(), 2)
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
    let _ = writeln!(
        s,
        "\nThe configuration-model reading of these figures assumes uncorrelated degrees and a\n\
         tree-like network; compare r with its randomisations and mind the clustering."
    );
    let _ = writeln!(s, "\n{}", crate::CAUTION);
    s
}

/// Quote a CSV field when needed.
fn csv_field(v: &str) -> String {
    if v.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", v.replace('"', "\"\""))
    } else {
        v.to_string()
    }
}

/// Write every quarantined row and field problem to `path` (CSV, created private).
pub fn write_quarantine(path: &Path, ledger: &Ledger) -> Result<()> {
    let mut out = String::from("kind,file,line,column,value,reason\n");
    for q in &ledger.quarantined {
        let f = &ledger.files[q.file];
        let _ = writeln!(
            out,
            "quarantined,{},{},,{},{}",
            csv_field(&f.path.display().to_string()),
            q.line,
            csv_field(&q.raw),
            csv_field(&format!("{}: {}", q.reason.code(), q.reason.describe()))
        );
    }
    for p in &ledger.problems {
        let f = &ledger.files[p.file];
        let _ = writeln!(
            out,
            "field_problem,{},{},{},{},{}",
            csv_field(&f.path.display().to_string()),
            p.line,
            csv_field(&p.column),
            csv_field(&p.value),
            csv_field(&format!("{}: {}", p.kind.code(), p.reason))
        );
    }
    write_private(path, out.as_bytes())
}

/// Write a file atomically (temporary file in the same folder, fsync, rename), mode 0600.
pub fn write_private(path: &Path, bytes: &[u8]) -> Result<()> {
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "out".into());
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let mut opts = std::fs::OpenOptions::new();
    opts.write(true).create_new(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        opts.mode(0o600);
    }
    let result = (|| {
        let mut f = opts.open(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)?;
        if let Ok(d) = std::fs::File::open(dir) {
            let _ = d.sync_all();
        }
        Ok(())
    })();
    result.map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        Error::io(path, e)
    })
}

/// The monitoring window in force, for reports.
pub struct WindowInfo<'a> {
    /// Pathogen preset name.
    pub pathogen: &'a str,
    /// Window length in days.
    pub days: u32,
    /// Where the figure comes from.
    pub source: &'a str,
}

/// The ranked list as text: rank, ID, score, contacts, window end, flags, the main reasons.
pub fn priority_text(
    d: &Dataset,
    ranked: &[crate::priority::Ranked],
    top: usize,
    preset: &str,
    p: &crate::priority::Preset,
    w: &WindowInfo,
) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "hubwatch priority (as of {}; preset \"{preset}\"; monitoring window {} days for {}: {})",
        crate::ingest::dates::iso(d.as_of),
        w.days,
        w.pathogen,
        w.source
    );
    let overdue = ranked.iter().filter(|r| r.overdue).count();
    let _ = writeln!(
        s,
        "{} people on the list; {} overdue (window over, follow-up not completed)\n",
        ranked.len(),
        overdue
    );
    let _ = writeln!(
        s,
        "{:>4}  {:<12} {:>6} {:>8}  {:<22} {:<24} main reasons",
        "rank", "person", "score", "contacts", "window ends (days left)", "flags"
    );
    let shown = if top == 0 {
        ranked.len()
    } else {
        top.min(ranked.len())
    };
    for (i, r) in ranked.iter().take(shown).enumerate() {
        let window = match (r.window_end, r.days_left) {
            (Some(e), Some(left)) => format!("{} ({left})", crate::ingest::dates::iso(e)),
            _ => "no dated exposure".to_string(),
        };
        let mut flags = Vec::new();
        if r.high_degree {
            flags.push("high-degree");
        }
        if r.bridge {
            flags.push("bridge");
        }
        if r.overdue {
            flags.push("OVERDUE");
        }
        let parts_of = r.parts(p);
        let mut parts: Vec<&crate::priority::Part> =
            parts_of.iter().filter(|p| p.contribution > 0.0).collect();
        parts.sort_by(|a, b| b.contribution.total_cmp(&a.contribution));
        let reasons: Vec<String> = parts
            .iter()
            .take(3)
            .map(|p| format!("{} +{:.2}", p.name, p.contribution))
            .collect();
        let _ = writeln!(
            s,
            "{:>4}  {:<12} {:>6.2} {:>8}  {:<22} {:<24} {}",
            i + 1,
            d.ids.name(r.node),
            r.score,
            r.degree,
            window,
            flags.join(", "),
            reasons.join(", ")
        );
    }
    let _ = writeln!(s, "\n{}", crate::CAUTION);
    s
}

/// The ranked list as JSON, with every component of every score.
pub fn priority_json(
    d: &Dataset,
    ranked: &[crate::priority::Ranked],
    top: usize,
    preset: &str,
    p: &crate::priority::Preset,
    w: &WindowInfo,
) -> serde_json::Value {
    let shown = if top == 0 {
        ranked.len()
    } else {
        top.min(ranked.len())
    };
    let iso = |x: Option<i32>| x.map(crate::ingest::dates::iso);
    serde_json::json!({
        "as_of": crate::ingest::dates::iso(d.as_of),
        "caution": crate::CAUTION,
        "preset": preset,
        "weights": p.weights,
        "caps": p.caps,
        "window": {"pathogen": w.pathogen, "days": w.days, "source": w.source},
        "people": ranked.len(),
        "overdue": ranked.iter().filter(|r| r.overdue).count(),
        "list": ranked.iter().take(shown).enumerate().map(|(i, r)| serde_json::json!({
            "rank": i + 1,
            "id": d.ids.name(r.node),
            "score": r.score,
            "degree": r.degree,
            "last_exposure": iso(r.last_exposure),
            "window_end": iso(r.window_end),
            "days_left": r.days_left,
            "overdue": r.overdue,
            "high_degree": r.high_degree,
            "bridge": r.bridge,
            "parts": r.parts(p),
        })).collect::<Vec<_>>(),
    })
}
