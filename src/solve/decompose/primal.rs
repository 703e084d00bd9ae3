//! Primal side of the decomposition: turn a Lagrangian cut solution into a network that meets
//! every target and budget, then drop cells it does not need.
//!
//! Repair follows the Lagrangian greedy of Caprara, Fischetti & Toth (1999, Operations
//! Research 47(5):730): each cell has a Lagrangian cost γᵢ (its cost and edge change minus
//! what the multipliers pay for its amounts) and covers μᵢ = Σₖ min(aᵢₖ, shortₖ)/Tₖ of the
//! remaining normalised shortfall; the cell with the least σᵢ = γᵢ/μᵢ (γᵢ > 0) or γᵢ·μᵢ
//! (γᵢ ≤ 0) is added until no target is short. With the edge penalty, γᵢ includes the change
//! in exposed edge, so neighbours of chosen cells are favoured; their scores are refreshed
//! whenever a neighbour joins. The scores only worsen as shortfalls shrink, so the heap is
//! re-checked lazily.
//!
//! For max-benefit, [`Moves::fill`] keeps the budget instead: a cut that spends too much loses
//! the cells with the least weighted benefit per budget share first, then cells are added by
//! weighted benefit gain per budget share (the gain counts only credit below each cap and the
//! change in exposed edge, so neighbours of chosen cells are favoured), and finally cells whose
//! removal raises the weighted benefit go. The weights are the relaxation's
//! ([`super::lagrange::Relaxation::credit_weights`]): exact for every-scenario and expected,
//! the scenario multipliers' mix for worst-case and least-regret (a marginal gain of the
//! minimum over scenarios is zero almost everywhere, so it cannot rank cells).

use std::cmp::Ordering;
use std::collections::BinaryHeap;

use crate::model::compact::{neighbour_lists, own_edge_km};
use crate::model::{CellStatus, Problem};

use super::lagrange::relaxed_features;

/// Cell-major view of the rows with a target, and the edge data, for incremental moves.
pub struct Moves<'a> {
    problem: &'a Problem,
    /// Per cell: `(row, amount)` over rows with a positive target.
    by_cell: Vec<Vec<(u32, f64)>>,
    /// Target (min-cost) or benefit cap (max-benefit) of each row.
    targets: Vec<f64>,
    /// Per cell: `(neighbour, w·lᵢⱼ)`.
    neighbours: Vec<Vec<(u32, f64)>>,
    /// w·Bᵢ.
    own: Vec<f64>,
}

#[derive(PartialEq)]
struct Entry {
    score: f64,
    cell: u32,
}
impl Eq for Entry {}
impl PartialOrd for Entry {
    fn partial_cmp(&self, other: &Self) -> Option<Ordering> {
        Some(self.cmp(other))
    }
}
impl Ord for Entry {
    /// Least score first (a max-heap of reversed scores); ties to the lower cell.
    fn cmp(&self, other: &Self) -> Ordering {
        other
            .score
            .total_cmp(&self.score)
            .then(other.cell.cmp(&self.cell))
    }
}

