//! Solve stage: takes a [`crate::model::Problem`] and returns a [`Solution`]: the chosen cells
//! and an honest account of how good they are (status, objective, bound, gap).
//!
//! [`ilp::Highs`] is the exact solver (HiGHS through good_lp); [`greedy::Greedy`] and
//! [`anneal::Anneal`] are heuristic baselines on the same [`crate::model::Problem`] and
//! objective; [`brute::BruteForce`] enumerates small problems for checks. All of them report
//! the objective in the problem's own sense, as [`crate::model::evaluate()`] recomputes it.

use crate::model::robust::{effective_robustness, scenario_problem};
use crate::model::{evaluate, ModelError, Problem, Robustness, ScenarioResult};

pub mod anneal;
pub mod brute;
pub mod decompose;
pub mod diagnose;
pub mod greedy;
pub mod ilp;
pub mod progress;
mod state;
pub mod time;

/// How a solve ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SolveStatus {
    /// Proven optimal (within HiGHS's default tolerances).
    Optimal,
    /// Stopped at the requested relative gap.
    GapLimit,
    /// Stopped by the time limit; the best network found is returned.
    TimeLimit,
    /// A heuristic's answer: no optimality claim.
    Heuristic,
}

impl SolveStatus {
    /// Word used in outputs.
    pub fn as_str(self) -> &'static str {
        match self {
            SolveStatus::Optimal => "optimal",
            SolveStatus::GapLimit => "gap-limit",
            SolveStatus::TimeLimit => "time-limit",
            SolveStatus::Heuristic => "heuristic",
        }
    }
}

/// Limits and controls for a solve.
#[derive(Debug, Clone, PartialEq)]
pub struct SolveOptions {
    /// Wall-clock limit. Units: s.
    pub time_limit_s: Option<f64>,
    /// Relative gap at which to stop (0 = prove optimal).
    pub rel_gap: f64,
    /// Solver threads (`None`: solver default).
    pub threads: Option<u32>,
    /// Print solver log to stderr.
    pub verbose: bool,
    /// Seed for heuristics.
    pub seed: u64,
    /// Where live progress of an exact solve goes (`None`: nowhere).
    pub progress: Option<progress::ProgressSink>,
    /// Which exact method [`decompose::solve_exact`] uses (`[solver] method`).
    pub method: decompose::Method,
}

impl Default for SolveOptions {
    fn default() -> Self {
        SolveOptions {
            time_limit_s: None,
            rel_gap: 0.0,
            threads: None,
            verbose: false,
            seed: 1,
            progress: None,
            method: decompose::Method::Auto,
        }
    }
}

/// A gap above this at the end of a solve is reported as a warning: the network found may be
/// this far from the best one (0.05 = 5 %; common practice, no source).
pub const GAP_WARNING: f64 = 0.05;

/// Plain warnings about how good `solution` is: a gap above [`GAP_WARNING`], or an exact solve
/// that stopped without proving any bound. Heuristics make no claim, so they get none.
pub fn warnings(solution: &Solution) -> Vec<String> {
    let mut out = Vec::new();
    if solution.status == SolveStatus::Heuristic || solution.solver == "cbc" {
        return out;
    }
    let why = match solution.status {
        SolveStatus::TimeLimit => " because the solver reached its time limit",
        _ => "",
    };
    if !solution.gap.is_finite() {
        out.push(format!(
            "the solver stopped{why} before proving any bound: the network's distance from \
             the best one is unknown; raise `[solver] time_limit_s` (or --time-limit)"
        ));
    } else if solution.gap > GAP_WARNING {
        out.push(format!(
            "the network may be up to {} from the best one (gap above {:.0}%); the solver \
             stopped{why}; raise `[solver] time_limit_s` (or --time-limit) for a closer answer",
            progress::gap_percent(solution.gap),
            100.0 * GAP_WARNING
        ));
    }
    out
}

/// A chosen network and how good it is.
#[derive(Debug, Clone, PartialEq)]
pub struct Solution {
    /// `true` for each chosen cell.
    pub selected: Vec<bool>,
    /// How the solve ended.
    pub status: SolveStatus,
    /// Objective value of `selected` (in the problem's own sense).
    pub objective: f64,
    /// Best proven bound on the objective (equals `objective` when optimal; NaN for heuristics).
    pub bound: f64,
    /// Relative gap |objective − bound| / max(|objective|, tiny) (NaN for heuristics).
    pub gap: f64,
    /// Wall-clock time. Units: s.
    pub seconds: f64,
    /// Which solver produced it (`highs`, `greedy`, `anneal`, ...).
    pub solver: String,
    /// Per-scenario benefit, regret and targets reached of `selected` (via `model::evaluate`).
    pub scenarios: Vec<ScenarioResult>,
    /// Bₛ* used for regret (least-regret problems; otherwise whatever the problem carried).
    pub scenario_best: Option<Vec<f64>>,
    /// Zone of each cell for a zoned problem (`model::zones`: 0 outside, 1 + zone index).
    pub zones: Option<Vec<u8>>,
}

