//! The exact integer program, built with good_lp from the solver-neutral [`Problem`] and solved
//! with HiGHS (optionally CBC, behind the `cbc` feature, as a second opinion in tests).
//!
//! # Variables
//! * xᵢ ∈ {0, 1} per cell (required cells fixed to 1, excluded to 0);
//! * yₖ ∈ [0, capₖ] per feature with a benefit cap (its target, or its total amount when it
//!   is weight-only), max-benefit only (capped holding, [`crate::model::robust`]);
//! * eᵢⱼ ∈ [0, 1] per neighbouring pair (1 when exactly one of the two is chosen), with an
//!   edge penalty of positive weight ([`crate::model::compact`]);
//! * zᵢⱼ ∈ [0, 1] per kept connectivity pair (1 when both are chosen), with a connectivity
//!   reward of positive weight ([`crate::model::links`]);
//! * uₚ ∈ [0, 1] per allowed position that needs a max-gap row ([`crate::model::spacing`]);
//! * t (worst-case benefit) or r (largest regret), free.
//!
//! # Rows
//! * min-cost: Σᵢ aᵢₖxᵢ ≥ Tₖ for every feature (all scenarios);
//! * max-benefit: yₖ − Σᵢ aᵢₖxᵢ ≤ 0; worst-case: t − Bₛ(y) ≤ 0; least-regret:
//!   r + Bₛ(y) ≥ Bₛ*;
//! * budget: Σ cᵢxᵢ ≤ max cost, Σ areaᵢxᵢ ≤ max area;
//! * edge penalty: xᵢ − xⱼ − eᵢⱼ ≤ 0, xⱼ − xᵢ − eᵢⱼ ≤ 0;
//! * connectivity reward: zᵢⱼ − xᵢ ≤ 0, zᵢⱼ − xⱼ ≤ 0;
//! * max gap: xᵢ − uₚ ≤ 0 and Σ_{cover} xᵢ − uₚ ≥ 0, plus the start row Σ_{cover} xᵢ ≥ 1;
//! * minimum size: xᵢ − Σ_{j∈N(i)} xⱼ ≤ 0 for each free cell below the minimum area
//!   ([`crate::model::min_size`]).
//!
//! # Objective
//! min Σ cᵢxᵢ + w·exposed (min-cost); max Σₛ Bₛ, t or Σ πₛBₛ minus w·exposed (max-benefit);
//! min r + w·exposed (least-regret), exposed = Σ Pᵢxᵢ − 2 Σ lᵢⱼzᵢⱼ; a connectivity reward
//! v·linked is subtracted from minimisations and added to maximisations. With a kept objective
//! ([`Problem::keep_objective`]) that objective becomes a row (≥ its floor, or ≤ for
//! least-regret) and min Σ cᵢxᵢ the objective.

use std::time::Instant;

use good_lp::{
    constraint, variable, Constraint, Expression, ProblemVariables, SolverModel, Variable,
};
use highs::{HighsModelStatus, HighsSolutionStatus};

use crate::model::robust::{
    effective_robustness, is_minimisation, scenario_benefits, scenario_shares,
};
use crate::model::spacing::gap_rows;
use crate::model::{evaluate, CellStatus, Objective, Problem, Robustness};

use super::diagnose::diagnose;
use super::greedy::greedy_network;
use super::progress::{ProgressSink, SolveProgress};
use super::{
    make_solution, scenario_best_borrowed, Solution, SolveError, SolveOptions, SolveStatus, Solver,
};

/// What one column of the formulation stands for (for warm starts and reading results).
#[derive(Debug, Clone, Copy, PartialEq)]
enum Col {
    X(usize),
    /// Cell `.1` in zone `.0` (model::zones).
    W(usize, usize),
    Y(usize),
    Z(usize),
    /// Kept connectivity pair `.0` (model::links): 1 when both ends are chosen.
    L(usize),
    U(usize),
    Worst,
    Regret,
}

/// The integer program of a problem, solver-neutral within good_lp.
pub struct Formulation {
    vars: ProblemVariables,
    objective: Expression,
    minimise: bool,
    constraints: Vec<Constraint>,
    cols: Vec<Col>,
}

