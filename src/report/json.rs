//! The JSON contract of `hubwatch summary --json` (documented in the README): the network
//! statistics and the case statistics as JSON members. An undefined statistic is `null` with a
//! `<key>_undefined` member giving the reason.

use serde_json::{json, Map, Value};

use crate::analysis::casedata::CaseStats;
use crate::analysis::casedata::Offspring;
use crate::analysis::stats::{DegreeFits, NetworkStats, MIN_TAIL, TOP};
use crate::dataset::Dataset;
use crate::ids::IdMap;
use crate::metrics::cases::Proportion;
use crate::metrics::{degree, fits, neighbours, Stat};

/// Insert `key: value`, or `key: null` and `key_undefined: reason`, into a JSON object.
pub fn put(obj: &mut serde_json::Map<String, serde_json::Value>, key: &str, v: Stat) {
    match v {
        Ok(x) if x.is_finite() => {
            obj.insert(key.to_string(), serde_json::json!(x));
        }
        Ok(_) => {
            obj.insert(key.to_string(), serde_json::Value::Null);
            obj.insert(format!("{key}_undefined"), "not a finite number".into());
        }
        Err(reason) => {
            obj.insert(key.to_string(), serde_json::Value::Null);
            obj.insert(format!("{key}_undefined"), reason.into());
        }
    }
}

fn pairs_list<T: Into<Value> + Copy>(v: impl Iterator<Item = (u64, T)>) -> Value {
    Value::Array(v.map(|(k, x)| json!([k, x.into()])).collect())
}

/// The statistics as JSON members, merged into the summary object.
pub fn stats_members(st: &NetworkStats, d: &Dataset) -> Map<String, Value> {
    let mut out = Map::new();
    out.insert("degree".into(), degree(&st.degree, &st.degrees, &d.ids));
    excess_and_paradox(st, &mut out);
    structure(st, d, &mut out);
    out.insert("mixing".into(), mixing(st));
    out.insert("fits".into(), fits_json(&st.fits));
    out.insert("cases".into(), cases(&st.cases));
    out
}

/// The `top` people with the most contacts, ties by ID.
fn most_contacts(degrees: &[u32], ids: &IdMap, top: usize) -> Vec<u32> {
    // (The shared order reads a top of 0 as "no limit", as `priority --top 0` does.)
    if top == 0 {
        return Vec::new();
    }
    let keys = (0..degrees.len() as u32)
        .map(|v| (0, u32::MAX - degrees[v as usize], v))
        .collect();
    crate::sort::by_key_then_name(keys, Some(top), |v| ids.name(v))
}

/// The member `degree`: moments, the people with the most contacts, the histogram.
pub fn degree(s: &degree::DegreeStats, degrees: &[u32], ids: &IdMap) -> Value {
    let mut deg = Map::new();
    put(&mut deg, "mean", s.mean);
    put(&mut deg, "mean_sq", s.mean_sq);
    put(&mut deg, "variance", s.variance);
    deg.insert("max".into(), json!(s.max));
    // The people with the most contacts (ties by ID, so the list is stable), picked without
    // ordering everyone (comparing IDs costs a trip to each name).
    let order = most_contacts(degrees, ids, TOP);
    deg.insert(
        "top".into(),
        Value::Array(
            order
                .iter()
                .take(TOP)
                .map(|&v| json!([ids.name(v), degrees[v as usize]]))
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
    Value::Object(deg)
}

fn excess_and_paradox(st: &NetworkStats, out: &mut Map<String, Value>) {
    degree_members(&st.degree, &st.neighbours, out);
    let mut r = assortativity(st.r, st.r_se);
    put(&mut r, "null_mean", st.null.mean);
    put(&mut r, "null_sd", st.null.sd);
    r.insert("null_replicates".into(), json!(st.null.replicates));
    r.insert("null_swaps_per_edge".into(), json!(st.null.swaps_per_edge));
    out.insert("assortativity".into(), Value::Object(r));
}

/// The members `excess`, `paradox` and `knn`: what the degrees and the neighbours' degrees give.
pub fn degree_members(
    s: &degree::DegreeStats,
    nb: &neighbours::Neighbours,
    out: &mut Map<String, Value>,
) {
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
            nb.contact_excess
                .iter()
                .enumerate()
                .map(|(k, &x)| (k as u64, x)),
        ),
    );
    out.insert("excess".into(), Value::Object(ex));

    let mut px = Map::new();
    put(&mut px, "edge_end_mean", nb.edge_end_mean);
    put(&mut px, "contact_mean", nb.contact_mean);
    put(&mut px, "share_more", nb.share_more);
    put(&mut px, "share_fewer", nb.share_fewer);
    put(&mut px, "share_equal", nb.share_equal);
    px.insert("people_with_contacts".into(), json!(nb.n_active));
    put(&mut px, "mean_degree_with_contacts", nb.mean_active);
    out.insert("paradox".into(), Value::Object(px));
    out.insert(
        "knn".into(),
        pairs_list(nb.knn.iter().map(|&(k, v)| (u64::from(k), v))),
    );
}