impl Solution {
    /// The network as a zone assignment (`model::zones`: 0 outside, 1 + zone index): the
    /// solve's zones, or each chosen cell as 1 when it assigned none.
    pub fn assignment(&self) -> Vec<u8> {
        self.zones
            .clone()
            .unwrap_or_else(|| crate::model::zones::first_zone(&self.selected))
    }
}

/// One feature that cannot reach its target.
#[derive(Debug, Clone, PartialEq)]
pub struct Shortfall {
    /// Feature name.
    pub feature: String,
    /// The target amount.
    pub target: f64,
    /// The most any allowed network can hold.
    pub achievable: f64,
    /// What prevents it (e.g. `excluded cells`, `budget`).
    pub binding: String,
}

/// Why a solve failed.
#[derive(Debug, thiserror::Error)]
pub enum SolveError {
    /// Targets cannot all be reached; each shortfall says by how much and why.
    #[error("targets cannot all be reached: {}", .0.iter().map(|s| format!("{} needs {:.3} but at most {:.3} is achievable ({})", s.feature, s.target, s.achievable, s.binding)).collect::<Vec<_>>().join("; "))]
    Infeasible(Vec<Shortfall>),
    /// Each target can be reached on its own, but not all of them together under the budget,
    /// the max gap and the required/excluded cells.
    #[error("no network meets every rule at once: {0}")]
    JointlyInfeasible(String),
    /// The problem is malformed or combines rules that make no sense together.
    #[error("invalid problem: {0}")]
    Model(#[from] ModelError),
    /// A heuristic found no network that meets every rule (the problem may still be feasible).
    #[error("{0}")]
    NoNetworkFound(String),
    /// The solver itself failed.
    #[error("solver failed: {0}")]
    Solver(String),
}

/// How many chosen cells a relative gap stands for: `rel_gap` × |`objective`| ÷ the mean cost of
/// the free cells in `selected`. Below 1 the solver must prove the optimum to within less than one
/// cell's cost; on a coarse grid, where the LP bound sits about a cell below the best network,
/// that proof takes branch and bound far longer than finding the network (docs/method.md §6b).
/// `None` when no free cell is chosen or they cost nothing.
pub fn gap_in_cells(
    problem: &Problem,
    selected: &[bool],
    objective: f64,
    rel_gap: f64,
) -> Option<f64> {
    let (count, total) = selected
        .iter()
        .zip(&problem.status)
        .zip(&problem.cost)
        .filter(|((s, st), _)| **s && **st == crate::model::CellStatus::Free)
        .fold((0usize, 0.0f64), |(n, t), (_, c)| (n + 1, t + c));
    (count > 0 && total > 0.0).then(|| rel_gap * objective.abs() / (total / count as f64))
}

/// The problem with Bₛ* filled in when its rule needs it (least-regret): each scenario alone
/// is solved with `solver` (see [`crate::model::robust::scenario_problem`]) and its objective
/// taken as Bₛ*. Other problems, or ones that already carry Bₛ*, are returned unchanged.
///
/// With a heuristic or a time-limited solve Bₛ* is the best benefit found, not proven, so the
/// regrets are measured against the best known networks.
pub fn with_scenario_best(
    problem: &Problem,
    solver: &dyn Solver,
    options: &SolveOptions,
) -> Result<Problem, SolveError> {
    scenario_best_borrowed(problem, solver, options).map(std::borrow::Cow::into_owned)
}

/// [`with_scenario_best`] without a copy when nothing needs adding: the solvers call this, as a
/// copy of a 1M-cell problem is gigabytes of amounts.
pub fn scenario_best_borrowed<'a>(
    problem: &'a Problem,
    solver: &dyn Solver,
    options: &SolveOptions,
) -> Result<std::borrow::Cow<'a, Problem>, SolveError> {
    problem.validate()?;
    let mut out = std::borrow::Cow::Borrowed(problem);
    if effective_robustness(problem) == Robustness::LeastRegret && problem.scenario_best.is_none() {
        let n = problem.scenarios.len();
        // Each Bₛ* solve gets one equal part of the time, the robust solve the rest
        // (solve::time); only the robust solve reports live progress.
        let sub = SolveOptions {
            time_limit_s: options
                .time_limit_s
                .map(|t| time::share_limit(t, 1.0, n + 1)),
            progress: None,
            ..options.clone()
        };
        let mut best = Vec::with_capacity(n);
        for s in 0..n {
            best.push(solver.solve(&scenario_problem(problem, s), &sub)?.objective);
        }
        out.to_mut().scenario_best = Some(best);
    }
    Ok(out)
}

