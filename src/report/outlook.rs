//! `hubwatch outlook` as text, JSON and tables: the indicators at T, the curve over T and the
//! reach-out curves of every strategy, with the model caution beside the numbers.

use std::fmt::Write as _;

use serde_json::{json, Map, Value};

use crate::analysis::planning::{checkpoints, Plan, StrategyCurve, TSource, MODEL_CAUTION};
use crate::export::{Cell, ExportTable, Kind};
use crate::metrics::{outlook, Stat};
use crate::report::fmt::{range, Style};
use crate::report::json::put;

/// Where T came from, in words (printed first: every number of the outlook rests on it).
pub fn assumption(plan: &Plan) -> String {
    match (&plan.source, plan.t) {
        (TSource::User, Some(t)) => format!("T = {t} set by the user"),
        (TSource::SecondaryAttackRate { x, n, band }, Some(t)) => format!(
            "T = {t:.4} estimated as the secondary attack rate among traced contacts ({x} of {n}; Wilson 95% band {})",
            range(Ok(band.0), Ok(band.1), 4, Style::Words)
        ),
        (TSource::Unknown(why), _) => format!("T unknown: {why}; give --transmissibility"),
        _ => "T unknown".to_string(),
    }
}

fn stat(v: Stat) -> Value {
    match v {
        Ok(x) if x.is_finite() => json!(x),
        _ => Value::Null,
    }
}

/// The JSON object (keys documented in the README).
pub fn json(plan: &Plan, ids: &crate::ids::IdMap) -> Value {
    let mut o = Map::new();
    o.insert("caution".into(), crate::CAUTION.into());
    o.insert("model_caution".into(), MODEL_CAUTION.into());
    o.insert("transmissibility".into(), json!(plan.t));
    o.insert(
        "transmissibility_source".into(),
        match &plan.source {
            TSource::User => "user",
            TSource::SecondaryAttackRate { .. } => "secondary_attack_rate",
            TSource::Unknown(_) => "unknown",
        }
        .into(),
    );
    o.insert("assumption".into(), assumption(plan).into());
    if let TSource::SecondaryAttackRate { x, n, band } = &plan.source {
        o.insert(
            "transmissibility_band".into(),
            json!({"low": band.0, "high": band.1, "secondary_cases": x, "contacts_at_risk": n}),
        );
    }
    put(&mut o, "mean_excess_degree", plan.at_t.kappa);
    put(&mut o, "threshold", plan.at_t.threshold);
    put(&mut o, "r0", plan.at_t.r0);
    put(&mut o, "final_size", plan.at_t.final_size);
    put(&mut o, "takeoff_probability", plan.at_t.takeoff_probability);
    put(&mut o, "mean_outbreak_size", plan.at_t.mean_outbreak_size);
    if let Some((lo, hi)) = &plan.band {
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
                (1..plan.p.len() as u32)
                    .filter(|&k| plan.p[k as usize] > 0.0)
                    .map(|k| json!({"degree": k, "probability": stat(outlook::takeoff_by_degree(&plan.at_t, k))}))
                    .collect(),
            ),
        );
    o.insert(
            "curve".into(),
            Value::Array(
                plan.curve
                    .iter()
                    .map(|c| json!({"t": c.t, "r0": stat(c.r0), "final_size": stat(c.final_size), "mean_outbreak_size": stat(c.mean_outbreak_size)}))
                    .collect(),
            ),
        );
    o.insert("people".into(), json!(plan.people));
    o.insert("max_reach".into(), json!(plan.max_reach));
    let t = plan.t;
    let strategies: Vec<Value> = plan
        .strategies
        .iter()
        .map(|s| strategy_json(s, t, ids))
        .collect();
    o.insert("strategies".into(), Value::Array(strategies));
    Value::Object(o)
}

/// One strategy's reach curve with its points and the first people reached.
fn strategy_json(s: &StrategyCurve, t: Option<f64>, ids: &crate::ids::IdMap) -> Value {
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
}

/// The text report.
pub fn text(plan: &Plan, ids: &crate::ids::IdMap) -> String {
    let f = crate::report::fmt::dashed;
    let mut s = String::new();
    let _ = writeln!(s, "{}", crate::CAUTION);
    let _ = writeln!(s, "{MODEL_CAUTION}");
    let _ = writeln!(s);
    let _ = writeln!(s, "Assumption: {}", assumption(plan));
    let _ = writeln!(
        s,
        "Mean excess degree {}; threshold T_c {}",
        f(plan.at_t.kappa, 4),
        f(plan.at_t.threshold, 4)
    );
    if plan.t.is_some() {
        let _ = writeln!(s, "R0 = T x mean excess degree: {}", f(plan.at_t.r0, 3));
        let _ = writeln!(
            s,
            "Expected final size (share of people): {}",
            f(plan.at_t.final_size, 4)
        );
        let _ = writeln!(
            s,
            "Take-off probability from a random index person: {}",
            f(plan.at_t.takeoff_probability, 4)
        );
        let _ = writeln!(
            s,
            "Mean outbreak size below threshold: {}",
            f(plan.at_t.mean_outbreak_size, 2)
        );
        if let Some((lo, hi)) = &plan.band {
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
    let limit = if plan.max_reach == 0 {
        "everyone".to_string()
    } else {
        format!("the first {}", plan.max_reach)
    };
    let _ = writeln!(
        s,
        "Reaching people (they no longer pass it on), followed for {limit}:"
    );
    for sc in &plan.strategies {
        strategy_text(&mut s, plan, sc, &limit, ids);
    }
    s
}

/// One strategy in the text report: how many to reach, the first names, the curve at
/// checkpoints.
fn strategy_text(
    s: &mut String,
    plan: &Plan,
    sc: &StrategyCurve,
    limit: &str,
    ids: &crate::ids::IdMap,
) {
    let f = crate::report::fmt::dashed;
    let _ = writeln!(s);
    let _ = writeln!(s, "{}: {}", sc.strategy.name(), sc.strategy.rule());
    match plan.t {
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
                    let names: Vec<&str> = sc.order[..upto].iter().map(|&v| ids.name(v)).collect();
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
            plan.t
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

/// The reach curves as one table (for CSV/JSON/Parquet/xlsx export).
pub fn reach_table(plan: &Plan) -> ExportTable {
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
    for sc in &plan.strategies {
        for n in 0..=sc.len() {
            rows.push(vec![
                Cell::Text(sc.strategy.name().into()),
                Cell::Int(n as i64),
                num(sc.curve.kappa[n]),
                plan.t.map(|t| num(sc.r(t, n))).unwrap_or(Cell::Empty),
                Cell::Num(sc.curve.largest[n]),
                num(sc.model_kappa[n]),
                num(sc.model_largest[n]),
            ]);
        }
    }
    use Kind::*;
    ExportTable {
        columns,
        rows,
        kinds: vec![Text, Int, Num, Num, Num, Num, Num],
    }
}

/// The curve over T as a table.
pub fn t_table(plan: &Plan) -> ExportTable {
    let columns = names(&[
        "t",
        "r0",
        "final_size",
        "takeoff_probability",
        "mean_outbreak_size",
    ]);
    let rows = plan
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
    ExportTable {
        columns,
        rows,
        kinds: vec![Kind::Num; 5],
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
