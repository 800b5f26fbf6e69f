//! The outlook of one export: configuration-model indicators at a transmissibility T (given by
//! the user or estimated from the secondary attack rate, with its Wilson band), their curve over
//! T, and reach-out curves on the actual graph for each strategy, with the configuration-model
//! prediction for the same removal beside them. Plain data for the `outlook` command, its
//! exports and the dashboard; nothing here draws.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use serde_json::{json, Map, Value};

use crate::export::{Cell, ExportTable};
use crate::ingest::Dataset;
use crate::metrics::outlook::{self, Outlook};
use crate::metrics::reach::{self, MeanCurve};
use crate::metrics::{put, Stat};

/// Said next to every figure of the outlook.
pub const MODEL_CAUTION: &str = "Model-based indicators: a configuration-model network with the observed degree distribution, every contact transmitting with the same probability T. The traced network is incomplete, clustered and degree-correlated; read these as planning aids, not forecasts.";

/// The same, short enough for a dashboard pane.
pub const MODEL_CAUTION_SHORT: &str = "Model-based (configuration model, same T for every contact); the traced network is clustered and incomplete: a planning aid, not a forecast.";

/// Who is reached first.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Strategy {
    /// Highest number of contacts first (static ranking, ties by smaller ID).
    Degree,
    /// The priority list's order (score, preset and filters as for `priority`).
    Priority,
    /// Uniformly random order, averaged over seeded repeats.
    Random,
    /// A random contact of a random person, repeated (averaged over seeded repeats).
    Acquaintance,
}

impl Strategy {
    /// Every strategy, in report order.
    pub const ALL: [Strategy; 4] = [
        Strategy::Degree,
        Strategy::Priority,
        Strategy::Random,
        Strategy::Acquaintance,
    ];

    /// Stable name (JSON key value, export column).
    pub fn name(self) -> &'static str {
        match self {
            Strategy::Degree => "degree",
            Strategy::Priority => "priority",
            Strategy::Random => "random",
            Strategy::Acquaintance => "acquaintance",
        }
    }

    /// The rule, stated with the results.
    pub fn rule(self) -> &'static str {
        match self {
            Strategy::Degree => "most contacts first; static ranking on the original degrees, ties by smaller ID",
            Strategy::Priority => "the priority list's order (its preset, window and filters)",
            Strategy::Random => "uniformly random order; mean over seeded repeats",
            Strategy::Acquaintance => "a random contact of a random person, repeated (people without contacts are never picked); mean over seeded repeats",
        }
    }

    fn averaged(self) -> bool {
        matches!(self, Strategy::Random | Strategy::Acquaintance)
    }
}

/// Where T came from.
#[derive(Debug, Clone, PartialEq)]
pub enum TSource {
    /// Given with --transmissibility.
    User,
    /// The secondary attack rate among traced contacts: x of n, Wilson 95% band.
    SecondaryAttackRate {
        /// Secondary cases.
        x: u64,
        /// Contacts at risk.
        n: u64,
        /// Wilson band.
        band: (f64, f64),
    },
    /// Neither: R and S need a T.
    Unknown(&'static str),
}

/// Options of the outlook.
#[derive(Debug, Clone)]
pub struct PlanOptions {
    /// T set by the user.
    pub transmissibility: Option<f64>,
    /// Strategies to follow (report order).
    pub strategies: Vec<Strategy>,
    /// Follow the curves up to this many people reached (0 = everyone).
    pub max_reach: usize,
    /// Seeded repeats of the random strategies.
    pub repeats: usize,
    /// Seed of the first repeat (repeat i uses seed + i).
    pub seed: u64,
    /// Points of the curve over T in [0, 1].
    pub curve_points: usize,
}

impl Default for PlanOptions {
    fn default() -> Self {
        PlanOptions {
            transmissibility: None,
            strategies: Strategy::ALL.to_vec(),
            max_reach: 1000,
            repeats: 10,
            seed: 1,
            curve_points: 101,
        }
    }
}

/// One strategy's curve.
#[derive(Debug, Clone)]
pub struct StrategyCurve {
    /// The strategy.
    pub strategy: Strategy,
    /// Real graph: mean largest cluster and residual mean excess degree after n reached.
    pub curve: MeanCurve,
    /// Configuration-model prediction of the residual mean excess degree for the same removal.
    pub model_kappa: Vec<Stat>,
    /// Configuration-model prediction of the largest cluster (people) for the same removal
    /// (solved at every n up to 2,000, at 2,001 spread points beyond; undefined between).
    pub model_largest: Vec<Stat>,
    /// Who is reached first (node indices, the deterministic strategies only; at most the curve).
    pub order: Vec<u32>,
    /// Repeats averaged (1 for the deterministic strategies).
    pub repeats: usize,
}

impl StrategyCurve {
    /// People the curve covers (its last n).
    pub fn len(&self) -> usize {
        self.curve.largest.len().saturating_sub(1)
    }

