//! From dispersal matrices to the links the optimiser rewards (`model::links`): one strength
//! per unordered pair of cells, the strongest few per cell.
//!
//! # Strength
//! sᵢⱼ = Σ_species Σₛ πₛ·(Pₛ[i→j] + Pₛ[j→i]) for i ≠ j, with πₛ the plan's scenario weights normalised to sum 1 (equal when they sum to 0). Both
//! directions count: a reserve pair gains from larvae moving either way, and a chosen pair is
//! one variable, not two. A species' share is a probability, so sᵢⱼ is in expected settlers per
//! larva released in each cell of the pair, summed over species.
//!
//! # Keeping the model sparse
//! Every cell keeps its `per_cell` strongest pairs of strength ≥ `min_link`; a pair is kept
//! when either of its cells keeps it. Larvae settling where they were released (Pₛ[i→i]) link
//! nothing and are left out (see `model::links`).

use super::SpeciesLinks;
use crate::model::LinkReward;
use std::collections::BTreeMap;

/// Which links the optimiser rewards and by how much (plan `[optimise]` keys).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LinkRule {
    /// Key `connectivity_weight`: objective weight per unit of link strength.
    pub weight: f64,
    /// Key `connectivity_min_link`: weakest pair strength kept.
    pub min_link: f64,
    /// Key `connectivity_links_per_cell`: strongest pairs each cell keeps.
    pub per_cell: usize,
}

/// The connectivity reward of `links` (every species, every scenario) on `n_cells` cells, with
/// scenario weights `scenario_weights` (see the module doc).
pub fn link_reward(
    links: &[SpeciesLinks],
    scenario_weights: &[f64],
    n_cells: usize,
    rule: &LinkRule,
) -> LinkReward {
    let shares = crate::model::robust::normalised_shares(scenario_weights);
    let share = |s: usize| shares.get(s).copied().unwrap_or(0.0);
    // (low, high) → strength; a BTreeMap keeps the result independent of hashing order.
    let mut both: BTreeMap<(u32, u32), f64> = BTreeMap::new();
    for l in links {
        let w = share(l.scenario);
        for (i, row) in l.matrix.rows.iter().enumerate() {
            for &(j, p) in row {
                let i = i as u32;
                if i != j {
                    *both.entry((i.min(j), i.max(j))).or_insert(0.0) += w * p;
                }
            }
        }
    }
    let mut per_cell: Vec<Vec<(f64, u32, u32)>> = vec![Vec::new(); n_cells];
    for (&(i, j), &s) in &both {
        if s >= rule.min_link {
            per_cell[i as usize].push((s, i, j));
            per_cell[j as usize].push((s, i, j));
        }
    }
    let mut kept: Vec<(u32, u32, f64)> = Vec::new();
    for list in &mut per_cell {
        // Strongest first; ties by cell ids, so the choice is deterministic.
        list.sort_by(|a, b| b.0.total_cmp(&a.0).then((a.1, a.2).cmp(&(b.1, b.2))));
        kept.extend(list.iter().take(rule.per_cell).map(|&(s, i, j)| (i, j, s)));
    }
    kept.sort_by_key(|&(i, j, _)| (i, j));
    kept.dedup_by_key(|&mut (i, j, _)| (i, j));
    LinkReward {
        weight: rule.weight,
        pairs: kept,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::connectivity::{Dispersal, Origin};

    fn links(species: &str, scenario: usize, rows: Vec<Vec<(u32, f64)>>) -> SpeciesLinks {
        SpeciesLinks {
            species: species.into(),
            scenario,
            matrix: Dispersal { rows },
            origin: Origin::Supplied("x.csv".into()),
        }
    }

    #[test]
    fn strengths_sum_both_directions_species_and_weighted_scenarios() {
        // Hand computation. Scenario weights 3 and 1 → π = 0.75, 0.25.
        // Species a, scenario 0: 0→1 0.4, 1→0 0.2, 0→0 0.1; scenario 1: 0→1 0.8.
        // Species b, scenario 0: 1→2 0.3.
        // s01 = 0.75·(0.4 + 0.2) + 0.25·0.8 = 0.65; s12 = 0.75·0.3 = 0.225; 0→0 links nothing.
        let l = vec![
            links(
                "a",
                0,
                vec![vec![(0, 0.1), (1, 0.4)], vec![(0, 0.2)], vec![]],
            ),
            links("a", 1, vec![vec![(1, 0.8)], vec![], vec![]]),
            links("b", 0, vec![vec![], vec![(2, 0.3)], vec![]]),
        ];
        let rule = LinkRule {
            weight: 2.0,
            min_link: 0.0,
            per_cell: 4,
        };
        let r = link_reward(&l, &[3.0, 1.0], 3, &rule);
        assert_eq!(r.pairs.len(), 2);
        assert_eq!((r.pairs[0].0, r.pairs[0].1), (0, 1));
        assert!((r.pairs[0].2 - 0.65).abs() < 1e-12);
        assert!((r.pairs[1].2 - 0.225).abs() < 1e-12);
        assert_eq!(r.weight, 2.0);
        // A threshold of 0.3 drops (1,2); one pair per cell keeps only the strongest of each
        // cell: cell 1's strongest is (0,1), cell 2's only one is (1,2), so both stay.
        let strict = link_reward(
            &l,
            &[3.0, 1.0],
            3,
            &LinkRule {
                min_link: 0.3,
                ..rule
            },
        );
        assert_eq!(strict.pairs, vec![(0, 1, r.pairs[0].2)]);
        let one = link_reward(
            &l,
            &[3.0, 1.0],
            3,
            &LinkRule {
                per_cell: 1,
                ..rule
            },
        );
        assert_eq!(one.pairs.len(), 2);
    }

    #[test]
    fn each_cell_keeps_its_strongest_pairs() {
        // Cell 0 links to 1, 2, 3 with 0.5, 0.2, 0.3; with one pair per cell cell 0 keeps
        // (0,1), cell 2 keeps (0,2) (its only pair) and cell 3 keeps (0,3): all three remain.
        // With cells 2 and 3 also linked more strongly to each other (0.6), they keep (2,3)
        // and (0,2), (0,3) are dropped.
        let mut rows = vec![vec![(1, 0.5), (2, 0.2), (3, 0.3)], vec![], vec![], vec![]];
        let rule = LinkRule {
            weight: 1.0,
            min_link: 0.0,
            per_cell: 1,
        };
        let r = link_reward(&[links("a", 0, rows.clone())], &[1.0], 4, &rule);
        assert_eq!(r.pairs.len(), 3);
        rows[2] = vec![(3, 0.6)];
        let r = link_reward(&[links("a", 0, rows)], &[1.0], 4, &rule);
        let ends: Vec<(u32, u32)> = r.pairs.iter().map(|p| (p.0, p.1)).collect();
        assert_eq!(ends, vec![(0, 1), (2, 3)]);
    }
}
