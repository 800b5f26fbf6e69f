//! Figures along the calendar: exposures per day, and monitoring windows ending per day.

use super::{Figure, Stacked};
use crate::dataset::Dataset;
use crate::ingest::dates;

/// Exposures (usable rows in view) per day by the date of the exposure (its last date, else
/// its first), stacked by setting, over the 42 days up to the as-of date; undated rows and those
/// outside are counted in the title. None when no exposure falls in those days.
pub fn exposures_per_day(d: &Dataset, caption: &str) -> Option<Figure> {
    const DAYS: i32 = 42;
    let first = d.as_of - DAYS + 1;
    let mut layers: Vec<Vec<f64>> = vec![vec![0.0; DAYS as usize]; d.settings.len() + 1];
    let (mut dated, mut outside) = (0u64, 0u64);
    for &(day, setting, count) in &d.exposures_by_day {
        dated += count;
        if day < first || day > d.as_of {
            outside += count;
            continue;
        }
        let layer = (setting as usize).min(d.settings.len());
        layers[layer][(day - first) as usize] += count as f64;
    }
    let undated = d.view.1.saturating_sub(dated);
    let mut named: Vec<(String, Vec<f64>)> = d
        .settings
        .iter()
        .cloned()
        .zip(layers.iter().skip(1).cloned())
        .collect();
    named.push(("no setting".into(), layers[0].clone()));
    named.retain(|(_, v)| v.iter().any(|&x| x > 0.0));
    if named.is_empty() {
        return None;
    }
    Some(Figure {
        stacked: Some(Stacked {
            x: (first..=d.as_of).map(dates::iso).collect(),
            label_every: 7,
            layers: named,
        }),
        ..Figure::new(
            "exposures-per-day",
            format!(
            "Exposures per day, by setting ({undated} undated, {outside} outside these {DAYS} days)"
        ),
            "date of exposure (the last, where a row gives two)",
            "exposures (rows)",
            caption,
        )
    })
}

/// People whose monitoring window ends on each of the next 21 days from the as-of date (the
/// as-of date included), from the ranked list's window ends. None when no window ends then.
pub fn windows_ending(
    d: &Dataset,
    window_end: impl Iterator<Item = i32>,
    days: u32,
    caption: &str,
) -> Option<Figure> {
    const AHEAD: i32 = 21;
    let mut counts = vec![0.0; AHEAD as usize];
    for end in window_end {
        let i = end - d.as_of;
        if (0..AHEAD).contains(&i) {
            counts[i as usize] += 1.0;
        }
    }
    if counts.iter().all(|&c| c == 0.0) {
        return None;
    }
    Some(Figure {
        stacked: Some(Stacked {
            x: (0..AHEAD).map(|i| dates::iso(d.as_of + i)).collect(),
            label_every: 7,
            layers: vec![("people".into(), counts)],
        }),
        ..Figure::new(
            "windows-ending",
            format!("People whose {days}-day monitoring window ends, by day"),
            "last day of monitoring",
            "people",
            caption,
        )
    })
}
