//! Lagrangian lower bound of a min-cost problem: the coverage rows Σᵢ aᵢₖxᵢ ≥ Tₖ (scaled to
//! Σᵢ (aᵢₖ/Tₖ)xᵢ ≥ 1) and the budget rows Σᵢ dᵢxᵢ ≤ D (scaled to ≤ 1) are moved into the
//! objective with multipliers λ ≥ 0:
//!
//! L(λ) = Σₖ λₖ − Σ_b λ_b + minₓ Σᵢ (cᵢ + w·Bᵢ − Σₖ λₖaᵢₖ/Tₖ + Σ_b λ_b dᵢ/D)·xᵢ
//!        + w·Σ lᵢⱼ|xᵢ − xⱼ|
//!
//! with required and excluded cells fixed. For every λ ≥ 0 and every network x that meets the
//! rows, the relaxed terms are ≤ 0, so L(λ) ≤ cost(x) + w·exposed(x): each L(λ) is a valid
//! lower bound (weak duality; Geoffrion 1974, Math. Programming Study 2:82). The inner minimum
//! is an s–t minimum cut ([`super::maxflow`]); without an edge penalty it separates per cell.
//! Since the cut problem has integral LP optima, the best L(λ) equals the LP relaxation bound
//! (Geoffrion's integrality property).
//!
//! The multipliers are first moved by a few steps of the volume algorithm (Barahona & Anbil
//! 2000, Math. Programming 87:385: the direction is the subgradient at a running convex
//! combination x̄ of the cut solutions, with a Polyak-type step towards a target and the step
//! factor adapted by "green/yellow/red" iterations), then by the box-step cutting-plane method
//! ([`Relaxation::ascend`]), which keeps every subgradient seen and so does not stall the
//! way plain subgradient steps do on these problems (issue 11; on the small test instances
//! the volume steps alone stopped up to 6 % short of the LP bound).

use std::time::Instant;

use crate::model::compact::own_edge_km;
use crate::model::{CellStatus, Problem};

use super::maxflow::{Cut, Energy};

/// The relaxed rows and the fixed part of the energy of one min-cost problem.
pub struct Relaxation<'a> {
    problem: &'a Problem,
    /// `(feature, 1/Tₖ)` of every feature with a positive target.
    pub rows: Vec<(usize, f64)>,
    /// Budget rows: per-cell use dᵢ/D (cost, area).
    pub budget_rows: Vec<Vec<f64>>,
    /// cᵢ + w·Bᵢ per cell.
    base: Vec<f64>,
    /// `(i, j, w·lᵢⱼ)`.
    pairs: Vec<(u32, u32, f64)>,
    /// `(i, j, r·sᵢⱼ)` of the connectivity reward −r·sᵢⱼ·xᵢxⱼ, whose −r·sᵢⱼ·xᵢ part is in
    /// `base` (maxflow module doc).
    directed: Vec<(u32, u32, f64)>,
    fixed: Vec<Option<bool>>,
    /// HiGHS threads for the master LP (HiGHS refuses a thread count that differs from the
    /// one its scheduler started with on the same OS thread, so every HiGHS call of a solve
    /// uses the caller's).
    pub threads: Option<u32>,
}

/// One evaluation of L(λ).
pub struct Evaluation {
    /// L(λ): a valid lower bound.
    pub bound: f64,
    /// The minimiser of the inner problem and its flip costs.
    pub cut: Cut,
    /// Subgradient: 1 − Σ (aᵢₖ/Tₖ)xᵢ per coverage row, then Σ dᵢxᵢ/D − 1 per budget row.
    pub slack: Vec<f64>,
}

/// Best multipliers found and their bound.
pub struct Ascent {
    /// Multipliers: coverage rows, then budget rows.
    pub lambda: Vec<f64>,
    /// L at `lambda`: the best proven lower bound.
    pub bound: f64,
    /// Averaged cut solution x̄ (an approximate LP optimum), per cell in [0, 1].
    pub average: Vec<f64>,
    /// Number of L(λ) evaluations.
    pub iterations: usize,
}

