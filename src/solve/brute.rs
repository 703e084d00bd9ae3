//! Exact enumeration of every network of a small problem (at most [`MAX_FREE_CELLS`] free
//! cells): the reference the integer programs are tested against. Each network is scored by
//! `model::evaluate`, so it shares no formulation with the ILP.

use std::time::Instant;

use crate::model::robust::is_minimisation;
use crate::model::{evaluate, CellStatus, Problem};

use super::{
    make_solution, with_scenario_best, Solution, SolveError, SolveOptions, SolveStatus, Solver,
};

/// Most free cells enumerated (2²⁰ ≈ 10⁶ networks).
pub const MAX_FREE_CELLS: usize = 20;

/// Exhaustive enumeration (module doc). Ties keep the first network in enumeration order
/// (binary counting over the free cells in cell order).
#[derive(Debug, Clone, Copy, Default)]
pub struct BruteForce;

impl Solver for BruteForce {
    fn name(&self) -> &'static str {
        "brute-force"
    }

    fn solve(&self, problem: &Problem, options: &SolveOptions) -> Result<Solution, SolveError> {
        let started = Instant::now();
        let problem = with_scenario_best(problem, self, options)?;
        let free: Vec<usize> = (0..problem.n_cells())
            .filter(|&i| problem.status[i] == CellStatus::Free)
            .collect();
        if free.len() > MAX_FREE_CELLS {
            return Err(SolveError::Solver(format!(
                "brute force enumerates at most {MAX_FREE_CELLS} free cells; this problem has {}",
                free.len()
            )));
        }
        // A kept objective minimises cost (evaluate reports it as the objective).
        let minimise = is_minimisation(&problem) || problem.keep_objective.is_some();
        let mut sel: Vec<bool> = problem
            .status
            .iter()
            .map(|s| *s == CellStatus::Required)
            .collect();
        let mut best: Option<(f64, Vec<bool>)> = None;
        for mask in 0u64..(1u64 << free.len()) {
            for (b, &i) in free.iter().enumerate() {
                sel[i] = mask >> b & 1 == 1;
            }
            let e = evaluate(&problem, &sel);
            if !e.feasible {
                continue;
            }
            let better = match &best {
                None => true,
                Some((v, _)) => {
                    if minimise {
                        e.objective < *v
                    } else {
                        e.objective > *v
                    }
                }
            };
            if better {
                best = Some((e.objective, sel.clone()));
            }
        }
        match best {
            Some((objective, sel)) => Ok(make_solution(
                &problem,
                sel,
                SolveStatus::Optimal,
                objective,
                objective,
                0.0,
                started,
                self.name(),
            )),
            None => Err(super::ilp::infeasible(&problem)),
        }
    }
}
