//! Solve stage: takes a [`crate::model::Problem`] and returns a [`Solution`]: the chosen cells
//! and an honest account of how good they are (status, objective, bound, gap).
//!
//! [`ilp::Highs`] is the exact solver (HiGHS through good_lp); [`greedy::Greedy`] and
//! [`anneal::Anneal`] are heuristic baselines on the same [`crate::model::Problem`] and
//! objective; [`brute::BruteForce`] enumerates small problems for checks. All of them report
//! the objective in the problem's own sense, as [`crate::model::evaluate`] recomputes it.

use crate::model::robust::{effective_robustness, scenario_problem};
use crate::model::{evaluate, ModelError, Problem, Robustness, ScenarioResult};

pub mod anneal;
pub mod brute;
pub mod diagnose;
pub mod greedy;
pub mod ilp;
mod state;

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
}

impl Default for SolveOptions {
    fn default() -> Self {
        SolveOptions {
            time_limit_s: None,
            rel_gap: 0.0,
            threads: None,
            verbose: false,
            seed: 1,
        }
    }
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
    /// Per-scenario benefit, regret and targets met of `selected` (via `model::evaluate`).
    pub scenarios: Vec<ScenarioResult>,
    /// Bₛ* used for regret (least-regret problems; otherwise whatever the problem carried).
    pub scenario_best: Option<Vec<f64>>,
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
    /// Targets cannot all be met; each shortfall says by how much and why.
    #[error("targets cannot all be met: {}", .0.iter().map(|s| format!("{} needs {:.3} but at most {:.3} is achievable ({})", s.feature, s.target, s.achievable, s.binding)).collect::<Vec<_>>().join("; "))]
    Infeasible(Vec<Shortfall>),
    /// Each target can be met on its own, but not all of them together under the budget,
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
    problem.validate()?;
    let mut out = problem.clone();
    if effective_robustness(problem) == Robustness::LeastRegret && problem.scenario_best.is_none() {
        let mut best = Vec::with_capacity(problem.scenarios.len());
        for s in 0..problem.scenarios.len() {
            best.push(
                solver
                    .solve(&scenario_problem(problem, s), options)?
                    .objective,
            );
        }
        out.scenario_best = Some(best);
    }
    Ok(out)
}

/// Heuristics search on the first objective only; a kept objective (lexicographic second
/// stage, [`Problem::keep_objective`]) needs an exact solver.
pub(crate) fn exact_only(problem: &Problem, solver: &str) -> Result<(), SolveError> {
    match problem.keep_objective {
        None => Ok(()),
        Some(_) => Err(SolveError::Model(ModelError::Combination(format!(
            "`{solver}` cannot hold a kept objective while minimising cost; use the exact \
             solver (HiGHS) or brute force"
        )))),
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
    let scenarios = evaluate(problem, &selected).scenarios;
    Solution {
        selected,
        status,
        objective,
        bound,
        gap,
        seconds: started.elapsed().as_secs_f64(),
        solver: solver.to_string(),
        scenarios,
        scenario_best: problem.scenario_best.clone(),
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
