//! All network statistics of one dataset, computed once, and their JSON form (the contract of
//! `hubwatch summary --json`, documented in the README).

use serde_json::{json, Map, Value};

use super::{degree, fits, mixing, neighbours, put, structure};
use crate::graph;
use crate::ingest::Dataset;

/// Settings of the statistics that have a cost or a random part.
#[derive(Debug, Clone, Copy)]
pub struct MetricOptions {
    /// Degree-preserving randomisations for the null model (0 = skip).
    pub null_replicates: usize,
    /// Swap attempts per pair in each randomisation.
    pub null_swaps_per_edge: usize,
    /// Seed of the null model's random numbers.
    pub seed: u64,
}

impl Default for MetricOptions {
    fn default() -> Self {
        MetricOptions {
            null_replicates: 5,
            null_swaps_per_edge: 10,
            seed: 1,
        }
    }
}

/// Every statistic of the network.
#[derive(Debug, Clone)]
pub struct NetworkStats {
    /// Degree of each person.
    pub degrees: Vec<u32>,
    /// Degree distribution and moments.
    pub degree: degree::DegreeStats,
    /// Neighbour degrees and the paradox.
    pub neighbours: neighbours::Neighbours,
    /// Degree assortativity r.
    pub r: super::Stat,
    /// Its jackknife standard error (variant A).
    pub r_se: super::Stat,
    /// r under the degree-preserving null model.
    pub null: mixing::NullModel,
    /// Clustering.
    pub clustering: structure::Clustering,
    /// k-core number of each person.
    pub cores: Vec<u32>,
    /// Articulation points.
    pub bridges: Vec<u32>,
    /// Component of each person, and component sizes.
    pub components: (Vec<u32>, Vec<u32>),
    /// Mixing by people's attributes (area, age group) where present.
    pub attribute_mixing: Vec<(String, mixing::AttributeMixing)>,
    /// Degree assortativity within each setting's sub-network.
    pub r_by_setting: Vec<(String, super::Stat)>,
    /// Fits of the degree distribution.
    pub fits: DegreeFits,
    /// Case statistics (attack rate, offspring, serial interval).
    pub cases: super::casedata::CaseStats,
}

/// Fits of the degree distribution and which describes it best.
#[derive(Debug, Clone)]
pub struct DegreeFits {
    /// Poisson.
    pub poisson: fits::Fit,
    /// Geometric.
    pub geometric: fits::Fit,
    /// Negative binomial with the profile interval for k.
    pub negative_binomial: fits::NegBin,
    /// Power-law tail (x_min by KS), or why none was fitted.
    pub power_law: Result<fits::PowerLaw, &'static str>,
    /// Model with the lowest AIC among the three whole-distribution models.
    pub best: Option<&'static str>,
}

/// Smallest tail the power-law fit accepts (short tails give unstable alpha and small KS).
pub const MIN_TAIL: u64 = 10;

fn fit_degrees(histogram: &[u64]) -> DegreeFits {
    let s = fits::Sample::from_counts(histogram.to_vec());
    let poisson = fits::poisson(&s);
    let geometric = fits::geometric(&s);
    let negative_binomial = fits::negative_binomial(&s);
    let best = [&poisson, &geometric, &negative_binomial.fit]
        .into_iter()
        .filter_map(|f| f.aic.ok().map(|a| (f.model, a)))
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .map(|(m, _)| m);
    DegreeFits {
        poisson,
        geometric,
        negative_binomial,
        power_law: fits::power_law(&s, MIN_TAIL),
        best,
    }
}

/// How many people `degree.top` lists.
pub const TOP: usize = 20;

/// People attributes whose mixing is reported.
const MIXING_ATTRIBUTES: [&str; 2] = ["area", "age_group"];

