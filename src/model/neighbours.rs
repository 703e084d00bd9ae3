//! Neighbour rule: every chosen free cell has at least k chosen rook neighbours, so no
//! reserve thins out into strings one cell wide (k = 1 forbids lone cells of any size; k = 2
//! forbids cells hanging off a reserve by one side).
//!
//! # Rule
//! For each free cell i: Σ_{j ∈ N(i)} xⱼ ≥ k·xᵢ (one row per free cell; linear, exact: with
//! xᵢ = 0 the row is void, with xᵢ = 1 it asks for k chosen neighbours). A free cell with
//! fewer than k neighbours can then never be chosen. Required cells are exempt (existing
//! protected areas stand as they are), but count as chosen neighbours of others.

use super::CellStatus;

/// The rule's data: k and each cell's rook neighbours.
#[derive(Debug, Clone, PartialEq)]
pub struct MinNeighbours {
    /// Chosen rook neighbours each chosen free cell needs (1–4).
    pub k: u32,
    /// Rook neighbours of each cell (cell ids).
    pub neighbours: Vec<Vec<u32>>,
}

impl MinNeighbours {
    /// Chosen free cells with fewer than k chosen neighbours, ascending.
    pub fn short_cells(&self, status: &[CellStatus], selected: &[bool]) -> Vec<u32> {
        (0..selected.len())
            .filter(|&i| {
                selected[i]
                    && status[i] == CellStatus::Free
                    && (self.neighbours[i]
                        .iter()
                        .filter(|&&j| selected[j as usize])
                        .count() as u32)
                        < self.k
            })
            .map(|i| i as u32)
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn short_cells_by_hand() {
        // 2×2 block 0 1 / 2 3 (rook neighbours 0–1, 0–2, 1–3, 2–3), k = 2.
        let m = MinNeighbours {
            k: 2,
            neighbours: vec![vec![1, 2], vec![0, 3], vec![0, 3], vec![1, 2]],
        };
        let free = vec![CellStatus::Free; 4];
        // All four: each has two chosen neighbours.
        assert!(m.short_cells(&free, &[true; 4]).is_empty());
        // {0, 1, 2}: 1 and 2 have one chosen neighbour (0) each.
        assert_eq!(m.short_cells(&free, &[true, true, true, false]), vec![1, 2]);
        // A required cell is exempt.
        let st = vec![
            CellStatus::Free,
            CellStatus::Required,
            CellStatus::Required,
            CellStatus::Free,
        ];
        assert!(m.short_cells(&st, &[true, true, true, false]).is_empty());
    }
}