impl<'a> Moves<'a> {
    /// Index a `problem` the decomposition takes; its rows are those of
    /// [`relaxed_features`] (targets for min-cost, benefit caps for max-benefit).
    pub fn new(problem: &'a Problem) -> Moves<'a> {
        let n = problem.n_cells();
        let mut by_cell: Vec<Vec<(u32, f64)>> = vec![Vec::new(); n];
        let mut targets = Vec::new();
        for (k, inv) in relaxed_features(problem) {
            let r = targets.len() as u32;
            for &(c, a) in &problem.features[k].amounts {
                by_cell[c as usize].push((r, a));
            }
            targets.push(1.0 / inv);
        }
        let (neighbours, own) = match problem.edge_penalty.as_ref().filter(|p| p.weight > 0.0) {
            Some(pen) => (
                neighbour_lists(pen, n)
                    .into_iter()
                    .map(|v| v.into_iter().map(|(j, l)| (j, pen.weight * l)).collect())
                    .collect(),
                own_edge_km(pen).iter().map(|b| pen.weight * b).collect(),
            ),
            None => (vec![Vec::new(); n], vec![0.0; n]),
        };
        Moves {
            problem,
            by_cell,
            targets,
            neighbours,
            own,
        }
    }

    /// Objective change when cell i flips (cost ± and exposed edge).
    pub fn delta(&self, sel: &[bool], i: usize) -> f64 {
        let sign = if sel[i] { -1.0 } else { 1.0 };
        // Adding i: each chosen neighbour's shared edge closes (−), each open one opens (+).
        let edges: f64 = self.neighbours[i]
            .iter()
            .map(|&(j, wl)| if sel[j as usize] { -wl } else { wl })
            .sum();
        sign * (self.problem.cost[i] + self.own[i] + edges)
    }

    /// What each row holds under `sel`.
    fn held(&self, sel: &[bool]) -> Vec<f64> {
        let mut held = vec![0.0; self.targets.len()];
        for (i, rows) in self.by_cell.iter().enumerate() {
            if sel[i] {
                for &(r, a) in rows {
                    held[r as usize] += a;
                }
            }
        }
        held
    }

    fn fits(&self, used: (f64, f64), i: usize) -> bool {
        let b = &self.problem.budget;
        b.max_cost
            .is_none_or(|m| used.0 + self.problem.cost[i] <= m)
            && b.max_area_km2
                .is_none_or(|m| used.1 + self.problem.area_km2[i] <= m)
    }

    /// Add cells to `sel` until every target holds (module doc), with `lagrangian[i]` the
    /// multipliers' reduced cost of each cell without its edge terms. `None` if the budget or
    /// the excluded cells stop it first.
    pub fn repair(&self, sel: &mut [bool], lagrangian: &[f64]) -> Option<()> {
        let p = self.problem;
        let n = p.n_cells();
        for (s, status) in sel.iter_mut().zip(&p.status) {
            match status {
                CellStatus::Required => *s = true,
                CellStatus::Excluded => *s = false,
                CellStatus::Free => {}
            }
        }
        let held = self.held(sel);
        let mut short: Vec<f64> = self
            .targets
            .iter()
            .zip(&held)
            .map(|(t, h)| (t - h).max(0.0))
            .collect();
        let mut open = short.iter().filter(|s| **s > 0.0).count();
        let mut used = (0.0, 0.0);
        for i in (0..n).filter(|&i| sel[i]) {
            used.0 += p.cost[i];
            used.1 += p.area_km2[i];
        }
        let score = |sel: &[bool], short: &[f64], i: usize| -> Option<f64> {
            let mu: f64 = self.by_cell[i]
                .iter()
                .map(|&(r, a)| a.min(short[r as usize]) / self.targets[r as usize])
                .sum();
            if mu <= 0.0 {
                return None;
            }
            let edges: f64 = self.neighbours[i]
                .iter()
                .map(|&(j, wl)| if sel[j as usize] { -wl } else { wl })
                .sum();
            let gamma = lagrangian[i] + edges;
            Some(if gamma > 0.0 { gamma / mu } else { gamma * mu })
        };
        let mut heap = BinaryHeap::new();
        for i in 0..n {
            if !sel[i] && p.status[i] == CellStatus::Free {
                if let Some(s) = score(sel, &short, i) {
                    heap.push(Entry {
                        score: s,
                        cell: i as u32,
                    });
                }
            }
        }
        while open > 0 {
            let top = heap.pop()?;
            let i = top.cell as usize;
            if sel[i] {
                continue;
            }
            let Some(now) = score(sel, &short, i) else {
                continue;
            };
            if now > top.score + 1e-12 * top.score.abs() {
                heap.push(Entry {
                    score: now,
                    cell: top.cell,
                });
                continue;
            }
            if !self.fits(used, i) {
                continue;
            }
            sel[i] = true;
            used.0 += p.cost[i];
            used.1 += p.area_km2[i];
            for &(r, a) in &self.by_cell[i] {
                let s = &mut short[r as usize];
                if *s > 0.0 {
                    *s = (*s - a).max(0.0);
                    if *s == 0.0 {
                        open -= 1;
                    }
                }
            }
            for &(j, _) in &self.neighbours[i] {
                let j = j as usize;
                if !sel[j] && p.status[j] == CellStatus::Free {
                    if let Some(s) = score(sel, &short, j) {
                        heap.push(Entry {
                            score: s,
                            cell: j as u32,
                        });
                    }
                }
            }
        }
        Some(())
    }

    /// Drop chosen free cells whose removal keeps every target and lowers the objective,
    /// largest saving first, until none is left (at most a few passes).
    pub fn drop_redundant(&self, sel: &mut [bool]) {
        let p = self.problem;
        let mut held = self.held(sel);
        for _ in 0..4 {
            let mut order: Vec<(f64, usize)> = (0..p.n_cells())
                .filter(|&i| sel[i] && p.status[i] == CellStatus::Free)
                .map(|i| (self.delta(sel, i), i))
                .filter(|(d, _)| *d < 0.0)
                .collect();
            order.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
            let mut dropped = false;
            for (_, i) in order {
                if self.delta(sel, i) >= 0.0 {
                    continue;
                }
                let spare = self.by_cell[i]
                    .iter()
                    .all(|&(r, a)| held[r as usize] - a >= self.targets[r as usize]);
                if spare {
                    sel[i] = false;
                    for &(r, a) in &self.by_cell[i] {
                        held[r as usize] -= a;
                    }
                    dropped = true;
                }
            }
            if !dropped {
                break;
            }
        }
    }

    /// Cells within `hops` edge steps of `seed`, breadth first, at most `limit` of them (free
    /// cells only). Without an edge penalty, the `limit` cells with ids nearest `seed`.
    pub fn window(&self, seed: usize, limit: usize) -> Vec<bool> {
        let p = self.problem;
        let n = p.n_cells();
        let mut inside = vec![false; n];
        if self.neighbours.iter().all(|v| v.is_empty()) {
            let lo = seed.saturating_sub(limit / 2);
            let hi = (lo + limit).min(n);
            for (i, f) in inside.iter_mut().enumerate().take(hi).skip(lo) {
                *f = p.status[i] == CellStatus::Free;
            }
            return inside;
        }
        let mut seen = vec![false; n];
        let mut queue = std::collections::VecDeque::from([seed]);
        seen[seed] = true;
        let mut count = 0;
        while let Some(i) = queue.pop_front() {
            if p.status[i] == CellStatus::Free {
                inside[i] = true;
                count += 1;
                if count >= limit {
                    break;
                }
            }
            for &(j, _) in &self.neighbours[i] {
                if !seen[j as usize] {
                    seen[j as usize] = true;
                    queue.push_back(j as usize);
                }
            }
        }
        inside
    }
}

/// Scale for cells that use none of the budget: their gain outranks any cell that uses some.
const FREE_OF_BUDGET: f64 = 1e12;

impl Moves<'_> {
    /// The largest share of a budget cell i uses (1 without a budget).
    fn budget_use(&self, i: usize) -> f64 {
        let p = self.problem;
        let share = |used: f64, limit: Option<f64>| -> Option<f64> {
            limit.map(|m| {
                if m > 0.0 {
                    used / m
                } else if used > 0.0 {
                    f64::INFINITY
                } else {
                    0.0
                }
            })
        };
        match (
            share(p.cost[i], p.budget.max_cost),
            share(p.area_km2[i], p.budget.max_area_km2),
        ) {
            (None, None) => 1.0,
            (a, b) => a.unwrap_or(0.0).max(b.unwrap_or(0.0)),
        }
    }