/// Compute every statistic.
pub fn compute(d: &Dataset, opts: &MetricOptions) -> NetworkStats {
    let deg = graph::degrees(&d.graph);
    let (a, b) = (&d.edges.a, &d.edges.b);
    let attribute_mixing = MIXING_ATTRIBUTES
        .iter()
        .filter_map(|name| {
            let col = d.attrs.column(name)?;
            let values = &d.attrs.values[col];
            // Distinct values through a small map (a handful of groups, millions of people).
            let mut index: hashbrown::HashMap<&str, usize> = hashbrown::HashMap::new();
            let mut raw_group: Vec<Option<usize>> = Vec::with_capacity(d.people());
            for i in 0..d.people() {
                raw_group.push(values.get(i).and_then(|v| v.as_deref()).map(|v| {
                    let next = index.len();
                    *index.entry(v).or_insert(next)
                }));
            }
            // Relabel so that groups are in sorted order.
            let mut labels: Vec<(&str, usize)> = index.into_iter().collect();
            labels.sort_unstable();
            let mut rank = vec![0usize; labels.len()];
            for (r, (_, old)) in labels.iter().enumerate() {
                rank[*old] = r;
            }
            let group: Vec<Option<usize>> = raw_group.iter().map(|g| g.map(|g| rank[g])).collect();
            let names = labels.into_iter().map(|(l, _)| l.to_string()).collect();
            Some((
                name.to_string(),
                mixing::attribute_mixing(a, b, &group, names),
            ))
        })
        .collect();
    let r_by_setting = d
        .settings
        .iter()
        .enumerate()
        .map(|(i, label)| {
            let code = (i + 1) as u16;
            let sel: Vec<usize> = (0..d.edges.len())
                .filter(|&e| d.edges.settings(e).contains(&code))
                .collect();
            let sa: Vec<u32> = sel.iter().map(|&e| a[e]).collect();
            let sb: Vec<u32> = sel.iter().map(|&e| b[e]).collect();
            // Degrees within the setting's own sub-network.
            let mut sd = vec![0u32; d.people()];
            for (&x, &y) in sa.iter().zip(&sb) {
                sd[x as usize] += 1;
                sd[y as usize] += 1;
            }
            (label.clone(), mixing::assortativity(&sa, &sb, &sd))
        })
        .collect();
    let degree = degree::degree_stats(&deg);
    NetworkStats {
        cases: super::casedata::case_stats(d),
        fits: fit_degrees(&degree.histogram),
        degree,
        neighbours: neighbours::neighbours(&d.graph, &deg),
        r: mixing::assortativity(a, b, &deg),
        r_se: mixing::jackknife_se(a, b, &deg),
        null: mixing::null_model(
            a,
            b,
            &deg,
            opts.null_replicates,
            opts.null_swaps_per_edge,
            opts.seed,
        ),
        clustering: structure::clustering(&d.graph, &deg),
        cores: structure::core_numbers(&d.graph, &deg),
        bridges: structure::articulation_points(&d.graph),
        components: graph::components(&d.graph),
        attribute_mixing,
        r_by_setting,
        degrees: deg,
    }
}

fn pairs_list<T: Into<Value> + Copy>(v: impl Iterator<Item = (u64, T)>) -> Value {
    Value::Array(v.map(|(k, x)| json!([k, x.into()])).collect())
}

