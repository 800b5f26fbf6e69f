//! Sentinel sample by friend sampling (Christakis & Fowler 2010, PLoS ONE 5:e12948): draw people
//! at random and take one random contact of each. A random contact of a random person has, on
//! average, the contacts' mean degree of version (b) of the friendship paradox, more than a
//! random person, so such a sample tends to be reached by spread earlier: the gain is earlier
//! warning, not a different attack rate.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

use crate::graph::Adjacency;

/// One pick: the contact chosen and the person who led to them.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Pick {
    /// The sentinel.
    pub node: u32,
    /// The randomly drawn person whose contact they are.
    pub via: u32,
}

/// Draw up to `n` distinct sentinels: random people (those without contacts are drawn again)
/// each replaced by a random contact; a contact already picked is skipped. Seeded.
pub fn friend_sample(g: &Adjacency, n: usize, seed: u64) -> Vec<Pick> {
    let people: Vec<u32> = (0..g.node_count() as u32)
        .filter(|&v| g.out_degree(v) > 0)
        .collect();
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut picked = vec![false; g.node_count()];
    let mut out = Vec::new();
    if people.is_empty() {
        return out;
    }
    // Enough tries to find n distinct contacts when they exist, bounded either way.
    let mut tries = 0;
    while out.len() < n && tries < 50 * n.max(1) + 1000 {
        tries += 1;
        let via = people[rng.random_range(0..people.len())];
        let nb = g.neighbors_slice(via);
        let node = nb[rng.random_range(0..nb.len())];
        if !picked[node as usize] {
            picked[node as usize] = true;
            out.push(Pick { node, via });
        }
    }
    out
}

/// Mean degree over `draws` single friend-sampling draws (with repeats), for checking the
/// expectation against version (b).
pub fn mean_pick_degree(g: &Adjacency, draws: usize, seed: u64) -> Option<f64> {
    let people: Vec<u32> = (0..g.node_count() as u32)
        .filter(|&v| g.out_degree(v) > 0)
        .collect();
    if people.is_empty() || draws == 0 {
        return None;
    }
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut sum = 0u64;
    for _ in 0..draws {
        let via = people[rng.random_range(0..people.len())];
        let nb = g.neighbors_slice(via);
        sum += g.out_degree(nb[rng.random_range(0..nb.len())]) as u64;
    }
    Some(sum as f64 / draws as f64)
}

/// What a sentinel sample gains over people drawn at random.
#[derive(Debug, Clone, PartialEq)]
pub struct Gain {
    /// Mean contacts of a person drawn at random (among people with contacts).
    pub random: crate::metrics::Stat,
    /// Expected contacts of a sentinel: the contacts' mean degree (paradox version (b)).
    pub expected: crate::metrics::Stat,
    /// Mean contacts of the sentinels drawn.
    pub sample: f64,
}

impl Gain {
    /// The gain of `picks` on a network with these degrees and neighbour figures.
    pub fn of(
        picks: &[Pick],
        degrees: &[u32],
        nb: &crate::metrics::neighbours::Neighbours,
    ) -> Gain {
        let sum: f64 = picks
            .iter()
            .map(|p| f64::from(degrees[p.node as usize]))
            .sum();
        Gain {
            random: nb.mean_active,
            expected: nb.contact_mean,
            sample: sum / picks.len().max(1) as f64,
        }
    }

    /// In words, for the command line and the file's metadata.
    pub fn describe(&self) -> String {
        match (self.random, self.expected) {
            (Ok(p), Ok(e)) => format!(
                "expected contacts of a sentinel {e:.2} against {p:.2} for a person drawn at random ({:+.0}%); this sample: {:.2}",
                100.0 * (e / p - 1.0),
                self.sample
            ),
            _ => "undefined (no contacts)".into(),
        }
    }
}