    /// True when the curve covers nobody reached.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Residual R after n reached at transmissibility t.
    pub fn r(&self, t: f64, n: usize) -> Stat {
        self.curve.kappa[n].map(|k| t * k)
    }

    /// Smallest n with residual R < 1 (no contacts left counts as below 1), if within the curve.
    pub fn below_one(&self, t: f64) -> Option<usize> {
        (0..self.curve.kappa.len()).find(|&n| match self.curve.kappa[n] {
            Ok(k) => t * k < 1.0,
            Err(_) => true,
        })
    }

    /// Same for the configuration-model prediction.
    pub fn model_below_one(&self, t: f64) -> Option<usize> {
        (0..self.model_kappa.len()).find(|&n| match self.model_kappa[n] {
            Ok(k) => t * k < 1.0,
            Err(_) => true,
        })
    }
}

/// The whole outlook.
#[derive(Debug, Clone)]
pub struct Plan {
    /// T used (None when neither given nor estimable).
    pub t: Option<f64>,
    /// Where T came from.
    pub source: TSource,
    /// Indicators at T (or without T: threshold and kappa only, other fields undefined).
    pub at_t: Outlook,
    /// Indicators at the two ends of the Wilson band of T, when T was estimated.
    pub band: Option<(Outlook, Outlook)>,
    /// Indicators over a grid of T in [0, 1].
    pub curve: Vec<Outlook>,
    /// Degree distribution p_k used.
    pub p: Vec<f64>,
    /// One curve per strategy.
    pub strategies: Vec<StrategyCurve>,
    /// People in the network.
    pub people: usize,
    /// The requested reach limit (0 = everyone).
    pub max_reach: usize,
}

fn truncate(order: Vec<u32>, max_reach: usize) -> Vec<u32> {
    let mut order = order;
    if max_reach > 0 {
        order.truncate(max_reach);
    }
    order
}

/// Seeded repeats of a random strategy, on up to two threads.
fn repeated(
    d: &Dataset,
    degrees: &[u32],
    strategy: Strategy,
    opts: &PlanOptions,
) -> (Vec<reach::ReachCurve>, Vec<Vec<Stat>>, Vec<Vec<u32>>) {
    let repeats = opts.repeats.max(1);
    let one = |i: usize| {
        let mut rng = ChaCha8Rng::seed_from_u64(opts.seed.wrapping_add(i as u64));
        let order = match strategy {
            Strategy::Acquaintance => reach::acquaintance_order(&d.graph, &mut rng),
            _ => reach::random_order(d.people(), &mut rng),
        };
        let order = truncate(order, opts.max_reach);
        (
            reach::reach_curve(&d.graph, &order),
            reach::configuration_model_kappa(degrees, &order),
            order,
        )
    };
    let threads = std::thread::available_parallelism()
        .map(|n| n.get())
        .unwrap_or(1)
        .min(repeats);
    type Repeat = (reach::ReachCurve, Vec<Stat>, Vec<u32>);
    let mut results: Vec<(usize, Repeat)> = std::thread::scope(|s| {
        let handles: Vec<_> = (0..threads)
            .map(|w| {
                let one = &one;
                s.spawn(move || {
                    (w..repeats)
                        .step_by(threads)
                        .map(|i| (i, one(i)))
                        .collect::<Vec<_>>()
                })
            })
            .collect();
        handles
            .into_iter()
            .flat_map(|h| h.join().expect("repeat thread"))
            .collect()
    });
    results.sort_by_key(|r| r.0);
    let mut curves = Vec::with_capacity(results.len());
    let mut models = Vec::with_capacity(results.len());
    let mut orders = Vec::with_capacity(results.len());
    for (_, (c, m, o)) in results {
        curves.push(c);
        models.push(m);
        orders.push(o);
    }
    (curves, models, orders)
}

/// Where the model's largest cluster is solved: every n up to 2,000 people, else 2,001 points
/// spread evenly and the text report's rows (one equation each).
fn model_points(len: usize) -> Vec<usize> {
    if len <= 2000 {
        (0..=len).collect()
    } else {
        // Plus the rows the text report shows.
        let mut v: Vec<usize> = (0..=2000).map(|i| i * len / 2000).collect();
        v.extend(checkpoints(len));
        v.sort_unstable();
        v.dedup();
        v
    }
}

/// Values at `at` placed on the full 0..=len axis (undefined elsewhere).
fn spread(values: Vec<Stat>, at: &[usize], len: usize) -> Vec<Stat> {
    let mut out =
        vec![Err("not solved at this n (every n up to 2,000; 2,001 points beyond)"); len + 1];
    for (&n, v) in at.iter().zip(values) {
        out[n] = v;
    }
    out
}

/// Mean of the prediction curves (same length), undefined where any repeat is.
fn mean_stats(curves: &[Vec<Stat>]) -> Vec<Stat> {
    let len = curves.iter().map(|c| c.len()).min().unwrap_or(0);
    (0..len)
        .map(|i| {
            let mut sum = 0.0;
            for c in curves {
                sum += c[i]?;
            }
            Ok(sum / curves.len() as f64)
        })
        .collect()
}

/// T from the options or the export's secondary attack rate.
pub fn transmissibility(d: &Dataset, given: Option<f64>) -> (Option<f64>, TSource) {
    transmissibility_from(given, &crate::metrics::casedata::case_stats(d))
}

/// Same, from case statistics already computed.
pub fn transmissibility_from(
    given: Option<f64>,
    cs: &crate::metrics::casedata::CaseStats,
) -> (Option<f64>, TSource) {
    if let Some(t) = given {
        return (Some(t), TSource::User);
    }
    match (cs.sar.p, cs.sar.wilson) {
        (Ok(p), Ok(band)) if cs.sar.n > 0 => (
            Some(p),
            TSource::SecondaryAttackRate {
                x: cs.sar.x,
                n: cs.sar.n,
                band,
            },
        ),
        _ => (
            None,
            TSource::Unknown(cs.missing.unwrap_or(
                "no secondary attack rate in this export (no traced contacts of cases)",
            )),
        ),
    }
}

/// Compute the outlook. `priority_order` is the ranked list's node order (needed only for the
/// priority strategy; without it that strategy is skipped).
pub fn plan(d: &Dataset, priority_order: Option<Vec<u32>>, opts: &PlanOptions) -> Plan {
    let (t, source) = transmissibility(d, opts.transmissibility);
    plan_with(
        d,
        priority_order,
        opts,
        &reach::id_ranks(&d.ids),
        (t, source),
    )
}

/// Same, with each person's position in ID order (see [`reach::id_ranks`]) and T with its
/// source (see [`transmissibility_from`]) already known.
pub fn plan_with(
    d: &Dataset,
    priority_order: Option<Vec<u32>>,
    opts: &PlanOptions,
    id_rank: &[u32],
    (t, source): (Option<f64>, TSource),
) -> Plan {
    let degrees = crate::graph::degrees(&d.graph);
    let p = crate::metrics::degree::degree_stats(&degrees).p();
    let at_t = match t {
        Some(t) => outlook::indicators(&p, t),
        None => {
            // Keep the T-free figures (mean excess degree, threshold); the rest needs T.
            let why = "needs a transmissibility T";
            Outlook {
                r0: Err(why),
                u: Err(why),
                final_size: Err(why),
                takeoff_probability: Err(why),
                mean_outbreak_size: Err(why),
                ..outlook::indicators(&p, 0.0)
            }
        }
    };
    let band = match &source {
        TSource::SecondaryAttackRate { band, .. } => Some((
            outlook::indicators(&p, band.0),
            outlook::indicators(&p, band.1),
        )),
        _ => None,
    };
    let curve = outlook::curve(&p, opts.curve_points);
    let mut strategies = Vec::new();
    for &s in &opts.strategies {
        let sc = if s.averaged() {
            let (curves, models, orders) = repeated(d, &degrees, s, opts);
            let len = orders.iter().map(|o| o.len()).min().unwrap_or(0);
            let at = model_points(len);
            let refs: Vec<&[u32]> = orders.iter().map(|o| o.as_slice()).collect();
            StrategyCurve {
                strategy: s,
                curve: reach::average(&curves),
                model_largest: spread(
                    reach::configuration_model_largest_mean(&degrees, &refs, &at),
                    &at,
                    len,
                ),
                model_kappa: mean_stats(&models),
                order: Vec::new(),
                repeats: curves.len(),
            }
        } else {
            let order = match s {
                Strategy::Degree => reach::degree_order_by(&d.graph, id_rank),
                _ => match &priority_order {
                    Some(o) => o.clone(),
                    None => continue,
                },
            };
            let order = truncate(order, opts.max_reach);
            let at = model_points(order.len());
            StrategyCurve {
                strategy: s,
                model_largest: spread(
                    reach::configuration_model_largest(&degrees, &order, &at),
                    &at,
                    order.len(),
                ),
                curve: reach::reach_curve(&d.graph, &order).into(),
                model_kappa: reach::configuration_model_kappa(&degrees, &order),
                order,
                repeats: 1,
            }
        };
        strategies.push(sc);
    }
    Plan {
        t,
        source,
        at_t,
        band,
        curve,
        p,
        strategies,
        people: d.people(),
        max_reach: opts.max_reach,
    }
}

fn stat(v: Stat) -> Value {
    match v {
        Ok(x) if x.is_finite() => json!(x),
        _ => Value::Null,
    }
}

impl Plan {
    /// Describe where T came from, in words.
    pub fn assumption(&self) -> String {
        match (&self.source, self.t) {
            (TSource::User, Some(t)) => format!("T = {t} set by the user"),
            (TSource::SecondaryAttackRate { x, n, band }, Some(t)) => format!(
                "T = {t:.4} estimated as the secondary attack rate among traced contacts ({x} of {n}; Wilson 95% band {:.4} to {:.4})",
                band.0, band.1
            ),
            (TSource::Unknown(why), _) => format!("T unknown: {why}; give --transmissibility"),
            _ => "T unknown".to_string(),
        }
    }

