//! Case statistics of an export: secondary attack rate among traced contacts (overall and per
//! setting), the offspring distribution of cases and serial intervals.
//!
//! Definitions (stated in the README too):
//! - A case is a person whose `role` is "case" (any letter case).
//! - A contact of case u is anyone sharing an exposure pair with u. A contact v who is also a
//!   case is a *secondary* case of u when v's onset date is after u's; equal or unknown onsets
//!   make them co-primary cases, left out of both counts (methods sheet §7); a v whose onset is
//!   before u's is not u's contact for this purpose (u would be v's secondary case).
//! - Contacts lost to follow-up (`followup_status` "unreachable" or "lost", or "lost to
//!   follow-up") and contacts known immune (`status` "immune") are left out and counted.
//! - Each person counts once overall: at risk if they are a contact of some case, secondary if
//!   they are a secondary case of some case. Per setting, through the settings of the pairs.
//! - Offspring and serial intervals need infector -> infectee links (the `transmission` field);
//!   without them they are undefined, never guessed from dates.

use crate::dataset::Dataset;
use crate::ingest::dates;
use crate::metrics::cases::{self, Proportion, SerialInterval};
use crate::metrics::fits::{self, Fit, Sample};
use crate::metrics::Stat;

/// Case statistics.
#[derive(Debug, Clone)]
pub struct CaseStats {
    /// People with role "case".
    pub cases: usize,
    /// Why case statistics are missing, if they are.
    pub missing: Option<&'static str>,
    /// SAR among traced contacts, all settings.
    pub sar: Proportion,
    /// SAR per setting label.
    pub sar_by_setting: Vec<(String, Proportion)>,
    /// Contacts left out: lost to follow-up.
    pub lost: u64,
    /// Contacts left out: immune.
    pub immune: u64,
    /// Case pairs left out as co-primary (same or unknown onset).
    pub co_primary_pairs: u64,
    /// Infector -> infectee links in the export.
    pub links: u64,
    /// Secondary cases per case (from links) and its fits, when links exist.
    pub offspring: Option<Offspring>,
    /// Serial intervals from links with both onset dates.
    pub serial: SerialInterval,
}

/// `f` of each person's value of `field` (`none` where they have none or the column is
/// absent), evaluated once per distinct value.
fn per_person<T: Clone>(d: &Dataset, field: &str, none: T, f: impl FnMut(&str) -> T) -> Vec<T> {
    let mut v = match d.attrs.column(field) {
        Some(c) => d.attrs.values[c].map_values(none.clone(), f),
        None => Vec::new(),
    };
    v.resize(d.people(), none);
    v
}

/// A value trimmed and lower-cased, as the case statistics compare it.
fn lower(v: &str) -> String {
    v.trim().to_ascii_lowercase()
}

/// The offspring distribution of the linked cases: the sample, its fits and the 80 % shares.
#[derive(Debug, Clone)]
pub struct Offspring {
    /// Secondary cases of each case.
    pub sample: Sample,
    /// Poisson, geometric and negative-binomial fits, in that order.
    pub fits: Vec<Fit>,
    /// Share of cases causing 80 % of transmission, from the sample itself.
    pub share80_empirical: Stat,
    /// The same from the fitted negative binomial's dispersion k, continuous form.
    pub share80_continuous: Stat,
    /// The same, discrete form (mean and k).
    pub share80_discrete: Stat,
}

impl Offspring {
    /// Fit the distributions and the 80 % shares of a sample of secondary-case counts.
    pub fn of(sample: Sample) -> Offspring {
        let nb = fits::negative_binomial(&sample);
        let k = nb
            .fit
            .params
            .iter()
            .find(|(n, _)| *n == "k")
            .map(|p| p.1)
            .unwrap_or(Err("no fit"));
        Offspring {
            share80_empirical: fits::share80_empirical(&sample),
            share80_continuous: k.map(fits::share80_continuous),
            share80_discrete: sample
                .mean()
                .and_then(|r| k.map(|k| fits::share80_discrete(r, k))),
            fits: vec![fits::poisson(&sample), fits::geometric(&sample), nb.fit],
            sample,
        }
    }
}

