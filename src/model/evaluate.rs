//! Recompute everything about a network from raw amounts: cost, area, holdings, targets reached,
//! per-scenario benefit and regret, exposed edge, max gap and the objective in the problem's
//! own sense. It shares no code with any solver's formulation, which makes it the independent
//! check for solvers and tests.

use super::compact::exposed_edge_km;
use super::robust::{combine, is_minimisation};
use super::spacing::{check_gaps, GapReport};
use super::{CellStatus, Objective, Problem};

/// Relative slack when comparing a holding with its target or a use with its budget: sums of
/// the same amounts taken in another order (as a solver does) differ by a few ulps, so an exact
/// comparison would reject networks that meet a target exactly.
pub const TOLERANCE: f64 = 1e-9;

/// `value` ≥ `limit` up to [`TOLERANCE`].
pub fn at_least(value: f64, limit: f64) -> bool {
    value >= limit - TOLERANCE * limit.abs().max(1.0)
}

/// How one scenario fares (serialised as is into `summary.json`).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ScenarioResult {
    /// Scenario name.
    pub name: String,
    /// Bₛ = Σ wₖ·min(protectedₖ/capₖ, 1) over the scenario's features (capₖ = Tₖ, or the total
    /// amount of a weight-only feature). Units: weighted targets
    /// (see [`super::robust`]).
    pub benefit: f64,
    /// The largest Bₛ can be (Σ wₖ over features that can earn). Units: weighted targets.
    pub benefit_max: f64,
    /// Bₛ*, the best benefit the scenario alone allows, when known.
    pub best: Option<f64>,
    /// max(Bₛ* − Bₛ, 0) when Bₛ* is known (≥ 0 by definition). Units: weighted targets.
    pub regret: Option<f64>,
    /// Targets of this scenario's features that are reached (absent features never are).
    pub targets_reached: usize,
    /// Number of this scenario's features (absent ones included).
    pub targets: usize,
    /// This scenario's features with no amount anywhere (absent: never reached).
    pub absent: usize,
}

/// Everything about a network, recomputed from raw amounts.
#[derive(Debug, Clone, PartialEq)]
pub struct Evaluation {
    /// Total cost.
    pub cost: f64,
    /// Total sea area. Units: km².
    pub area_km2: f64,
    /// Amount of each feature protected (feature order).
    pub protected: Vec<f64>,
    /// Whether each feature's target is reached (up to [`TOLERANCE`]); never for an absent one.
    pub reached: Vec<bool>,
    /// Whether each feature is absent: no positive amount in any cell (e.g. a species gone
    /// from the region). Absent features are never reached, and never make a network infeasible.
    pub absent: Vec<bool>,
    /// Number of features whose target is reached.
    pub targets_reached: usize,
    /// Per-scenario benefit, regret and targets reached.
    pub scenarios: Vec<ScenarioResult>,
    /// Exposed reserve edge (0 without an edge penalty). Units: km.
    pub exposed_edge_km: f64,
    /// Link strength the network holds (0 without a connectivity reward; [`super::links`]).
    /// Units: larval shares.
    pub linked: f64,
    /// The max-gap check, when the problem has a spacing rule.
    pub gap: Option<GapReport>,
    /// Chosen cells that break the minimum-size rule (lone and too small), ascending.
    pub lone_cells: Vec<u32>,
    /// Chosen free cells with fewer chosen rook neighbours than the neighbour rule asks,
    /// ascending.
    pub short_of_neighbours: Vec<u32>,
    /// Cost and area within the budget.
    pub within_budget: bool,
    /// Every required cell chosen and no excluded cell chosen.
    pub status_respected: bool,
    /// Per zone target ([`super::Zoning::targets`]), whether it is reached (empty without zones).
    pub zone_targets_reached: Vec<bool>,
    /// All hard rules hold: cell status, budget, max gap, minimum size, for min-cost every
    /// target, a kept objective ([`Problem::keep_objective`]) and a portfolio member's
    /// least difference from earlier networks ([`Problem::alternative`]).
    pub feasible: bool,
    /// Objective in the problem's own sense: cost + penalty (min-cost), combined benefit −
    /// penalty (max-benefit) or largest regret + penalty (least-regret; NaN when Bₛ* unknown),
    /// where penalty = edge weight × exposed edge − link weight × linked;
    /// the cost alone when the problem keeps an objective ([`Problem::keep_objective`]), or the
    /// overlap with earlier networks for a portfolio member ([`Problem::alternative`]).
    pub objective: f64,
}

