//! Exact at national scale: a decomposition solver with a proven bound, for models whose root
//! LP is too large for HiGHS to finish in the time given (issue 11).
//!
//! # Method
//! 1. **Bound** ([`lagrange`]): coverage (or, for max-benefit, capped-holding and scenario)
//!    and budget rows are relaxed with multipliers; each L(λ) is a minimum cut ([`maxflow`])
//!    plus closed-form box terms and a valid bound; volume and box steps ([`master`]) raise
//!    it towards the LP bound, each max-flow starting from the last one's flow. Large models
//!    start from the multipliers of a coarse copy over blocks of cells ([`coarse`]).
//! 2. **Primal** ([`primal`]): the cut at the best multipliers is repaired to a network that
//!    meets every target and budget by the Lagrangian greedy, redundant cells are dropped
//!    (max-benefit: trimmed to the budget and filled by weighted benefit per budget share),
//!    then windows of a few thousand cells around the network are re-solved exactly by HiGHS
//!    with the rest fixed ([`restrict`]); a window's network is kept when it is better.
//! 3. **Fixing and core** ([`fixing`]): a cell whose flip would raise L above the incumbent's
//!    objective keeps its cut value in every better network; when few cells stay free, that
//!    core goes to HiGHS warm-started from the incumbent.
//!
//! # The bound reported
//! Everything runs in the minimised sense m (the objective, negated for a maximisation: max-
//! benefit under every-scenario, worst-case and expected), and the bound is turned back at the
//! end, so for a maximisation it is an upper bound ≥ the objective.
//! In that sense it is max(L*, min(U, C)), with L* the best Lagrangian bound, U the incumbent's
//! objective and C the core's proven bound (HiGHS's dual bound of the core plus the fixed
//! part's constant). L* is valid by weak duality. A network outside the core's space differs from the cut at a
//! fixed cell, so its objective is > U (the flip cost is a feasible flow in the residual graph,
//! so ≤ the rise of the min cut); a network inside has objective ≥ C. Hence every network has
//! objective ≥ min(U, C). `bound_source` in [`Trace`] says which term gave the bound.
//!
//! # Scope: what falls back to the direct model
//! Decomposed: min-cost (every target in every scenario) and max-benefit under every
//! robustness rule (every-scenario, worst-case, expected, least-regret with Bₛ* computed first
//! by this solver), with required/excluded cells, cost and area budgets and the edge penalty.
//! Everything else is solved by the direct model ([`super::ilp::Highs`]) with the reason given
//! by [`unsupported`]: the max gap, the minimum reserve size, the neighbour rule, the
//! connectivity reward, zones, a kept objective and portfolio alternatives (their rows are not
//! relaxed yet).
//!
//! # Determinism
//! Everything but the HiGHS calls is sequential and seeded by nothing; every HiGHS call (the
//! master LPs, windows, core) runs with the caller's `threads`. Windows and the core stop
//! at time limits, so the result of a solve that runs out of time can depend on the machine's
//! speed; a solve that finishes its phases does not.

pub mod choose;
pub mod coarse;
pub mod fixing;
pub mod lagrange;
pub mod master;
pub mod maxflow;
pub mod primal;
pub mod restrict;
pub mod scatter;

use std::time::{Duration, Instant};

use crate::model::robust::is_minimisation;
use crate::model::{evaluate, CellStatus, Objective, Problem};

use super::diagnose::diagnose;
use super::ilp::Highs;
use super::progress::SolveProgress;
use super::{
    make_solution, scenario_best_borrowed, Solution, SolveError, SolveOptions, SolveStatus, Solver,
};

pub use choose::{decomposes, solve_exact, Method};

/// Cells in one re-optimisation window (prototype: a few thousand; HiGHS solves such a window
/// in about a second).
pub const WINDOW_CELLS: usize = 2500;

/// Most free cells in a core handed to HiGHS (larger cores take longer than the windows gain).
pub const CORE_MAX_CELLS: usize = 8000;

