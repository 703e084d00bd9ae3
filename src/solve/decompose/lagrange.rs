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
//! # Max-benefit
//! A maximisation is handled in its minimised sense m = −objective (least-regret is a
//! minimisation already), so every L(λ) here is a lower bound on m, i.e. −L(λ) is an upper bound
//! on the benefit. With capped holdings y'ₖ = yₖ/capₖ ∈ [0, 1] (model::robust) the problem is
//!
//! min m = w·exposed(x) − Σₖ vₖy'ₖ (every-scenario, expected: vₖ = Σ_{s∋k} πₛwₖ, πₛ = 1 or the
//! scenario share), or w·exposed(x) − t (worst-case), or w·exposed(x) + r (least-regret), s.t.
//! y'ₖ − Σᵢ (aᵢₖ/capₖ)xᵢ ≤ 0 (μₖ), Σᵢ dᵢxᵢ/D − 1 ≤ 0 (ν_b), and per scenario s
//! t − Σ_{k∈Fₛ} wₖy'ₖ ≤ 0 or Bₛ* − r − Σ_{k∈Fₛ} wₖy'ₖ ≤ 0 (ρₛ).
//!
//! Every relaxed row is written "row ≤ 0" and added as +multiplier × row, so at any network that
//! meets the rows (with yₖ its capped holding, t = minₛ Bₛ, r = max(0, maxₛ(Bₛ* − Bₛ))) the added
//! terms are ≤ 0 and L(λ) ≤ m(x): weak duality as above. t is bounded to [0, T̄] with
//! T̄ = minₛ maxₛBₛ, and r to [0, R̄] with R̄ = maxₛ Bₛ*: every network's t and r lie there
//! (Bₛ ≥ 0), so the bounds cut off nothing. The minimum then separates:
//!
//! L(λ) = −Σ_b ν_b + Σₛ ρₛBₛ* (least-regret) + [cut in x with unary w·Bᵢ − Σₖ μₖaᵢₖ/capₖ +
//! Σ_b ν_b dᵢ/D and the edge terms] + Σₖ min(0, μₖ − Gₖ) + T̄·min(0, Σρ − 1) (worst-case) or
//! R̄·min(0, 1 − Σρ) (least-regret), where Gₖ = vₖ + Σ_{s∋k} ρₛwₖ: each y'ₖ, t and r sits at a
//! bound of its box. The y, t and r parts are linear over boxes, the cut part has integral LP
//! optima, so here too the best L(λ) equals the LP relaxation bound of the direct model.
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
use crate::model::robust::{effective_robustness, scenario_benefits, scenario_shares};
use crate::model::{CellStatus, Objective, Problem, Robustness};

use super::master::{Master, Step};
use super::maxflow::{Cut, Energy, Reuse};
use super::scatter;

/// The features whose rows are relaxed, as `(feature, 1/Tₖ)`: for min-cost every feature with
/// a positive target, for max-benefit every feature with a benefit cap and a positive weight
/// (then `1/capₖ`). The primal moves index their rows the same way.
pub fn relaxed_features(problem: &Problem) -> Vec<(usize, f64)> {
    problem
        .features
        .iter()
        .enumerate()
        .filter_map(|(k, f)| match problem.objective {
            Objective::MinCost => (f.target > 0.0).then(|| (k, 1.0 / f.target)),
            Objective::MaxBenefit => f
                .benefit_cap()
                .filter(|_| f.weight > 0.0)
                .map(|cap| (k, 1.0 / cap)),
        })
        .collect()
}

/// How the max-benefit rule combines scenarios in the relaxation (module doc).
#[derive(Debug, Clone, PartialEq)]
enum Rule {
    /// Every-scenario or expected: a fixed value vₖ per row, no scenario rows.
    Sum,
    /// Worst-case: t ∈ [0, T̄] with one row per scenario.
    Worst {
        /// T̄.
        top: f64,
    },
    /// Least-regret: r ∈ [0, R̄] with one row per scenario.
    Regret {
        /// Bₛ*.
        best: Vec<f64>,
        /// R̄.
        top: f64,
    },
}

/// The capped-holding part of a max-benefit relaxation.
#[derive(Debug, Clone, PartialEq)]
struct Benefit {
    /// vₖ per relaxed row (zero under worst-case and least-regret).
    value: Vec<f64>,
    /// Per relaxed row: `(scenario, wₖ)` for each scenario row it appears in.
    in_scenarios: Vec<Vec<(usize, f64)>>,
    /// Number of scenario rows (0 under the sum rules).
    n_scenario_rows: usize,
    rule: Rule,
}