impl NetworkStats {
    /// The statistics as JSON members, merged into the summary object.
    pub fn to_json(&self, d: &Dataset) -> Map<String, Value> {
        let mut out = Map::new();
        let s = &self.degree;
        let mut deg = Map::new();
        put(&mut deg, "mean", s.mean);
        put(&mut deg, "mean_sq", s.mean_sq);
        put(&mut deg, "variance", s.variance);
        deg.insert("max".into(), json!(s.max));
        // The people with the most contacts (ties by ID, so the list is stable).
        let mut order: Vec<u32> = (0..self.degrees.len() as u32).collect();
        order.sort_unstable_by(|&x, &y| {
            self.degrees[y as usize]
                .cmp(&self.degrees[x as usize])
                .then_with(|| d.ids.name(x).cmp(d.ids.name(y)))
        });
        deg.insert(
            "top".into(),
            Value::Array(
                order
                    .iter()
                    .take(TOP)
                    .map(|&v| json!([d.ids.name(v), self.degrees[v as usize]]))
                    .collect(),
            ),
        );
        deg.insert(
            "histogram".into(),
            pairs_list(
                s.histogram
                    .iter()
                    .enumerate()
                    .filter(|(_, &c)| c > 0)
                    .map(|(k, &c)| (k as u64, c)),
            ),
        );
        out.insert("degree".into(), Value::Object(deg));

        let mut ex = Map::new();
        put(&mut ex, "mean", s.mean_excess);
        put(&mut ex, "edge_end_mean", s.edge_end_mean);
        put(&mut ex, "gap", s.gap);
        ex.insert(
            "q".into(),
            pairs_list(s.q().into_iter().enumerate().map(|(k, q)| (k as u64, q))),
        );
        ex.insert(
            "contacts_observed".into(),
            pairs_list(
                self.neighbours
                    .contact_excess
                    .iter()
                    .enumerate()
                    .map(|(k, &x)| (k as u64, x)),
            ),
        );
        out.insert("excess".into(), Value::Object(ex));

        let nb = &self.neighbours;
        let mut px = Map::new();
        put(&mut px, "edge_end_mean", nb.edge_end_mean);
        put(&mut px, "contact_mean", nb.contact_mean);
        put(&mut px, "share_more", nb.share_more);
        put(&mut px, "share_fewer", nb.share_fewer);
        put(&mut px, "share_equal", nb.share_equal);
        px.insert("people_with_contacts".into(), json!(nb.n_active));
        put(&mut px, "mean_degree_with_contacts", nb.mean_active);
        out.insert("paradox".into(), Value::Object(px));

        let mut r = Map::new();
        put(&mut r, "r", self.r);
        put(&mut r, "se_jackknife", self.r_se);
        r.insert(
            "se_method".into(),
            "jackknife over contacts, degrees kept fixed (variant A), Newman's form".into(),
        );
        put(&mut r, "null_mean", self.null.mean);
        put(&mut r, "null_sd", self.null.sd);
        r.insert("null_replicates".into(), json!(self.null.replicates));
        r.insert(
            "null_swaps_per_edge".into(),
            json!(self.null.swaps_per_edge),
        );
        out.insert("assortativity".into(), Value::Object(r));
        out.insert(
            "knn".into(),
            pairs_list(nb.knn.iter().map(|&(k, v)| (u64::from(k), v))),
        );

        let mut size_hist: std::collections::BTreeMap<u32, u64> = std::collections::BTreeMap::new();
        for &sz in &self.components.1 {
            *size_hist.entry(sz).or_insert(0) += 1;
        }
        out.insert(
            "components_sizes".into(),
            pairs_list(size_hist.iter().rev().map(|(&k, &c)| (u64::from(k), c))),
        );
        let mut cl = Map::new();
        put(&mut cl, "transitivity", self.clustering.transitivity);
        put(&mut cl, "mean_local", self.clustering.mean_local);
        cl.insert(
            "note".into(),
            "household cliques raise clustering; the configuration-model indicators assume a tree-like network".into(),
        );
        out.insert("clustering".into(), Value::Object(cl));

        let max_core = self.cores.iter().copied().max().unwrap_or(0);
        let mut core_hist = vec![0u64; max_core as usize + 1];
        for &c in &self.cores {
            core_hist[c as usize] += 1;
        }
        out.insert(
            "cores".into(),
            json!({"max": max_core, "histogram": pairs_list(core_hist.iter().enumerate().filter(|(_, &c)| c > 0).map(|(k, &c)| (k as u64, c)))}),
        );
        out.insert(
            "bridges".into(),
            json!({"count": self.bridges.len(), "people": self.bridges.iter().map(|&v| d.ids.name(v)).collect::<Vec<_>>()}),
        );

        let mut mix = Map::new();
        for (name, m) in &self.attribute_mixing {
            let mut o = Map::new();
            put(&mut o, "r", m.r);
            o.insert("groups".into(), json!(m.groups));
            o.insert("pairs".into(), json!(m.pairs));
            o.insert("unknown".into(), json!(m.unknown));
            mix.insert(name.clone(), Value::Object(o));
        }
        let mut by_setting = Map::new();
        for (label, r) in &self.r_by_setting {
            let mut o = Map::new();
            put(&mut o, "r", *r);
            by_setting.insert(label.clone(), Value::Object(o));
        }
        mix.insert("setting".into(), Value::Object(by_setting));
        out.insert("mixing".into(), Value::Object(mix));
        out.insert("fits".into(), self.fits_json());
        out.insert("cases".into(), self.cases.to_json());
        out
    }

    fn fits_json(&self) -> Value {
        let f = &self.fits;
        let model = |fit: &fits::Fit| {
            let mut o = Map::new();
            for (name, v) in &fit.params {
                put(&mut o, name, *v);
            }
            put(&mut o, "log_lik", fit.log_lik);
            put(&mut o, "aic", fit.aic);
            Value::Object(o)
        };
        let mut out = Map::new();
        out.insert("poisson".into(), model(&f.poisson));
        out.insert("geometric".into(), model(&f.geometric));
        let mut nb = match model(&f.negative_binomial.fit) {
            Value::Object(o) => o,
            _ => Map::new(),
        };
        put(&mut nb, "k_ci_low", f.negative_binomial.k_low);
        put(&mut nb, "k_ci_high", f.negative_binomial.k_high);
        out.insert("negative_binomial".into(), Value::Object(nb));
        match &f.power_law {
            Ok(p) => {
                out.insert(
                    "power_law_tail".into(),
                    json!({"x_min": p.x_min, "n_tail": p.n_tail, "alpha": p.alpha, "se": p.se, "ks": p.ks, "log_lik": p.log_lik, "min_tail": MIN_TAIL}),
                );
            }
            Err(why) => {
                out.insert("power_law_tail".into(), Value::Null);
                out.insert("power_law_tail_undefined".into(), (*why).into());
            }
        }
        match f.best {
            Some(b) => {
                out.insert("best".into(), b.into());
                out.insert(
                    "verdict".into(),
                    format!("{} describes the whole degree distribution best (lowest AIC of Poisson, geometric, negative binomial); the power-law fit covers only the tail and is not compared by AIC", b.replace('_', " ")).into(),
                );
            }
            None => {
                out.insert("best".into(), Value::Null);
                out.insert("best_undefined".into(), "no model could be fitted".into());
            }
        }
        Value::Object(out)
    }
}