impl<'a> Relaxation<'a> {
    /// The relaxation of a min-cost `problem` (validated, unzoned).
    pub fn new(problem: &'a Problem) -> Relaxation<'a> {
        let n = problem.n_cells();
        let rows = problem
            .features
            .iter()
            .enumerate()
            .filter(|(_, f)| f.target > 0.0)
            .map(|(k, f)| (k, 1.0 / f.target))
            .collect();
        let mut budget_rows = Vec::new();
        if let Some(b) = problem.budget.max_cost.filter(|b| *b > 0.0) {
            budget_rows.push(problem.cost.iter().map(|c| c / b).collect());
        }
        if let Some(b) = problem.budget.max_area_km2.filter(|b| *b > 0.0) {
            budget_rows.push(problem.area_km2.iter().map(|a| a / b).collect());
        }
        let mut base = problem.cost.clone();
        let mut pairs = Vec::new();
        if let Some(pen) = problem.edge_penalty.as_ref().filter(|p| p.weight > 0.0) {
            for (b, own) in base.iter_mut().zip(own_edge_km(pen)) {
                *b += pen.weight * own;
            }
            pairs = pen
                .pairs
                .iter()
                .filter(|(_, _, l)| *l > 0.0)
                .map(|&(i, j, l)| (i, j, pen.weight * l))
                .collect();
        }
        let mut directed = Vec::new();
        if let Some(links) = problem.link_reward.as_ref().filter(|l| l.weight > 0.0) {
            for &(i, j, strength) in &links.pairs {
                let r = links.weight * strength;
                base[i as usize] -= r;
                directed.push((i, j, r));
            }
        }
        let fixed = problem
            .status
            .iter()
            .map(|s| match s {
                CellStatus::Free => None,
                CellStatus::Required => Some(true),
                CellStatus::Excluded => Some(false),
            })
            .collect();
        debug_assert_eq!(base.len(), n);
        Relaxation {
            problem,
            rows,
            budget_rows,
            base,
            pairs,
            directed,
            fixed,
            threads: None,
        }
    }

    /// Number of multipliers.
    pub fn n_multipliers(&self) -> usize {
        self.rows.len() + self.budget_rows.len()
    }

    /// Lagrangian cost of each cell at `lambda`: cᵢ + w·Bᵢ − Σ λₖaᵢₖ/Tₖ + Σ λ_b dᵢ/D.
    pub fn unary(&self, lambda: &[f64]) -> Vec<f64> {
        let mut u = self.base.clone();
        for (r, &(k, inv)) in self.rows.iter().enumerate() {
            let l = lambda[r] * inv;
            if l == 0.0 {
                continue;
            }
            for &(c, a) in &self.problem.features[k].amounts {
                u[c as usize] -= l * a;
            }
        }
        for (b, d) in self.budget_rows.iter().enumerate() {
            let l = lambda[self.rows.len() + b];
            if l != 0.0 {
                for (ui, di) in u.iter_mut().zip(d) {
                    *ui += l * di;
                }
            }
        }
        u
    }

    /// L(λ), its minimiser and subgradient.
    pub fn evaluate(&self, lambda: &[f64]) -> Evaluation {
        let energy = Energy {
            unary: self.unary(lambda),
            pairs: self.pairs.clone(),
            directed: self.directed.clone(),
            fixed: self.fixed.clone(),
        };
        let cut = energy.minimise();
        let slack = self.slack(
            &cut.x
                .iter()
                .map(|&b| f64::from(u8::from(b)))
                .collect::<Vec<_>>(),
        );
        let nr = self.rows.len();
        let constant: f64 = lambda[..nr].iter().sum::<f64>() - lambda[nr..].iter().sum::<f64>();
        Evaluation {
            bound: constant + cut.value,
            cut,
            slack,
        }
    }

    /// Row slacks of a (possibly fractional) x: 1 − Σ (aᵢₖ/Tₖ)xᵢ per coverage row (> 0: short),
    /// Σ dᵢxᵢ/D − 1 per budget row (> 0: over).
    pub fn slack(&self, x: &[f64]) -> Vec<f64> {
        let mut g = Vec::with_capacity(self.n_multipliers());
        for &(k, inv) in &self.rows {
            let held: f64 = self.problem.features[k]
                .amounts
                .iter()
                .map(|&(c, a)| a * x[c as usize])
                .sum();
            g.push(1.0 - held * inv);
        }
        for d in &self.budget_rows {
            g.push(d.iter().zip(x).map(|(a, b)| a * b).sum::<f64>() - 1.0);
        }
        g
    }

    /// Volume ascent from `start` (module doc) until `deadline`, `max_iter` evaluations, or
    /// until the bound has not risen by a relative 1e-6 over 150 evaluations. `target` is
    /// an upper bound (an incumbent's objective) or +∞.
    pub fn volume(&self, start: &[f64], target: f64, deadline: Instant, max_iter: usize) -> Ascent {
        let m = self.n_multipliers();
        let n = self.base.len();
        let mut best_lambda = start.to_vec();
        let first = self.evaluate(&best_lambda);
        let mut best = first.bound;
        let mut average: Vec<f64> = first
            .cut
            .x
            .iter()
            .map(|&b| f64::from(u8::from(b)))
            .collect();
        let mut direction = first.slack;
        let mut factor = 0.1;
        let mut reds = 0;
        let mut iterations = 1;
        let mut last_rise = (0usize, best);
        while iterations < max_iter && Instant::now() < deadline {
            // Step towards a target a little above the bound (the incumbent when closer).
            let aim = target.min(best + 0.05 * best.abs().max(1e-9));
            let norm2: f64 = direction
                .iter()
                .zip(&best_lambda)
                .map(|(g, l)| if *l <= 0.0 && *g < 0.0 { 0.0 } else { g * g })
                .sum();
            if norm2 <= 1e-18 {
                break;
            }
            let step = factor * (aim - best).max(1e-9 * best.abs().max(1.0)) / norm2;
            let lambda: Vec<f64> = best_lambda
                .iter()
                .zip(&direction)
                .map(|(l, g)| (l + step * g).max(0.0))
                .collect();
            let e = self.evaluate(&lambda);
            iterations += 1;
            // α minimising ‖α·g + (1 − α)·v‖ on [0.01, 0.1] (Barahona & Anbil's choice).
            let (mut gg, mut gv, mut vv) = (0.0, 0.0, 0.0);
            for (g, v) in e.slack.iter().zip(&direction) {
                gg += g * g;
                gv += g * v;
                vv += v * v;
            }
            let denom = gg - 2.0 * gv + vv;
            let alpha = if denom > 0.0 {
                ((vv - gv) / denom).clamp(0.01, 0.1)
            } else {
                0.1
            };
            for (a, &x) in average.iter_mut().zip(&e.cut.x) {
                *a = (1.0 - alpha) * *a + alpha * f64::from(u8::from(x));
            }
            let dot: f64 = e.slack.iter().zip(&direction).map(|(g, v)| g * v).sum();
            for (v, g) in direction.iter_mut().zip(&e.slack) {
                *v = (1.0 - alpha) * *v + alpha * g;
            }
            if e.bound > best {
                if e.bound > last_rise.1 + 1e-6 * last_rise.1.abs().max(1.0) {
                    last_rise = (iterations, e.bound);
                }
                best = e.bound;
                best_lambda = lambda;
                reds = 0;
                if dot >= 0.0 {
                    factor = (factor * 1.1).min(2.0);
                }
            } else {
                reds += 1;
                if reds >= 20 {
                    factor = (factor * 0.66).max(1e-6);
                    reds = 0;
                }
            }
            if iterations - last_rise.0 > 150 {
                break;
            }
        }
        debug_assert_eq!(average.len(), n);
        debug_assert_eq!(best_lambda.len(), m);
        Ascent {
            lambda: best_lambda,
            bound: best,
            average,
            iterations,
        }
    }
}

/// Cuts kept in the box-step master problem; the oldest inactive ones go first.
const MAX_CUTS: usize = 400;

impl Relaxation<'_> {
    /// Raise L(λ) from `start`: volume steps (cheap, they find the region of good
    /// multipliers) until they stall or half the time is gone, then the box-step method (Marsten, Hogan & Blankenship 1975, Math.
    /// Programming 9:1): the cutting-plane model max θ ≤ L(λⱼ) + gⱼ·(λ − λⱼ) over the cuts
    /// collected so far, solved as an LP by HiGHS within a box around the best λ; a step is
    /// kept when L rises by a tenth of what the model predicted, and the box shrinks
    /// otherwise. It stops when the model predicts less than a relative `tol` above the best
    /// L (then L is within `tol` of the LP bound in the box), at `deadline` or `max_iter`.
    pub fn ascend(&self, start: &[f64], target: f64, deadline: Instant, max_iter: usize) -> Ascent {
        self.ascend_to(start, target, deadline, max_iter, 1e-5)
    }

