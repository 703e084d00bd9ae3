//! A coarser copy of a problem, for starting multipliers. The multipliers of the relaxation
//! belong to the feature, budget and scenario rows, not to cells, so a problem with the same
//! rows over blocks of neighbouring cells has multipliers of the same meaning and size; its
//! ascent is cheap (a tenth of the cells per max-flow) and lands near the fine problem's, from
//! where the fine ascent has less to climb. This is the multilevel warm start common in
//! large-scale Lagrangian work (common practice, no source); nothing of the coarse problem
//! enters the bound, which the fine ascent computes as always.

use std::collections::{HashMap, VecDeque};

use std::time::Instant;

use rayon::prelude::*;

use super::lagrange::Relaxation;

use crate::model::{CellStatus, EdgePenalty, ModelFeature, Problem};

/// Coarse cells per fine cell aimed at: blocks of about this many free neighbours.
pub const BLOCK: usize = 9;

/// `problem` over blocks of about `block` neighbouring free cells (breadth-first over the
/// edge-penalty pairs, else runs of consecutive cell ids, which a grid numbers row by row);
/// fixed cells stay alone with their status. Returns the coarse problem and each fine cell's
/// block. Costs, areas and amounts add up; a block's exposed edge is its members' less twice
/// the edge they share; pairs and link strengths between blocks add up, those inside a block
/// drop out (a block is chosen whole).
pub fn coarsen(problem: &Problem, block: usize) -> (Problem, Vec<u32>) {
    let n = problem.n_cells();
    let block = block.max(1);
    let group = groups(problem, block);
    let n_groups = group.iter().map(|&g| g as usize + 1).max().unwrap_or(0);
    let add = |values: &[f64]| {
        let mut out = vec![0.0; n_groups];
        for (i, v) in values.iter().enumerate() {
            out[group[i] as usize] += v;
        }
        out
    };
    let mut status = vec![CellStatus::Free; n_groups];
    for i in 0..n {
        if problem.status[i] != CellStatus::Free {
            status[group[i] as usize] = problem.status[i];
        }
    }
    let features = problem
        .features
        .par_iter()
        .map_init(
            || vec![u32::MAX; n_groups],
            |slot, f| {
                let mut held: Vec<(u32, f64)> = Vec::with_capacity(f.amounts.len() / block + 1);
                for &(c, a) in &f.amounts {
                    let g = group[c as usize];
                    match slot[g as usize] {
                        u32::MAX => {
                            slot[g as usize] = held.len() as u32;
                            held.push((g, a));
                        }
                        at => held[at as usize].1 += a,
                    }
                }
                for h in &held {
                    slot[h.0 as usize] = u32::MAX;
                }
                held.sort_by_key(|h| h.0);
                ModelFeature {
                    name: f.name.clone(),
                    scenario: f.scenario,
                    amounts: held,
                    target: f.target,
                    weight: f.weight,
                }
            },
        )
        .collect();
    let edge_penalty = problem.edge_penalty.as_ref().map(|pen| {
        let mut exposed = add(&pen.exposed_if_alone_km);
        let mut between: HashMap<(u32, u32), f64> = HashMap::new();
        for &(i, j, l) in &pen.pairs {
            let (gi, gj) = (group[i as usize], group[j as usize]);
            if gi == gj {
                exposed[gi as usize] -= 2.0 * l;
            } else {
                *between.entry((gi.min(gj), gi.max(gj))).or_default() += l;
            }
        }
        for e in &mut exposed {
            *e = e.max(0.0);
        }
        let mut pairs: Vec<(u32, u32, f64)> =
            between.into_iter().map(|((i, j), l)| (i, j, l)).collect();
        pairs.sort_by_key(|p| (p.0, p.1));
        EdgePenalty {
            weight: pen.weight,
            pairs,
            exposed_if_alone_km: exposed,
        }
    });
    let link_reward = problem.link_reward.as_ref().map(|links| {
        let mut between: HashMap<(u32, u32), f64> = HashMap::new();
        for &(i, j, s) in &links.pairs {
            let (gi, gj) = (group[i as usize], group[j as usize]);
            if gi != gj {
                *between.entry((gi.min(gj), gi.max(gj))).or_default() += s;
            }
        }
        let mut pairs: Vec<(u32, u32, f64)> =
            between.into_iter().map(|((i, j), s)| (i, j, s)).collect();
        pairs.sort_by_key(|p| (p.0, p.1));
        crate::model::LinkReward {
            weight: links.weight,
            pairs,
        }
    });
    let coarse = Problem {
        cost: add(&problem.cost),
        area_km2: add(&problem.area_km2),
        status,
        features,
        edge_penalty,
        link_reward,
        scenarios: problem.scenarios.clone(),
        objective: problem.objective,
        robustness: problem.robustness,
        budget: problem.budget,
        spacing: None,
        min_reserve: None,
        min_neighbours: None,
        scenario_best: problem.scenario_best.clone(),
        keep_objective: problem.keep_objective,
        alternative: None,
        zoning: None,
    };
    (coarse, group)
}

