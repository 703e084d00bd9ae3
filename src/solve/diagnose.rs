//! Why targets cannot be met: per feature, the most any allowed network can hold, and what
//! stops it. Run before building an integer program for min-cost problems, so the user gets a
//! precise message instead of a bare "infeasible".
//!
//! # Method
//! For feature k with target Tₖ > 0:
//! 1. Region: Σᵢ aᵢₖ over all cells. Below Tₖ → binding `region` (no network of this region
//!    can hold it, e.g. an absolute target above the feature's total).
//! 2. Allowed: Σ aᵢₖ over cells that are not excluded. Below Tₖ → binding `excluded cells`.
//! 3. Budget (if set): an upper bound on the most a network within the budget can hold — the
//!    LP relaxation of the knapsack max Σ aᵢₖxᵢ s.t. Σ cᵢxᵢ ≤ budget, xᵢ ∈ [0, 1], with required
//!    cells fixed to 1 and excluded ones to 0. Its optimum is the fractional greedy by aᵢₖ/cᵢ
//!    (Dantzig 1957, the classical LP-knapsack result). Done for the cost and area limits
//!    separately; the smaller bound is reported. Below Tₖ → binding `budget`.
//!
//! Because step 3 is a relaxation, a `budget` shortfall is certain but the achievable amount is
//! "at most"; a feature that passes every step may still fail jointly with the others (the
//! solvers then return [`super::SolveError::JointlyInfeasible`]).

use crate::model::evaluate::at_least;
use crate::model::{CellStatus, Problem};

use super::Shortfall;

/// LP-knapsack bound: the most of `amount` (per cell) a network can hold with `weight` (per
/// cell) at most `limit`, required cells included, excluded cells left out.
fn knapsack_bound(problem: &Problem, amount: &[(u32, f64)], weight: &[f64], limit: f64) -> f64 {
    let mut room = limit;
    let mut held = 0.0;
    for (i, st) in problem.status.iter().enumerate() {
        if *st == CellStatus::Required {
            room -= weight[i];
        }
    }
    let mut items: Vec<(f64, f64)> = Vec::new();
    for &(c, a) in amount {
        match problem.status[c as usize] {
            CellStatus::Required => held += a,
            CellStatus::Excluded => {}
            CellStatus::Free => items.push((a, weight[c as usize])),
        }
    }
    // Free items (zero weight) first, then by amount per unit weight, descending.
    items.sort_by(|x, y| {
        let rx = if x.1 > 0.0 { x.0 / x.1 } else { f64::INFINITY };
        let ry = if y.1 > 0.0 { y.0 / y.1 } else { f64::INFINITY };
        ry.total_cmp(&rx)
    });
    for (a, w) in items {
        if w <= room {
            held += a;
            room -= w;
        } else {
            if room > 0.0 {
                held += a * room / w;
            }
            break;
        }
    }
    held
}

/// Per feature that cannot reach its target: the target, the most achievable and the binding
/// reason (`region`, `excluded cells`, `budget`). Empty when every target passes every check.
pub fn diagnose(problem: &Problem) -> Vec<Shortfall> {
    let mut out = Vec::new();
    for f in &problem.features {
        if f.target <= 0.0 {
            continue;
        }
        let region: f64 = f.amounts.iter().map(|(_, a)| a).sum();
        let allowed: f64 = f
            .amounts
            .iter()
            .filter(|(c, _)| problem.status[*c as usize] != CellStatus::Excluded)
            .map(|(_, a)| a)
            .sum();
        let shortfall = |achievable: f64, binding: &str| Shortfall {
            feature: f.name.clone(),
            target: f.target,
            achievable,
            binding: binding.to_string(),
        };
        if !at_least(region, f.target) {
            out.push(shortfall(region, "region"));
            continue;
        }
        if !at_least(allowed, f.target) {
            out.push(shortfall(allowed, "excluded cells"));
            continue;
        }
        let mut bound = f64::INFINITY;
        if let Some(limit) = problem.budget.max_cost {
            bound = bound.min(knapsack_bound(problem, &f.amounts, &problem.cost, limit));
        }
        if let Some(limit) = problem.budget.max_area_km2 {
            bound = bound.min(knapsack_bound(
                problem,
                &f.amounts,
                &problem.area_km2,
                limit,
            ));
        }
        if !at_least(bound, f.target) {
            out.push(shortfall(bound, "budget"));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Budget, ModelFeature, Objective, Robustness, Scenario};

    fn problem(status: Vec<CellStatus>, target: f64, budget: Budget) -> Problem {
        Problem {
            cost: vec![1.0, 2.0, 4.0, 1.0],
            area_km2: vec![1.0; 4],
            status,
            scenarios: vec![Scenario {
                name: "s".into(),
                weight: 1.0,
            }],
            features: vec![ModelFeature {
                name: "kelp".into(),
                scenario: None,
                amounts: vec![(0, 1.0), (1, 4.0), (2, 4.0)],
                target,
                weight: 1.0,
            }],
            objective: Objective::MinCost,
            robustness: Robustness::EveryScenario,
            budget,
            edge_penalty: None,
            spacing: None,
            scenario_best: None,
            min_reserve: None,
            keep_objective: None,
        }
    }

    #[test]
    fn reasons_and_amounts() {
        let free = vec![CellStatus::Free; 4];
        // Region holds 1 + 4 + 4 = 9 < 10 → region, achievable 9.
        let d = diagnose(&problem(free.clone(), 10.0, Budget::default()));
        assert_eq!((d[0].achievable, d[0].binding.as_str()), (9.0, "region"));
        // Excluding cell 2 leaves 5 < 8 → excluded cells, achievable 5.
        let mut st = free.clone();
        st[2] = CellStatus::Excluded;
        let d = diagnose(&problem(st, 8.0, Budget::default()));
        assert_eq!(
            (d[0].achievable, d[0].binding.as_str()),
            (5.0, "excluded cells")
        );
        // Cost budget 3: ratios a/c = 1 (cell 0), 2 (cell 1), 1 (cell 2). Hand LP knapsack:
        // take cell 1 (cost 2, 4), then cell 0 (cost 1, 1): 5 with the budget used → 5 < 8.
        let b = Budget {
            max_cost: Some(3.0),
            max_area_km2: None,
        };
        let d = diagnose(&problem(free.clone(), 8.0, b));
        assert_eq!((d[0].achievable, d[0].binding.as_str()), (5.0, "budget"));
        // Budget 4: cell 1, cell 0, then 1/4 of cell 2 → 4 + 1 + 1 = 6.
        let b = Budget {
            max_cost: Some(4.0),
            max_area_km2: None,
        };
        assert_eq!(diagnose(&problem(free.clone(), 8.0, b))[0].achievable, 6.0);
        // Area budget 1 with cell 0 required: required uses it all → 1.
        let mut st = free.clone();
        st[0] = CellStatus::Required;
        let b = Budget {
            max_cost: None,
            max_area_km2: Some(1.0),
        };
        assert_eq!(diagnose(&problem(st, 3.0, b))[0].achievable, 1.0);
        // Feasible target → nothing reported.
        assert!(diagnose(&problem(free, 8.0, Budget::default())).is_empty());
    }
}
