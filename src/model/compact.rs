//! Edge penalty (compactness): the objective pays `weight` per km of reserve edge exposed to
//! unprotected sea, so that among equally good networks the solver prefers fewer, rounder
//! reserves.
//!
//! # Formulation (Beyer et al. 2016, Ecological Modelling 328:14)
//! exposed(x) = Σᵢ Pᵢxᵢ − 2 Σ_{i<j} lᵢⱼ xᵢxⱼ, where Pᵢ is `exposed_if_alone_km` (every edge of
//! cell i that counts when i stands alone: shared edges plus counted coast/boundary) and lᵢⱼ
//! the shared edge of neighbours i, j. A shared edge inside the network is counted once in Pᵢ
//! and once in Pⱼ, hence the 2.
//!
//! # Linear form used by the integer program (the cut form)
//! For binaries xᵢ + xⱼ − 2xᵢxⱼ = |xᵢ − xⱼ|, so with Bᵢ = Pᵢ − Σⱼ lᵢⱼ (the coast/boundary part
//! of cell i's edge, [`own_edge_km`]) exposed(x) = Σᵢ Bᵢxᵢ + Σ_{i<j} lᵢⱼ|xᵢ − xⱼ|, linearised with
//! continuous eᵢⱼ ∈ [0, 1], eᵢⱼ ≥ xᵢ − xⱼ, eᵢⱼ ≥ xⱼ − xᵢ; the penalty always works against
//! large eᵢⱼ, so at an optimum eᵢⱼ = |xᵢ − xⱼ|. Its LP relaxation equals that of Beyer et al.'s
//! product form (zᵢⱼ ≤ xᵢ, zᵢⱼ ≤ xⱼ), but its rows are not two-variable implications, so
//! HiGHS's clique detection does not turn every pair into a clique (with the product form, MIP
//! set-up spent tens of minutes partitioning those cliques on 30 000 cells).
//!
//! Minimisation objectives (min-cost, least-regret) add weight × exposed; maximisation
//! objectives (max-benefit under every-scenario, worst-case, expected) subtract it.

use super::EdgePenalty;

/// Exposed reserve edge of a network: Σᵢ Pᵢxᵢ − 2 Σ_{i<j} lᵢⱼxᵢxⱼ. Units: km.
pub fn exposed_edge_km(penalty: &EdgePenalty, selected: &[bool]) -> f64 {
    let alone: f64 = penalty
        .exposed_if_alone_km
        .iter()
        .zip(selected)
        .filter(|(_, s)| **s)
        .map(|(p, _)| *p)
        .sum();
    let shared: f64 = penalty
        .pairs
        .iter()
        .filter(|(i, j, _)| selected[*i as usize] && selected[*j as usize])
        .map(|(_, _, l)| *l)
        .sum();
    alone - 2.0 * shared
}

/// Exposed edge of a zoned network ([`super::zones`]): Σᵢ Bᵢ·[cell i chosen] + Σ_{i<j} lᵢⱼ·[zᵢ ≠ zⱼ],
/// with `assignment` 0 outside the network: a shared edge counts once where the network meets
/// open sea or where two zones meet. Units: km.
pub fn exposed_edge_zoned_km(penalty: &EdgePenalty, assignment: &[u8]) -> f64 {
    let own = own_edge_km(penalty);
    let alone: f64 = own
        .iter()
        .zip(assignment)
        .filter(|(_, v)| **v > 0)
        .map(|(b, _)| *b)
        .sum();
    let cut: f64 = penalty
        .pairs
        .iter()
        .filter(|(i, j, _)| assignment[*i as usize] != assignment[*j as usize])
        .map(|(_, _, l)| *l)
        .sum();
    alone + cut
}

