//! Figures of the outlook: R0 and the final size over T, and residual R as people are
//! reached.

use super::{ok, Figure, Guide, Mark, Series};
use crate::analysis::planning::Plan;
use crate::metrics::Stat;

/// The guides of the figures over T: the threshold, the estimated T and its band, each its
/// own colour group.
fn t_guides(plan: &Plan) -> Vec<Guide> {
    let mut guides = Vec::new();
    if let Some(tc) = ok(plan.at_t.threshold) {
        guides.push(Guide {
            label: format!("threshold T_c = {tc:.3}"),
            vertical: true,
            value: tc,
            group: 0,
        });
    }
    if let Some(t) = plan.t {
        guides.push(Guide {
            label: format!("estimated T = {t:.3}"),
            vertical: true,
            value: t,
            group: 1,
        });
    }
    if let crate::analysis::planning::TSource::SecondaryAttackRate { band, .. } = &plan.source {
        for (end, v) in [("low", band.0), ("high", band.1)] {
            guides.push(Guide {
                label: format!("T band, {end} end (Wilson 95%) = {v:.3}"),
                vertical: true,
                value: v,
                group: 2,
            });
        }
    }
    guides
}

/// R0 over the transmissibility T, with the threshold, the estimated T and its band.
pub fn outlook_t(plan: &Plan, caption: &str) -> Figure {
    let pts = |f: &dyn Fn(&crate::metrics::outlook::Outlook) -> Stat| {
        plan.curve
            .iter()
            .filter_map(|o| ok(f(o)).map(|y| (o.t, y)))
            .collect::<Vec<_>>()
    };
    let mut guides = t_guides(plan);
    guides.push(Guide {
        label: "R0 = 1".into(),
        vertical: false,
        value: 1.0,
        group: 3,
    });
    Figure {
        series: vec![Series {
            label: "R0 = T κ".into(),
            points: pts(&|o| o.r0),
            mark: Mark::Line,
            group: 0,
        }],
        bars: Vec::new(),
        guides,
        ..Figure::new(
            "outlook-transmissibility",
            "R0 over the transmissibility T (configuration model)",
            "T (chance an exposure passes infection on)",
            "R0 (people infected by one case)",
            caption,
        )
    }
}

/// The expected final size over T, with the same guides.
pub fn outlook_final_size(plan: &Plan, caption: &str) -> Figure {
    Figure {
        series: vec![Series {
            label: "expected final size S".into(),
            points: plan
                .curve
                .iter()
                .filter_map(|o| ok(o.final_size).map(|y| (o.t, y)))
                .collect(),
            mark: Mark::Line,
            group: 1,
        }],
        guides: t_guides(plan),
        ..Figure::new(
            "outlook-final-size",
            "Expected final size over the transmissibility T (configuration model)",
            "T (chance an exposure passes infection on)",
            "S (share of people ever infected)",
            caption,
        )
    }
}

/// Residual R against people reached, for every strategy (graph and configuration model).
pub fn outlook_reach(plan: &Plan, caption: &str) -> Option<Figure> {
    let t = plan.t?;
    let mut series = Vec::new();
    for (group, s) in plan.strategies.iter().enumerate() {
        let n = s.len();
        let step = (n / 400).max(1);
        let crossing = |n: Option<usize>| {
            n.map_or("R stays above 1".to_string(), |n| {
                format!("R < 1 from {n} reached")
            })
        };
        series.push(Series {
            label: format!(
                "{} (network): {}",
                s.strategy.name(),
                crossing(s.below_one(t))
            ),
            points: (0..=n)
                .step_by(step)
                .filter_map(|i| ok(s.r(t, i)).map(|r| (i as f64, r)))
                .collect(),
            mark: Mark::Line,
            group,
        });
        series.push(Series {
            label: format!(
                "{} (configuration model): {}",
                s.strategy.name(),
                crossing(s.model_below_one(t))
            ),
            points: (0..=n)
                .step_by(step)
                .filter_map(|i| ok(s.model_kappa[i]).map(|k| (i as f64, t * k)))
                .collect(),
            mark: Mark::Dashed,
            group,
        });
    }
    Some(Figure {
        log: (false, false),
        series,
        guides: vec![Guide {
            label: "R = 1".into(),
            vertical: false,
            value: 1.0,
            group: 0,
        }],
        ..Figure::new(
            "outlook-reach",
            format!("Residual R as people are reached (T = {t:.3})"),
            "people reached (removed from the network)",
            "residual R",
            caption,
        )
    })
}
