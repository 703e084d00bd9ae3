//! A smaller problem over a set of cells with the rest of the network held fixed:
//! the windows of the primal improvement and the core are solved exactly this way.
//!
//! The cells outside the set that share an edge or a rewarded larval link with it come along
//! as a fixed "halo" (required if chosen, excluded if not), so the edge penalty of the boundary
//! and the links across it are the full problem's; the other fixed cells only lower the targets and the budget by what they hold
//! and use. For any choice of the free cells, the smaller problem's objective differs from the
//! full one's by a constant (the fixed cells' cost and edges), so its optimum is the best
//! completion of the fixed part.
//!
//! Max-benefit: a feature with cap C, weight w and holding h outside earns
//! w·min((h + h')/C, 1) = w·min(h, C)/C + w'·min(h'/C', 1) with C' = C − h and w' = w·C'/C
//! when h < C (h' is what the smaller problem holds, at most C' for a weight-only feature, whose
//! cap is its total). So the smaller problem keeps the feature with target C' and weight w', and
//! the constants w·min(h, C)/C of each scenario are held by one extra required cell with no
//! cost, area or edge, whose features (one per scenario) earn exactly those constants. Each
//! scenario's benefit is then the full problem's, so worst-case and least-regret (with the full
//! problem's Bₛ*) keep their value too, not just up to a constant.

use crate::model::links::LinkReward;
use crate::model::{Budget, CellStatus, EdgePenalty, ModelFeature, Objective, Problem};

/// The smaller problem and how its cells map back.
pub struct Restricted {
    /// The problem over the free cells and their halo.
    pub problem: Problem,
    /// Full-problem cell of each of its cells but the last, constant cell of a max-benefit
    /// problem (module doc).
    pub cells: Vec<u32>,
    /// Whether the problem ends with that constant cell.
    pub constant_cell: bool,
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
    let mut status: Vec<CellStatus> = cells
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
    let benefit = problem.objective == Objective::MaxBenefit;
    // Max-benefit: per scenario key (None: every scenario), the credit already earned outside.
    let mut earned: std::collections::BTreeMap<Option<usize>, f64> = Default::default();
    for f in &problem.features {
        let cap = if benefit {
            match f.benefit_cap() {
                Some(c) => c,
                None => continue,
            }
        } else if f.target > 0.0 {
            f.target
        } else {
            continue;
        };
        let mut held_outside = 0.0;
        let mut amounts = Vec::new();
        for &(c, a) in &f.amounts {
            if outside_chosen(c as usize) {
                held_outside += a;
            } else if keep[c as usize] {
                amounts.push((new_of[c as usize], a));
            }
        }
        let left = cap - held_outside;
        if benefit {
            *earned.entry(f.scenario).or_default() += f.weight * held_outside.min(cap) / cap;
        }
        if left <= MET * cap {
            continue;
        }
        features.push(ModelFeature {
            name: f.name.clone(),
            scenario: f.scenario,
            amounts,
            target: left,
            weight: if benefit {
                f.weight * left / cap
            } else {
                f.weight
            },
        });
    }
    let constant_cell = benefit;
    let n_sub = cells.len() + usize::from(constant_cell);
    if constant_cell {
        for (scenario, w) in earned.into_iter().filter(|(_, w)| *w > 0.0) {
            features.push(ModelFeature {
                name: "held outside the window".into(),
                scenario,
                amounts: vec![(cells.len() as u32, 1.0)],
                target: 1.0,
                weight: w,
            });
        }
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
        let mut exposed_if_alone_km: Vec<f64> = cells
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
        exposed_if_alone_km.resize(n_sub, 0.0);
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
    // The constant cell costs nothing and has no area (module doc).
    let pick = |v: &[f64]| -> Vec<f64> {
        let mut out: Vec<f64> = cells.iter().map(|&c| v[c as usize]).collect();
        out.resize(n_sub, 0.0);
        out
    };
    status.resize(n_sub, CellStatus::Required);
    let sub = Problem {
        status,
        budget,
        edge_penalty,
        link_reward,
        // Least-regret measures regret against the full problem's Bₛ*; each scenario's benefit
        // here equals the full one's (module doc).
        scenario_best: if benefit {
            problem.scenario_best.clone()
        } else {
            None
        },
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
        constant_cell,
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
        let mut out: Vec<bool> = self.cells.iter().map(|&c| full[c as usize]).collect();
        if self.constant_cell {
            out.push(true);
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::compact::unit_grid_penalty;
    use crate::model::{evaluate, Robustness, Scenario};

    /// 2 × 3 unit grid, edge weight 0.3, cost budget 4, two scenarios: a capped feature per
    /// scenario, a scenario-free one and a weight-only one; cell 5 required.
    fn six_cells(rule: Robustness) -> Problem {
        let f = |name: &str, s, amounts, target, weight| ModelFeature {
            name: name.into(),
            scenario: s,
            amounts,
            target,
            weight,
        };
        let mut p = Problem::plain(
            vec![1.0, 2.0, 1.0, 1.5, 0.5, 1.0],
            vec![1.0; 6],
            vec![
                Scenario {
                    name: "a".into(),
                    weight: 1.0,
                },
                Scenario {
                    name: "b".into(),
                    weight: 3.0,
                },
            ],
            vec![
                f("p", Some(0), vec![(0, 1.0), (1, 2.0), (4, 1.0)], 2.5, 1.0),
                f("q", Some(1), vec![(2, 1.0), (3, 1.0), (5, 0.5)], 1.0, 2.0),
                f("r", None, vec![(0, 0.5), (2, 0.5), (4, 1.0)], 1.5, 0.5),
                f("s", Some(1), vec![(1, 1.0), (3, 2.0)], 0.0, 1.5),
            ],
            Objective::MaxBenefit,
            rule,
        );
        p.edge_penalty = Some(unit_grid_penalty(2, 3, 0.3));
        p.budget.max_cost = Some(4.0);
        p.status[5] = CellStatus::Required;
        p.scenario_best = Some(vec![1.8, 3.0]);
        p
    }

    #[test]
    fn a_window_keeps_every_rule_up_to_a_constant() {
        // Reference: model::evaluate on the full problem. For every choice inside the window
        // {1, 2, 4} (the rest at `at`), the window problem's objective must differ from the
        // full one's by one constant, and agree on the budget, under every robustness rule.
        let free = [false, true, true, false, true, false];
        for at in [
            [true, false, false, false, false, true],
            [false, false, false, true, false, true],
            [true, false, false, true, false, true],
        ] {
            for rule in [
                Robustness::EveryScenario,
                Robustness::WorstCase,
                Robustness::Expected,
                Robustness::LeastRegret,
            ] {
                let p = six_cells(rule);
                let sub = restrict(&p, &free, &at).unwrap();
                sub.problem.validate().unwrap();
                let mut offset: Option<f64> = None;
                for mask in 0..8u32 {
                    let mut full = at.to_vec();
                    for (b, i) in [1usize, 2, 4].into_iter().enumerate() {
                        full[i] = mask >> b & 1 == 1;
                    }
                    let small = sub.project(&full);
                    assert_eq!(sub.lift(&at, &free, &small), full);
                    let (ef, es) = (evaluate(&p, &full), evaluate(&sub.problem, &small));
                    assert_eq!(ef.within_budget, es.within_budget, "{rule:?} {mask}");
                    let d = ef.objective - es.objective;
                    let o = *offset.get_or_insert(d);
                    assert!(
                        (d - o).abs() < 1e-12,
                        "{rule:?} at {at:?} mask {mask}: {d} vs {o}"
                    );
                }
            }
        }
    }
}