/// Recompute everything about the network `selected` (one flag per cell).
///
/// Panics if `selected.len() != problem.n_cells()` (a caller bug, not user input).
///
/// On a zoned problem ([`Problem::zoning`]) every chosen cell is scored in the first zone; use
/// [`evaluate_zoned`] to score an assignment of zones.
pub fn evaluate(problem: &Problem, selected: &[bool]) -> Evaluation {
    match &problem.zoning {
        None => evaluate_with(problem, selected, None),
        Some(_) => evaluate_with(problem, selected, Some(&super::zones::first_zone(selected))),
    }
}

/// Recompute everything about a zoned network: `assignment` holds per cell 0 (outside) or
/// 1 + its zone index ([`super::zones`]). On a problem without zones, any non-zero value means
/// "chosen".
///
/// Panics if `assignment.len() != problem.n_cells()` (a caller bug, not user input).
pub fn evaluate_zoned(problem: &Problem, assignment: &[u8]) -> Evaluation {
    let selected: Vec<bool> = assignment.iter().map(|&v| v > 0).collect();
    match &problem.zoning {
        None => evaluate_with(problem, &selected, None),
        Some(_) => evaluate_with(problem, &selected, Some(assignment)),
    }
}

fn evaluate_with(problem: &Problem, selected: &[bool], assignment: Option<&[u8]>) -> Evaluation {
    assert_eq!(selected.len(), problem.n_cells(), "one flag per cell");
    let zoned = problem.zoning.as_ref().zip(assignment);
    let sum_selected = |v: &[f64]| -> f64 {
        v.iter()
            .zip(selected)
            .filter(|(_, s)| **s)
            .map(|(x, _)| *x)
            .sum()
    };
    let cost = match zoned {
        None => sum_selected(&problem.cost),
        Some((z, a)) => problem
            .cost
            .iter()
            .zip(a)
            .map(|(&c, &v)| z.cell_cost(c, v))
            .sum(),
    };
    let area_km2 = sum_selected(&problem.area_km2);
    let protected: Vec<f64> = problem
        .features
        .iter()
        .enumerate()
        .map(|(k, f)| match zoned {
            None => f
                .amounts
                .iter()
                .filter(|(c, _)| selected[*c as usize])
                .map(|(_, a)| *a)
                .sum(),
            Some((z, asg)) => f
                .amounts
                .iter()
                .map(|&(c, a)| z.cell_credit(k, asg[c as usize]) * a)
                .sum(),
        })
        .collect();
    // Zone targets: each feature's own amount in cells of the zone.
    let zone_targets_reached: Vec<bool> = zoned.map_or_else(Vec::new, |(z, asg)| {
        z.targets
            .iter()
            .map(|t| {
                let held: f64 = problem.features[t.feature]
                    .amounts
                    .iter()
                    .filter(|(c, _)| asg[*c as usize] as usize == t.zone + 1)
                    .map(|(_, a)| a)
                    .sum();
                at_least(held, t.amount)
            })
            .collect()
    });
    let zones_allowed = zoned.is_none_or(|(z, asg)| {
        asg.iter().enumerate().all(|(i, &v)| {
            super::zones::Zoning::zone_of(v).is_none_or(|zi| zi < z.len() && z.allowed[zi][i])
        })
    });
    let absent: Vec<bool> = problem
        .features
        .iter()
        .map(|f| !f.amounts.iter().any(|(_, a)| *a > 0.0))
        .collect();
    let reached: Vec<bool> = problem
        .features
        .iter()
        .zip(&protected)
        .zip(&absent)
        .map(|((f, h), &gone)| !gone && at_least(*h, f.target))
        .collect();
    let credit = |k: usize| -> f64 {
        let f = &problem.features[k];
        match f.benefit_cap() {
            Some(cap) => f.weight * (protected[k] / cap).min(1.0),
            None => 0.0,
        }
    };
    let best = problem.scenario_best.as_deref();
    let scenarios: Vec<ScenarioResult> = problem
        .scenarios
        .iter()
        .enumerate()
        .map(|(s, sc)| {
            let ks = problem.scenario_features(s);
            let benefit: f64 = ks.iter().map(|&k| credit(k)).sum();
            let b_star = best.map(|b| b[s]);
            ScenarioResult {
                name: sc.name.clone(),
                benefit,
                benefit_max: ks
                    .iter()
                    .filter(|&&k| problem.features[k].benefit_cap().is_some())
                    .map(|&k| problem.features[k].weight)
                    .sum(),
                best: b_star,
                // Bₛ* is the best benefit known (a solve stopped at its gap or time limit can
                // fall short of the optimum); a network that beats it shows the scenario can
                // reach its own benefit, so its regret there is 0, never negative.
                regret: b_star.map(|b| (b - benefit).max(0.0)),
                targets_reached: ks.iter().filter(|&&k| reached[k]).count(),
                targets: ks.len(),
                absent: ks.iter().filter(|&&k| absent[k]).count(),
            }
        })
        .collect();
    let exposed = problem.edge_penalty.as_ref().map_or(0.0, |p| match zoned {
        None => exposed_edge_km(p, selected),
        Some((_, asg)) => super::compact::exposed_edge_zoned_km(p, asg),
    });
    let penalty = problem.edge_penalty.as_ref().map_or(0.0, |p| p.weight) * exposed;
    let linked = problem
        .link_reward
        .as_ref()
        .map_or(0.0, |r| r.linked(selected));
    // The connectivity reward works against the penalty: it lowers a minimised objective and
    // raises a maximised one.
    let penalty = penalty - problem.link_reward.as_ref().map_or(0.0, |r| r.weight) * linked;
    let gap = problem
        .spacing
        .as_ref()
        .map(|sp| check_gaps(sp, &problem.status, selected));
    let within_budget = problem.budget.max_cost.is_none_or(|m| at_least(m, cost))
        && problem
            .budget
            .max_area_km2
            .is_none_or(|m| at_least(m, area_km2));
    let status_respected = problem.status.iter().zip(selected).all(|(st, s)| match st {
        CellStatus::Free => true,
        CellStatus::Required => *s,
        CellStatus::Excluded => !*s,
    });
    let lone_cells = problem.min_reserve.as_ref().map_or_else(Vec::new, |m| {
        m.lone_cells(&problem.status, &problem.area_km2, selected)
    });
    let short_of_neighbours = problem
        .min_neighbours
        .as_ref()
        .map_or_else(Vec::new, |m| m.short_cells(&problem.status, selected));
    // An absent feature's target is zero, so it binds nothing (it is not reached either).
    let all_reached = reached.iter().zip(&absent).all(|(m, a)| *m || *a);
    let first = match problem.objective {
        Objective::MinCost => cost + penalty,
        Objective::MaxBenefit => {
            let benefits: Vec<f64> = scenarios.iter().map(|s| s.benefit).collect();
            let combined = combine(problem, &benefits, best);
            if is_minimisation(problem) {
                combined + penalty
            } else {
                combined - penalty
            }
        }
    };
    // A kept objective (lexicographic second stage) is checked with twice the solver's slack,
    // so a network the solver accepted within its row tolerance is not called infeasible here.
    let keeps = problem.keep_objective.is_none_or(|v| {
        let slack = 2.0 * super::keep_slack(v);
        if is_minimisation(problem) {
            first <= v + slack
        } else {
            first >= v - slack
        }
    });
    let feasible = status_respected
        && within_budget
        && gap.as_ref().is_none_or(|g| g.reached)
        && lone_cells.is_empty()
        && short_of_neighbours.is_empty()
        && (problem.objective == Objective::MaxBenefit || all_reached)
        && keeps
        && zones_allowed
        && zone_targets_reached.iter().all(|r| *r)
        && problem
            .alternative
            .as_ref()
            .is_none_or(|a| a.distances(selected).iter().all(|&d| d >= a.min_difference));
    let objective = match (&problem.keep_objective, &problem.alternative) {
        (Some(_), Some(a)) => a.overlap(selected),
        (Some(_), None) => cost,
        (None, _) => first,
    };
    Evaluation {
        cost,
        area_km2,
        targets_reached: reached.iter().filter(|m| **m).count(),
        protected,
        reached,
        absent,
        scenarios,
        exposed_edge_km: exposed,
        linked,
        gap,
        lone_cells,
        short_of_neighbours,
        within_budget,
        status_respected,
        zone_targets_reached,
        feasible,
        objective,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::compact::unit_grid_penalty;
    use crate::model::{Budget, ModelFeature, Robustness, Scenario};

    /// CHECK-VALUES.md tiny instance: 2×3 unit grid, costs [3,2,4,2,3,1], A target 2, B 1, C 1.
    fn tiny() -> Problem {
        let f = |name: &str, v: [f64; 6], t: f64| ModelFeature {
            name: name.into(),
            scenario: None,
            amounts: v
                .iter()
                .enumerate()
                .filter(|(_, a)| **a > 0.0)
                .map(|(i, a)| (i as u32, *a))
                .collect(),
            target: t,
            weight: 1.0,
        };
        Problem {
            cost: vec![3.0, 2.0, 4.0, 2.0, 3.0, 1.0],
            area_km2: vec![1.0; 6],
            status: vec![CellStatus::Free; 6],
            scenarios: vec![Scenario {
                name: "s1".into(),
                weight: 1.0,
            }],
            features: vec![
                f("A", [1., 0., 1., 0., 1., 0.], 2.0),
                f("B", [0., 1., 1., 0., 0., 1.], 1.0),
                f("C", [0., 0., 0., 1., 1., 0.], 1.0),
            ],
            objective: Objective::MinCost,
            robustness: Robustness::EveryScenario,
            budget: Budget::default(),
            edge_penalty: None,
            link_reward: None,
            spacing: None,
            scenario_best: None,
            min_reserve: None,
            min_neighbours: None,
            keep_objective: None,
            alternative: None,
            zoning: None,
        }
    }

    fn sel(ids: &[usize]) -> Vec<bool> {
        (0..6).map(|i| ids.contains(&i)).collect()
    }

    #[test]
    fn tiny_instance_values() {
        // CHECK-VALUES.md (computed by enumeration): {2,4} and {0,4,5} both cost 7 and meet
        // every target; with edge weight 1 their objectives are 7 + 8 = 15 and 7 + 10 = 17.
        let mut p = tiny();
        let e = evaluate(&p, &sel(&[2, 4]));
        assert_eq!(e.cost, 7.0);
        assert!(e.feasible);
        assert_eq!(e.protected, vec![2.0, 1.0, 1.0]);
        let e = evaluate(&p, &sel(&[0, 4, 5]));
        assert_eq!((e.cost, e.feasible), (7.0, true));
        // {2} alone: A protected 1 < 2 → infeasible for min-cost; benefit 0.5 + 1 + 0 = 1.5.
        let e = evaluate(&p, &sel(&[2]));
        assert!(!e.feasible);
        assert_eq!(e.targets_reached, 1);
        assert_eq!(e.scenarios[0].benefit, 1.5);
        p.edge_penalty = Some(unit_grid_penalty(2, 3, 1.0));
        assert_eq!(evaluate(&p, &sel(&[2, 4])).objective, 15.0);
        assert_eq!(evaluate(&p, &sel(&[0, 4, 5])).objective, 17.0);
        // Max-benefit with a cost budget of 5: {2} (cost 4) benefit 1.5 minus perimeter 4 →
        // −2.5; {0,4} exceeds nothing (cost 6 > 5) → outside the budget.
        p.objective = Objective::MaxBenefit;
        p.budget.max_cost = Some(5.0);
        let e = evaluate(&p, &sel(&[2]));
        assert_eq!(e.objective, 1.5 - 4.0);
        assert!(e.feasible);
        assert!(!evaluate(&p, &sel(&[0, 4])).within_budget);
        // Required/excluded respected.
        p.status[5] = CellStatus::Required;
        assert!(!evaluate(&p, &sel(&[2])).status_respected);
    }
}