/// Time limit used when the options give none. Units: s.
const DEFAULT_LIMIT_S: f64 = 300.0;

/// The decomposition solver (module doc).
#[derive(Debug, Clone, Copy, Default)]
pub struct Decompose;

/// How a decomposition solve went, for the bench.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Trace {
    /// `(seconds, objective, bound)` each time either improved, in the minimised sense
    /// (negated for a maximisation).
    pub points: Vec<(f64, f64, f64)>,
    /// Which term gave the final bound: `lagrangian` or `core`.
    pub bound_source: &'static str,
    /// Evaluations of L(λ).
    pub lagrangian_steps: usize,
    /// Windows solved and windows that improved the network.
    pub windows: (usize, usize),
    /// Free cells left in the core after fixing (`None`: fixing not reached).
    pub core_cells: Option<usize>,
}

impl Trace {
    /// First time the gap was at most `gap`, if ever. Units: s.
    pub fn time_to(&self, gap: f64) -> Option<f64> {
        self.points
            .iter()
            .find(|(_, o, b)| rel_gap(*o, *b) <= gap)
            .map(|p| p.0)
    }
}

/// Relative gap (objective − bound)/|objective|, as HiGHS reports it.
fn rel_gap(objective: f64, bound: f64) -> f64 {
    if !(objective.is_finite() && bound.is_finite()) {
        return f64::INFINITY;
    }
    ((objective - bound) / objective.abs().max(1e-9)).max(0.0)
}

/// Why the decomposition does not take `problem`, or `None` when it does (module doc).
pub fn unsupported(problem: &Problem) -> Option<&'static str> {
    if problem.zoning.is_some() {
        return Some("zones are not decomposed");
    }
    if problem.spacing.is_some() {
        return Some("the max gap is not decomposed yet");
    }
    if problem.min_reserve.is_some() {
        return Some("the minimum reserve size is not decomposed yet");
    }
    if problem.min_neighbours.is_some() {
        return Some("the neighbour rule is not decomposed");
    }
    if problem.keep_objective.is_some() || problem.alternative.is_some() {
        return Some("a kept objective or a portfolio alternative is not decomposed");
    }
    None
}

impl Solver for Decompose {
    fn name(&self) -> &'static str {
        "decompose"
    }

    fn solve(&self, problem: &Problem, options: &SolveOptions) -> Result<Solution, SolveError> {
        self.solve_traced(problem, options).map(|(s, _)| s)
    }
}

/// The running best network, bound and their history.
/// Objectives and bounds are kept in the minimised sense: `sense` × the problem's own
/// objective, with `sense` = −1 for a maximisation (module doc).
struct Run<'a> {
    problem: &'a Problem,
    options: &'a SolveOptions,
    started: Instant,
    sense: f64,
    incumbent: Option<(f64, Vec<bool>)>,
    bound: f64,
    trace: Trace,
}

impl Run<'_> {
    fn objective(&self) -> f64 {
        self.incumbent.as_ref().map_or(f64::INFINITY, |(v, _)| *v)
    }

    fn gap(&self) -> f64 {
        rel_gap(self.objective(), self.bound)
    }

    fn note(&mut self) {
        let p = (
            self.started.elapsed().as_secs_f64(),
            self.objective(),
            self.bound,
        );
        if self
            .trace
            .points
            .last()
            .is_none_or(|l| l.1 != p.1 || l.2 != p.2)
        {
            self.trace.points.push(p);
            if let Some(sink) = &self.options.progress {
                // Progress is reported in the problem's own sense, as HiGHS reports it.
                sink.report(&SolveProgress {
                    elapsed_s: p.0,
                    objective: self.sense * p.1,
                    bound: self.sense * p.2,
                    gap: self.gap(),
                });
            }
        }
    }

    fn raise_bound(&mut self, b: f64, source: &'static str) {
        if b > self.bound {
            self.bound = b;
            self.trace.bound_source = source;
            self.note();
        }
    }

    /// Keep `sel` if it meets every rule and beats the incumbent.
    fn offer(&mut self, sel: Vec<bool>) -> bool {
        let e = evaluate(self.problem, &sel);
        let v = self.sense * e.objective;
        if e.feasible && v < self.objective() - 1e-9 * v.abs().max(1.0) {
            self.incumbent = Some((v, sel));
            self.note();
            return true;
        }
        false
    }
}