    /// w·Δexposed when cell i flips (positive: more exposed edge).
    fn edge_delta(&self, sel: &[bool], i: usize) -> f64 {
        let sign = if sel[i] { -1.0 } else { 1.0 };
        let edges: f64 = self.neighbours[i]
            .iter()
            .map(|&(j, wl)| if sel[j as usize] { -wl } else { wl })
            .sum();
        sign * (self.own[i] + edges)
    }

    /// Change of Σₖ weightₖ·min(heldₖ, capₖ)/capₖ − w·exposed when cell i flips.
    fn gain(&self, sel: &[bool], held: &[f64], weights: &[f64], i: usize) -> f64 {
        let sign = if sel[i] { -1.0 } else { 1.0 };
        let credit: f64 = self.by_cell[i]
            .iter()
            .map(|&(r, a)| {
                let (h, cap) = (held[r as usize], self.targets[r as usize]);
                weights[r as usize] * ((h + sign * a).min(cap) - h.min(cap)) / cap
            })
            .sum();
        credit - self.edge_delta(sel, i)
    }

    fn within(&self, used: (f64, f64)) -> bool {
        let b = &self.problem.budget;
        b.max_cost.is_none_or(|m| used.0 <= m) && b.max_area_km2.is_none_or(|m| used.1 <= m)
    }

