//! Climate corridors per species: cells that climate trajectories pass through on their way
//! from habitat suitable now (first year) to habitat suitable later (last year) — the
//! `corridor` feature.

use crate::climate::{check_sparse, weighted_sparse_sum, ClimateError, TrajectorySet};
use crate::grid::Grid;
use rayon::prelude::*;

/// Corridor densities of one scenario, sparse `(cell id, trajectories)` lists sorted by cell id.
#[derive(Debug, Clone, PartialEq)]
pub struct CorridorDensity {
    /// Per species (input order): how many linking trajectories pass through each cell
    /// (start and end cells included). Units: trajectories.
    pub per_species: Vec<Vec<(u32, f64)>>,
    /// Sum over species. Units: trajectories.
    pub total: Vec<(u32, f64)>,
}

/// One species' habitat at both ends of the period, sparse lists sorted by cell id.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HabitatEnds<'a> {
    /// Habitat in the first year (trajectories start here).
    pub first: &'a [(u32, f64)],
    /// Habitat in the last year (trajectories must end here).
    pub last: &'a [(u32, f64)],
}

/// Corridor density: for each species, the trajectories (from [`crate::climate::trace_all`])
/// that start in a cell whose first-year habitat is above `threshold` and end in the sea in a
/// cell whose last-year habitat is above `threshold`; each such trajectory adds 1 to every
/// cell it visits (once per cell). Trajectories that leave the sea link nothing and are left
/// out.
pub fn corridor_density(
    grid: &Grid,
    set: &TrajectorySet,
    species: &[HabitatEnds<'_>],
    threshold: f64,
) -> Result<CorridorDensity, ClimateError> {
    let n = grid.len();
    if set.by_start.len() != n {
        return Err(ClimateError::CellCount {
            what: "trajectory set".into(),
            expected: n,
            got: set.by_start.len(),
        });
    }
    for (s, h) in species.iter().enumerate() {
        check_sparse(&format!("first-year habitat of species {s}"), h.first, n)?;
        check_sparse(&format!("last-year habitat of species {s}"), h.last, n)?;
    }
    let per_species: Vec<Vec<(u32, f64)>> = species
        .par_iter()
        .map(|h| {
            let mut future = vec![false; n];
            for &(c, a) in h.last {
                future[c as usize] = a > threshold;
            }
            let mut count = vec![0u32; n];
            for &(c, a) in h.first {
                if a <= threshold {
                    continue;
                }
                let Some(k) = set.starting_in(c) else {
                    continue;
                };
                let Some(end) = set.end_cell(k) else { continue };
                if !future[end as usize] {
                    continue;
                }
                let mut cells = set.path(k).to_vec();
                cells.sort_unstable();
                cells.dedup();
                for cell in cells {
                    count[cell as usize] += 1;
                }
            }
            (0..n)
                .filter(|&i| count[i] > 0)
                .map(|i| (i as u32, count[i] as f64))
                .collect()
        })
        .collect();
    let total = weighted_sparse_sum(n, per_species.iter().map(|l| (&l[..], 1.0)));
    Ok(CorridorDensity { per_species, total })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::climate::{trace_all, TrajectoryParams, Velocity};
    use crate::grid::Crs;

    #[test]
    fn corridors_on_an_eastward_strip() {
        // Hand reasoning: a 6×1 strip of 10 km cells, eastward 10 km/yr for 2.2 years, so
        // the trajectory from column c visits c, c+1, c+2 (starts 4 and 5 leave the sea).
        // Species A: suitable now in columns 0 and 1, later in 2 and 4.
        //   From 0 → ends in 2 (suitable): +1 on 0, 1, 2. From 1 → ends in 3 (not): nothing.
        // Species B: now 2 and 4, later 4 and 5. From 2 → ends 4: +1 on 2, 3, 4.
        //   From 4 → leaves the sea: nothing.
        // Total: 0:1, 1:1, 2:2, 3:1, 4:1.
        let g = Grid::full_rectangle(Crs::auto_laea(0.0, 0.0), 10_000.0, [0.0, 0.0], 6, 1).unwrap();
        let v = Velocity {
            trend_c_per_yr: vec![0.0; 6],
            gradient_xy: vec![[0.0, 0.0]; 6],
            gradient_c_per_km: vec![0.0; 6],
            speed_km_per_yr: vec![10.0; 6],
            bearing_deg: vec![90.0; 6],
            floored: vec![false; 6],
            grid_velocity: vec![[10.0, 0.0]; 6],
        };
        let p = TrajectoryParams {
            horizon_years: 2.2,
            ..Default::default()
        };
        let set = trace_all(&g, &v, &p).unwrap();
        let a_now = [(0u32, 0.5), (1, 0.5), (5, 0.0)];
        let a_later = [(2u32, 0.5), (4, 0.5)];
        let b_now = [(2u32, 1.0), (4, 1.0)];
        let b_later = [(4u32, 1.0), (5, 1.0)];
        let d = corridor_density(
            &g,
            &set,
            &[
                HabitatEnds {
                    first: &a_now,
                    last: &a_later,
                },
                HabitatEnds {
                    first: &b_now,
                    last: &b_later,
                },
            ],
            0.0,
        )
        .unwrap();
        assert_eq!(d.per_species[0], vec![(0, 1.0), (1, 1.0), (2, 1.0)]);
        assert_eq!(d.per_species[1], vec![(2, 1.0), (3, 1.0), (4, 1.0)]);
        assert_eq!(
            d.total,
            vec![(0, 1.0), (1, 1.0), (2, 2.0), (3, 1.0), (4, 1.0)]
        );
        assert!(corridor_density(
            &g,
            &set,
            &[HabitatEnds {
                first: &b_later,
                last: &[(9, 1.0)]
            }],
            0.0
        )
        .is_err());
    }
}