/// Share of the time limit by which the coarse copies' ascent ([`coarse::start`]) ends; the
/// first fine ascent has the rest of the first phase (to 0.2). On the patchy 100k bench, 6 s
/// of a 10 s ascent on the coarse copies left the bound 0.08 % below the LP bound against
/// 0.44 % with 4 s (docs/method.md §6c, "Coarse start").
const COARSE_SHARE: f64 = 0.12;

impl Decompose {
    /// Solve and return how the solve went (bound source, time to each gap) for the bench.
    pub fn solve_traced(
        &self,
        problem: &Problem,
        options: &SolveOptions,
    ) -> Result<(Solution, Trace), SolveError> {
        problem.validate()?;
        if unsupported(problem).is_some() {
            let sol = Highs::default().solve(problem, options)?;
            return Ok((sol, Trace::default()));
        }
        let started = Instant::now();
        // Least-regret: each scenario's best benefit first, by this solver (solve::time shares
        // the limit); the rest of the time is the robust solve's.
        let problem = &*scenario_best_borrowed(problem, self, options)?;
        if problem.objective == Objective::MinCost {
            let short = diagnose(problem);
            if !short.is_empty() {
                return Err(SolveError::Infeasible(short));
            }
        }
        // The phases share what the Bₛ* solves left of the limit.
        let phases = Instant::now();
        let limit = (options.time_limit_s.unwrap_or(DEFAULT_LIMIT_S)
            - started.elapsed().as_secs_f64())
        .max(super::time::MIN_HIGHS_S);
        let at = |share: f64| phases + Duration::from_secs_f64(limit * share);
        let mut run = Run {
            problem,
            options,
            started,
            sense: if is_minimisation(problem) { 1.0 } else { -1.0 },
            incumbent: None,
            bound: f64::NEG_INFINITY,
            trace: Trace {
                bound_source: "lagrangian",
                ..Trace::default()
            },
        };
        let mut relax = lagrange::Relaxation::new(problem);
        relax.threads = options.threads;
        let moves = primal::Moves::new(problem);
        let goal = options.rel_gap.max(1e-9);

        // 1. Bound (from a coarse copy's multipliers on large models), then a first network
        // from the best cut.
        let start = coarse::start(problem, at(COARSE_SHARE), 1e-4, options.threads);
        let mut ascent =
            self.watched_ascent(&relax, &moves, &mut run, &start, at(0.2), 20_000, goal);
        run.raise_bound(ascent.bound, "lagrangian");
        self.primal_from(&relax, &moves, &ascent, &mut run);
        if run.incumbent.is_none() {
            if let Ok(g) = super::greedy::greedy_network(problem) {
                run.offer(g);
            }
        }
        // 2. Ascend again, aiming at the incumbent.
        if run.gap() > goal {
            ascent = self.watched_ascent(
                &relax,
                &moves,
                &mut run,
                &ascent.lambda,
                at(0.8),
                20_000,
                goal,
            );
            run.raise_bound(ascent.bound, "lagrangian");
            self.primal_from(&relax, &moves, &ascent, &mut run);
        }
        let Some(_) = run.incumbent else {
            // No network from the heuristics: the direct model decides feasibility.
            let left = options
                .time_limit_s
                .map(|t| (t - started.elapsed().as_secs_f64()).max(1.0));
            let o = SolveOptions {
                time_limit_s: left,
                ..options.clone()
            };
            let sol = Highs::default().solve(problem, &o)?;
            return Ok((sol, run.trace));
        };
        // 3. Fixing; a small core is solved outright, else windows first.
        let best = relax.evaluate(&ascent.lambda);
        let mut fixed = fixing::fix(problem, &best, run.objective());
        let mut core_free = fixed.iter().filter(|f| f.is_none()).count();
        if core_free > CORE_MAX_CELLS && run.gap() > goal {
            self.windows(&moves, &mut run, at(0.9), goal);
            fixed = fixing::fix(problem, &best, run.objective());
            core_free = fixed.iter().filter(|f| f.is_none()).count();
        }
        run.trace.core_cells = Some(core_free);
        if core_free <= CORE_MAX_CELLS && run.gap() > goal {
            self.core(&best, &fixed, &mut run, at(1.0), goal);
        }
        if run.gap() > goal {
            self.windows(&moves, &mut run, at(1.0), goal);
        }
        // Time left after the windows stopped gaining: raise the bound further, then repair the
        // cut at the better multipliers once more (on large models the ascent is still moving
        // here, and the repair at converged multipliers is what closes the gap: docs/method.md
        // 6c). The repair's share of the time is kept back from the ascent.
        let repair_reserve = Duration::from_secs_f64((0.03 * limit).min(20.0));
        if run.gap() > goal && Instant::now() + Duration::from_secs(1) < at(1.0) - repair_reserve {
            ascent = self.watched_ascent(
                &relax,
                &moves,
                &mut run,
                &ascent.lambda,
                at(1.0) - repair_reserve,
                usize::MAX,
                goal,
            );
            run.raise_bound(ascent.bound, "lagrangian");
            self.primal_from(&relax, &moves, &ascent, &mut run);
        }
        let (internal, selected) = run.incumbent.clone().expect("an incumbent exists");
        let gap = run.gap();
        let status = if gap <= 1e-9 {
            SolveStatus::Optimal
        } else if gap <= options.rel_gap {
            SolveStatus::GapLimit
        } else {
            SolveStatus::TimeLimit
        };
        let objective = run.sense * internal;
        let bound = run.sense * run.bound.min(internal);
        let sol = make_solution(
            problem,
            selected,
            status,
            objective,
            bound,
            gap,
            started,
            self.name(),
        );
        Ok((sol, run.trace))
    }

