//! Irreplaceability as replacement cost: how much worse the best network gets when a place is
//! forbidden (Cabeza & Moilanen 2006, replacement cost as a measure of irreplaceability —
//! from memory). Each unit (a reserve of the optimal network, or one of its cells) is re-solved
//! exactly with its free cells excluded; the rise of the objective (cost for min-cost plans,
//! the fall of benefit for max-benefit plans) is its replacement cost. A unit without which no
//! network meets every rule is irreplaceable.
//!
//! Re-solves may stop at a time limit, so each row carries the interval the true replacement
//! cost lies in: with the base network's objective z₀ and bound b₀ and the re-solve's zᵤ and
//! bᵤ (for a minimised objective) the optimum without the unit lies in [bᵤ, zᵤ] and the base
//! optimum in [b₀, z₀], so the replacement cost lies in [bᵤ − z₀, zᵤ − b₀]. Both ends equal
//! zᵤ − z₀ when both solves are optimal. A re-solve's network is also a network of the whole
//! problem, so z₀ is the best objective among the base solve and all re-solves
//! ([`best_base`]): a replacement cost is never negative because the base solve stopped at a
//! gap.
//!
//! Zoned problems ([`crate::model::zones`]) are re-solved with their zones: a forbidden cell
//! takes no zone, and the others may change zone to make up for it.

use rayon::prelude::*;

use crate::model::robust::is_minimisation;
use crate::model::{CellStatus, Problem};
use crate::solve::decompose::solve_exact;
use crate::solve::{Solution, SolveError, SolveOptions, SolveStatus};

/// What one re-solve found.
#[derive(Debug, Clone, PartialEq)]
pub struct Replacement {
    /// The unit's label (`reserve 3`, `cell 1042`).
    pub label: String,
    /// The unit's free cells that were forbidden (plan-required cells stay required).
    pub forbidden: Vec<u32>,
    /// `None`: no network meets every rule without the unit (irreplaceable).
    pub without: Option<Solution>,
    /// Best estimate of the replacement cost (zᵤ − z₀ for a minimised objective, z₀ − zᵤ for a
    /// maximised one); infinite when irreplaceable. Units: the plan objective's.
    pub cost: f64,
    /// Least the true replacement cost can be (module doc). Units: the objective's.
    pub at_least: f64,
    /// Most the true replacement cost can be (module doc). Units: the objective's.
    pub at_most: f64,
}

impl Replacement {
    /// Whether no network meets every rule without the unit.
    pub fn irreplaceable(&self) -> bool {
        self.without.is_none()
    }
}

/// Replacement cost of each unit (`units[u]`: cell ids) of `base`, the optimal network of
/// `problem`. Units are re-solved by the plan's exact method ([`solve_exact`]: a re-solve is
/// the plan with a few more excluded cells, so it goes where the base solve went) in
/// parallel, one solver thread each, and returned in input order, so the result does not
/// depend on the thread count (unless a time limit cuts solves short). A unit with no free cell (wholly plan-required) gets cost 0 and no re-solve.
pub fn replacement_costs(
    problem: &Problem,
    base: &Solution,
    units: &[(String, Vec<u32>)],
    options: &SolveOptions,
    on_solved: &(dyn Fn() + Sync),
) -> Result<Vec<Replacement>, SolveError> {
    let rows = replacement_solves(problem, base, units, options, on_solved)?;
    Ok(with_intervals(is_minimisation(problem), base, rows))
}

/// The re-solves of [`replacement_costs`] without the intervals (`cost`, `at_least` and
/// `at_most` are NaN for a re-solved unit): a shard's part of the study (`study::shard`). The
/// intervals need every re-solve ([`best_base`]), so [`with_intervals`] adds them once all
/// parts are joined.
pub fn replacement_solves(
    problem: &Problem,
    base: &Solution,
    units: &[(String, Vec<u32>)],
    options: &SolveOptions,
    on_solved: &(dyn Fn() + Sync),
) -> Result<Vec<Replacement>, SolveError> {
    problem.validate()?;
    let one_thread = SolveOptions {
        threads: Some(1),
        progress: None,
        ..options.clone()
    };
    let rows: Vec<Result<Replacement, SolveError>> = units
        .par_iter()
        .map(|(label, cells)| {
            let forbidden: Vec<u32> = cells
                .iter()
                .copied()
                .filter(|&c| problem.status[c as usize] == CellStatus::Free)
                .collect();
            let row = if forbidden.is_empty() {
                Replacement {
                    label: label.clone(),
                    forbidden,
                    without: Some(base.clone()),
                    cost: 0.0,
                    at_least: 0.0,
                    at_most: 0.0,
                }
            } else {
                let mut p = problem.clone();
                for &c in &forbidden {
                    p.status[c as usize] = CellStatus::Excluded;
                }
                match solve_exact(&p, &one_thread) {
                    // The interval is filled in below, once the best base value is known.
                    Ok(s) => Replacement {
                        label: label.clone(),
                        forbidden,
                        without: Some(s),
                        cost: f64::NAN,
                        at_least: f64::NAN,
                        at_most: f64::NAN,
                    },
                    Err(SolveError::Infeasible(_) | SolveError::JointlyInfeasible(_)) => {
                        Replacement {
                            label: label.clone(),
                            forbidden,
                            without: None,
                            cost: f64::INFINITY,
                            at_least: f64::INFINITY,
                            at_most: f64::INFINITY,
                        }
                    }
                    Err(other) => return Err(other),
                }
            };
            on_solved();
            Ok(row)
        })
        .collect();
    rows.into_iter().collect()
}

