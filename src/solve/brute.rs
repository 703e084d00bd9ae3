//! Exact enumeration of every network of a small problem (at most [`MAX_FREE_CELLS`] free
//! cells): the reference the integer programs are tested against. Each network is scored by
//! `model::evaluate`, so it shares no formulation with the ILP.

use std::time::Instant;

use crate::model::robust::is_minimisation;
use crate::model::{evaluate, CellStatus, Problem};

use super::{
    make_solution, scenario_best_borrowed, Solution, SolveError, SolveOptions, SolveStatus, Solver,
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
        let problem = scenario_best_borrowed(problem, self, options)?;
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
        if let Some(zoning) = &problem.zoning {
            return zoned(
                &problem,
                &free,
                zoning.len(),
                minimise,
                started,
                self.name(),
            );
        }
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

/// Every assignment of the free cells to "outside" or one of `n_zones` zones ((Z + 1)^free of
/// them; required cells take every zone in turn too, never "outside"), scored by
/// `model::evaluate_zoned`.
fn zoned(
    problem: &Problem,
    free: &[usize],
    n_zones: usize,
    minimise: bool,
    started: Instant,
    name: &str,
) -> Result<Solution, SolveError> {
    let required: Vec<usize> = (0..problem.n_cells())
        .filter(|&i| problem.status[i] == CellStatus::Required)
        .collect();
    let base = n_zones as u64 + 1;
    let count = base
        .checked_pow(free.len() as u32)
        .and_then(|c| c.checked_mul((n_zones as u64).pow(required.len() as u32)))
        .filter(|&c| c <= 1 << MAX_FREE_CELLS)
        .ok_or_else(|| {
            SolveError::Solver(format!(
                "brute force enumerates at most 2^{MAX_FREE_CELLS} zone assignments; this problem has more"
            ))
        })?;
    let mut asg = vec![0u8; problem.n_cells()];
    let mut best: Option<(f64, Vec<u8>)> = None;
    for code in 0..count {
        let mut rest = code;
        for &i in free {
            asg[i] = (rest % base) as u8;
            rest /= base;
        }
        for &i in &required {
            asg[i] = (rest % n_zones as u64) as u8 + 1;
            rest /= n_zones as u64;
        }
        let e = crate::model::evaluate_zoned(problem, &asg);
        if !e.feasible {
            continue;
        }
        let better = best.as_ref().is_none_or(|(v, _)| {
            if minimise {
                e.objective < *v
            } else {
                e.objective > *v
            }
        });
        if better {
            best = Some((e.objective, asg.clone()));
        }
    }
    match best {
        Some((objective, asg)) => {
            let selected = asg.iter().map(|&v| v > 0).collect();
            let s = make_solution(
                problem,
                selected,
                SolveStatus::Optimal,
                objective,
                objective,
                0.0,
                started,
                name,
            );
            Ok(super::with_zones(problem, s, asg))
        }
        None => Err(super::ilp::infeasible(problem)),
    }
}
