//! Near-optimal portfolios: N distinct networks, each within a stated share of the optimum's
//! objective and each meeting every rule the plan sets, made as different from each other as
//! the share allows.
//!
//! Zoned problems ([`crate::model::zones`]) keep their zones: each member is a zone
//! assignment scored with its zones' costs and credits, and members differ in the cells they
//! choose (a cell changing zone only is not a difference).
//!
//! Member 1 is the optimum. Member k keeps the plan's objective within the share of it
//! ([`Problem::keep_objective`]) and maximises its total Hamming distance to members 1…k−1,
//! each of which it must differ from in at least `min_difference` cells (a no-good cut;
//! [`crate::model::alternative`]). The members are solved one after the other, so the result
//! is the same for any thread count. The portfolio ends early when no further network within
//! the share differs enough from those found.

use crate::model::alternative::jaccard_distance;
use crate::model::robust::is_minimisation;
use crate::model::{evaluate_zoned, Alternative, Problem};
use crate::solve::decompose::{choose::Exact, solve_exact};
use crate::solve::ilp::Highs;
use crate::solve::{with_scenario_best, Solution, SolveError, SolveOptions, Solver};

/// One member of a portfolio.
#[derive(Debug, Clone, PartialEq)]
pub struct Member {
    /// The network and how its solve ended (for members after the first, the status, bound and
    /// gap are those of the distance stage).
    pub solution: Solution,
    /// The plan's objective of the network (as `model::evaluate_zoned` recomputes it).
    pub objective: f64,
    /// Cells in which it differs from each earlier member, in member order.
    pub differs_from_earlier: Vec<usize>,
}

/// The portfolio and its measures.
#[derive(Debug, Clone, PartialEq)]
pub struct Portfolio {
    /// Members, the optimum first.
    pub members: Vec<Member>,
    /// The optimum's objective (member 1's).
    pub optimum: f64,
    /// The objective every member stays within (the optimum plus or minus the share).
    pub limit: f64,
    /// The share asked for (0.05 = within 5 %).
    pub within: f64,
    /// Members asked for.
    pub asked: usize,
}

impl Portfolio {
    /// Per cell, the share of members that choose it (0–1).
    pub fn selection_share(&self) -> Vec<f64> {
        let n = self
            .members
            .first()
            .map_or(0, |m| m.solution.selected.len());
        let m = self.members.len().max(1) as f64;
        (0..n)
            .map(|i| {
                self.members
                    .iter()
                    .filter(|x| x.solution.selected[i])
                    .count() as f64
                    / m
            })
            .collect()
    }

    /// Mean Jaccard distance over all pairs of members (0: all alike; NaN with one member).
    pub fn mean_jaccard(&self) -> f64 {
        let mut sum = 0.0;
        let mut pairs = 0usize;
        for a in 0..self.members.len() {
            for b in a + 1..self.members.len() {
                sum += jaccard_distance(
                    &self.members[a].solution.selected,
                    &self.members[b].solution.selected,
                );
                pairs += 1;
            }
        }
        if pairs == 0 {
            f64::NAN
        } else {
            sum / pairs as f64
        }
    }
}

/// The objective limit `within` (a share, ≥ 0) of `optimum` allows: above it for a minimised
/// objective, below it for a maximised one. Units: the objective's.
pub fn objective_limit(optimum: f64, within: f64, minimise: bool) -> f64 {
    if minimise {
        optimum + within * optimum.abs()
    } else {
        optimum - within * optimum.abs()
    }
}

/// Solves up to `count` members (see the module doc). `on_member` is called after each.
pub fn portfolio(
    problem: &Problem,
    count: usize,
    within: f64,
    min_difference: usize,
    options: &SolveOptions,
    on_member: &dyn Fn(usize),
) -> Result<Portfolio, SolveError> {
    problem.validate()?;
    if !(within.is_finite() && within >= 0.0) {
        return Err(SolveError::Model(crate::model::ModelError::Combination(
            format!("portfolio share {within} must be a finite share ≥ 0 (e.g. 0.05 for 5%)"),
        )));
    }
    // Bₛ* once, so every member's regret is measured against the same values. Bₛ* and the
    // optimum follow the plan's method ([`solve_exact`]).
    let base = with_scenario_best(problem, &Exact, options)?;
    let first = solve_exact(&base, options)?;
    let optimum = first.objective;
    let limit = objective_limit(optimum, within, is_minimisation(&base));
    let mut members = vec![Member {
        objective: optimum,
        differs_from_earlier: vec![],
        solution: first,
    }];
    on_member(1);
    while members.len() < count.max(1) {
        let alt = Alternative {
            avoid: members
                .iter()
                .map(|m| m.solution.selected.clone())
                .collect(),
            min_difference: min_difference.max(1),
        };
        let q = Problem {
            keep_objective: Some(limit),
            alternative: Some(alt.clone()),
            ..base.clone()
        };
        // The kept objective and the no-good rows are the direct model's alone (the
        // decomposition relaxes neither), so the later members stay with HiGHS.
        let s = match Highs::default().solve(&q, options) {
            Ok(s) => s,
            // No further network within the share differs enough: the portfolio is complete.
            Err(SolveError::Infeasible(_) | SolveError::JointlyInfeasible(_)) => break,
            Err(other) => return Err(other),
        };
        let objective = evaluate_zoned(&base, &s.assignment()).objective;
        members.push(Member {
            differs_from_earlier: alt.distances(&s.selected),
            objective,
            solution: s,
        });
        on_member(members.len());
    }
    Ok(Portfolio {
        members,
        optimum,
        limit,
        within,
        asked: count,
    })
}

/// `portfolio.csv`: one row per member — its plan objective, how far that is from the optimum,
/// its cost, area and cells, and the fewest cells in which it differs from an earlier member.
pub fn portfolio_csv(p: &Portfolio, problem: &Problem) -> String {
    let rows = p.members.iter().enumerate().map(|(k, m)| {
        let e = evaluate_zoned(problem, &m.solution.assignment());
        let from_opt = if p.optimum.abs() > 0.0 {
            format!(
                "{:.6}",
                ((m.objective - p.optimum) / p.optimum.abs()).abs() + 0.0
            )
        } else {
            format!("{:.6}", (m.objective - p.optimum).abs())
        };
        vec![
            format!("member-{}", k + 1),
            format!("{:.6}", m.objective + 0.0),
            from_opt,
            format!("{:.3}", e.cost + 0.0),
            format!("{:.3}", e.area_km2 + 0.0),
            m.solution
                .selected
                .iter()
                .filter(|s| **s)
                .count()
                .to_string(),
            m.differs_from_earlier
                .iter()
                .min()
                .map(|d| d.to_string())
                .unwrap_or_default(),
            e.targets_reached.to_string(),
            m.solution.status.as_str().to_string(),
        ]
    });
    crate::export::table::csv_text(
        &[
            "member",
            "objective",
            "share_from_optimum",
            "cost",
            "area_km2",
            "cells",
            "fewest_cells_different",
            "targets_reached",
            "status",
        ],
        rows,
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn limits_go_the_right_way() {
        // Hand: within 5 % of a cost of 200 is at most 210; of a benefit of 8, at least 7.6.
        assert!((objective_limit(200.0, 0.05, true) - 210.0).abs() < 1e-12);
        assert!((objective_limit(8.0, 0.05, false) - 7.6).abs() < 1e-12);
    }
}
