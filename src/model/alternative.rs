//! Near-optimal alternatives (portfolio members): a lexicographic second stage
//! ([`super::Problem::keep_objective`]) that, instead of the least cost, seeks the network most
//! different from networks already found.
//!
//! The Hamming distance of x to an earlier network S is Σ_{i∈S}(1 − xᵢ) + Σ_{i∉S} xᵢ, linear in x.
//! Summed over the earlier networks S₁…S_M it is Σₘ|Sₘ| − Σᵢ (2mᵢ − M)·xᵢ with mᵢ the number of
//! them holding cell i, so maximising the total distance is minimising the linear
//! "overlap" Σᵢ (2mᵢ − M)·xᵢ ([`Alternative::weights`]). Each earlier network is also cut off
//! by a no-good row (Balas & Jeroslow 1972, canonical cuts on the unit hypercube — from memory):
//! the distance to it is at least [`Alternative::min_difference`] cells.

/// What a portfolio member must differ from.
#[derive(Debug, Clone, PartialEq)]
pub struct Alternative {
    /// Networks found before, one flag per cell each.
    pub avoid: Vec<Vec<bool>>,
    /// Fewest cells in which the network must differ from each of `avoid` (≥ 1).
    pub min_difference: usize,
}

impl Alternative {
    /// Per-cell weights of the overlap the second stage minimises: 2mᵢ − M (module doc).
    pub fn weights(&self, n_cells: usize) -> Vec<f64> {
        let m = self.avoid.len() as f64;
        (0..n_cells)
            .map(|i| {
                let held = self.avoid.iter().filter(|s| s[i]).count() as f64;
                2.0 * held - m
            })
            .collect()
    }

    /// The overlap of `selected` (the minimised objective; module doc).
    pub fn overlap(&self, selected: &[bool]) -> f64 {
        self.weights(selected.len())
            .iter()
            .zip(selected)
            .filter(|(_, s)| **s)
            .map(|(w, _)| w)
            .sum()
    }

    /// Cells in which `selected` differs from each network of `avoid`.
    pub fn distances(&self, selected: &[bool]) -> Vec<usize> {
        self.avoid.iter().map(|s| hamming(s, selected)).collect()
    }
}

/// Number of cells in which two networks differ.
pub fn hamming(a: &[bool], b: &[bool]) -> usize {
    a.iter().zip(b).filter(|(x, y)| x != y).count()
}

/// Jaccard distance 1 − |A∩B| / |A∪B| of two networks (0 for two empty ones).
pub fn jaccard_distance(a: &[bool], b: &[bool]) -> f64 {
    let both = a.iter().zip(b).filter(|(x, y)| **x && **y).count();
    let either = a.iter().zip(b).filter(|(x, y)| **x || **y).count();
    if either == 0 {
        0.0
    } else {
        1.0 - both as f64 / either as f64
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn overlap_is_total_distance_shifted() {
        // Hand: S1 = {0,1}, S2 = {1,2} over 4 cells; x = {2,3}.
        // Distances: to S1 {0,1,2,3} differ = 4, to S2 {1,3} differ = 2; total 6.
        // Σ|S| = 4, weights 2m−M = [0, 2, 0, -2], overlap of x = 0 + (−2) = −2, 4 − (−2) = 6.
        let s1 = vec![true, true, false, false];
        let s2 = vec![false, true, true, false];
        let alt = Alternative {
            avoid: vec![s1, s2],
            min_difference: 1,
        };
        let x = vec![false, false, true, true];
        assert_eq!(alt.weights(4), vec![0.0, 2.0, 0.0, -2.0]);
        assert_eq!(alt.distances(&x), vec![4, 2]);
        assert_eq!(4.0 - alt.overlap(&x), 6.0);
    }

    #[test]
    fn jaccard_by_hand() {
        // {0,1} vs {1,2}: intersection 1, union 3 → 1 − 1/3.
        let a = [true, true, false];
        let b = [false, true, true];
        assert!((jaccard_distance(&a, &b) - 2.0 / 3.0).abs() < 1e-12);
        assert_eq!(jaccard_distance(&[false], &[false]), 0.0);
    }
}