/// Compute the case statistics of a dataset.
pub fn case_stats(d: &Dataset) -> CaseStats {
    let n = d.people();
    let is_case = per_person(d, "role", false, |v| lower(v) == "case");
    let onset = per_person(d, "onset_date", None, |v| dates::parse_iso(v).ok());
    let lost = per_person(d, "followup_status", false, |v| {
        matches!(
            lower(v).as_str(),
            "unreachable" | "lost" | "lost to follow-up" | "lost_to_follow_up"
        )
    });
    let immune = per_person(d, "status", false, |v| lower(v) == "immune");
    let cases_n = is_case.iter().filter(|&&c| c).count();
    let nset = d.settings.len();
    let (at_risk, secondary, co_primary_pairs) = exposed(d, &is_case, &onset);
    // Per slot (0: all settings, s: setting s): secondary cases, contacts counted, lost,
    // immune; one pass over the people.
    let mut tally = vec![(0u64, 0u64, 0u64, 0u64); nset + 1];
    for v in 0..n {
        let risk = at_risk.of(v);
        if risk.iter().all(|&w| w == 0) {
            continue;
        }
        for (k, (&r, &sec)) in risk.iter().zip(secondary.of(v)).enumerate() {
            let mut bits = r;
            while bits != 0 {
                let b = bits.trailing_zeros();
                bits &= bits - 1;
                let is_secondary = sec >> b & 1 == 1;
                let t = &mut tally[k * 8 + b as usize];
                if lost[v] && !is_secondary {
                    t.2 += 1;
                } else if immune[v] && !is_secondary {
                    t.3 += 1;
                } else {
                    t.1 += 1;
                    t.0 += u64::from(is_secondary);
                }
            }
        }
    }
    let (x, m, lost_n, immune_n) = tally[0];
    let sar_by_setting = (1..=nset)
        .map(|s| {
            let (x, m, _, _) = tally[s];
            (d.settings[s - 1].clone(), cases::proportion(x, m))
        })
        .collect();
    let (links, offspring, intervals) = linked(d, &is_case, &onset);
    let missing = if !d.attrs.names.iter().any(|c| c == "role") {
        Some("the people table has no role column (case / contact)")
    } else if cases_n == 0 {
        Some("no person has role \"case\"")
    } else {
        None
    };
    CaseStats {
        cases: cases_n,
        missing,
        sar: cases::proportion(x, m),
        sar_by_setting,
        lost: lost_n,
        immune: immune_n,
        co_primary_pairs,
        links,
        offspring: offspring.filter(|s| s.n() > 0).map(Offspring::of),
        serial: cases::serial_interval(&intervals),
    }
}

/// Explicit infector -> infectee links: their count, the offspring of each case, and the
/// serial intervals where both onsets are known. No links: no offspring sample.
fn linked(d: &Dataset, is_case: &[bool], onset: &[Option<i32>]) -> (u64, Option<Sample>, Vec<i64>) {
    let n = d.people();
    let has_links = !d.edges.links_ab.is_empty();
    let mut offspring_count = vec![0u64; n];
    let mut intervals = Vec::new();
    let mut links = 0u64;
    if has_links {
        for e in 0..d.edges.len() {
            let (a, b) = (d.edges.a[e] as usize, d.edges.b[e] as usize);
            for (infector, infectee, k) in
                [(a, b, d.edges.links_ab[e]), (b, a, d.edges.links_ba[e])]
            {
                if k == 0 {
                    continue;
                }
                links += 1;
                offspring_count[infector] += 1;
                if let (Some(x), Some(y)) = (onset[infector], onset[infectee]) {
                    intervals.push(i64::from(y) - i64::from(x));
                }
            }
        }
    }
    let offspring = has_links.then(|| {
        let values: Vec<u64> = (0..n)
            .filter(|&i| is_case[i])
            .map(|i| offspring_count[i])
            .collect();
        Sample::from_values(&values)
    });
    (links, offspring, intervals)
}

/// Per person, overall (slot 0) and per setting code (1..=settings): at risk (a contact of a
/// case, or the later case of a dated case pair) and secondary (that later case); and the case
/// pairs without an order (co-primary).
fn exposed(d: &Dataset, is_case: &[bool], onset: &[Option<i32>]) -> (SlotBits, SlotBits, u64) {
    let (n, nset) = (d.people(), d.settings.len());
    let mut at_risk = SlotBits::new(n, nset + 1);
    let mut secondary = SlotBits::new(n, nset + 1);
    let mut co_primary_pairs = 0u64;
    for e in 0..d.edges.len() {
        crate::prefetch::second_end_ahead(is_case, &d.edges.b, e, 1);
        let (a, b) = (d.edges.a[e] as usize, d.edges.b[e] as usize);
        if is_case[a] && is_case[b] {
            match (onset[a], onset[b]) {
                (Some(x), Some(y)) if x != y => {
                    let later = if y > x { b } else { a };
                    for slot in
                        std::iter::once(0).chain(d.edges.settings(e).iter().map(|&c| c as usize))
                    {
                        at_risk.set(later, slot);
                        secondary.set(later, slot);
                    }
                }
                _ => co_primary_pairs += 1,
            }
            continue;
        }
        for (u, v) in [(a, b), (b, a)] {
            if is_case[u] && !is_case[v] {
                for slot in
                    std::iter::once(0).chain(d.edges.settings(e).iter().map(|&c| c as usize))
                {
                    at_risk.set(v, slot);
                }
            }
        }
    }
    (at_risk, secondary, co_primary_pairs)
}

/// A set of slots (0: all settings, s: setting s) per person, as bits: a person's slots are
/// one memory access, where an array per slot would be one each, and a byte per 8 slots keeps
/// the table small (a handful of settings: one byte per person, most of it in cache).
struct SlotBits {
    bytes: usize,
    bits: Vec<u8>,
}

impl SlotBits {
    /// No slot set, for `n` people and `slots` slots.
    fn new(n: usize, slots: usize) -> SlotBits {
        let bytes = slots.div_ceil(8);
        SlotBits {
            bytes,
            bits: vec![0; n * bytes],
        }
    }

    #[inline]
    fn set(&mut self, v: usize, slot: usize) {
        self.bits[v * self.bytes + slot / 8] |= 1 << (slot % 8);
    }

    /// Person `v`'s bytes (slot `8 k + b` is bit `b` of byte `k`).
    #[inline]
    fn of(&self, v: usize) -> &[u8] {
        &self.bits[v * self.bytes..(v + 1) * self.bytes]
    }
}