/// Build the integer program of `problem` (module doc). `problem` must be validated and carry
/// Bₛ* when its rule is least-regret.
pub fn formulate(problem: &Problem) -> Result<Formulation, SolveError> {
    let n = problem.n_cells();
    let mut vars = ProblemVariables::new();
    let mut cols = Vec::new();
    let mut add =
        |vars: &mut ProblemVariables, def: good_lp::VariableDefinition, col: Col| -> Variable {
            cols.push(col);
            vars.add(def)
        };
    let x: Vec<Variable> = (0..n)
        .map(|i| {
            let def = match problem.status[i] {
                CellStatus::Free => variable().binary(),
                CellStatus::Required => variable().integer().min(1.0).max(1.0),
                CellStatus::Excluded => variable().integer().min(0.0).max(0.0),
            };
            add(&mut vars, def, Col::X(i))
        })
        .collect();
    let minimise = is_minimisation(problem);
    let own_edge = problem
        .edge_penalty
        .as_ref()
        .map(crate::model::compact::own_edge_km)
        .unwrap_or_default();
    let mut objective = Expression::with_capacity(n);
    let mut constraints = Vec::new();

    // Zones (model::zones): wᵢ_z per cell and zone with Σ_z wᵢ_z = xᵢ; cells a zone may not
    // take, and cells outside every network, have wᵢ_z fixed at 0.
    let w: Vec<Vec<Variable>> = match &problem.zoning {
        None => Vec::new(),
        Some(zoning) => (0..zoning.len())
            .map(|z| {
                (0..n)
                    .map(|i| {
                        let open =
                            zoning.allowed[z][i] && problem.status[i] != CellStatus::Excluded;
                        let def = if open {
                            variable().binary()
                        } else {
                            variable().integer().min(0.0).max(0.0)
                        };
                        add(&mut vars, def, Col::W(z, i))
                    })
                    .collect()
            })
            .collect(),
    };
    if !w.is_empty() {
        for (i, &xi) in x.iter().enumerate() {
            let mut e = Expression::from(xi);
            for wz in &w {
                e.add_mul(-1.0, wz[i]);
            }
            constraints.push(constraint::eq(e, 0.0));
        }
    }
    // What a network holds of feature k toward its target, and what it costs: per cell, or per
    // cell and zone with the zone's credit and cost share.
    let amount_expr = |k: usize| -> Expression {
        let f = &problem.features[k];
        let mut e = Expression::with_capacity(f.amounts.len());
        match &problem.zoning {
            None => {
                for &(c, a) in &f.amounts {
                    e.add_mul(a, x[c as usize]);
                }
            }
            Some(zoning) => {
                for (z, wz) in w.iter().enumerate() {
                    let r = zoning.credit[z][k];
                    if r > 0.0 {
                        for &(c, a) in &f.amounts {
                            e.add_mul(r * a, wz[c as usize]);
                        }
                    }
                }
            }
        }
        e
    };
    let cost_expr = |weights: &[f64]| -> Expression {
        let mut e = Expression::with_capacity(n);
        match &problem.zoning {
            None => {
                for (i, &xi) in x.iter().enumerate() {
                    e.add_mul(weights[i], xi);
                }
            }
            Some(zoning) => {
                for (z, wz) in w.iter().enumerate() {
                    for (i, &wi) in wz.iter().enumerate() {
                        e.add_mul(zoning.cost_share[z] * weights[i], wi);
                    }
                }
            }
        }
        e
    };
    if let Some(zoning) = &problem.zoning {
        for t in &zoning.targets {
            let mut e = Expression::with_capacity(problem.features[t.feature].amounts.len());
            for &(c, a) in &problem.features[t.feature].amounts {
                e.add_mul(a, w[t.zone][c as usize]);
            }
            constraints.push(constraint::geq(e, t.amount));
        }
    }

    match problem.objective {
        Objective::MinCost => {
            objective += cost_expr(&problem.cost);
            for (k, f) in problem.features.iter().enumerate() {
                if f.target > 0.0 {
                    constraints.push(constraint::geq(amount_expr(k), f.target));
                }
            }
        }
        Objective::MaxBenefit => {
            let mut y: Vec<Option<Variable>> = vec![None; problem.features.len()];
            for (k, f) in problem.features.iter().enumerate() {
                if let Some(cap) = f.benefit_cap() {
                    let v = add(&mut vars, variable().min(0.0).max(cap), Col::Y(k));
                    constraints.push(constraint::leq(Expression::from(v) - amount_expr(k), 0.0));
                    y[k] = Some(v);
                }
            }
            let benefits = scenario_benefits(problem);
            let benefit_expr = |s: usize| -> Expression {
                let mut e = Expression::with_capacity(benefits[s].terms.len());
                for &(k, coef) in &benefits[s].terms {
                    if let Some(v) = y[k] {
                        e.add_mul(coef, v);
                    }
                }
                e
            };
            match effective_robustness(problem) {
                Robustness::EveryScenario | Robustness::Expected => {
                    let shares = if effective_robustness(problem) == Robustness::Expected {
                        scenario_shares(problem)
                    } else {
                        vec![1.0; problem.scenarios.len()]
                    };
                    for (s, b) in benefits.iter().enumerate() {
                        for &(k, coef) in &b.terms {
                            if let Some(v) = y[k] {
                                objective.add_mul(shares[s] * coef, v);
                            }
                        }
                    }
                }
                Robustness::WorstCase => {
                    let t = add(&mut vars, variable(), Col::Worst);
                    objective.add_mul(1.0, t);
                    for s in 0..benefits.len() {
                        constraints
                            .push(constraint::leq(Expression::from(t) - benefit_expr(s), 0.0));
                    }
                }
                Robustness::LeastRegret => {
                    let best = problem.scenario_best.as_ref().ok_or_else(|| {
                        SolveError::Solver(
                            "least-regret needs the scenarios' best benefits first".into(),
                        )
                    })?;
                    // Regret is ≥ 0 by definition (model::evaluate clamps it the same way).
                    let r = add(&mut vars, variable().min(0.0), Col::Regret);
                    objective.add_mul(1.0, r);
                    for (s, &b_star) in best.iter().enumerate() {
                        constraints.push(constraint::geq(
                            Expression::from(r) + benefit_expr(s),
                            b_star,
                        ));
                    }
                }
            }
        }
    }

    // Edge penalty: sign +1 in minimisations, −1 in maximisations. Cut form (model::compact):
    // exposed = Σᵢ Bᵢxᵢ + Σ lᵢⱼ·eᵢⱼ with eᵢⱼ ≥ |xᵢ − xⱼ|; the objective pushes eᵢⱼ down.
    if let Some(pen) = problem.edge_penalty.as_ref().filter(|p| p.weight > 0.0) {
        let sign = if minimise { 1.0 } else { -1.0 };
        for (i, &xi) in x.iter().enumerate() {
            objective.add_mul(sign * pen.weight * own_edge[i], xi);
        }
        for (q, &(i, j, l)) in pen.pairs.iter().enumerate() {
            if l <= 0.0 {
                continue;
            }
            let e = add(&mut vars, variable().min(0.0).max(1.0), Col::Z(q));
            objective.add_mul(sign * pen.weight * l, e);
            // eᵢⱼ ≥ |xᵢ − xⱼ|; with zones, eᵢⱼ ≥ |wᵢ_z − wⱼ_z| for every zone, so an edge where
            // two zones meet counts too (model::zones).
            let sides: Vec<(Variable, Variable)> = if w.is_empty() {
                vec![(x[i as usize], x[j as usize])]
            } else {
                w.iter()
                    .map(|wz| (wz[i as usize], wz[j as usize]))
                    .collect()
            };
            for (a, b) in sides {
                constraints.push(constraint::leq(a - b - e, 0.0));
                constraints.push(constraint::leq(b - a - e, 0.0));
            }
        }
    }

    // Connectivity reward: sign −1 in minimisations, +1 in maximisations (model::links):
    // linked = Σ sᵢⱼ·zᵢⱼ with zᵢⱼ ≤ xᵢ, zᵢⱼ ≤ xⱼ; the objective pushes zᵢⱼ up.
    if let Some(rw) = problem.link_reward.as_ref().filter(|r| r.weight > 0.0) {
        let sign = if minimise { -1.0 } else { 1.0 };
        for (q, &(i, j, v)) in rw.pairs.iter().enumerate() {
            if v <= 0.0 {
                continue;
            }
            let z = add(&mut vars, variable().min(0.0).max(1.0), Col::L(q));
            objective.add_mul(sign * rw.weight * v, z);
            constraints.push(constraint::leq(Expression::from(z) - x[i as usize], 0.0));
            constraints.push(constraint::leq(Expression::from(z) - x[j as usize], 0.0));
        }
    }

    if let Some(sp) = &problem.spacing {
        let (rows, pos_of) = gap_rows(sp, &problem.status);
        let npos = pos_of.iter().flatten().max().map_or(0, |m| m + 1);
        let mut u: Vec<Option<Variable>> = vec![None; npos];
        for row in &rows {
            let mut e = Expression::with_capacity(row.cover.len() + 1);
            for &c in &row.cover {
                e.add_mul(1.0, x[c as usize]);
            }
            match row.trigger {
                None => constraints.push(constraint::geq(e, 1.0)),
                Some(q) => {
                    let v = add(&mut vars, variable().min(0.0).max(1.0), Col::U(q));
                    u[q] = Some(v);
                    constraints.push(constraint::geq(e - v, 0.0));
                }
            }
        }
        for (i, q) in pos_of.iter().enumerate() {
            if let Some(v) = q.and_then(|q| u[q]) {
                constraints.push(constraint::leq(x[i] - v, 0.0));
            }
        }
    }

    if let Some(mr) = &problem.min_reserve {
        for (i, &xi) in x.iter().enumerate() {
            if mr.applies(i, &problem.status, &problem.area_km2) {
                let mut e = Expression::from(xi);
                for &j in &mr.neighbours[i] {
                    e.add_mul(-1.0, x[j as usize]);
                }
                constraints.push(constraint::leq(e, 0.0));
            }
        }
    }

    // Neighbour rule (model::neighbours): Σ_{j∈N(i)} xⱼ − k·xᵢ ≥ 0 for each free cell.
    if let Some(mn) = &problem.min_neighbours {
        for (i, &xi) in x.iter().enumerate() {
            if problem.status[i] == CellStatus::Free {
                let mut e = Expression::from(0.0);
                for &j in &mn.neighbours[i] {
                    e.add_mul(1.0, x[j as usize]);
                }
                e.add_mul(-(mn.k as f64), xi);
                constraints.push(constraint::geq(e, 0.0));
            }
        }
    }

    // Lexicographic second stage: the first objective becomes a row, cost the objective.
    let (objective, minimise) = match problem.keep_objective {
        None => (objective, minimise),
        Some(v) => {
            if minimise {
                constraints.push(constraint::leq(objective, v + crate::model::keep_slack(v)));
            } else {
                constraints.push(constraint::geq(objective, crate::model::keep_floor(v)));
            }
            // The second stage's objective: the least cost, or for a portfolio member the
            // least overlap with earlier networks (model::alternative), each of which is cut
            // off by a no-good row Σ_{i∈S}(1 − xᵢ) + Σ_{i∉S} xᵢ ≥ d.
            let weights = match &problem.alternative {
                None => problem.cost.clone(),
                Some(alt) => {
                    for s in &alt.avoid {
                        let mut e = Expression::with_capacity(n);
                        let mut held = 0.0;
                        for (i, &xi) in x.iter().enumerate() {
                            if s[i] {
                                e.add_mul(-1.0, xi);
                                held += 1.0;
                            } else {
                                e.add_mul(1.0, xi);
                            }
                        }
                        constraints.push(constraint::geq(e, alt.min_difference as f64 - held));
                    }
                    alt.weights(n)
                }
            };
            let second = if problem.alternative.is_some() {
                let mut e = Expression::with_capacity(n);
                for (i, &xi) in x.iter().enumerate() {
                    e.add_mul(weights[i], xi);
                }
                e
            } else {
                cost_expr(&weights)
            };
            (second, true)
        }
    };
    if let Some(limit) = problem.budget.max_cost {
        constraints.push(constraint::leq(cost_expr(&problem.cost), limit));
    }
    if let Some(limit) = problem.budget.max_area_km2 {
        let mut e = Expression::with_capacity(n);
        for (i, &xi) in x.iter().enumerate() {
            e.add_mul(problem.area_km2[i], xi);
        }
        constraints.push(constraint::leq(e, limit));
    }
    Ok(Formulation {
        vars,
        objective,
        minimise,
        constraints,
        cols,
    })
}

