//! Figures of the network's shape: the degree and excess degree distributions, contacts'
//! contacts, the friendship paradox, cluster sizes, and who meets whom.

use super::{indexed, ok, Figure, Guide, Mark, Matrix, Series};
use crate::analysis::stats::NetworkStats;
use crate::dataset::Dataset;
use crate::metrics::Stat;
use crate::report::fmt::short;

/// The degree distribution p_k, the excess degree distribution q_k, and the fitted
/// distributions over p_k; `log`: on logarithmic axes (zeros left out), with the power-law tail
/// where it was fitted.
pub fn degree_distribution(s: &NetworkStats, log: bool, caption: &str) -> Figure {
    let (p, q) = (s.degree.p(), s.degree.q());
    let kmax = p.len().saturating_sub(1);
    let fit = |label: &str, f: &crate::metrics::fits::Fit, group: usize| Series {
        label: label.to_string(),
        points: (0..=kmax as u64)
            .filter_map(|k| ok(f.pmf(k)).map(|y| (k as f64, y)))
            .filter(|&(_, y)| !log || y > 0.0)
            .collect(),
        mark: Mark::Dashed,
        group,
    };
    let f = &s.fits;
    let mut series = vec![
        Series {
            label: "p_k: share of people with k contacts".into(),
            points: indexed(&p, log),
            mark: Mark::Points,
            group: 0,
        },
        Series {
            label: "q_k: excess degree at the end of a random exposure".into(),
            points: indexed(&q, log),
            mark: Mark::Points,
            group: 1,
        },
        fit("negative binomial fit", &f.negative_binomial.fit, 2),
        fit("Poisson fit", &f.poisson, 3),
        fit("geometric fit", &f.geometric, 4),
    ];
    if log {
        if let Ok(tail) = &f.power_law {
            // p_k ~ C k^-alpha from x_min, scaled to meet p at x_min.
            let (xmin, alpha) = (tail.x_min as usize, tail.alpha);
            if let Some(&p0) = p.get(xmin).filter(|&&v| v > 0.0) {
                series.push(Series {
                    label: format!("power-law tail, alpha {alpha:.2} from k = {xmin}"),
                    points: (xmin..=kmax)
                        .map(|k| (k as f64, p0 * (k as f64 / xmin as f64).powf(-alpha)))
                        .collect(),
                    mark: Mark::Line,
                    group: 5,
                });
            }
        }
    }
    Figure {
        log: (log, log),
        series,
        legend_low: log,
        ..Figure::new(
            if log {
                "degree-distribution-loglog"
            } else {
                "degree-distribution"
            },
            "Contacts per person: p_k and the excess degree q_k",
            "k (contacts of a person; excess: other contacts)",
            "share",
            caption,
        )
    }
}

/// k_nn(k) against the flat line <k^2>/<k> of a network without degree correlations.
pub fn neighbour_degree(s: &NetworkStats, caption: &str) -> Figure {
    let null = match (ok(s.null.mean), ok(s.null.sd)) {
        (Some(m), Some(sd)) => format!("; degree-preserving null {m:.3} ± {sd:.3}"),
        _ => "; null model not run".into(),
    };
    let flat = ok(s.degree.edge_end_mean);
    Figure {
        series: vec![Series {
            label: format!(
                "k_nn(k), observed: r = {} ± {} (jackknife){null}",
                short(s.r, 3),
                short(s.r_se, 3)
            ),
            points: s
                .neighbours
                .knn
                .iter()
                .map(|&(k, v)| (f64::from(k), v))
                .collect(),
            mark: Mark::Points,
            group: 0,
        }],
        guides: flat
            .map(|v| Guide {
                label: format!("<k²>/<k> = {v:.2}: no degree correlation"),
                vertical: false,
                value: v,
                group: 0,
            })
            .into_iter()
            .collect(),
        legend_low: true,
        ..Figure::new(
            "neighbour-degree",
            "Contacts' mean number of contacts by own number",
            "k (own contacts)",
            "k_nn (contacts' mean contacts)",
            caption,
        )
    }
}

