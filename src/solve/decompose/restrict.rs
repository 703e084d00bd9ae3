//! A smaller min-cost problem over a set of cells with the rest of the network held fixed:
//! the windows of the primal improvement and the core are solved exactly this way.
//!
//! The cells outside the set that share an edge or a rewarded larval link with it come along
//! as a fixed "halo" (required if chosen, excluded if not), so the edge penalty of the boundary
//! and the links across it are the full problem's; the other fixed cells only lower the targets and the budget by what they hold
//! and use. For any choice of the free cells, the smaller problem's objective differs from the
//! full one's by a constant (the fixed cells' cost and edges), so its optimum is the best
//! completion of the fixed part.

use crate::model::links::LinkReward;
use crate::model::{Budget, CellStatus, EdgePenalty, ModelFeature, Problem};

/// The smaller problem and how its cells map back.
pub struct Restricted {
    /// The problem over the free cells and their halo.
    pub problem: Problem,
    /// Full-problem cell of each of its cells.
    pub cells: Vec<u32>,
}

/// Relative amount below which a lowered target counts as met (a few ulps of the sums).
const MET: f64 = 1e-12;

/// The problem over the cells with `free[i]` (which must be free in `problem`), every other
/// cell held at `at[i]`. `None` when the fixed part alone breaks the budget.
pub fn restrict(problem: &Problem, free: &[bool], at: &[bool]) -> Option<Restricted> {
    let n = problem.n_cells();
    // Halo: fixed cells that share an edge or a rewarded link with a free cell.
    let mut keep = free.to_vec();
    let edges = problem.edge_penalty.iter().flat_map(|pen| &pen.pairs);
    let links = problem.link_reward.iter().flat_map(|l| &l.pairs);
    for &(i, j, _) in edges.chain(links) {
        let (i, j) = (i as usize, j as usize);
        if free[i] && !free[j] {
            keep[j] = true;
        }
        if free[j] && !free[i] {
            keep[i] = true;
        }
    }
    let cells: Vec<u32> = (0..n as u32).filter(|&i| keep[i as usize]).collect();
    let mut new_of = vec![u32::MAX; n];
    for (k, &c) in cells.iter().enumerate() {
        new_of[c as usize] = k as u32;
    }
    let outside_chosen = |i: usize| !keep[i] && at[i];
    let status: Vec<CellStatus> = cells
        .iter()
        .map(|&c| {
            let c = c as usize;
            if free[c] {
                CellStatus::Free
            } else if at[c] {
                CellStatus::Required
            } else {
                CellStatus::Excluded
            }
        })
        .collect();
    let mut features = Vec::new();
    for f in &problem.features {
        if f.target <= 0.0 {
            continue;
        }
        let mut held_outside = 0.0;
        let mut amounts = Vec::new();
        for &(c, a) in &f.amounts {
            if outside_chosen(c as usize) {
                held_outside += a;
            } else if keep[c as usize] {
                amounts.push((new_of[c as usize], a));
            }
        }
        let target = f.target - held_outside;
        if target <= MET * f.target {
            continue;
        }
        features.push(ModelFeature {
            name: f.name.clone(),
            scenario: f.scenario,
            amounts,
            target,
            weight: f.weight,
        });
    }
    let used = |v: &[f64]| -> f64 { (0..n).filter(|&i| outside_chosen(i)).map(|i| v[i]).sum() };
    let budget = Budget {
        max_cost: problem.budget.max_cost.map(|b| b - used(&problem.cost)),
        max_area_km2: problem
            .budget
            .max_area_km2
            .map(|b| b - used(&problem.area_km2)),
    };
    if budget.max_cost.is_some_and(|b| b < 0.0) || budget.max_area_km2.is_some_and(|b| b < 0.0) {
        return None;
    }
    let edge_penalty = problem.edge_penalty.as_ref().map(|pen| {
        let own = crate::model::compact::own_edge_km(pen);
        let mut pairs = Vec::new();
        let mut shared = vec![0.0; cells.len()];
        for &(i, j, l) in &pen.pairs {
            let (a, b) = (new_of[i as usize], new_of[j as usize]);
            if a != u32::MAX && b != u32::MAX {
                pairs.push((a.min(b), a.max(b), l));
                shared[a as usize] += l;
                shared[b as usize] += l;
            }
        }
        // A free cell keeps its own (coast) edge; a halo cell's does not matter (constant),
        // so it gets none, which keeps every length ≥ 0.
        let exposed_if_alone_km = cells
            .iter()
            .enumerate()
            .map(|(k, &c)| {
                if free[c as usize] {
                    own[c as usize].max(0.0) + shared[k]
                } else {
                    shared[k]
                }
            })
            .collect();
        EdgePenalty {
            weight: pen.weight,
            pairs,
            exposed_if_alone_km,
        }
    });
    // Links between kept cells; a link to a cell outside the halo has both ends fixed (a
    // constant).
    let link_reward = problem.link_reward.as_ref().map(|l| LinkReward {
        weight: l.weight,
        pairs: l
            .pairs
            .iter()
            .filter_map(|&(i, j, s)| {
                let (a, b) = (new_of[i as usize], new_of[j as usize]);
                (a != u32::MAX && b != u32::MAX).then_some((a.min(b), a.max(b), s))
            })
            .collect(),
    });
    let pick = |v: &[f64]| -> Vec<f64> { cells.iter().map(|&c| v[c as usize]).collect() };
    let sub = Problem {
        status,
        budget,
        edge_penalty,
        link_reward,
        ..Problem::plain(
            pick(&problem.cost),
            pick(&problem.area_km2),
            problem.scenarios.clone(),
            features,
            problem.objective,
            problem.robustness,
        )
    };
    Some(Restricted {
        problem: sub,
        cells,
    })
}

impl Restricted {
    /// The full network: `at` with the free cells taken from `selected` (this problem's).
    pub fn lift(&self, at: &[bool], free: &[bool], selected: &[bool]) -> Vec<bool> {
        let mut out = at.to_vec();
        for (k, &c) in self.cells.iter().enumerate() {
            if free[c as usize] {
                out[c as usize] = selected[k];
            }
        }
        out
    }

    /// This problem's part of a full network.
    pub fn project(&self, full: &[bool]) -> Vec<bool> {
        self.cells.iter().map(|&c| full[c as usize]).collect()
    }
}