/// Free cells from which [`start`] ascends a coarse copy first; below it the ascent from
/// λ = 0 is quick (measured: docs/method.md §6c, "Coarse start").
pub const MIN_FREE_CELLS: usize = 20_000;

/// Starting multipliers for `problem`'s relaxation: zeros when it has fewer than
/// [`MIN_FREE_CELLS`] free cells, else the best multipliers of the relaxation of its coarse
/// copy ([`coarsen`], itself started the same way), ascended until `deadline` or until its
/// cutting-plane model predicts less than a relative `tol` rise.
pub fn start(problem: &Problem, deadline: Instant, tol: f64, threads: Option<u32>) -> Vec<f64> {
    let relax_len = |p: &Problem| Relaxation::new(p).n_multipliers();
    let free = problem
        .status
        .iter()
        .filter(|s| **s == CellStatus::Free)
        .count();
    if free < MIN_FREE_CELLS {
        return vec![0.0; relax_len(problem)];
    }
    let (coarse, _) = coarsen(problem, BLOCK);
    let from = start(&coarse, deadline, tol, threads);
    let mut relax = Relaxation::new(&coarse);
    relax.threads = threads;
    let a = relax.ascend_to(&from, f64::INFINITY, deadline, usize::MAX, tol);
    debug_assert_eq!(a.lambda.len(), relax_len(problem));
    a.lambda
}