impl Formulation {
    /// Number of columns (variables).
    pub fn n_cols(&self) -> usize {
        self.cols.len()
    }

    /// Number of rows (constraints).
    pub fn n_rows(&self) -> usize {
        self.constraints.len()
    }

    /// Column values that represent the network `selected` exactly (for a warm start).
    fn start_values(&self, problem: &Problem, selected: &[bool]) -> Vec<f64> {
        let e = evaluate(problem, selected);
        let xv = |i: usize| if selected[i] { 1.0 } else { 0.0 };
        let pos = problem
            .spacing
            .as_ref()
            .map(|sp| gap_rows(sp, &problem.status).1);
        self.cols
            .iter()
            .map(|c| match *c {
                Col::X(i) => xv(i),
                // Warm starts are for unzoned problems only (greedy assigns no zones).
                Col::W(z, i) => f64::from(u8::from(z == 0 && selected[i])),
                Col::Y(k) => e.protected[k].min(problem.features[k].benefit_cap().unwrap_or(0.0)),
                Col::Z(q) => {
                    let (i, j, _) = problem
                        .edge_penalty
                        .as_ref()
                        .map_or((0, 0, 0.0), |p| p.pairs[q]);
                    (xv(i as usize) - xv(j as usize)).abs()
                }
                Col::L(q) => {
                    let (i, j, _) = problem
                        .link_reward
                        .as_ref()
                        .map_or((0, 0, 0.0), |r| r.pairs[q]);
                    xv(i as usize) * xv(j as usize)
                }
                Col::U(q) => {
                    let any = pos.as_ref().is_some_and(|pos_of| {
                        pos_of
                            .iter()
                            .enumerate()
                            .any(|(i, p)| *p == Some(q) && selected[i])
                    });
                    if any {
                        1.0
                    } else {
                        0.0
                    }
                }
                Col::Worst => e
                    .scenarios
                    .iter()
                    .map(|s| s.benefit)
                    .fold(f64::INFINITY, f64::min),
                Col::Regret => e
                    .scenarios
                    .iter()
                    .filter_map(|s| s.regret)
                    .fold(f64::NEG_INFINITY, f64::max),
            })
            .collect()
    }
}

