//! Seeded simulated annealing on the same [`Problem`] and objective: a baseline to compare the
//! exact solver against (Kirkpatrick, Gelatt & Vecchi 1983, Science 220:671 for the method).
//!
//! # Method
//! * State: a network; move: flip one free cell drawn uniformly (ChaCha8 from
//!   `SolveOptions::seed`, so a seed always gives the same run).
//! * Energy (minimised): the objective in minimisation sense (negated for max-benefit rules)
//!   plus penalties for broken rules: λ × normalised shortfall Σₖ max(0, Tₖ − protectedₖ)/Tₖ
//!   (min-cost), λ × relative budget excess (max-benefit with a budget) and λ × number of
//!   violated max-gap rows. λ is the objective's whole range (all costs, all edges and all
//!   benefit) plus one, so no saving can pay for a broken rule.
//! * Metropolis acceptance exp(−Δ/T) with geometric cooling from T₀ (the mean |Δ| of 200
//!   random flips from the start) down to T₀/1000 over the iterations.
//! * The start is the greedy network when greedy finds one, else the required cells; the
//!   answer is the best network seen that keeps every rule, re-scored by `model::evaluate`.
//!
//! A time limit (`SolveOptions::time_limit_s`) stops early; then the answer depends on timing.

use std::time::Instant;

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

use crate::model::robust::is_minimisation;
use crate::model::{evaluate, CellStatus, Objective, Problem};

use super::greedy::greedy_network;
use super::state::{Flip, State};
use super::{
    make_solution, scenario_best_borrowed, Solution, SolveError, SolveOptions, SolveStatus, Solver,
};

/// Simulated annealing (module doc).
#[derive(Debug, Clone, Copy, Default)]
pub struct Anneal {
    /// Number of moves; `None`: 2000 per free cell, at least 20 000.
    pub iterations: Option<u64>,
}

struct Energy {
    lambda: f64,
    minimise: bool,
}

impl Energy {
    fn budget_excess(st: &State, d_cost: f64, d_area: f64) -> f64 {
        let b = &st.p.budget;
        let rel = |limit: Option<f64>, used: f64| {
            limit.map_or(0.0, |m| ((used - m) / m.max(1e-12)).max(0.0))
        };
        rel(b.max_cost, st.cost + d_cost) + rel(b.max_area_km2, st.area + d_area)
    }

    fn of(&self, st: &State, objective: f64, f: Option<&Flip>) -> f64 {
        let (dc, da, ds, dv) = f.map_or((0.0, 0.0, 0.0, 0), |f| {
            (f.d_cost, f.d_area, f.d_shortfall, f.d_violated)
        });
        let mut e = if self.minimise { objective } else { -objective };
        if st.p.objective == Objective::MinCost {
            e += self.lambda * (st.shortfall + ds).max(0.0);
        }
        e += self.lambda * Self::budget_excess(st, dc, da);
        e += self.lambda * (st.violated + dv) as f64;
        e
    }
}

impl Solver for Anneal {
    fn name(&self) -> &'static str {
        "anneal"
    }

    fn solve(&self, problem: &Problem, options: &SolveOptions) -> Result<Solution, SolveError> {
        let started = Instant::now();
        super::exact_only(problem, self.name())?;
        let problem = scenario_best_borrowed(problem, self, options)?;
        let p = &problem;
        let free: Vec<usize> = (0..p.n_cells())
            .filter(|&i| p.status[i] == CellStatus::Free)
            .collect();
        let mut st = match greedy_network(p) {
            Ok(sel) => State::from_selection(p, &sel),
            Err(_) => State::with_required(p),
        };
        let lambda = 1.0
            + p.cost.iter().sum::<f64>()
            + p.edge_penalty.as_ref().map_or(0.0, |e| {
                e.weight * e.exposed_if_alone_km.iter().sum::<f64>()
            })
            + p.link_reward
                .as_ref()
                .map_or(0.0, |r| r.weight * r.pairs.iter().map(|q| q.2).sum::<f64>())
            + crate::model::robust::scenario_benefits(p)
                .iter()
                .map(|b| b.max)
                .sum::<f64>()
                * 2.0;
        let energy = Energy {
            lambda,
            minimise: is_minimisation(p),
        };
        let mut best: Option<(f64, Vec<bool>)> = None;
        let consider = |st: &State, best: &mut Option<(f64, Vec<bool>)>| {
            let ok = st.violated == 0
                && st.fits(0.0, 0.0)
                && (p.objective == Objective::MaxBenefit || st.shortfall <= 1e-9);
            if ok {
                let e = energy.of(st, st.objective(), None);
                if best.as_ref().is_none_or(|(b, _)| e < *b) {
                    *best = Some((e, st.selected.clone()));
                }
            }
        };
        consider(&st, &mut best);
        if !free.is_empty() {
            let mut rng = ChaCha8Rng::seed_from_u64(options.seed);
            let iterations = self
                .iterations
                .unwrap_or_else(|| (2000 * free.len() as u64).max(20_000));
            let current = |st: &State| energy.of(st, st.objective(), None);
            // T₀: mean |Δ| of sampled flips from the start (not applied).
            let mut sum = 0.0;
            let samples = 200;
            for _ in 0..samples {
                let i = free[rng.gen_range(0..free.len())];
                let f = st.delta(i);
                let e1 = energy.of(&st, st.objective_after(&f), Some(&f));
                sum += (e1 - current(&st)).abs();
            }
            let t0 = (sum / samples as f64).max(1e-9);
            let t_end = t0 * 1e-3;
            let cool = (t_end / t0).powf(1.0 / iterations as f64);
            let mut temp = t0;
            let mut e_now = current(&st);
            for it in 0..iterations {
                if it % 1024 == 0 {
                    if let Some(limit) = options.time_limit_s {
                        if started.elapsed().as_secs_f64() > limit {
                            break;
                        }
                    }
                }
                let i = free[rng.gen_range(0..free.len())];
                let f = st.delta(i);
                let e_new = energy.of(&st, st.objective_after(&f), Some(&f));
                let d = e_new - e_now;
                if d <= 0.0 || rng.gen::<f64>() < (-d / temp).exp() {
                    st.flip(i);
                    // Recompute rather than accumulate, so rounding does not drift.
                    e_now = current(&st);
                    consider(&st, &mut best);
                }
                temp *= cool;
            }
        }
        let Some((_, sel)) = best else {
            return Err(SolveError::NoNetworkFound(
                "annealing found no network that meets every rule".into(),
            ));
        };
        let e = evaluate(p, &sel);
        if !e.feasible {
            return Err(SolveError::NoNetworkFound(
                "annealing found no network that meets every rule".into(),
            ));
        }
        Ok(make_solution(
            p,
            sel,
            SolveStatus::Heuristic,
            e.objective,
            f64::NAN,
            f64::NAN,
            started,
            self.name(),
        ))
    }
}
