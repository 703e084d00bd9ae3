//! Which exact method solves a problem: the direct integer program (HiGHS on the whole model)
//! or the decomposition. `auto` takes the decomposition for models in its scope
//! ([`super::unsupported`]) with at least [`AUTO_MIN_CELLS`] free cells, where the direct
//! model's root LP is what takes the time (docs/method.md, "Decomposition").

use crate::model::{CellStatus, Problem};

use super::super::ilp::Highs;
use super::super::{Solution, SolveError, SolveOptions, Solver};
use super::{unsupported, Decompose};

/// `[solver] method`: how the exact network is found.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Method {
    /// The decomposition for large models it covers, the direct model otherwise.
    #[default]
    Auto,
    /// The whole integer program in HiGHS.
    Direct,
    /// The decomposition (falls back to the direct model outside its scope).
    Decompose,
}

impl Method {
    /// The plan-file word.
    pub fn as_str(self) -> &'static str {
        match self {
            Method::Auto => "auto",
            Method::Direct => "direct",
            Method::Decompose => "decompose",
        }
    }

    /// Parse a plan-file word.
    pub fn parse(s: &str) -> Option<Method> {
        match s {
            "auto" => Some(Method::Auto),
            "direct" => Some(Method::Direct),
            "decompose" => Some(Method::Decompose),
            _ => None,
        }
    }
}

/// Free cells from which `auto` decomposes. Measured (docs/method.md 6b): on the 9 108-cell
/// bench with the edge penalty the direct model proved no bound in 60 s (weight 3) or reached
/// 1.10 % (weight 1) where the decomposition reached 1.60 % or 0.68 %; smaller models were not
/// measured, and the direct model keeps them (the 5 km demo solves directly in seconds).
pub const AUTO_MIN_CELLS: usize = 8_000;

/// Whether `method` sends `problem` to the decomposition.
pub fn decomposes(problem: &Problem, method: Method) -> bool {
    let free = problem
        .status
        .iter()
        .filter(|s| **s == CellStatus::Free)
        .count();
    match method {
        Method::Direct => false,
        Method::Decompose => unsupported(problem).is_none(),
        Method::Auto => unsupported(problem).is_none() && free >= AUTO_MIN_CELLS,
    }
}

/// Solve `problem` exactly by the method `options.method` picks.
pub fn solve_exact(problem: &Problem, options: &SolveOptions) -> Result<Solution, SolveError> {
    if decomposes(problem, options.method) {
        Decompose.solve(problem, options)
    } else {
        Highs::default().solve(problem, options)
    }
}

/// The exact solver of `[solver] method` as a [`Solver`]: its solve is [`solve_exact`]. Studies
/// hand it where a solver is asked for (e.g. the per-scenario best benefits of
/// [`crate::solve::with_scenario_best`]), so their solves follow the plan's method; the
/// [`Solution::solver`] of each solve says which method ran (`decompose` or `highs`).
#[derive(Debug, Clone, Copy, Default)]
pub struct Exact;

impl Solver for Exact {
    fn name(&self) -> &'static str {
        "exact"
    }

    fn solve(&self, problem: &Problem, options: &SolveOptions) -> Result<Solution, SolveError> {
        solve_exact(problem, options)
    }
}