/// HiGHS through good_lp: objective, bound (`mip_dual_bound`) and gap (`mip_gap`) are read from
/// the solved model. Warm-started from the greedy network when greedy finds a feasible one.
#[derive(Debug, Clone, Copy)]
pub struct Highs {
    /// Hand the greedy network to HiGHS as a starting solution.
    pub warm_start: bool,
}

impl Default for Highs {
    fn default() -> Self {
        Highs { warm_start: true }
    }
}

fn highs_err(what: &str) -> impl Fn(highs::TrySetOptionError) -> SolveError + '_ {
    move |_| SolveError::Solver(format!("HiGHS rejected option `{what}`"))
}

/// Hands HiGHS's running totals to a [`ProgressSink`], at most every [`PROGRESS_EVERY_S`].
struct Watcher {
    sink: ProgressSink,
    last_s: std::sync::Mutex<f64>,
}

/// Seconds between two progress snapshots (HiGHS checks its limits far more often).
const PROGRESS_EVERY_S: f64 = 0.5;

/// The C callback: HiGHS calls it while the branch-and-bound checks its limits (the MIP
/// interrupt callback, which carries the primal and dual bounds in the model's own sense).
unsafe extern "C" fn on_highs_callback(
    _kind: std::os::raw::c_int,
    _message: *const std::os::raw::c_char,
    out: *const highs_sys::HighsCallbackDataOut,
    _input: *mut highs_sys::HighsCallbackDataIn,
    data: *mut std::os::raw::c_void,
) {
    if out.is_null() || data.is_null() {
        return;
    }
    // SAFETY: `data` is the `Watcher` registered in `watch`, alive until the solve returns;
    // `out` is HiGHS's own data block for this call.
    let (w, out) = unsafe { (&*(data as *const Watcher), &*out) };
    let snapshot = SolveProgress {
        elapsed_s: out.running_time,
        objective: out.mip_primal_bound,
        bound: out.mip_dual_bound,
        gap: out.mip_gap,
    };
    // A panic must not unwind into C++.
    let _ = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
        let mut last = w.last_s.lock().unwrap_or_else(|e| e.into_inner());
        if snapshot.elapsed_s - *last >= PROGRESS_EVERY_S {
            *last = snapshot.elapsed_s;
            w.sink.report(&snapshot);
        }
    }));
}