/// Block of each cell (module doc of [`coarsen`]); blocks are numbered in order of their
/// first cell, so the result is deterministic.
fn groups(problem: &Problem, block: usize) -> Vec<u32> {
    let n = problem.n_cells();
    let free = |i: usize| problem.status[i] == CellStatus::Free;
    let mut group = vec![u32::MAX; n];
    let mut next = 0u32;
    let Some(pen) = problem
        .edge_penalty
        .as_ref()
        .filter(|p| !p.pairs.is_empty())
    else {
        let (mut run, mut current) = (0, 0);
        for (i, g) in group.iter_mut().enumerate() {
            if !free(i) {
                *g = next;
                next += 1;
                run = 0;
                continue;
            }
            if run == 0 || run == block {
                current = next;
                next += 1;
                run = 0;
            }
            *g = current;
            run += 1;
        }
        return group;
    };
    let mut first = vec![0usize; n + 1];
    for &(i, j, _) in &pen.pairs {
        first[i as usize + 1] += 1;
        first[j as usize + 1] += 1;
    }
    for v in 0..n {
        first[v + 1] += first[v];
    }
    let mut fill = first.clone();
    let mut next_of = vec![0u32; first[n]];
    for &(i, j, _) in &pen.pairs {
        next_of[fill[i as usize]] = j;
        fill[i as usize] += 1;
        next_of[fill[j as usize]] = i;
        fill[j as usize] += 1;
    }
    let mut queue = VecDeque::new();
    for seed in 0..n {
        if group[seed] != u32::MAX {
            continue;
        }
        group[seed] = next;
        if free(seed) {
            let mut size = 1;
            queue.clear();
            queue.push_back(seed);
            'grow: while let Some(v) = queue.pop_front() {
                for &w in &next_of[first[v]..first[v + 1]] {
                    let w = w as usize;
                    if size == block {
                        break 'grow;
                    }
                    if group[w] == u32::MAX && free(w) {
                        group[w] = next;
                        size += 1;
                        queue.push_back(w);
                    }
                }
            }
        }
        next += 1;
    }
    group
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{evaluate, LinkReward, Objective, Robustness, Scenario};

    /// A `side` × `side` rook grid of 1 km cells (edge penalty, links between diagonal
    /// neighbours, two features with uneven amounts), cell 5 required.
    fn grid(side: u32) -> Problem {
        let n = (side * side) as usize;
        let id = |r: u32, c: u32| r * side + c;
        let mut pairs = Vec::new();
        let mut links = Vec::new();
        for r in 0..side {
            for c in 0..side {
                if c + 1 < side {
                    pairs.push((id(r, c), id(r, c + 1), 1.0));
                }
                if r + 1 < side {
                    pairs.push((id(r, c), id(r + 1, c), 1.0));
                }
                if r + 1 < side && c + 1 < side {
                    links.push((id(r, c), id(r + 1, c + 1), 0.1 + 0.01 * f64::from(c)));
                }
            }
        }
        let feature = |k: u32| ModelFeature {
            name: format!("f{k}"),
            scenario: None,
            amounts: (0..n as u32)
                .filter(|i| !(i + k).is_multiple_of(3))
                .map(|i| (i, 1.0 + f64::from((i * 7 + k) % 5)))
                .collect(),
            target: 10.0,
            weight: 1.0,
        };
        let mut p = Problem::plain(
            (0..n).map(|i| 1.0 + (i % 4) as f64).collect(),
            vec![1.0; n],
            vec![Scenario {
                name: "s".into(),
                weight: 1.0,
            }],
            vec![feature(0), feature(1)],
            Objective::MinCost,
            Robustness::EveryScenario,
        );
        p.status[5] = CellStatus::Required;
        p.edge_penalty = Some(EdgePenalty {
            weight: 2.0,
            pairs,
            exposed_if_alone_km: vec![4.0; n],
        });
        p.link_reward = Some(LinkReward {
            weight: 3.0,
            pairs: links,
        });
        p
    }

    #[test]
    fn a_coarse_network_is_worth_what_its_cells_are_worth() {
        // A coarse cell stands for its block chosen whole, so every figure of a coarse network
        // must equal that of the fine network of its blocks, as model::evaluate computes
        // them on each problem independently (the definition of the aggregation).
        let fine = grid(7);
        let (coarse, group) = coarsen(&fine, 4);
        let blocks = coarse.n_cells();
        assert!(
            blocks < fine.n_cells() && blocks >= fine.n_cells() / 4,
            "{blocks}"
        );
        for pick in 0..64u32 {
            let chosen: Vec<bool> = (0..blocks)
                .map(|g| {
                    (g as u32)
                        .wrapping_mul(2_654_435_761)
                        .wrapping_add(pick * 7)
                        .is_multiple_of(3)
                        || g == 0
                })
                .collect();
            let expanded: Vec<bool> = group.iter().map(|&g| chosen[g as usize]).collect();
            let (c, f) = (evaluate(&coarse, &chosen), evaluate(&fine, &expanded));
            assert!((c.cost - f.cost).abs() < 1e-9);
            assert!((c.exposed_edge_km - f.exposed_edge_km).abs() < 1e-9);
            for (a, b) in c.protected.iter().zip(&f.protected) {
                assert!((a - b).abs() < 1e-9);
            }
            // Links inside a block drop out of the coarse problem; across blocks they count.
            assert!(c.linked <= f.linked + 1e-9);
        }
    }

    #[test]
    fn blocks_are_connected_and_of_the_size_asked() {
        // On a 4 × 4 grid from cell 0, breadth-first blocks of 4 start with {0, 1, 4, 2}: an L
        // whose exposed edge is 4 × 4 − 2 × 3 = 10 km (perimeter of an L-tetromino, by hand).
        let mut fine = grid(4);
        fine.status[5] = CellStatus::Free;
        let (coarse, group) = coarsen(&fine, 4);
        assert_eq!(&group[..8], &[0, 0, 0, 1, 0, 2, 1, 1]);
        let pen = coarse.edge_penalty.as_ref().unwrap();
        assert!((pen.exposed_if_alone_km[0] - 10.0).abs() < 1e-12);
        assert_eq!(coarse.status[0], CellStatus::Free);
        // Fixed cells stay alone: with cell 5 required it is a block of its own.
        let (coarse, group) = coarsen(&grid(4), 4);
        assert_eq!(group.iter().filter(|&&g| g == group[5]).count(), 1);
        assert_eq!(coarse.status[group[5] as usize], CellStatus::Required);
    }
}
