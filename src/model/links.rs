//! Connectivity reward: the objective earns `weight` per unit of larval exchange between
//! chosen cells, so that among equally good networks the solver prefers reserves that seed
//! each other.
//!
//! # Formulation
//! linked(x) = Σ_{i<j} sᵢⱼxᵢxⱼ, where sᵢⱼ is the strength of the link between cells i and j
//! (the larvae exchanged both ways, from `connectivity::pairs`). What a cell keeps of its own
//! larvae is left out on purpose: as a per-cell bonus it would lower the cost of every
//! high-retention cell alike and fill the budget with lone cells instead of linking reserves
//! (seen on the demo: at a weight where pairs alone changed little, the own term took the
//! network from 5 % to 33 % of the region). The integer program linearises each product exactly with a continuous
//! zᵢⱼ ∈ [0, 1], zᵢⱼ ≤ xᵢ, zᵢⱼ ≤ xⱼ (the standard linearisation of a product of binaries
//! whose objective coefficient pushes it up; e.g. Glover & Woolsey 1974, Operations Research
//! 22:180): the reward always works for large zᵢⱼ, so at an optimum zᵢⱼ = min(xᵢ, xⱼ) = xᵢxⱼ.
//! Only the strongest pairs are kept (a threshold and a number per cell), so the model grows by
//! at most a few variables per cell.
//!
//! Minimisation objectives (min-cost, least-regret) subtract weight × linked; maximisation
//! objectives add it. The reward is never a rule: every network stays feasible or not as
//! without it.

/// Connectivity-reward data: the kept links and their weight in the objective.
#[derive(Debug, Clone, PartialEq)]
pub struct LinkReward {
    /// Objective weight per unit of link strength (cost units per larval share in min-cost;
    /// weighted targets in max-benefit).
    pub weight: f64,
    /// `(i, j, sᵢⱼ)` with `i < j`, each kept pair once, sᵢⱼ > 0.
    pub pairs: Vec<(u32, u32, f64)>,
}

impl LinkReward {
    /// linked(x): the link strength a network holds (kept pairs with both ends chosen).
    /// Units: larval shares.
    pub fn linked(&self, selected: &[bool]) -> f64 {
        self.pairs
            .iter()
            .filter(|(i, j, _)| selected[*i as usize] && selected[*j as usize])
            .map(|(_, _, s)| *s)
            .sum()
    }

    /// weight × linked(x): the reward a network earns in the objective.
    pub fn reward(&self, selected: &[bool]) -> f64 {
        self.weight * self.linked(selected)
    }

    /// For each cell, `(other end, sᵢⱼ)` of its kept pairs: what choosing it adds next to chosen
    /// cells, for the heuristics' O(degree) updates.
    pub fn partner_lists(&self, n_cells: usize) -> Vec<Vec<(u32, f64)>> {
        let mut out = vec![Vec::new(); n_cells];
        for &(i, j, s) in &self.pairs {
            out[i as usize].push((j, s));
            out[j as usize].push((i, s));
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn linked_counts_pairs_with_both_ends_chosen() {
        // Hand computation: pairs (0,1) 0.5, (1,2) 0.25, (0,3) 0.125. Network {0, 1, 2} holds
        // (0,1) and (1,2): 0.75; (0,3) has one end outside.
        let r = LinkReward {
            weight: 2.0,
            pairs: vec![(0, 1, 0.5), (1, 2, 0.25), (0, 3, 0.125)],
        };
        let sel = [true, true, true, false];
        assert!((r.linked(&sel) - 0.75).abs() < 1e-12);
        assert!((r.reward(&sel) - 1.5).abs() < 1e-12);
        let lists = r.partner_lists(4);
        assert_eq!(lists[0], vec![(1, 0.5), (3, 0.125)]);
        assert_eq!(lists[2], vec![(1, 0.25)]);
    }
}