    /// An ascent from `start` that repairs its best point now and then while it runs (so a
    /// network follows the multipliers as they improve, not only at the end of a phase) and
    /// stops once the gap is closed. Repairs take at most about a tenth of the time: the next
    /// one waits until nine times the last one's duration has passed.
    #[allow(clippy::too_many_arguments)]
    fn watched_ascent(
        &self,
        relax: &lagrange::Relaxation,
        moves: &primal::Moves,
        run: &mut Run,
        start: &[f64],
        deadline: Instant,
        max_iter: usize,
        goal: f64,
    ) -> lagrange::Ascent {
        let mut last = (Instant::now(), Duration::ZERO);
        let target = run.objective();
        let ascent = relax.ascend_watched(start, target, deadline, max_iter, 1e-5, &mut |a| {
            run.raise_bound(a.bound, "lagrangian");
            if last.0.elapsed() >= 9 * last.1 {
                let t = Instant::now();
                self.primal_from(relax, moves, a, run);
                last = (Instant::now(), t.elapsed());
            }
            (run.gap() > goal).then(|| run.objective())
        });
        run.trace.lagrangian_steps += ascent.iterations;
        run.raise_bound(ascent.bound, "lagrangian");
        ascent
    }

    /// Repair the cut at the best multipliers, drop redundant cells, and also try the rounded
    /// average x̄ ≥ ½ as a start.
    fn primal_from(
        &self,
        relax: &lagrange::Relaxation,
        moves: &primal::Moves,
        ascent: &lagrange::Ascent,
        run: &mut Run,
    ) {
        let cut = relax.evaluate(&ascent.lambda).cut.x;
        let rounded: Vec<bool> = ascent.average.iter().map(|&v| v >= 0.5).collect();
        if run.problem.objective == Objective::MaxBenefit {
            let weights = relax.credit_weights(&ascent.lambda);
            for start in [cut, rounded] {
                let mut sel = start;
                if moves.fill(&mut sel, &weights).is_some() {
                    run.offer(sel);
                }
            }
            return;
        }
        let lagrangian = relax.unary(&ascent.lambda);
        for start in [cut, rounded] {
            let mut sel = start;
            if moves.repair(&mut sel, &lagrangian).is_some() {
                moves.drop_redundant(&mut sel);
                run.offer(sel);
            }
        }
    }