    /// [`Self::ascend`] with the stopping tolerance `tol`.
    pub fn ascend_to(
        &self,
        start: &[f64],
        target: f64,
        deadline: Instant,
        max_iter: usize,
        tol: f64,
    ) -> Ascent {
        // Volume steps until they stall or half the time is gone; box steps for the rest.
        let now = Instant::now();
        let half = now + deadline.saturating_duration_since(now) / 2;
        let warm = self.volume(start, target, half, max_iter / 2);
        let m = self.n_multipliers();
        let mut centre = warm.lambda;
        let mut average = warm.average;
        let mut iterations = warm.iterations;
        let first = self.evaluate(&centre);
        iterations += 1;
        let mut best = first.bound;
        // Cut j: L(λ) ≤ Lⱼ + gⱼ·(λ − λⱼ) = aⱼ + gⱼ·λ; last iteration it was tight.
        let mut cuts: Vec<(f64, Vec<f64>, usize)> = Vec::new();
        let add_cut = |cuts: &mut Vec<(f64, Vec<f64>, usize)>, e: &Evaluation, l: &[f64], it| {
            let a = e.bound - e.slack.iter().zip(l).map(|(g, x)| g * x).sum::<f64>();
            cuts.push((a, e.slack.clone(), it));
            if cuts.len() > MAX_CUTS {
                let oldest = (0..cuts.len()).min_by_key(|&j| cuts[j].2).unwrap_or(0);
                cuts.swap_remove(oldest);
            }
        };
        add_cut(&mut cuts, &first, &centre, iterations);
        let scale = centre.iter().fold(0.0f64, |a, b| a.max(*b));
        let mut width = if scale > 0.0 {
            scale
        } else {
            best.abs().max(1.0) / m.max(1) as f64
        };
        while iterations < max_iter && Instant::now() < deadline {
            let Some((lambda, model, active)) = self.master(&cuts, &centre, width) else {
                break;
            };
            let predicted = model - best;
            // On the box's edge (not at λ = 0) the model may rise further outside it.
            let on_edge = lambda
                .iter()
                .zip(&centre)
                .any(|(l, c)| (l - c).abs() >= 0.99 * width && *l > 0.0);
            if predicted <= tol * best.abs().max(1e-9) {
                if on_edge && width < 1e12 {
                    width *= 4.0;
                    iterations += 1;
                    continue;
                }
                break;
            }
            for (j, act) in active.iter().enumerate() {
                if *act {
                    cuts[j].2 = iterations;
                }
            }
            let e = self.evaluate(&lambda);
            iterations += 1;
            for (a, &x) in average.iter_mut().zip(&e.cut.x) {
                *a = 0.9 * *a + 0.1 * f64::from(u8::from(x));
            }
            add_cut(&mut cuts, &e, &lambda, iterations);
            if e.bound >= best + 0.1 * predicted {
                best = e.bound;
                centre = lambda;
                if on_edge {
                    width *= 2.0;
                }
            } else {
                width *= 0.5;
            }
            if best >= target {
                break;
            }
        }
        Ascent {
            lambda: centre,
            bound: best,
            average,
            iterations,
        }
    }