/// The relaxed rows and the fixed part of the energy of one min-cost or max-benefit problem.
pub struct Relaxation<'a> {
    problem: &'a Problem,
    /// `(feature, 1/Tₖ)` per relaxed feature row ([`relaxed_features`]).
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
    /// Whether every feature's amounts are sorted by cell, as `ModelFeature` promises (the
    /// parallel [`scatter`] passes need it; otherwise the plain loop runs).
    sorted: bool,
    /// `None` for min-cost (every row's y'ₖ is 1).
    benefit: Option<Benefit>,
    /// HiGHS threads for the master LP (HiGHS refuses a thread count that differs from the
    /// one its scheduler started with on the same OS thread, so every HiGHS call of a solve
    /// uses the caller's).
    pub threads: Option<u32>,
    /// The last max-flow's residual graph: the next evaluation starts from its flow (the
    /// multipliers, hence the unary terms, move little from one step to the next).
    flow: std::sync::Mutex<Option<Reuse>>,
}

/// Half-width of the first box around warm-start multipliers, as a share of the largest
/// one. Measured on the patchy 100k bench from a coarse start (docs/method.md §6c, "Coarse
/// start"): after 10 s the bound stood 0.29 % below the LP bound with volume steps first,
/// 0.14 %, 0.09 % and 0.08 % below it with box steps at once and shares 0.02, 0.1 and 0.3.
pub const WARM_BOX: f64 = 0.3;

/// Evaluations between two looks of an ascent's watcher ([`Relaxation::ascend_watched`]).
pub const WATCH_EVERY: usize = 25;

/// An ascent's watcher: sees the best point so far, returns the target to aim at or `None` to
/// stop.
pub type Watch<'a> = dyn FnMut(&Ascent) -> Option<f64> + 'a;

/// One evaluation of L(λ).
pub struct Evaluation {
    /// L(λ): a valid lower bound.
    pub bound: f64,
    /// The minimiser of the inner problem and its flip costs.
    pub cut: Cut,
    /// Subgradient: each relaxed row's value at the minimiser (row ≤ 0 when met): per feature
    /// row y'ₖ − Σ (aᵢₖ/Tₖ)xᵢ (y'ₖ = 1 for min-cost), then Σ dᵢxᵢ/D − 1 per budget row, then
    /// the scenario rows of worst-case or least-regret.
    pub slack: Vec<f64>,
}

/// Best multipliers found and their bound.
pub struct Ascent {
    /// Multipliers: feature rows, then budget rows, then scenario rows.
    pub lambda: Vec<f64>,
    /// L at `lambda`: the best proven lower bound.
    pub bound: f64,
    /// Averaged cut solution x̄ (an approximate LP optimum), per cell in [0, 1].
    pub average: Vec<f64>,
    /// Number of L(λ) evaluations.
    pub iterations: usize,
}

impl<'a> Relaxation<'a> {
    /// The relaxation of a `problem` the decomposition takes (validated, unzoned; for
    /// least-regret with Bₛ* known).
    pub fn new(problem: &'a Problem) -> Relaxation<'a> {
        let n = problem.n_cells();
        let rows = relaxed_features(problem);
        let benefit =
            (problem.objective == Objective::MaxBenefit).then(|| benefit_part(problem, &rows));
        let mut budget_rows = Vec::new();
        if let Some(b) = problem.budget.max_cost.filter(|b| *b > 0.0) {
            budget_rows.push(problem.cost.iter().map(|c| c / b).collect());
        }
        if let Some(b) = problem.budget.max_area_km2.filter(|b| *b > 0.0) {
            budget_rows.push(problem.area_km2.iter().map(|a| a / b).collect());
        }
        // Cost is the objective of min-cost only; max-benefit spends it through the budget row.
        let mut base = match problem.objective {
            Objective::MinCost => problem.cost.clone(),
            Objective::MaxBenefit => vec![0.0; n],
        };
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
            benefit,
            sorted: scatter::sorted_by_cell(&problem.features),
            threads: None,
            flow: std::sync::Mutex::new(None),
        }
    }

    /// Number of multipliers.
    pub fn n_multipliers(&self) -> usize {
        self.rows.len()
            + self.budget_rows.len()
            + self.benefit.as_ref().map_or(0, |b| b.n_scenario_rows)
    }