/// Bᵢ = Pᵢ − Σⱼ lᵢⱼ: the part of each cell's counted edge that no neighbour shares (coast or
/// region boundary when the plan counts it, else 0). Units: km.
pub fn own_edge_km(penalty: &EdgePenalty) -> Vec<f64> {
    let mut own = penalty.exposed_if_alone_km.clone();
    for &(i, j, l) in &penalty.pairs {
        own[i as usize] -= l;
        own[j as usize] -= l;
    }
    own
}

/// Neighbour lists built from `pairs`: for each cell, `(neighbour, shared km)`, sorted by
/// neighbour. Used by the heuristics to update the exposed edge in O(degree).
pub fn neighbour_lists(penalty: &EdgePenalty, n_cells: usize) -> Vec<Vec<(u32, f64)>> {
    let mut nb = vec![Vec::new(); n_cells];
    for &(i, j, l) in &penalty.pairs {
        nb[i as usize].push((j, l));
        nb[j as usize].push((i, l));
    }
    for v in &mut nb {
        v.sort_by_key(|(j, _)| *j);
    }
    nb
}

/// Unit-square grid (rows × cols, ids row-major) with every edge counted, including the outer
/// boundary: Pᵢ = 4, lᵢⱼ = 1 for rook neighbours. A fixture for tests and examples.
pub fn unit_grid_penalty(rows: usize, cols: usize, weight: f64) -> EdgePenalty {
    let mut pairs = Vec::new();
    for r in 0..rows {
        for c in 0..cols {
            let i = (r * cols + c) as u32;
            if c + 1 < cols {
                pairs.push((i, i + 1, 1.0));
            }
            if r + 1 < rows {
                pairs.push((i, i + cols as u32, 1.0));
            }
        }
    }
    EdgePenalty {
        weight,
        pairs,
        exposed_if_alone_km: vec![4.0; rows * cols],
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn own_edge_is_the_unshared_part() {
        // 2×3 unit grid with the outer boundary counted (P = 4 everywhere): corner cells have 2
        // neighbours → 2 km own edge; the middle cells of each row have 3 → 1 km (hand count).
        let own = own_edge_km(&unit_grid_penalty(2, 3, 1.0));
        assert_eq!(own, vec![2.0, 1.0, 2.0, 2.0, 1.0, 2.0]);
        // Cut form = product form on every network of the grid (enumerated).
        let p = unit_grid_penalty(2, 3, 1.0);
        for mask in 0u32..64 {
            let sel: Vec<bool> = (0..6).map(|b| mask >> b & 1 == 1).collect();
            let cut: f64 = (0..6).filter(|&i| sel[i]).map(|i| own[i]).sum::<f64>()
                + p.pairs
                    .iter()
                    .filter(|(i, j, _)| sel[*i as usize] != sel[*j as usize])
                    .map(|(_, _, l)| l)
                    .sum::<f64>();
            assert_eq!(cut, exposed_edge_km(&p, &sel), "mask {mask}");
        }
    }

    #[test]
    fn perimeters_of_the_tiny_instance() {
        // CHECK-VALUES.md tiny instance (2×3 unit grid, outer boundary counted): {2,4} are
        // diagonal, two separate unit squares → perimeter 8; {0,4,5}: 0 alone (4) plus the
        // domino 4–5 (6) → 10. Hand count of unit edges.
        let pen = unit_grid_penalty(2, 3, 1.0);
        let sel = |ids: &[usize]| (0..6).map(|i| ids.contains(&i)).collect::<Vec<_>>();
        assert_eq!(exposed_edge_km(&pen, &sel(&[2, 4])), 8.0);
        assert_eq!(exposed_edge_km(&pen, &sel(&[0, 4, 5])), 10.0);
        // Whole 2×3 block: perimeter 2·(2+3) = 10 (rectangle formula).
        assert_eq!(exposed_edge_km(&pen, &[true; 6]), 10.0);
        assert_eq!(exposed_edge_km(&pen, &[false; 6]), 0.0);
        let nb = neighbour_lists(&pen, 6);
        assert_eq!(nb[4], vec![(1, 1.0), (3, 1.0), (5, 1.0)]);
    }
}