/// The three versions of the friendship paradox: mean contacts of a person, of the person at
/// the end of a random exposure, of a person's contacts on average.
pub fn paradox(s: &NetworkStats, caption: &str) -> Figure {
    let bar = |label: &str, v: Stat| (label.to_string(), ok(v).unwrap_or(0.0));
    Figure {
        bars: vec![
            bar("a person <k>", s.degree.mean),
            bar("end of an exposure <k²>/<k>", s.degree.edge_end_mean),
            bar("a person's contacts (mean)", s.neighbours.contact_mean),
        ],
        ..Figure::new("friendship-paradox", format!(
            "Why your contacts have more contacts than you (share of people whose contacts have more: {})",
            ok(s.neighbours.share_more).map_or("undefined".into(), |x| format!("{:.0}%", 100.0 * x))
        ), "", "mean number of contacts", caption)
    }
}

/// Cluster sizes in rank order, on logarithmic axes.
pub fn components(s: &NetworkStats, caption: &str) -> Figure {
    let mut sizes: Vec<u32> = s.components.1.clone();
    sizes.sort_unstable_by(|a, b| b.cmp(a));
    Figure {
        log: (true, true),
        series: vec![Series {
            label: "cluster size".into(),
            points: sizes
                .iter()
                .enumerate()
                .map(|(i, &n)| (i as f64 + 1.0, f64::from(n)))
                .collect(),
            mark: Mark::Points,
            group: 0,
        }],
        ..Figure::new(
            "cluster-sizes",
            format!("Cluster sizes by rank ({} clusters)", sizes.len()),
            "rank (largest first)",
            "people in the cluster",
            caption,
        )
    }
}

/// What a random contact's other contacts look like: the observed share, followed from each
/// person to their contacts, against q_k of the configuration model.
pub fn excess_observed(s: &NetworkStats, caption: &str) -> Figure {
    Figure {
        series: vec![
            Series {
                label: "observed (from each person to their contacts)".into(),
                points: indexed(&s.neighbours.contact_excess, false),
                mark: Mark::Points,
                group: 0,
            },
            Series {
                label: "q_k = (k+1) p_(k+1) / <k>".into(),
                points: indexed(&s.degree.q(), false),
                mark: Mark::Line,
                group: 1,
            },
        ],
        ..Figure::new(
            "excess-degree-observed",
            "Contacts' other contacts: observed against the configuration model's q_k",
            "k (a contact's other contacts)",
            "share",
            caption,
        )
    }
}

/// Who meets whom: contact pairs between the groups of each people attribute (area, age
/// group), as heat maps with the counts in the cells.
pub fn mixing_matrices(s: &NetworkStats, caption: &str) -> Vec<Figure> {
    s.attribute_mixing
        .iter()
        .filter(|(_, m)| !m.groups.is_empty())
        .map(|(field, m)| Figure {
            matrix: Some(Matrix {
                groups: m.groups.clone(),
                values: m
                    .pairs
                    .iter()
                    .map(|row| row.iter().map(|&x| x as f64).collect())
                    .collect(),
            }),
            ..Figure::new(
                format!("mixing-{}", field.replace('_', "-")),
                format!(
                    "Contact pairs by {} (assortativity r = {}; {} pairs with a value missing)",
                    field.replace('_', " "),
                    short(m.r, 3),
                    m.unknown
                ),
                field.replace('_', " "),
                field.replace('_', " "),
                caption,
            )
        })
        .collect()
}

/// Setting by setting: people with contacts in both settings (the diagonal: people with
/// contacts in that setting), a heat map with the counts in the cells. The people off the
/// diagonal carry spread from one setting into another.
pub fn settings_overlap(d: &Dataset, caption: &str) -> Option<Figure> {
    let n = d.settings.len();
    if n < 2 {
        return None;
    }
    let e = &d.edges;
    let mut seen: Vec<Vec<bool>> = vec![vec![false; n]; d.people()];
    for i in 0..e.len() {
        for &c in e.settings(i) {
            let c = c as usize - 1;
            seen[e.a[i] as usize][c] = true;
            seen[e.b[i] as usize][c] = true;
        }
    }
    let mut values = vec![vec![0.0; n]; n];
    for person in &seen {
        for (x, &sx) in person.iter().enumerate() {
            if !sx {
                continue;
            }
            for (y, &sy) in person.iter().enumerate() {
                if sy {
                    values[x][y] += 1.0;
                }
            }
        }
    }
    Some(Figure {
        matrix: Some(Matrix {
            groups: d.settings.clone(),
            values,
        }),
        ..Figure::new(
            "settings-overlap",
            "People with contacts in both settings (diagonal: in that setting)",
            "setting",
            "setting",
            caption,
        )
    })
}
