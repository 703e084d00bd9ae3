//! Priority ranking: a rank for every cell from nested solves over increasing budgets.
//!
//! Step k solves the plan at budget share sₖ exactly as one budget of the sweep does
//! ([`solve_at_budget`]: the best benefit, then the least cost at that benefit), with every
//! cell chosen at step k − 1 required. So the networks are nested — the cells chosen at 5 %
//! are inside those at 10 % — and a cell's rank is the first step that chooses it: money that
//! arrives in stages is spent on rank 1 first, then rank 2, and so on, and each stage's network
//! is the best one that keeps what was protected before. Plan-required cells have rank 0;
//! cells no step needs have no rank.
//!
//! Nesting has a price: step k's network is the best *containing* step k − 1's, which may be
//! worse than the best at sₖ alone; the sweep gives that unnested curve.
//!
//! Zoned problems ([`crate::model::zones`]) are ranked with their zones: each step is a zoned
//! network, and nesting keeps the cells (an earlier cell may change zone at a later step).

use crate::model::{CellStatus, Objective, Problem, Robustness};
use crate::solve::decompose::solve_exact;
use crate::solve::{SolveError, SolveOptions};

use super::sweep::{solve_at_budget, SweepBudget, SweepRun};

/// One step of the ranking.
#[derive(Debug, Clone, PartialEq)]
pub struct RankStep {
    /// The step's solve (network, benefit, cost, status, gap), as one budget of a sweep.
    pub run: SweepRun,
    /// Cells this step adds to the previous step's network.
    pub added: usize,
}

/// The nested solves and the rank they give every cell.
#[derive(Debug, Clone, PartialEq)]
pub struct Ranking {
    /// One step per budget, ascending.
    pub steps: Vec<RankStep>,
    /// Per cell: 0 for plan-required cells, k ≥ 1 for cells first chosen at step k, `None` for
    /// cells no step chooses.
    pub rank: Vec<Option<u32>>,
    /// Wall-clock time of all steps. Units: s.
    pub seconds: f64,
}

/// The largest share of the budget measure a ranking needs: the share used by the least-cost
/// network that reaches every target in every scenario (so steps are spread where choices are
/// made), or 1 when no network reaches them all. Solved by the plan's exact method
/// ([`solve_exact`]). Units: share (0–1].
pub fn full_share(
    problem: &Problem,
    of: SweepBudget,
    options: &SolveOptions,
) -> Result<f64, SolveError> {
    let mut q = problem.clone();
    q.objective = Objective::MinCost;
    q.robustness = Robustness::EveryScenario;
    q.scenario_best = None;
    q.keep_objective = None;
    match solve_exact(&q, options) {
        Ok(s) => {
            let e = crate::model::evaluate_zoned(&q, &s.assignment());
            let (used, total) = match of {
                SweepBudget::Area(total) => (e.area_km2, total),
                SweepBudget::Cost(total) => (e.cost, total),
            };
            Ok((used / total).clamp(1e-6, 1.0))
        }
        Err(SolveError::Infeasible(_) | SolveError::JointlyInfeasible(_)) => Ok(1.0),
        Err(other) => Err(other),
    }
}

/// `steps` equal budget shares up to `full` (see [`full_share`]), the last one at `full`.
pub fn step_shares(steps: usize, full: f64) -> Vec<f64> {
    (1..=steps)
        .map(|k| full * k as f64 / steps as f64)
        .collect()
}

/// Solves the nested steps at `shares` (ascending, in (0, 1]) of the measure `of`, one after
/// the other (each needs the last). `on_step` is called after each step (for a progress bar).
pub fn rank(
    problem: &Problem,
    shares: &[f64],
    of: SweepBudget,
    options: &SolveOptions,
    on_step: &dyn Fn(usize),
) -> Result<Ranking, SolveError> {
    problem.validate()?;
    let started = std::time::Instant::now();
    let mut rank: Vec<Option<u32>> = problem
        .status
        .iter()
        .map(|s| (*s == CellStatus::Required).then_some(0))
        .collect();
    let mut current = problem.clone();
    let mut steps = Vec::with_capacity(shares.len());
    for (k, &share) in shares.iter().enumerate() {
        let run = solve_at_budget(&current, share, of, options)?;
        let mut added = 0;
        for (i, r) in rank.iter_mut().enumerate() {
            if !run.solution.selected[i] {
                continue;
            }
            if r.is_none() {
                *r = Some(k as u32 + 1);
                added += 1;
            }
            if current.status[i] == CellStatus::Free {
                current.status[i] = CellStatus::Required;
            }
        }
        steps.push(RankStep { run, added });
        on_step(k + 1);
    }
    Ok(Ranking {
        steps,
        rank,
        seconds: started.elapsed().as_secs_f64(),
    })
}

/// `rank.csv`: per cell its rank (empty: no step chooses it) and the budget share of that step.
pub fn rank_csv(r: &Ranking) -> String {
    let rows = r.rank.iter().enumerate().map(|(i, k)| {
        let share = match k {
            Some(0) => "required".to_string(),
            Some(k) => format!("{:.6}", r.steps[*k as usize - 1].run.share),
            None => String::new(),
        };
        vec![
            i.to_string(),
            k.map(|k| k.to_string()).unwrap_or_default(),
            share,
        ]
    });
    crate::export::table::csv_text(&["cell", "rank", "budget_share"], rows)
}

/// `rank-curve.csv`: one row per step — budget, what the nested network costs and holds, and
/// how the solve ended.
pub fn rank_curve_csv(r: &Ranking) -> String {
    let num = |v: f64| {
        if v.is_nan() {
            String::new()
        } else {
            format!("{:.3}", v + 0.0)
        }
    };
    let rows = r.steps.iter().enumerate().map(|(k, s)| {
        vec![
            (k + 1).to_string(),
            format!("{:.6}", s.run.share),
            num(s.run.budget_km2),
            num(s.run.budget_cost),
            num(s.run.cost),
            num(s.run.area_km2),
            format!("{:.6}", s.run.solution.objective + 0.0),
            s.run.targets_reached.to_string(),
            s.run.reached.len().to_string(),
            s.added.to_string(),
            s.run.solution.status.as_str().to_string(),
            format!("{:.6}", s.run.solution.gap),
            format!("{:.2}", s.run.solution.seconds),
        ]
    });
    crate::export::table::csv_text(
        &[
            "step",
            "budget_share",
            "budget_km2",
            "budget_cost",
            "cost",
            "area_km2",
            "objective",
            "targets_reached",
            "targets",
            "cells_added",
            "status",
            "gap",
            "seconds",
        ],
        rows,
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shares_are_even_and_end_at_the_full_share() {
        // Hand: 4 steps up to 0.2 are 0.05, 0.10, 0.15, 0.20.
        let s = step_shares(4, 0.2);
        assert_eq!(s.len(), 4);
        for (a, b) in s.iter().zip([0.05, 0.1, 0.15, 0.2]) {
            assert!((a - b).abs() < 1e-12);
        }
    }
}