/// Registers `w` as the model's MIP progress callback.
fn watch(model: &mut highs::Model, w: &Watcher) -> Result<(), SolveError> {
    let ptr = model.as_mut_ptr();
    // SAFETY: `ptr` is the live HiGHS instance owned by `model`; `w` outlives the solve (the
    // caller keeps it boxed until the solution has been read).
    let ok = unsafe {
        highs_sys::Highs_setCallback(
            ptr,
            Some(on_highs_callback),
            w as *const Watcher as *mut std::os::raw::c_void,
        ) == highs_sys::kHighsStatusOk
            && highs_sys::Highs_startCallback(ptr, highs_sys::kHighsCallbackMipInterrupt)
                == highs_sys::kHighsStatusOk
    };
    if ok {
        Ok(())
    } else {
        Err(SolveError::Solver(
            "HiGHS refused the progress callback".into(),
        ))
    }
}

/// The infeasibility error for a problem the solver proved infeasible: per-target shortfalls
/// when diagnosis finds them (min-cost), otherwise a statement of which rules clash.
pub(crate) fn infeasible(problem: &Problem) -> SolveError {
    if problem.objective == Objective::MinCost {
        let short = diagnose(problem);
        if !short.is_empty() {
            return SolveError::Infeasible(short);
        }
        SolveError::JointlyInfeasible(
            "each target can be reached on its own, but not all together under the budget, the \
             max gap and the required/excluded cells"
                .into(),
        )
    } else {
        SolveError::JointlyInfeasible(
            "no network within the budget meets the max gap together with the required cells"
                .into(),
        )
    }
}

