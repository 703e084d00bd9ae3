//! Connectivity stage: takes surface currents (per-cell u, v from the layers stage) and each
//! species' larval traits, returns a sparse dispersal matrix P[i→j] per species and scenario —
//! the share of larvae released in cell i that settle in cell j. Rows sum to at most 1; the
//! rest is beached or carried beyond the grid. A matrix the user supplies takes the place of
//! the computed one. `features::reachability` turns the matrices into features.

pub mod field;
pub mod pairs;
pub mod summary;
pub mod track;

pub use field::CurrentField;
pub use pairs::{link_reward, LinkRule};
pub use summary::{network_retention, summarise, DispersalSummary};
pub use track::{Fate, Tracker};

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
/// matrix. Rows are computed in parallel; each row's random numbers come from `seed` and the
/// source cell alone, so the result is the same for any number of threads.
pub fn disperse(
    field: CurrentField<'_>,
    larvae: &Larvae,
    particles: u32,
    seed: u64,
    max_step_hours: f64,
) -> (Dispersal, Origin) {
    let tracker = Tracker::new(field, larvae, max_step_hours);
    let n = field.grid().len();
    let rows: Vec<_> = (0..n as u32)
        .into_par_iter()
        .map(|i| tracker.row(i, particles, seed))
        .collect();
    let beached = rows.iter().map(|r| r.1 as u64).sum();
    let left_grid = rows.iter().map(|r| r.2 as u64).sum();
    (
        Dispersal {
            rows: rows.into_iter().map(|r| r.0).collect(),
        },
        Origin::Particles {
            released: n as u64 * particles as u64,
            beached,
            left_grid,
            step_s: tracker.dt_s,
        },
    )
}

/// The seed of one species' tracking: the plan's seed mixed with the species' position, the
/// same in every scenario (common random numbers, so scenarios differ by their currents only).
pub fn species_seed(plan_seed: u64, species_index: usize) -> u64 {
    track::mix(plan_seed, species_index as u64)
}

#[cfg(test)]
mod tests;