    /// Turn `sel` into a max-benefit network within the budget (module doc), with `weights`
    /// the value of one unit of capped holding per row. `None` when the required cells alone
    /// break the budget.
    pub fn fill(&self, sel: &mut [bool], weights: &[f64]) -> Option<()> {
        let p = self.problem;
        let n = p.n_cells();
        for (s, status) in sel.iter_mut().zip(&p.status) {
            match status {
                CellStatus::Required => *s = true,
                CellStatus::Excluded => *s = false,
                CellStatus::Free => {}
            }
        }
        let mut held = self.held(sel);
        let mut used = (0.0, 0.0);
        for i in (0..n).filter(|&i| sel[i]) {
            used.0 += p.cost[i];
            used.1 += p.area_km2[i];
        }
        let flip = |sel: &mut [bool], held: &mut [f64], used: &mut (f64, f64), i: usize| {
            let sign = if sel[i] { -1.0 } else { 1.0 };
            for &(r, a) in &self.by_cell[i] {
                held[r as usize] += sign * a;
            }
            used.0 += sign * p.cost[i];
            used.1 += sign * p.area_km2[i];
            sel[i] = !sel[i];
        };
        // 1. Over the budget: the least loss per budget share goes first.
        if !self.within(used) {
            let mut order: Vec<(f64, usize)> = (0..n)
                .filter(|&i| sel[i] && p.status[i] == CellStatus::Free)
                .map(|i| {
                    let loss = -self.gain(sel, &held, weights, i);
                    (loss / self.budget_use(i).max(1e-300), i)
                })
                .collect();
            order.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
            for (_, i) in order {
                if self.within(used) {
                    break;
                }
                flip(sel, &mut held, &mut used, i);
            }
            if !self.within(used) {
                return None;
            }
        }
        // 2. Add by gain per budget share while a cell with a positive gain fits.
        let score = |sel: &[bool], held: &[f64], i: usize| -> Option<f64> {
            let g = self.gain(sel, held, weights, i);
            if g <= 0.0 {
                return None;
            }
            let u = self.budget_use(i);
            // Entries pop least score first: store the negated ratio.
            Some(if u > 0.0 { -g / u } else { -g * FREE_OF_BUDGET })
        };
        let mut heap = BinaryHeap::new();
        for i in 0..n {
            if !sel[i] && p.status[i] == CellStatus::Free {
                if let Some(s) = score(sel, &held, i) {
                    heap.push(Entry {
                        score: s,
                        cell: i as u32,
                    });
                }
            }
        }
        while let Some(top) = heap.pop() {
            let i = top.cell as usize;
            if sel[i] {
                continue;
            }
            let Some(now) = score(sel, &held, i) else {
                continue;
            };
            if now > top.score + 1e-12 * top.score.abs() {
                heap.push(Entry {
                    score: now,
                    cell: top.cell,
                });
                continue;
            }
            if !self.fits(used, i) {
                continue;
            }
            flip(sel, &mut held, &mut used, i);
            for &(j, _) in &self.neighbours[i] {
                let j = j as usize;
                if !sel[j] && p.status[j] == CellStatus::Free {
                    if let Some(s) = score(sel, &held, j) {
                        heap.push(Entry {
                            score: s,
                            cell: j as u32,
                        });
                    }
                }
            }
        }
        // 3. Cells whose removal raises the weighted benefit (edge dearer than credit).
        for _ in 0..4 {
            let mut dropped = false;
            for i in 0..n {
                if sel[i]
                    && p.status[i] == CellStatus::Free
                    && self.gain(sel, &held, weights, i) > 0.0
                {
                    flip(sel, &mut held, &mut used, i);
                    dropped = true;
                }
            }
            if !dropped {
                break;
            }
        }
        Some(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Budget, ModelFeature, Objective, Robustness, Scenario};

    #[test]
    fn fill_trims_to_the_budget_then_adds_the_best_ratio() {
        // Cells of cost (2, 1, 1), budget 2; f0 holds (2, 1, 0) with cap 2, f1 holds (0, 0, 1)
        // with cap 1, weights 1. Hand trace from all three chosen (cost 4): removal losses per
        // budget share are cell 1: 0 (f0 stays at its cap), cell 0: ½, cell 2: 2, so cells 1
        // and 0 go (cost 1). Adding back: cell 0 gains 1 for a share of 1, cell 1 gains ½ for ½:
        // a tie, cell 0 first but it does not fit; cell 1 does. {1, 2} is the enumerated
        // optimum (benefit 1.5).
        let f = |name: &str, amounts, target| ModelFeature {
            name: name.into(),
            scenario: None,
            amounts,
            target,
            weight: 1.0,
        };
        let p = Problem {
            budget: Budget {
                max_cost: Some(2.0),
                max_area_km2: None,
            },
            ..Problem::plain(
                vec![2.0, 1.0, 1.0],
                vec![1.0; 3],
                vec![Scenario {
                    name: "s".into(),
                    weight: 1.0,
                }],
                vec![
                    f("f0", vec![(0, 2.0), (1, 1.0)], 2.0),
                    f("f1", vec![(2, 1.0)], 1.0),
                ],
                Objective::MaxBenefit,
                Robustness::EveryScenario,
            )
        };
        let m = Moves::new(&p);
        let mut sel = vec![true; 3];
        m.fill(&mut sel, &[1.0, 1.0]).unwrap();
        assert_eq!(sel, vec![false, true, true]);
        let e = crate::model::evaluate(&p, &sel);
        assert!(e.within_budget);
        assert_eq!(e.objective, 1.5);
        // Required cells over the budget: no network.
        let mut q = p.clone();
        q.status = vec![CellStatus::Required; 3];
        assert!(Moves::new(&q).fill(&mut sel, &[1.0, 1.0]).is_none());
    }
}