impl Solver for Highs {
    fn name(&self) -> &'static str {
        "highs"
    }

    fn solve(&self, problem: &Problem, options: &SolveOptions) -> Result<Solution, SolveError> {
        self.solve_from(problem, options, None)
    }
}

impl Highs {
    /// As [`Solver::solve`], warm-started from `start` (a network that meets every rule, e.g.
    /// the decomposition's incumbent) instead of the greedy network; returned as a
    /// time-limited answer if HiGHS finds nothing better in time.
    pub fn solve_from(
        &self,
        problem: &Problem,
        options: &SolveOptions,
        start: Option<&[bool]>,
    ) -> Result<Solution, SolveError> {
        let started = Instant::now();
        let problem = scenario_best_borrowed(problem, self, options)?;
        if problem.objective == Objective::MinCost {
            let short = diagnose(&problem);
            if !short.is_empty() {
                return Err(SolveError::Infeasible(short));
            }
        }
        // Greedy knows no kept objective, so its network could break that row.
        let warm = match start {
            Some(s) => Some(s.to_vec()),
            None if self.warm_start
                && problem.keep_objective.is_none()
                && problem.zoning.is_none() =>
            {
                greedy_network(&problem).ok()
            }
            None => None,
        };
        let spent = |t: f64| started.elapsed().as_secs_f64() >= t;
        if let (Some(t), Some(w)) = (options.time_limit_s, &warm) {
            if spent(t) {
                // The limit went on Bₛ* solves and the warm start: return that network rather
                // than overrun by building the model.
                return Ok(unproven(&problem, w.clone(), started, self.name()));
            }
        }
        let form = formulate(&problem)?;
        let start = warm.as_ref().map(|w| form.start_values(&problem, w));
        let n_cols = form.n_cols();
        let Formulation {
            vars,
            objective,
            minimise,
            constraints,
            cols,
        } = form;
        let unsolved = if minimise {
            vars.minimise(objective)
        } else {
            vars.maximise(objective)
        };
        let mut hp = unsolved.using(good_lp::solvers::highs::highs);
        for c in constraints {
            hp.add_constraint(c);
        }
        let mut model = hp
            .try_into_inner()
            .map_err(|e| SolveError::Solver(e.to_string()))?;
        model
            .try_set_option("output_flag", options.verbose)
            .map_err(highs_err("output_flag"))?;
        model
            .try_set_option("log_to_console", options.verbose)
            .map_err(highs_err("log_to_console"))?;
        model
            .try_set_option("mip_rel_gap", options.rel_gap.max(0.0))
            .map_err(highs_err("mip_rel_gap"))?;
        if let Some(t) = options.time_limit_s {
            // The limit covers this whole call: what Bₛ* solves and building the model used is
            // taken off (solve::time).
            // The floor is only what HiGHS needs to take the warm start as its incumbent; a
            // network is returned even if it finds nothing better (below).
            let left = (t - started.elapsed().as_secs_f64()).max(super::time::MIN_HIGHS_S);
            model
                .try_set_option("time_limit", left)
                .map_err(highs_err("time_limit"))?;
        }
        if let Some(t) = options.threads {
            model
                .try_set_option("threads", t as i32)
                .map_err(highs_err("threads"))?;
        }
        // Declared before the solve so it outlives every callback HiGHS makes.
        let watcher = options.progress.clone().map(|sink| {
            Box::new(Watcher {
                sink,
                last_s: std::sync::Mutex::new(f64::NEG_INFINITY),
            })
        });
        if let Some(w) = &watcher {
            watch(&mut model, w)?;
        }
        if let Some(start) = &start {
            debug_assert_eq!(start.len(), n_cols);
            model
                .try_set_solution(Some(start), None, None, None)
                .map_err(|e| SolveError::Solver(format!("HiGHS rejected the warm start: {e:?}")))?;
        }
        let solved = model
            .try_solve()
            .map_err(|e| SolveError::Solver(format!("HiGHS failed: {e:?}")))?;
        let status = match solved.status() {
            HighsModelStatus::Optimal => {
                if options.rel_gap > 0.0 && solved.mip_gap() > 1e-9 {
                    SolveStatus::GapLimit
                } else {
                    SolveStatus::Optimal
                }
            }
            HighsModelStatus::Infeasible | HighsModelStatus::UnboundedOrInfeasible => {
                return Err(infeasible(&problem))
            }
            HighsModelStatus::ReachedTimeLimit
            | HighsModelStatus::ReachedIterationLimit
            | HighsModelStatus::ReachedSolutionLimit
            | HighsModelStatus::ReachedInterrupt
            | HighsModelStatus::ReachedMemoryLimit => SolveStatus::TimeLimit,
            other => {
                return Err(SolveError::Solver(format!(
                    "HiGHS ended with status {other:?}"
                )))
            }
        };
        if solved.primal_solution_status() != HighsSolutionStatus::Feasible {
            if let (SolveStatus::TimeLimit, Some(w)) = (status, warm) {
                return Ok(unproven(&problem, w, started, self.name()));
            }
            return Err(SolveError::Solver(
                "HiGHS stopped before finding any network; raise the time limit".into(),
            ));
        }
        let solution = solved.get_solution();
        let values = solution.columns();
        let selected: Vec<bool> = cols
            .iter()
            .zip(values)
            .filter_map(|(c, v)| match c {
                Col::X(_) => Some(*v > 0.5),
                _ => None,
            })
            .collect();
        let assignment = problem
            .zoning
            .as_ref()
            .map(|z| zone_assignment(&cols, values, z.len()));
        let objective = solved.objective_value();
        let bound = solved
            .double_info_value(c"mip_dual_bound")
            .map_err(|e| SolveError::Solver(format!("HiGHS has no dual bound: {e:?}")))?;
        let gap = solved.mip_gap();
        let solution = make_solution(
            &problem,
            selected,
            status,
            objective,
            bound,
            gap,
            started,
            self.name(),
        );
        Ok(match assignment {
            None => solution,
            Some(a) => super::with_zones(&problem, solution, a),
        })
    }
}

