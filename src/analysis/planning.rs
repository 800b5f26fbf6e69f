//! The outlook of one export: configuration-model indicators at a transmissibility T (given by
//! the user or estimated from the secondary attack rate, with its Wilson band), their curve over
//! T, and reach-out curves on the actual graph for each strategy, with the configuration-model
//! prediction for the same removal beside them. Plain data for the `outlook` command, its
//! exports and the dashboard; nothing here draws.

use crate::dataset::Dataset;
use crate::metrics::outlook::{self, Outlook};
use crate::metrics::reach::{self, MeanCurve};
use crate::metrics::Stat;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

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
    transmissibility_from(given, &crate::analysis::casedata::case_stats(d))
}

/// Same, from case statistics already computed.
pub fn transmissibility_from(
    given: Option<f64>,
    cs: &crate::analysis::casedata::CaseStats,
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

/// One strategy's reach curve beside the configuration model's (None: the priority strategy
/// without a priority order).
fn strategy_curve(
    d: &Dataset,
    degrees: &[u32],
    s: Strategy,
    priority_order: Option<&[u32]>,
    opts: &PlanOptions,
    id_rank: &[u32],
) -> Option<StrategyCurve> {
    if s.averaged() {
        let (curves, models, orders) = repeated(d, degrees, s, opts);
        let len = orders.iter().map(|o| o.len()).min().unwrap_or(0);
        let at = model_points(len);
        let refs: Vec<&[u32]> = orders.iter().map(|o| o.as_slice()).collect();
        return Some(StrategyCurve {
            strategy: s,
            curve: reach::average(&curves),
            model_largest: spread(
                reach::configuration_model_largest_mean(degrees, &refs, &at),
                &at,
                len,
            ),
            model_kappa: mean_stats(&models),
            order: Vec::new(),
            repeats: curves.len(),
        });
    }
    let order = match s {
        Strategy::Degree => reach::degree_order_by(&d.graph, id_rank),
        _ => priority_order?.to_vec(),
    };
    let order = truncate(order, opts.max_reach);
    let at = model_points(order.len());
    Some(StrategyCurve {
        strategy: s,
        model_largest: spread(
            reach::configuration_model_largest(degrees, &order, &at),
            &at,
            order.len(),
        ),
        curve: reach::reach_curve(&d.graph, &order).into(),
        model_kappa: reach::configuration_model_kappa(degrees, &order),
        order,
        repeats: 1,
    })
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
    let degrees = d.graph.degrees();
    let p = crate::metrics::degree::degree_stats(degrees).p();
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
    let strategies = opts
        .strategies
        .iter()
        .filter_map(|&s| strategy_curve(d, degrees, s, priority_order.as_deref(), opts, id_rank))
        .collect();
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