    /// The box-step master LP: max θ s.t. θ ≤ aⱼ + gⱼ·λ, max(0, c − w) ≤ λ ≤ c + w. Returns
    /// its λ, θ and which cuts are tight.
    fn master(
        &self,
        cuts: &[(f64, Vec<f64>, usize)],
        centre: &[f64],
        width: f64,
    ) -> Option<(Vec<f64>, f64, Vec<bool>)> {
        use good_lp::{constraint, variable, Expression, ProblemVariables, Solution, SolverModel};
        let mut vars = ProblemVariables::new();
        let lam: Vec<_> = centre
            .iter()
            .map(|&c| vars.add(variable().min((c - width).max(0.0)).max(c + width)))
            .collect();
        let theta = vars.add(variable());
        let mut m = vars.maximise(theta).using(good_lp::solvers::highs::highs);
        if let Some(t) = self.threads {
            m = m.set_threads(t);
        }
        let mut rows = Vec::with_capacity(cuts.len());
        for (a, g, _) in cuts {
            let mut e = Expression::from(theta);
            for (k, &gk) in g.iter().enumerate() {
                if gk != 0.0 {
                    e.add_mul(-gk, lam[k]);
                }
            }
            rows.push(m.add_constraint(constraint::leq(e, *a)));
        }
        let sol = m.solve().ok()?;
        let lambda: Vec<f64> = lam.iter().map(|&v| sol.value(v).max(0.0)).collect();
        let t = sol.value(theta);
        let active = cuts
            .iter()
            .map(|(a, g, _)| {
                let v = a + g.iter().zip(&lambda).map(|(x, y)| x * y).sum::<f64>();
                v - t <= 1e-7 * t.abs().max(1.0)
            })
            .collect();
        let _ = rows;
        Some((lambda, t, active))
    }
}