/// The warm-start network as a time-limited answer with no proven bound (the limit ran out
/// before HiGHS had one).
fn unproven(problem: &Problem, selected: Vec<bool>, started: Instant, solver: &str) -> Solution {
    let objective = crate::model::evaluate(problem, &selected).objective;
    make_solution(
        problem,
        selected,
        SolveStatus::TimeLimit,
        objective,
        f64::NAN,
        f64::NAN,
        started,
        solver,
    )
}

/// The zone of each cell from the solved columns: 0 outside the network, 1 + z in zone z.
fn zone_assignment(cols: &[Col], values: &[f64], n_zones: usize) -> Vec<u8> {
    let n = cols.iter().filter(|c| matches!(c, Col::X(_))).count();
    let mut out = vec![0u8; n];
    for (c, v) in cols.iter().zip(values) {
        if let Col::W(z, i) = *c {
            if *v > 0.5 && z < n_zones {
                out[i] = z as u8 + 1;
            }
        }
    }
    out
}

/// CBC through good_lp's coin_cbc backend: a second, independent MILP solver used to check
/// HiGHS in tests. CBC's objective is read back as good_lp evaluates it; its proven bound is
/// not exposed through good_lp, so `bound` and `gap` are NaN.
#[cfg(feature = "cbc")]
#[derive(Debug, Clone, Copy, Default)]
pub struct Cbc;