/// Fills in each re-solved row's replacement cost and interval (module doc), measured from the
/// best objective among `base` and every row's network.
pub fn with_intervals(
    minimise: bool,
    base: &Solution,
    mut rows: Vec<Replacement>,
) -> Vec<Replacement> {
    // A network found without a unit is a network of the whole problem too (forbidding only
    // restricts it), so the best of all of them is the base value the rises are measured from
    // when the base solve stopped at a gap and a re-solve did better.
    let best = best_base(minimise, base, &rows);
    for r in rows.iter_mut().filter(|r| r.cost.is_nan()) {
        if let Some(s) = &r.without {
            (r.cost, r.at_least, r.at_most) = interval(minimise, &best, s.objective, s.bound);
        }
    }
    rows
}

/// `base` with its objective replaced by the best objective among it and the re-solves.
pub fn best_base(minimise: bool, base: &Solution, rows: &[Replacement]) -> Solution {
    let mut best = base.objective;
    for s in rows.iter().filter_map(|r| r.without.as_ref()) {
        best = if minimise {
            best.min(s.objective)
        } else {
            best.max(s.objective)
        };
    }
    Solution {
        objective: best,
        ..base.clone()
    }
}

/// (estimate, least, most) of the replacement cost from the base solve and a re-solve's
/// objective and bound (module doc). An unproven bound (NaN or infinite) leaves that end open.
fn interval(minimise: bool, base: &Solution, z: f64, b: f64) -> (f64, f64, f64) {
    let (z0, b0) = (base.objective, base.bound);
    let open = |v: f64, default: f64| if v.is_finite() { v } else { default };
    if minimise {
        (
            z - z0,
            (open(b, f64::NEG_INFINITY) - z0).max(0.0),
            z - open(b0, f64::NEG_INFINITY),
        )
    } else {
        (
            z0 - z,
            (z0 - open(b, f64::INFINITY)).max(0.0),
            open(b0, f64::INFINITY) - z,
        )
    }
}

/// The status word of a row: the re-solve's status, or `irreplaceable` / `required`.
pub fn status_word(r: &Replacement) -> &'static str {
    match &r.without {
        None => "irreplaceable",
        Some(_) if r.forbidden.is_empty() => "required",
        Some(s) if s.status == SolveStatus::Optimal => "optimal",
        Some(s) => s.status.as_str(),
    }
}

/// `irreplaceability.csv`: per unit its cells, the objective with and without it, the
/// replacement cost and the interval it lies in, and how the re-solve ended. Infinite values
/// are written `inf`; a plan objective the solver stopped short on has `at_least` < `at_most`.
/// `objective` is the best value known for the whole problem ([`best_base`]).
pub fn replacement_csv(base: &Solution, rows: &[Replacement]) -> String {
    let num = |v: f64| {
        if v.is_infinite() {
            "inf".to_string()
        } else if v.is_nan() {
            String::new()
        } else {
            format!("{:.6}", v + 0.0)
        }
    };
    let body = rows.iter().map(|r| {
        vec![
            r.label.clone(),
            r.forbidden.len().to_string(),
            num(base.objective),
            r.without
                .as_ref()
                .map(|s| num(s.objective))
                .unwrap_or_default(),
            num(r.cost),
            num(r.at_least),
            num(r.at_most),
            status_word(r).to_string(),
            r.without.as_ref().map(|s| num(s.gap)).unwrap_or_default(),
        ]
    });
    crate::export::table::csv_text(
        &[
            "unit",
            "cells_forbidden",
            "objective",
            "objective_without",
            "replacement_cost",
            "at_least",
            "at_most",
            "status",
            "gap",
        ],
        body,
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    fn solution(objective: f64, bound: f64) -> Solution {
        Solution {
            selected: vec![],
            status: SolveStatus::TimeLimit,
            objective,
            bound,
            gap: 0.0,
            seconds: 0.0,
            solver: "highs".into(),
            scenarios: vec![],
            scenario_best: None,
            zones: None,
        }
    }

    #[test]
    fn interval_brackets_the_true_rise() {
        // Hand: base z0 = 10 (bound 9), re-solve z = 14 (bound 12): the optimum without lies in
        // [12, 14] and the base optimum in [9, 10], so the rise lies in [2, 5]; estimate 4.
        let (c, lo, hi) = interval(true, &solution(10.0, 9.0), 14.0, 12.0);
        assert_eq!((c, lo, hi), (4.0, 2.0, 5.0));
        // Maximised: base 10 (bound 11), re-solve 7 (bound 8): fall in [2, 4], estimate 3.
        let (c, lo, hi) = interval(false, &solution(10.0, 11.0), 7.0, 8.0);
        assert_eq!((c, lo, hi), (3.0, 2.0, 4.0));
    }

    #[test]
    fn a_better_re_solve_becomes_the_base() {
        // Hand: base 10, re-solves 9.5 and 12 (minimised): the whole problem has a network of
        // 9.5, so rises are measured from 9.5 (0 and 2.5), never negative.
        let rows: Vec<Replacement> = [9.5, 12.0]
            .iter()
            .map(|&z| Replacement {
                label: "u".into(),
                forbidden: vec![1],
                without: Some(solution(z, z)),
                cost: f64::NAN,
                at_least: f64::NAN,
                at_most: f64::NAN,
            })
            .collect();
        let best = best_base(true, &solution(10.0, 9.0), &rows);
        assert_eq!(best.objective, 9.5);
        assert_eq!(interval(true, &best, 12.0, 12.0).0, 2.5);
        assert_eq!(
            best_base(false, &solution(10.0, 11.0), &rows).objective,
            12.0
        );
    }
}
