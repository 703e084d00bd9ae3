//! Connectivity stage: takes surface currents (per-cell u, v from the layers stage) and each
//! species' larval traits, returns a sparse dispersal matrix P[i→j] per species and scenario —
//! the share of larvae released in cell i that settle in cell j. Rows sum to at most 1; the
//! rest is beached or carried beyond the grid. A matrix the user supplies takes the place of
//! the computed one. `features::reachability` turns the matrices into features.

pub mod field;
pub mod lanes;
pub mod pairs;
pub mod summary;
pub mod track;

pub use field::CurrentField;
pub use pairs::{link_reward, LinkRule};
pub use summary::{network_retention, summarise, DispersalSummary};
pub use track::{Fate, Stepping, Tracker};

use crate::plan::connectivity::Larvae;
use rayon::prelude::*;

/// A sparse dispersal matrix: `rows[i]` lists `(j, P[i→j])` sorted by `j`, zeros left out.
#[derive(Debug, Clone, PartialEq, Default, serde::Serialize, serde::Deserialize)]
pub struct Dispersal {
    /// One row per source cell.
    pub rows: Vec<Vec<(u32, f64)>>,
}

impl Dispersal {
    /// Number of non-zero links.
    pub fn links(&self) -> usize {
        self.rows.iter().map(Vec::len).sum()
    }

    /// P[i→j], 0 when absent.
    pub fn get(&self, i: u32, j: u32) -> f64 {
        self.rows[i as usize]
            .binary_search_by_key(&j, |e| e.0)
            .map_or(0.0, |k| self.rows[i as usize][k].1)
    }
}

/// Where a matrix came from and what happened to the particles.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum Origin {
    /// Computed by particle tracking.
    Particles {
        /// Particles released (cells × particles per cell).
        released: u64,
        /// Particles that ended a step on land.
        beached: u64,
        /// Particles carried beyond the grid.
        left_grid: u64,
        /// The RK4 step. Units: s.
        step_s: f64,
    },
    /// Read from the user's file.
    Supplied(std::path::PathBuf),
}

/// One species' dispersal in one scenario.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct SpeciesLinks {
    /// Species name.
    pub species: String,
    /// Index into the plan's scenarios.
    pub scenario: usize,
    /// The matrix.
    pub matrix: Dispersal,
    /// How it was made.
    pub origin: Origin,
}

/// Tracks `particles` larvae from every cell of `field`'s grid and returns the settlement
/// matrix. Rows are computed in parallel; each particle's random numbers come from `seed`, the
/// source cell and its index alone, so the result is the same for any number of threads.
pub fn disperse(
    field: CurrentField<'_>,
    larvae: &Larvae,
    particles: u32,
    seed: u64,
    max_step_hours: f64,
) -> (Dispersal, Origin) {
    let stepping = Stepping::new(&field, larvae, max_step_hours);
    disperse_shared(field, &[stepping], particles, seed)
        .pop()
        .expect("one species in, one matrix out")
}

/// Source cells tracked together by one task (see [`Tracker::rows_of`]).
const CELLS_PER_TASK: usize = 16;

/// The matrices of several species that share a step and a diffusivity, from one tracking:
/// every particle is followed to the longest larval duration and each species counts its own
/// settlement window and losses on the same path. Species `s`'s matrix equals
/// [`disperse`]'s for it alone with the same seed (each particle has its own random stream).
fn disperse_shared(
    field: CurrentField<'_>,
    species: &[Stepping],
    particles: u32,
    seed: u64,
) -> Vec<(Dispersal, Origin)> {
    let longest = species
        .iter()
        .max_by_key(|s| s.steps)
        .expect("at least one species")
        .clone();
    let tracker = Tracker::with_stepping(field, longest);
    let n = field.grid().len();
    // rows[cell][species]: computed in parallel, a few cells per task so the lanes stay full
    // to the end, collected in cell order.
    let cells: Vec<u32> = (0..n as u32).collect();
    let rows: Vec<_> = cells
        .par_chunks(CELLS_PER_TASK)
        .map(|chunk| tracker.rows_of(chunk, particles, seed, species))
        .collect::<Vec<_>>()
        .into_iter()
        .flatten()
        .collect();
    let mut out: Vec<_> = species
        .iter()
        .map(|s| {
            (
                Vec::with_capacity(n),
                Origin::Particles {
                    released: n as u64 * particles as u64,
                    beached: 0,
                    left_grid: 0,
                    step_s: s.dt_s,
                },
            )
        })
        .collect();
    for cell in rows {
        for ((row, b, l), (matrix, origin)) in cell.into_iter().zip(out.iter_mut()) {
            matrix.push(row);
            if let Origin::Particles {
                beached, left_grid, ..
            } = origin
            {
                *beached += b as u64;
                *left_grid += l as u64;
            }
        }
    }
    out.into_iter()
        .map(|(rows, origin)| (Dispersal { rows }, origin))
        .collect()
}

/// The matrices of several species on one current field, in their order. Species with equal
/// diffusivity and step (the step depends on the field, the diffusivity and the maximum step;
/// see [`track`]) are tracked together once, to the longest of their larval durations, with
/// the seed [`larvae_seed`] gives them — so each species' matrix depends on the plan's seed,
/// its own traits and the currents alone, not on which other species the plan lists.
pub fn disperse_species(
    field: CurrentField<'_>,
    species: &[Larvae],
    particles: u32,
    plan_seed: u64,
    max_step_hours: f64,
) -> Vec<(Dispersal, Origin)> {
    let steps: Vec<Stepping> = species
        .iter()
        .map(|l| Stepping::new(&field, l, max_step_hours))
        .collect();
    // Groups in order of first appearance: (diffusivity bits, step bits) → species indexes.
    let mut groups: Vec<((u64, u64), Vec<usize>)> = Vec::new();
    for (i, (l, s)) in species.iter().zip(&steps).enumerate() {
        let key = (l.diffusivity_m2_s.to_bits(), s.dt_s.to_bits());
        match groups.iter_mut().find(|g| g.0 == key) {
            Some(g) => g.1.push(i),
            None => groups.push((key, vec![i])),
        }
    }
    let mut out: Vec<Option<(Dispersal, Origin)>> = vec![None; species.len()];
    for (_, members) in groups {
        let group: Vec<Stepping> = members.iter().map(|&i| steps[i].clone()).collect();
        let seed = larvae_seed(plan_seed, &species[members[0]]);
        for (i, m) in members
            .into_iter()
            .zip(disperse_shared(field, &group, particles, seed))
        {
            out[i] = Some(m);
        }
    }
    out.into_iter()
        .map(|m| m.expect("every species is in a group"))
        .collect()
}

/// The seed of a species' tracking: the plan's seed mixed with its diffusivity — the one trait
/// besides the step (which the field sets) that shapes the random walk. Equal in every
/// scenario (common random numbers, so scenarios differ by their currents only), and equal for
/// species that share a tracking.
pub fn larvae_seed(plan_seed: u64, larvae: &Larvae) -> u64 {
    track::mix(plan_seed, larvae.diffusivity_m2_s.to_bits())
}

#[cfg(test)]
mod tests;