    /// One HiGHS run on the cells with `free` (the rest held at `at`), warm-started from the
    /// incumbent when it agrees with `at`. Returns the full network and the full problem's
    /// bound for that restriction in the problem's own sense (None when HiGHS gave no answer).
    fn restricted(
        &self,
        run: &Run,
        free: &[bool],
        at: &[bool],
        deadline: Instant,
        rel_gap: f64,
    ) -> Option<(Vec<bool>, f64)> {
        let sub = restrict::restrict(run.problem, free, at)?;
        let left = deadline
            .saturating_duration_since(Instant::now())
            .as_secs_f64();
        if left < 0.5 {
            return None;
        }
        let (_, inc) = run.incumbent.as_ref()?;
        let consistent = (0..inc.len()).all(|i| free[i] || inc[i] == at[i]);
        let start = consistent.then(|| sub.project(inc));
        let o = SolveOptions {
            time_limit_s: Some(left),
            rel_gap,
            threads: run.options.threads,
            verbose: false,
            seed: run.options.seed,
            progress: None,
            method: Method::Direct,
        };
        let sol = Highs::default()
            .solve_from(&sub.problem, &o, start.as_deref())
            .ok()?;
        let full = sub.lift(at, free, &sol.selected);
        // Full objective = the sub-problem's + a constant (the fixed part): measured on the
        // network itself, so the sub-problem's bound carries over.
        let offset = evaluate(run.problem, &full).objective - sol.objective;
        let bound = if sol.bound.is_finite() {
            sol.bound + offset
        } else {
            f64::NEG_INFINITY
        };
        Some((full, bound))
    }

    /// Re-solve windows around the network until `deadline`, the goal, or a round with no gain.
    fn windows(&self, moves: &primal::Moves, run: &mut Run, deadline: Instant, goal: f64) {
        let n = run.problem.n_cells();
        loop {
            let mut gained = false;
            let mut covered = vec![false; n];
            let (_, inc) = run.incumbent.clone().expect("an incumbent exists");
            for seed in 0..n {
                if !inc[seed] || covered[seed] || run.problem.status[seed] != CellStatus::Free {
                    continue;
                }
                if Instant::now() >= deadline || run.gap() <= goal {
                    return;
                }
                let free = moves.window(seed, WINDOW_CELLS);
                for (c, f) in covered.iter_mut().zip(&free) {
                    *c |= *f;
                }
                let (_, now) = run.incumbent.clone().expect("an incumbent exists");
                let per_window = Instant::now() + Duration::from_secs(10);
                run.trace.windows.0 += 1;
                if let Some((full, _)) =
                    self.restricted(run, &free, &now, per_window.min(deadline), 1e-4)
                {
                    if run.offer(full) {
                        run.trace.windows.1 += 1;
                        gained = true;
                    }
                }
            }
            if !gained {
                return;
            }
        }
    }

    /// Solve the core left by fixing; its bound (with the constant of the fixed part) joins
    /// the reported bound (module doc).
    fn core(
        &self,
        best: &lagrange::Evaluation,
        fixed: &[Option<bool>],
        run: &mut Run,
        deadline: Instant,
        goal: f64,
    ) {
        let free: Vec<bool> = fixed.iter().map(|f| f.is_none()).collect();
        let at: Vec<bool> = fixed
            .iter()
            .zip(&best.cut.x)
            .map(|(f, &x)| f.unwrap_or(x))
            .collect();
        let upper = run.objective();
        if let Some((full, core_bound)) = self.restricted(run, &free, &at, deadline, goal / 2.0) {
            run.offer(full);
            run.raise_bound((run.sense * core_bound).min(upper), "core");
        }
    }
}