/// Heuristics search on the first objective only; a kept objective (lexicographic second
/// stage, [`Problem::keep_objective`]) needs an exact solver.
pub(crate) fn exact_only(problem: &Problem, solver: &str) -> Result<(), SolveError> {
    if problem.zoning.is_some() {
        return Err(SolveError::Model(ModelError::Combination(format!(
            "`{solver}` does not assign zones; use the exact solver (HiGHS) or brute force"
        ))));
    }
    if problem.min_neighbours.is_some() {
        return Err(SolveError::Model(ModelError::Combination(format!(
            "`{solver}` does not keep the neighbour rule (`min_chosen_neighbours`); use the \
             exact solver (HiGHS) or brute force"
        ))));
    }
    match problem.keep_objective {
        None => Ok(()),
        Some(_) => Err(SolveError::Model(ModelError::Combination(format!(
            "`{solver}` cannot hold a kept objective while minimising cost; use the exact \
             solver (HiGHS) or brute force"
        )))),
    }
}

/// `solution` with its zone assignment (`model::zones`) and the per-scenario report of that
/// assignment (`model::evaluate_zoned`).
pub(crate) fn with_zones(problem: &Problem, solution: Solution, assignment: Vec<u8>) -> Solution {
    let scenarios = crate::model::evaluate_zoned(problem, &assignment).scenarios;
    Solution {
        scenarios,
        zones: Some(assignment),
        ..solution
    }
}

/// Assemble a [`Solution`], taking the per-scenario report from `model::evaluate`.
#[allow(clippy::too_many_arguments)]
pub(crate) fn make_solution(
    problem: &Problem,
    selected: Vec<bool>,
    status: SolveStatus,
    objective: f64,
    bound: f64,
    gap: f64,
    started: std::time::Instant,
    solver: &str,
) -> Solution {
    let mut scenarios = evaluate(problem, &selected).scenarios;
    // Bₛ* is the best benefit known: when this network beats a Bₛ* found by a solve that
    // stopped short of the optimum, its own benefit is the better value. The objective (the
    // largest regret, clamped at 0) does not change.
    let scenario_best = problem.scenario_best.as_ref().map(|best| {
        best.iter()
            .zip(scenarios.iter_mut())
            .map(|(&b, r)| {
                let known = b.max(r.benefit);
                if r.best.is_some() {
                    r.best = Some(known);
                }
                known
            })
            .collect()
    });
    Solution {
        selected,
        status,
        objective,
        bound,
        gap,
        seconds: started.elapsed().as_secs_f64(),
        solver: solver.to_string(),
        scenarios,
        scenario_best,
        zones: None,
    }
}

/// Anything that can solve a [`crate::model::Problem`].
pub trait Solver {
    /// Short name used in outputs.
    fn name(&self) -> &'static str;
    /// Solve the problem under the given limits.
    fn solve(
        &self,
        problem: &crate::model::Problem,
        options: &SolveOptions,
    ) -> Result<Solution, SolveError>;
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gap_in_cells_divides_the_gap_by_the_mean_chosen_free_cell() {
        // Hand computation: costs [2, 4, 6, 10], cell 3 required; chosen {0, 1, 3}: the free
        // chosen cells cost 2 and 4 (mean 3); objective 16 at gap 0.5 → 8 / 3 cells.
        let mut p = crate::model::Problem::plain(
            vec![2.0, 4.0, 6.0, 10.0],
            vec![1.0; 4],
            vec![crate::model::Scenario {
                name: "s".into(),
                weight: 1.0,
            }],
            vec![],
            crate::model::Objective::MinCost,
            crate::model::Robustness::EveryScenario,
        );
        p.status[3] = crate::model::CellStatus::Required;
        let sel = [true, true, false, true];
        let g = gap_in_cells(&p, &sel, 16.0, 0.5).unwrap();
        assert!((g - 8.0 / 3.0).abs() < 1e-12);
        // No free cell chosen: no answer.
        assert_eq!(
            gap_in_cells(&p, &[false, false, false, true], 10.0, 0.5),
            None
        );
    }

    fn solution(status: SolveStatus, gap: f64) -> Solution {
        Solution {
            selected: vec![],
            status,
            objective: 100.0,
            bound: 100.0 * (1.0 - gap),
            gap,
            seconds: 1.0,
            solver: "highs".into(),
            scenarios: vec![],
            scenario_best: None,
            zones: None,
        }
    }

    #[test]
    fn warns_above_five_percent_and_without_a_bound() {
        // The rule: gap > 5 % warns (issue 10), 5 % exactly does not.
        assert!(warnings(&solution(SolveStatus::GapLimit, 0.05)).is_empty());
        let w = warnings(&solution(SolveStatus::TimeLimit, 0.081));
        assert_eq!(w.len(), 1);
        assert!(
            w[0].contains("8.10%") && w[0].contains("time limit"),
            "{w:?}"
        );
        let w = warnings(&solution(SolveStatus::TimeLimit, f64::INFINITY));
        assert!(w[0].contains("before proving any bound"), "{w:?}");
        assert!(warnings(&solution(SolveStatus::Heuristic, f64::NAN)).is_empty());
    }
}