    /// The JSON object (keys documented in the README).
    pub fn to_json(&self, ids: &crate::ids::IdMap) -> Value {
        let mut o = Map::new();
        o.insert("caution".into(), crate::CAUTION.into());
        o.insert("model_caution".into(), MODEL_CAUTION.into());
        o.insert("transmissibility".into(), json!(self.t));
        o.insert(
            "transmissibility_source".into(),
            match &self.source {
                TSource::User => "user",
                TSource::SecondaryAttackRate { .. } => "secondary_attack_rate",
                TSource::Unknown(_) => "unknown",
            }
            .into(),
        );
        o.insert("assumption".into(), self.assumption().into());
        if let TSource::SecondaryAttackRate { x, n, band } = &self.source {
            o.insert(
                "transmissibility_band".into(),
                json!({"low": band.0, "high": band.1, "secondary_cases": x, "contacts_at_risk": n}),
            );
        }
        put(&mut o, "mean_excess_degree", self.at_t.kappa);
        put(&mut o, "threshold", self.at_t.threshold);
        put(&mut o, "r0", self.at_t.r0);
        put(&mut o, "final_size", self.at_t.final_size);
        put(&mut o, "takeoff_probability", self.at_t.takeoff_probability);
        put(&mut o, "mean_outbreak_size", self.at_t.mean_outbreak_size);
        if let Some((lo, hi)) = &self.band {
            o.insert(
                "band".into(),
                json!({
                    "r0": [stat(lo.r0), stat(hi.r0)],
                    "final_size": [stat(lo.final_size), stat(hi.final_size)],
                }),
            );
        }
        o.insert(
            "takeoff_by_degree".into(),
            Value::Array(
                (1..self.p.len() as u32)
                    .filter(|&k| self.p[k as usize] > 0.0)
                    .map(|k| json!({"degree": k, "probability": stat(outlook::takeoff_by_degree(&self.at_t, k))}))
                    .collect(),
            ),
        );
        o.insert(
            "curve".into(),
            Value::Array(
                self.curve
                    .iter()
                    .map(|c| json!({"t": c.t, "r0": stat(c.r0), "final_size": stat(c.final_size), "mean_outbreak_size": stat(c.mean_outbreak_size)}))
                    .collect(),
            ),
        );
        o.insert("people".into(), json!(self.people));
        o.insert("max_reach".into(), json!(self.max_reach));
        let t = self.t;
        let strategies: Vec<Value> = self
            .strategies
            .iter()
            .map(|s| {
                let points: Vec<Value> = (0..=s.len())
                    .map(|n| {
                        json!({
                            "reached": n,
                            "mean_excess": stat(s.curve.kappa[n]),
                            "threshold": stat(s.curve.kappa[n].and_then(|k| if k > 0.0 { Ok(1.0 / k) } else { Err("no epidemic possible") })),
                            "r": t.map(|t| stat(s.r(t, n))).unwrap_or(Value::Null),
                            "largest_cluster": s.curve.largest[n],
                            "model_mean_excess": stat(s.model_kappa[n]),
                            "model_largest_cluster": stat(s.model_largest[n]),
                        })
                    })
                    .collect();
                let below = t.and_then(|t| s.below_one(t));
                let mut so = Map::new();
                so.insert("strategy".into(), s.strategy.name().into());
                so.insert("rule".into(), s.strategy.rule().into());
                so.insert("repeats".into(), json!(s.repeats));
                so.insert("reach_for_r_below_1".into(), json!(below));
                so.insert(
                    "model_reach_for_r_below_1".into(),
                    json!(t.and_then(|t| s.model_below_one(t))),
                );
                if !s.order.is_empty() {
                    let upto = below.unwrap_or(s.len()).min(s.order.len()).min(100);
                    so.insert(
                        "first_reached".into(),
                        s.order[..upto].iter().map(|&v| ids.name(v)).collect(),
                    );
                }
                so.insert("points".into(), Value::Array(points));
                Value::Object(so)
            })
            .collect();
        o.insert("strategies".into(), Value::Array(strategies));
        Value::Object(o)
    }

