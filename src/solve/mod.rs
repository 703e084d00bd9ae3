//! Solve stage: takes a [`crate::model::Problem`] and returns a [`Solution`]: the chosen cells
//! and an honest account of how good they are (status, objective, bound, gap).

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
    /// The solver itself failed.
    #[error("solver failed: {0}")]
    Solver(String),
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