#[cfg(feature = "cbc")]
impl Solver for Cbc {
    fn name(&self) -> &'static str {
        "cbc"
    }

    fn solve(&self, problem: &Problem, options: &SolveOptions) -> Result<Solution, SolveError> {
        use good_lp::Solution as _;
        let started = Instant::now();
        let problem = scenario_best_borrowed(problem, self, options)?;
        let form = formulate(&problem)?;
        let Formulation {
            vars,
            objective,
            minimise,
            constraints,
            cols,
        } = form;
        let x_vars: Vec<Variable> = vars
            .iter_variables_with_def()
            .map(|(v, _)| v)
            .zip(&cols)
            .filter(|(_, c)| matches!(c, Col::X(_)))
            .map(|(v, _)| v)
            .collect();
        let obj_copy = objective.clone();
        let unsolved = if minimise {
            vars.minimise(objective)
        } else {
            vars.maximise(objective)
        };
        let mut m = unsolved.using(good_lp::solvers::coin_cbc::coin_cbc);
        m.set_parameter("log", if options.verbose { "1" } else { "0" });
        m.set_parameter("ratioGap", &options.rel_gap.max(0.0).to_string());
        if let Some(t) = options.threads {
            m.set_parameter("threads", &t.to_string());
        }
        if let Some(t) = options.time_limit_s {
            m.set_parameter("seconds", &t.to_string());
        }
        for c in constraints {
            m.add_constraint(c);
        }
        let sol = m.solve().map_err(|e| match e {
            good_lp::ResolutionError::Infeasible => infeasible(&problem),
            other => SolveError::Solver(other.to_string()),
        })?;
        let status = match sol.status() {
            good_lp::solvers::SolutionStatus::Optimal => SolveStatus::Optimal,
            good_lp::solvers::SolutionStatus::GapLimit => SolveStatus::GapLimit,
            good_lp::solvers::SolutionStatus::TimeLimit => SolveStatus::TimeLimit,
        };
        let selected = x_vars.iter().map(|&v| sol.value(v) > 0.5).collect();
        let objective = obj_copy.eval_with(&sol);
        Ok(make_solution(
            &problem,
            selected,
            status,
            objective,
            f64::NAN,
            f64::NAN,
            started,
            self.name(),
        ))
    }
}