    /// Size of the objective for step lengths and the stopping test: 1e-9 for min-cost (its
    /// bound is the cost scale itself), the largest value the benefit part can take for
    /// max-benefit (Σ vₖ, T̄ or R̄). A least-regret ascent starts at L(0) = 0, where steps and
    /// a stopping test relative to the bound alone are 0 and never end (docs/method.md §6c);
    /// the price is that the box steps stop within tol × R̄ absolute.
    fn scale(&self) -> f64 {
        let Some(b) = &self.benefit else {
            return 1e-9;
        };
        let top = match &b.rule {
            Rule::Sum => b.value.iter().sum(),
            Rule::Worst { top } | Rule::Regret { top, .. } => *top,
        };
        top.max(1e-9)
    }

    /// Weight per relaxed row of one unit of capped holding y'ₖ in the objective, for the
    /// primal moves of a max-benefit problem: vₖ + Σ_{s∋k} ρ̂ₛwₖ with ρ̂ the scenario
    /// multipliers scaled to sum to 1 (uniform while they are all 0). Empty for min-cost.
    pub fn credit_weights(&self, lambda: &[f64]) -> Vec<f64> {
        let Some(b) = &self.benefit else {
            return Vec::new();
        };
        let first = self.rows.len() + self.budget_rows.len();
        let rho = &lambda[first..];
        let total: f64 = rho.iter().sum();
        let share = |s: usize| {
            if total > 0.0 {
                rho[s] / total
            } else {
                1.0 / rho.len().max(1) as f64
            }
        };
        b.value
            .iter()
            .zip(&b.in_scenarios)
            .map(|(v, ins)| v + ins.iter().map(|&(s, w)| share(s) * w).sum::<f64>())
            .collect()
    }