/// The member `assortativity` without the null model: r and its jackknife SE.
pub fn assortativity(r_value: Stat, se: Stat) -> Map<String, Value> {
    let mut r = Map::new();
    put(&mut r, "r", r_value);
    put(&mut r, "se_jackknife", se);
    r.insert(
        "se_method".into(),
        "jackknife over contacts, degrees kept fixed (variant A), Newman's form".into(),
    );
    r
}

fn structure(st: &NetworkStats, d: &Dataset, out: &mut Map<String, Value>) {
    let mut size_hist: std::collections::BTreeMap<u32, u64> = std::collections::BTreeMap::new();
    for &sz in &st.components.1 {
        *size_hist.entry(sz).or_insert(0) += 1;
    }
    out.insert(
        "components_sizes".into(),
        pairs_list(size_hist.iter().rev().map(|(&k, &c)| (u64::from(k), c))),
    );
    let mut cl = Map::new();
    put(&mut cl, "transitivity", st.clustering.transitivity);
    put(&mut cl, "mean_local", st.clustering.mean_local);
    cl.insert(
            "note".into(),
            "household cliques raise clustering; the configuration-model indicators assume a tree-like network".into(),
        );
    out.insert("clustering".into(), Value::Object(cl));

    let max_core = st.cores.iter().copied().max().unwrap_or(0);
    let mut core_hist = vec![0u64; max_core as usize + 1];
    for &c in &st.cores {
        core_hist[c as usize] += 1;
    }
    out.insert(
            "cores".into(),
            json!({"max": max_core, "histogram": pairs_list(core_hist.iter().enumerate().filter(|(_, &c)| c > 0).map(|(k, &c)| (k as u64, c)))}),
        );
    out.insert(
            "bridges".into(),
            json!({"count": st.bridges.len(), "people": st.bridges.iter().map(|&v| d.ids.name(v)).collect::<Vec<_>>()}),
        );
}

fn mixing(st: &NetworkStats) -> Value {
    let mut mix = Map::new();
    for (name, m) in &st.attribute_mixing {
        let mut o = Map::new();
        put(&mut o, "r", m.r);
        o.insert("groups".into(), json!(m.groups));
        o.insert("pairs".into(), json!(m.pairs));
        o.insert("unknown".into(), json!(m.unknown));
        mix.insert(name.clone(), Value::Object(o));
    }
    let mut by_setting = Map::new();
    for (label, r) in &st.r_by_setting {
        let mut o = Map::new();
        put(&mut o, "r", *r);
        by_setting.insert(label.clone(), Value::Object(o));
    }
    mix.insert("setting".into(), Value::Object(by_setting));
    Value::Object(mix)
}

