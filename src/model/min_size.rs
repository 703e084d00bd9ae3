//! Minimum reserve size: reserves too small to enforce or to hold a viable population are
//! forbidden in their smallest form — a lone cell.
//!
//! # Rule
//! A free cell i whose sea area is below `min_area_km2` may be chosen only together with at
//! least one chosen rook neighbour: xᵢ ≤ Σ_{j ∈ N(i)} xⱼ (one row per such cell). Required cells
//! are exempt (existing protected areas stand as they are); a cell of at least the minimum area
//! may stand alone.
//!
//! # What it does not do
//! The row forbids single-cell reserves below the minimum; it does not forbid a reserve of two
//! or more cells whose total area is still below it. An exact minimum size needs connectivity
//! constraints (e.g. flow-based formulations) that grow the model by a variable per pair and
//! commodity; the edge penalty already pushes reserves into blocks, and `assess` reports every
//! reserve's area so any undersized one is visible. (Common practice, no source: the lone-cell
//! row is the usual first step of size rules in reserve-selection integer programs.)

use super::CellStatus;

/// Minimum-size data: the threshold and each cell's rook neighbours.
#[derive(Debug, Clone, PartialEq)]
pub struct MinReserve {
    /// Smallest area a lone chosen cell may have. Units: km².
    pub min_area_km2: f64,
    /// Rook neighbours of each cell (cell ids).
    pub neighbours: Vec<Vec<u32>>,
}

impl MinReserve {
    /// Whether the rule applies to cell `i`: free and smaller than the minimum.
    pub fn applies(&self, i: usize, status: &[CellStatus], area_km2: &[f64]) -> bool {
        status[i] == CellStatus::Free && area_km2[i] < self.min_area_km2
    }

    /// Chosen cells that break the rule (chosen, rule applies, no chosen neighbour), ascending.
    pub fn lone_cells(
        &self,
        status: &[CellStatus],
        area_km2: &[f64],
        selected: &[bool],
    ) -> Vec<u32> {
        (0..selected.len())
            .filter(|&i| {
                selected[i]
                    && self.applies(i, status, area_km2)
                    && !self.neighbours[i].iter().any(|&j| selected[j as usize])
            })
            .map(|i| i as u32)
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// 1×4 strip 0–1–2–3, areas [10, 4, 4, 10], min 5 km².
    fn strip() -> (MinReserve, Vec<CellStatus>, Vec<f64>) {
        let mr = MinReserve {
            min_area_km2: 5.0,
            neighbours: vec![vec![1], vec![0, 2], vec![1, 3], vec![2]],
        };
        (mr, vec![CellStatus::Free; 4], vec![10.0, 4.0, 4.0, 10.0])
    }

    #[test]
    fn lone_small_cells_are_found() {
        // Hand check: {1} alone is 4 km² < 5 → violation; {0} alone is 10 km² → fine; {1, 2}
        // touch each other → fine; {0, 2}: cell 2 (4 km²) has no chosen neighbour → violation.
        let (mr, st, area) = strip();
        assert_eq!(
            mr.lone_cells(&st, &area, &[false, true, false, false]),
            vec![1]
        );
        assert!(mr
            .lone_cells(&st, &area, &[true, false, false, false])
            .is_empty());
        assert!(mr
            .lone_cells(&st, &area, &[false, true, true, false])
            .is_empty());
        assert_eq!(
            mr.lone_cells(&st, &area, &[true, false, true, false]),
            vec![2]
        );
    }

    #[test]
    fn required_cells_are_exempt() {
        let (mr, mut st, area) = strip();
        st[1] = CellStatus::Required;
        assert!(mr
            .lone_cells(&st, &area, &[false, true, false, false])
            .is_empty());
    }
}