    /// The text report.
    pub fn text(&self, ids: &crate::ids::IdMap) -> String {
        use std::fmt::Write;
        let f = |v: Stat, digits: usize| match v {
            Ok(x) if x.is_finite() => format!("{x:.digits$}"),
            Ok(_) => "-".to_string(),
            Err(why) => format!("- ({why})"),
        };
        let mut s = String::new();
        let _ = writeln!(s, "{}", crate::CAUTION);
        let _ = writeln!(s, "{MODEL_CAUTION}");
        let _ = writeln!(s);
        let _ = writeln!(s, "Assumption: {}", self.assumption());
        let _ = writeln!(
            s,
            "Mean excess degree {}; threshold T_c {}",
            f(self.at_t.kappa, 4),
            f(self.at_t.threshold, 4)
        );
        if self.t.is_some() {
            let _ = writeln!(s, "R0 = T x mean excess degree: {}", f(self.at_t.r0, 3));
            let _ = writeln!(
                s,
                "Expected final size (share of people): {}",
                f(self.at_t.final_size, 4)
            );
            let _ = writeln!(
                s,
                "Take-off probability from a random index person: {}",
                f(self.at_t.takeoff_probability, 4)
            );
            let _ = writeln!(
                s,
                "Mean outbreak size below threshold: {}",
                f(self.at_t.mean_outbreak_size, 2)
            );
            if let Some((lo, hi)) = &self.band {
                let _ = writeln!(
                    s,
                    "Over the band of T: R0 {} to {}; final size {} to {}",
                    f(lo.r0, 3),
                    f(hi.r0, 3),
                    f(lo.final_size, 4),
                    f(hi.final_size, 4)
                );
            }
        }
        let _ = writeln!(s);
        let limit = if self.max_reach == 0 {
            "everyone".to_string()
        } else {
            format!("the first {}", self.max_reach)
        };
        let _ = writeln!(
            s,
            "Reaching people (they no longer pass it on), followed for {limit}:"
        );
        for sc in &self.strategies {
            let _ = writeln!(s);
            let _ = writeln!(s, "{}: {}", sc.strategy.name(), sc.strategy.rule());
            match self.t {
                Some(t) => {
                    let model = match sc.model_below_one(t) {
                        Some(n) => format!("{n}"),
                        None => "not within the curve".to_string(),
                    };
                    match sc.below_one(t) {
                        Some(n) => {
                            let _ = writeln!(
                                s,
                                "  reach {n} people to bring R below 1 (configuration model says {model})"
                            );
                        }
                        None => {
                            let _ = writeln!(
                                s,
                                "  R stays at or above 1 within {limit} reached ({} people); configuration model says {model}",
                                sc.len()
                            );
                        }
                    }
                    if !sc.order.is_empty() {
                        let upto = sc.below_one(t).unwrap_or(sc.len()).min(10);
                        if upto > 0 {
                            let names: Vec<&str> =
                                sc.order[..upto].iter().map(|&v| ids.name(v)).collect();
                            let _ = writeln!(s, "  first: {}", names.join(", "));
                        }
                    }
                }
                None => {
                    let _ = writeln!(s, "  (R needs T; mean excess degree shown)");
                }
            }
            let _ = writeln!(
                s,
                "  {:>9}  {:>11}  {:>8}  {:>15}  {:>12}  {:>13}",
                "reached", "mean excess", "R", "largest cluster", "model excess", "model largest"
            );
            for n in checkpoints(sc.len()) {
                let _ = writeln!(
                    s,
                    "  {:>9}  {:>11}  {:>8}  {:>15}  {:>12}  {:>13}",
                    n,
                    f(sc.curve.kappa[n], 3),
                    self.t
                        .map(|t| f(sc.r(t, n), 3))
                        .unwrap_or_else(|| "-".into()),
                    format!("{:.1}", sc.curve.largest[n]),
                    f(sc.model_kappa[n], 3),
                    sc.model_largest[n]
                        .map(|x| format!("{x:.1}"))
                        .unwrap_or_else(|_| "-".into())
                );
            }
        }
        s
    }