    /// Lagrangian cost of each cell at `lambda`: cᵢ + w·Bᵢ − Σ λₖaᵢₖ/Tₖ + Σ λ_b dᵢ/D (no cᵢ
    /// for max-benefit).
    pub fn unary(&self, lambda: &[f64]) -> Vec<f64> {
        let mut u = self.base.clone();
        let weighted: Vec<(usize, f64)> = self
            .rows
            .iter()
            .enumerate()
            .map(|(r, &(k, inv))| (k, lambda[r] * inv))
            .collect();
        if self.sorted {
            scatter::subtract_weighted(&mut u, &self.problem.features, &weighted);
        } else {
            for &(k, l) in weighted.iter().filter(|w| w.1 != 0.0) {
                for &(c, a) in &self.problem.features[k].amounts {
                    u[c as usize] -= l * a;
                }
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
        let unary = self.unary(lambda);
        let energy = Energy {
            unary,
            pairs: self.pairs.clone(),
            directed: self.directed.clone(),
            fixed: self.fixed.clone(),
        };
        let cut = {
            let mut kept = self.flow.lock().unwrap_or_else(|e| e.into_inner());
            energy.minimise_reusing(&mut kept)
        };
        let x: Vec<f64> = cut.x.iter().map(|&b| f64::from(u8::from(b))).collect();
        let held = self.held(&x);
        let nr = self.rows.len();
        let nb = self.budget_rows.len();
        let budget: Vec<f64> = self
            .budget_rows
            .iter()
            .map(|d| d.iter().zip(&x).map(|(a, b)| a * b).sum::<f64>() - 1.0)
            .collect();
        let Some(b) = &self.benefit else {
            let constant: f64 = lambda[..nr].iter().sum::<f64>() - lambda[nr..].iter().sum::<f64>();
            let mut slack: Vec<f64> = held.iter().map(|h| 1.0 - h).collect();
            slack.extend(budget);
            return Evaluation {
                bound: constant + cut.value,
                cut,
                slack,
            };
        };
        let rho = &lambda[nr + nb..];
        let mut value = cut.value - lambda[nr..nr + nb].iter().sum::<f64>();
        // Each y'ₖ at the bound its coefficient μₖ − Gₖ asks for; at a zero coefficient any
        // value is a minimiser, and the one that meets the row exactly is taken.
        let y: Vec<f64> = (0..nr)
            .map(|r| {
                let g = b.value[r]
                    + b.in_scenarios[r]
                        .iter()
                        .map(|&(s, w)| rho[s] * w)
                        .sum::<f64>();
                let c = lambda[r] - g;
                value += c.min(0.0);
                if c < 0.0 {
                    1.0
                } else if c > 0.0 {
                    0.0
                } else {
                    held[r].min(1.0)
                }
            })
            .collect();
        let mut slack: Vec<f64> = y.iter().zip(&held).map(|(y, h)| y - h).collect();
        slack.extend(budget);
        if b.n_scenario_rows > 0 {
            let mut benefit = vec![0.0; b.n_scenario_rows];
            for (r, ins) in b.in_scenarios.iter().enumerate() {
                for &(s, w) in ins {
                    benefit[s] += w * y[r];
                }
            }
            let sum_rho: f64 = rho.iter().sum();
            match &b.rule {
                Rule::Sum => {}
                Rule::Worst { top } => {
                    let c = sum_rho - 1.0;
                    let worst = benefit.iter().copied().fold(f64::INFINITY, f64::min);
                    let t = if c < 0.0 {
                        *top
                    } else if c > 0.0 {
                        0.0
                    } else {
                        worst.clamp(0.0, *top)
                    };
                    value += c * t;
                    slack.extend(benefit.iter().map(|bs| t - bs));
                }
                Rule::Regret { best, top } => {
                    let c = 1.0 - sum_rho;
                    let most = best
                        .iter()
                        .zip(&benefit)
                        .map(|(b, bs)| b - bs)
                        .fold(0.0, f64::max);
                    let r = if c < 0.0 {
                        *top
                    } else if c > 0.0 {
                        0.0
                    } else {
                        most.clamp(0.0, *top)
                    };
                    value += c * r + rho.iter().zip(best).map(|(p, b)| p * b).sum::<f64>();
                    slack.extend(best.iter().zip(&benefit).map(|(b, bs)| b - r - bs));
                }
            }
        }
        Evaluation {
            bound: value,
            cut,
            slack,
        }
    }

    /// Σᵢ (aᵢₖ/Tₖ)xᵢ per relaxed feature row, for a (possibly fractional) x.
    fn held(&self, x: &[f64]) -> Vec<f64> {
        let ks: Vec<usize> = self.rows.iter().map(|r| r.0).collect();
        scatter::row_sums(x, &self.problem.features, &ks)
            .into_iter()
            .zip(&self.rows)
            .map(|(sum, &(_, inv))| sum * inv)
            .collect()
    }

    /// Volume ascent from `start` (module doc) until `deadline`, `max_iter` evaluations, or
    /// until the bound has not risen by a relative 1e-6 over 150 evaluations. `target` is
    /// an upper bound (an incumbent's objective) or +∞.
    pub fn volume(&self, start: &[f64], target: f64, deadline: Instant, max_iter: usize) -> Ascent {
        self.volume_watched(start, target, deadline, max_iter, &mut |_| Some(target))
    }

    /// [`Self::volume`] that shows `watch` the best point every [`WATCH_EVERY`] evaluations
    /// (see [`Self::ascend_watched`]).
    fn volume_watched(
        &self,
        start: &[f64],
        mut target: f64,
        deadline: Instant,
        max_iter: usize,
        watch: &mut Watch<'_>,
    ) -> Ascent {
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
            // Step towards a target a little above the bound (the incumbent when closer). A
            // max-benefit bound can sit at 0 (least-regret starts there), so the step is
            // measured against the objective's own size then.
            let aim = target.min(best + 0.05 * best.abs().max(self.scale()));
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
            if iterations.is_multiple_of(WATCH_EVERY) {
                let seen = Ascent {
                    lambda: best_lambda.clone(),
                    bound: best,
                    average: average.clone(),
                    iterations,
                };
                match watch(&seen) {
                    Some(t) => target = t,
                    None => break,
                }
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

/// The max-benefit part of the relaxation of `problem` over the feature rows `rows` (module
/// doc).
fn benefit_part(problem: &Problem, rows: &[(usize, f64)]) -> Benefit {
    let rule = effective_robustness(problem);
    let benefits = scenario_benefits(problem);
    let row_of: std::collections::BTreeMap<usize, usize> =
        rows.iter().enumerate().map(|(r, &(k, _))| (k, r)).collect();
    let mut value = vec![0.0; rows.len()];
    let mut in_scenarios = vec![Vec::new(); rows.len()];
    let shares = match rule {
        Robustness::Expected => scenario_shares(problem),
        _ => vec![1.0; problem.scenarios.len()],
    };
    for (s, b) in benefits.iter().enumerate() {
        for &(k, _) in &b.terms {
            let Some(&r) = row_of.get(&k) else {
                continue;
            };
            // In y'ₖ = yₖ/capₖ units a row's benefit coefficient is its weight wₖ.
            let w = problem.features[k].weight;
            match rule {
                Robustness::EveryScenario | Robustness::Expected => value[r] += shares[s] * w,
                Robustness::WorstCase | Robustness::LeastRegret => in_scenarios[r].push((s, w)),
            }
        }
    }
    let n_scen = problem.scenarios.len();
    let rule = match rule {
        Robustness::EveryScenario | Robustness::Expected => Rule::Sum,
        Robustness::WorstCase => Rule::Worst {
            top: benefits
                .iter()
                .map(|b| b.max)
                .fold(f64::INFINITY, f64::min)
                .max(0.0),
        },
        Robustness::LeastRegret => {
            let best = problem
                .scenario_best
                .clone()
                .unwrap_or_else(|| vec![0.0; n_scen]);
            let top = best.iter().copied().fold(0.0, f64::max);
            Rule::Regret { best, top }
        }
    };
    Benefit {
        value,
        in_scenarios,
        n_scenario_rows: if rule == Rule::Sum { 0 } else { n_scen },
        rule,
    }
}

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
        self.ascend_watched(start, target, deadline, max_iter, tol, &mut |_| {
            Some(target)
        })
    }

    /// [`Self::ascend_to`] that shows `watch` the best multipliers so far (with the bound and
    /// the averaged cut) every [`WATCH_EVERY`] evaluations; `watch` returns the target to aim
    /// at from then on (an incumbent it found lowers it), or `None` to stop the ascent.
    pub fn ascend_watched(
        &self,
        start: &[f64],
        mut target: f64,
        deadline: Instant,
        max_iter: usize,
        tol: f64,
        watch: &mut Watch<'_>,
    ) -> Ascent {
        // From λ = 0: volume steps until they stall or half the time is gone, box steps for
        // the rest. From multipliers found earlier (a coarse copy's, or an earlier phase's):
        // box steps at once, in a narrower box.
        let warm_start = start.iter().any(|l| *l > 0.0);
        let (mut centre, first, mut iterations, mut average) = if warm_start {
            let first = self.evaluate(start);
            let x = first
                .cut
                .x
                .iter()
                .map(|&b| f64::from(u8::from(b)))
                .collect();
            (start.to_vec(), first, 1, x)
        } else {
            let now = Instant::now();
            let half = now + deadline.saturating_duration_since(now) / 2;
            let mut stopped = false;
            let warm = self.volume_watched(start, target, half, max_iter / 2, &mut |a| {
                let t = watch(a);
                stopped = t.is_none();
                if let Some(t) = t {
                    target = t;
                }
                t
            });
            if stopped {
                return warm;
            }
            let first = self.evaluate(&warm.lambda);
            (warm.lambda, first, warm.iterations + 1, warm.average)
        };
        let m = self.n_multipliers();
        let mut best = first.bound;
        // Cut j: L(λ) ≤ Lⱼ + gⱼ·(λ − λⱼ) = aⱼ + gⱼ·λ; last iteration it was tight.
        let mut cuts = Master::new(m, self.threads);
        cuts.add(first.bound, &first.slack, &centre, iterations);
        let scale =
            centre.iter().fold(0.0f64, |a, b| a.max(*b)) * if warm_start { WARM_BOX } else { 1.0 };
        let mut width = if scale > 0.0 {
            scale
        } else {
            best.abs().max(1.0) / m.max(1) as f64
        };
        while iterations < max_iter && Instant::now() < deadline {
            let master = cuts.solve(&centre, width, iterations);
            let Some(Step { lambda, model }) = master else {
                break;
            };
            let predicted = model - best;
            // On the box's edge (not at λ = 0) the model may rise further outside it.
            let on_edge = lambda
                .iter()
                .zip(&centre)
                .any(|(l, c)| (l - c).abs() >= 0.99 * width && *l > 0.0);
            if predicted <= tol * best.abs().max(self.scale()) {
                if on_edge && width < 1e12 {
                    width *= 4.0;
                    iterations += 1;
                    continue;
                }
                break;
            }
            let e = self.evaluate(&lambda);
            iterations += 1;
            for (a, &x) in average.iter_mut().zip(&e.cut.x) {
                *a = 0.9 * *a + 0.1 * f64::from(u8::from(x));
            }
            cuts.add(e.bound, &e.slack, &lambda, iterations);
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
            if iterations.is_multiple_of(WATCH_EVERY) {
                let seen = Ascent {
                    lambda: centre.clone(),
                    bound: best,
                    average: average.clone(),
                    iterations,
                };
                match watch(&seen) {
                    Some(t) => target = t,
                    None => break,
                }
            }
        }
        Ascent {
            lambda: centre,
            bound: best,
            average,
            iterations,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Budget, ModelFeature, Scenario};
    use std::time::Duration;

    /// Three cells of cost (2, 1, 1) and budget 2; f0 holds (2, 1, 0) with target 2, f1 holds
    /// (0, 0, 1) with target 1, both of weight 1. By enumeration the best network is {1, 2}
    /// with benefit 0.5 + 1 = 1.5 (every-scenario, one scenario).
    fn three_cells(rule: Robustness, two_scenarios: bool) -> Problem {
        let f = |name: &str, s, amounts, target| ModelFeature {
            name: name.into(),
            scenario: s,
            amounts,
            target,
            weight: 1.0,
        };
        let scenarios = (0..1 + usize::from(two_scenarios))
            .map(|s| Scenario {
                name: format!("s{s}"),
                weight: 1.0,
            })
            .collect();
        let s1 = if two_scenarios { Some(1) } else { Some(0) };
        Problem {
            budget: Budget {
                max_cost: Some(2.0),
                max_area_km2: None,
            },
            ..Problem::plain(
                vec![2.0, 1.0, 1.0],
                vec![1.0; 3],
                scenarios,
                vec![
                    f("f0", Some(0), vec![(0, 2.0), (1, 1.0)], 2.0),
                    f("f1", s1, vec![(2, 1.0)], 1.0),
                ],
                Objective::MaxBenefit,
                rule,
            )
        }
    }

    #[test]
    fn max_benefit_lagrangian_by_hand() {
        // Hand computation (module doc formula), multipliers (μ₀, μ₁, ν): at (1, 1, 0.5) the
        // unary terms are (−0.5, −0.25, −0.75), all chosen, cut −1.5, y terms 0, constant −0.5:
        // L = −2 (benefit ≤ 2). At (1, 1, 1): unary (0, 0, −0.5), cut −0.5, L = −1.5, which is
        // the enumerated optimum's −1.5, so the bound is tight there.
        let p = three_cells(Robustness::EveryScenario, false);
        let r = Relaxation::new(&p);
        assert_eq!(r.n_multipliers(), 3);
        assert!((r.evaluate(&[1.0, 1.0, 0.5]).bound + 2.0).abs() < 1e-12);
        let e = r.evaluate(&[1.0, 1.0, 1.0]);
        assert!((e.bound + 1.5).abs() < 1e-12);
        // Weak duality against the enumerated optimum, and the ascent reaches it (the LP
        // bound equals the integer optimum here: x₂ = 1 leaves 2x₀ + x₁ ≤ 1, so y'₀ ≤ ½).
        let far = Instant::now() + Duration::from_secs(10);
        let a = r.ascend(&[0.0; 3], f64::INFINITY, far, 2_000);
        assert!(
            a.bound <= -1.5 + 1e-9 && a.bound >= -1.5 - 1e-4,
            "{}",
            a.bound
        );
    }

    #[test]
    fn worst_case_lagrangian_reaches_the_lp_bound_by_hand() {
        // f0 in scenario 0, f1 in scenario 1, worst-case. Enumeration: {1, 2} gives
        // B = (½, 1), min ½, the best. LP by hand: x₂ = a, 2x₀ + x₁ = 2 − a, t = min((2 − a)/2, a),
        // best at a = ⅔: t = ⅔. The Lagrangian dual equals that LP bound (integrality property),
        // so −L* → ⅔ ≥ ½. At (μ, ν, ρ) = (½, ½, ½, ½, ½) by hand: unary (0, 0, −¼), y and t terms
        // 0, constant −½, so L = −¾ (T̄ = 1).
        let p = three_cells(Robustness::WorstCase, true);
        let r = Relaxation::new(&p);
        assert_eq!(r.n_multipliers(), 5);
        assert!((r.evaluate(&[0.5; 5]).bound + 0.75).abs() < 1e-12);
        let far = Instant::now() + Duration::from_secs(10);
        let a = r.ascend(&[0.0; 5], f64::INFINITY, far, 5_000);
        assert!((a.bound + 2.0 / 3.0).abs() < 1e-3, "{}", a.bound);
        // Scenario multipliers mix the credit weights: ρ = (½, ½) gives ½ per row.
        assert_eq!(r.credit_weights(&[0.0, 0.0, 0.0, 0.5, 0.5]), vec![0.5, 0.5]);
    }
}
