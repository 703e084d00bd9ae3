//! Edge length of a network: the part facing unprotected sea, and the part on coast or region
//! boundary.

use super::is_chosen;
use crate::grid::Grid;

/// Length of shared edges between chosen and unchosen cells: the reserve edge exposed to
/// unprotected sea. Units: km.
pub fn exposed_edge_km(grid: &Grid, selected: &[bool]) -> f64 {
    let mut km = 0.0;
    for (i, nbs) in grid.neighbours.iter().enumerate() {
        if !is_chosen(selected, i as u32) {
            continue;
        }
        for n in nbs {
            if !is_chosen(selected, n.cell) {
                km += n.shared_km;
            }
        }
    }
    km
}

/// Length of chosen cells' edge that no other cell shares (coast and region boundary).
/// Units: km.
pub fn boundary_edge_km(grid: &Grid, selected: &[bool]) -> f64 {
    (0..grid.len() as u32)
        .filter(|&i| is_chosen(selected, i))
        .map(|i| grid.boundary_km(i))
        .sum()
}

#[cfg(test)]
mod tests {
    use super::super::fixtures::{grid_4x3, pick};
    use super::*;

    #[test]
    fn block_of_four() {
        let g = grid_4x3();
        // Cells 1, 2, 5, 6 form a 2×2 block in the 4×3 grid (10 km sides).
        let sel = pick(12, &[1, 2, 5, 6]);
        // Hand count: perimeter 8 sides; the 2 southern sides lie on the region boundary,
        // the other 6 face unchosen cells 0, 3, 4, 7, 9, 10.
        assert!((exposed_edge_km(&g, &sel) - 60.0).abs() < 1e-9);
        assert!((boundary_edge_km(&g, &sel) - 20.0).abs() < 1e-9);
    }

    #[test]
    fn whole_grid_has_no_exposed_edge() {
        let g = grid_4x3();
        let sel = vec![true; 12];
        assert_eq!(exposed_edge_km(&g, &sel), 0.0);
        // Hand: outer perimeter 2·(4 + 3) = 14 sides of 10 km.
        assert!((boundary_edge_km(&g, &sel) - 140.0).abs() < 1e-9);
    }
}