    /// The reach curves as one table (for CSV/JSON/Parquet/xlsx export).
    pub fn reach_table(&self) -> ExportTable {
        let columns = names(&[
            "strategy",
            "reached",
            "mean_excess",
            "r",
            "largest_cluster",
            "model_mean_excess",
            "model_largest_cluster",
        ]);
        let mut rows = Vec::new();
        for sc in &self.strategies {
            for n in 0..=sc.len() {
                rows.push(vec![
                    Cell::Text(sc.strategy.name().into()),
                    Cell::Int(n as i64),
                    num(sc.curve.kappa[n]),
                    self.t.map(|t| num(sc.r(t, n))).unwrap_or(Cell::Empty),
                    Cell::Num(sc.curve.largest[n]),
                    num(sc.model_kappa[n]),
                    num(sc.model_largest[n]),
                ]);
            }
        }
        ExportTable { columns, rows }
    }

    /// The curve over T as a table.
    pub fn transmissibility_table(&self) -> ExportTable {
        let columns = names(&[
            "t",
            "r0",
            "final_size",
            "takeoff_probability",
            "mean_outbreak_size",
        ]);
        let rows = self
            .curve
            .iter()
            .map(|c| {
                vec![
                    Cell::Num(c.t),
                    num(c.r0),
                    num(c.final_size),
                    num(c.takeoff_probability),
                    num(c.mean_outbreak_size),
                ]
            })
            .collect();
        ExportTable { columns, rows }
    }
}

/// A number cell, empty where the figure is undefined.
fn num(v: Stat) -> Cell {
    match v {
        Ok(x) if x.is_finite() => Cell::Num(x),
        _ => Cell::Empty,
    }
}

fn names(columns: &[&str]) -> Vec<String> {
    columns.iter().map(|s| s.to_string()).collect()
}

/// n = 0, 1, 2, 5, 10, 20, 50, ... up to `len`, and `len` itself.
pub fn checkpoints(len: usize) -> Vec<usize> {
    let mut v = vec![0];
    let mut step = 1usize;
    'outer: loop {
        for m in [1, 2, 5] {
            let n = m * step;
            if n >= len {
                break 'outer;
            }
            v.push(n);
        }
        step *= 10;
    }
    if len > 0 {
        v.push(len);
    }
    v
}