/// The member `fits`: the degree distribution's fits and which is best.
pub fn fits_json(f: &DegreeFits) -> Value {
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

/// The JSON member `cases` of the summary.
pub fn cases(c: &CaseStats) -> Value {
    let prop = |p: &Proportion| {
        let mut o = Map::new();
        o.insert("secondary".into(), json!(p.x));
        o.insert("at_risk".into(), json!(p.n));
        put(&mut o, "sar", p.p);
        put(&mut o, "wilson_low", p.wilson.map(|w| w.0));
        put(&mut o, "wilson_high", p.wilson.map(|w| w.1));
        put(&mut o, "cp_low", p.clopper_pearson.map(|w| w.0));
        put(&mut o, "cp_high", p.clopper_pearson.map(|w| w.1));
        Value::Object(o)
    };
    let mut out = Map::new();
    out.insert("count".into(), json!(c.cases));
    if let Some(why) = c.missing {
        out.insert("count_undefined".into(), why.into());
    }
    let mut sar = match prop(&c.sar) {
        Value::Object(o) => o,
        _ => Map::new(),
    };
    sar.insert("left_out_lost_to_follow_up".into(), json!(c.lost));
    sar.insert("left_out_immune".into(), json!(c.immune));
    sar.insert("co_primary_pairs".into(), json!(c.co_primary_pairs));
    sar.insert(
            "caution".into(),
            "contacts cluster in households, so this binomial interval is too narrow and the SAR may be biased upward".into(),
        );
    sar.insert(
        "by_setting".into(),
        Value::Object(
            c.sar_by_setting
                .iter()
                .map(|(l, p)| (l.clone(), prop(p)))
                .collect(),
        ),
    );
    out.insert("sar".into(), Value::Object(sar));
    out.insert("links".into(), json!(c.links));
    match &c.offspring {
        Some(o) => {
            out.insert("offspring".into(), offspring(o));
        }
        None => {
            out.insert("offspring".into(), Value::Null);
            out.insert(
                    "offspring_undefined".into(),
                    "no infector -> infectee links in the export (map a yes/no column to the field `transmission`)".into(),
                );
        }
    }
    let si = &c.serial;
    let mut o = Map::new();
    o.insert("pairs".into(), json!(si.n));
    put(&mut o, "mean", si.mean);
    put(&mut o, "sd", si.sd);
    put(&mut o, "share_negative", si.share_negative);
    put(&mut o, "gamma_shape", si.gamma.map(|g| g.0));
    put(&mut o, "gamma_scale", si.gamma.map(|g| g.1));
    put(&mut o, "normal_p_negative", si.normal_p_negative);
    out.insert("serial_interval".into(), Value::Object(o));
    Value::Object(out)
}

/// The offspring distribution of the linked cases: mean, fits and the 80 % shares.
fn offspring(off: &Offspring) -> Value {
    let mut o = Map::new();
    o.insert("cases".into(), json!(off.sample.n()));
    put(&mut o, "mean", off.sample.mean());
    let mut f = Map::new();
    for fit in &off.fits {
        let mut m = Map::new();
        for (name, v) in &fit.params {
            put(&mut m, name, *v);
        }
        put(&mut m, "log_lik", fit.log_lik);
        put(&mut m, "aic", fit.aic);
        f.insert(fit.model.into(), Value::Object(m));
    }
    o.insert("fits".into(), Value::Object(f));
    put(&mut o, "share80_empirical", off.share80_empirical);
    put(&mut o, "share80_continuous", off.share80_continuous);
    put(&mut o, "share80_discrete", off.share80_discrete);
    Value::Object(o)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Picking the top people gives the head of the whole sorted order, ties by ID included.
    #[test]
    fn most_contacts_is_the_head_of_the_full_order() {
        let mut ids = IdMap::new(true);
        let mut degrees = Vec::new();
        let mut x: u64 = 12345;
        for i in 0..2000 {
            // Few distinct degrees, so that ties at the bar are many.
            x = x
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            degrees.push(((x >> 33) % 7) as u32);
            ids.intern(&format!("Q{:05}", (i * 7919) % 2003));
        }
        let mut all: Vec<u32> = (0..degrees.len() as u32).collect();
        all.sort_by(|&a, &b| {
            degrees[b as usize]
                .cmp(&degrees[a as usize])
                .then_with(|| ids.name(a).cmp(ids.name(b)))
        });
        for top in [0, 1, 5, 20, 400, 1999, 2000, 5000] {
            let want: Vec<u32> = all.iter().copied().take(top).collect();
            assert_eq!(most_contacts(&degrees, &ids, top), want, "top {top}");
        }
        assert!(most_contacts(&[], &ids, 20).is_empty());
    }
}
