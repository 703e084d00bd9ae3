//! Reachability: how much of a species' future habitat the larvae released from its present
//! habitat in a cell can settle on — a fixed per-cell amount, so the feature is linear and
//! exact in every solver.
//!
//! # Formula
//! For species s and scenario c, with h₁(i) the first-year habitat share of cell i (0–1),
//! A_L(j) the last-year habitat of cell j (km²) and P the dispersal matrix:
//!
//! amount(i) = h₁(i) · Σⱼ P[i→j] · A_L(j)   (km² of future habitat, weighted by settlement)
//!
//! so a network R holds Σ_{i∈R} amount(i): the expected future habitat that receives settlers
//! from the present habitat inside the reserves. The amount counts at the *source*: a cell
//! earns it by sending larvae, whether or not the settlement cell is protected (protecting the
//! future habitat itself is what the last-year habitat targets do).
//!
//! # Why this form
//! An "is reached at all" form — future habitat j counts once any chosen source sends larvae
//! there — needs a variable yⱼ ≤ Σᵢ xᵢ per reachable cell and is not additive, so greedy and
//! annealing could not use it; the expected form is additive (two reserves feeding the same
//! cell both count, in proportion to their larvae), linear, and reported by every solver alike.

use super::{Feature, FeatureKind, Target};
use crate::connectivity::Dispersal;
use crate::grid::Grid;

/// The reachability feature of one species in one scenario, from its first-year and last-year
/// habitat amounts (sparse km², as `habitat_feature` makes them).
#[allow(clippy::too_many_arguments)] // one value per term of the formula; a struct adds nothing
pub fn reachability_feature(
    grid: &Grid,
    species: &str,
    scenario: usize,
    scenario_name: &str,
    first: &[(u32, f64)],
    last: &[(u32, f64)],
    matrix: &Dispersal,
    target: Target,
    weight: f64,
) -> Feature {
    let mut future = vec![0.0; grid.len()];
    for &(j, a) in last {
        future[j as usize] = a;
    }
    let amounts: Vec<(u32, f64)> = first
        .iter()
        .filter_map(|&(i, a)| {
            let area = grid.cells[i as usize].sea_area_km2;
            let h = if area > 0.0 { a / area } else { 0.0 };
            let reach: f64 = matrix.rows[i as usize]
                .iter()
                .map(|&(j, p)| p * future[j as usize])
                .sum();
            let v = h * reach;
            (v > 0.0).then_some((i, v))
        })
        .collect();
    Feature {
        name: format!("reachability/{species}/{scenario_name}"),
        kind: FeatureKind::Reachability,
        species: Some(species.to_string()),
        scenario: Some(scenario),
        year: None,
        unit: "km2".into(),
        total: amounts.iter().map(|a| a.1).sum(),
        amounts,
        target,
        weight,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::Crs;

    #[test]
    fn reachability_by_hand() {
        // Three 10 km cells (100 km² each). First-year habitat: cell 0 full (100 km²), cell 1
        // half (50 km²). Last-year habitat: cell 1 40 km², cell 2 100 km².
        // P[0→1] = 0.5, P[0→2] = 0.2; P[1→2] = 0.6; P[2→0] = 1 (cell 2 has no present habitat).
        // amount(0) = 1 · (0.5·40 + 0.2·100) = 40; amount(1) = 0.5 · 0.6·100 = 30; amount(2) = 0.
        let g =
            Grid::full_rectangle(Crs::auto_laea(10.0, 50.0), 10_000.0, [0.0, 0.0], 3, 1).unwrap();
        let m = Dispersal {
            rows: vec![vec![(1, 0.5), (2, 0.2)], vec![(2, 0.6)], vec![(0, 1.0)]],
        };
        let f = reachability_feature(
            &g,
            "cod",
            0,
            "s1",
            &[(0, 100.0), (1, 50.0)],
            &[(1, 40.0), (2, 100.0)],
            &m,
            Target::Share(0.5),
            1.0,
        );
        assert_eq!(f.name, "reachability/cod/s1");
        assert_eq!(f.amounts.len(), 2);
        assert!((f.amounts[0].1 - 40.0).abs() < 1e-9);
        assert!((f.amounts[1].1 - 30.0).abs() < 1e-9);
        assert!((f.total - 70.0).abs() < 1e-9);
    }
}
