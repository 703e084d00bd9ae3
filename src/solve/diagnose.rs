//! Why targets cannot be reached: per feature, the most any allowed network can hold, and what
//! stops it. Run before building an integer program for min-cost problems, so the user gets a
//! precise message instead of a bare "infeasible".
//!
//! # Method
//! For feature k with target Tₖ > 0:
//! 1. Region: Σᵢ aᵢₖ over all cells. Below Tₖ → binding `region` (no network of this region
//!    can hold it, e.g. an absolute target above the feature's total).
//! 2. Allowed: Σ aᵢₖ over cells that are not excluded. Below Tₖ → binding `excluded cells`.
//! 3. Budget (if set): an upper bound on the most a network within the budget can hold — the
//!    LP relaxation of the knapsack max Σ aᵢₖxᵢ s.t. Σ cᵢxᵢ ≤ budget, xᵢ ∈ [0, 1], with required
//!    cells fixed to 1 and excluded ones to 0. Its optimum is the fractional greedy by aᵢₖ/cᵢ
//!    (Dantzig 1957, the classical LP-knapsack result). Done for the cost and area limits
//!    separately; the smaller bound is reported. Below Tₖ → binding `budget`.
//!
//! Because step 3 is a relaxation, a `budget` shortfall is certain but the achievable amount is
//! "at most"; a feature that passes every step may still fail jointly with the others (the
//! solvers then return [`super::SolveError::JointlyInfeasible`]).

use crate::model::evaluate::{at_least, evaluate};
use crate::model::{CellStatus, Objective, Problem, Robustness};

use super::ilp::Highs;
use super::{time, Shortfall, SolveError, SolveOptions, Solver};

/// LP-knapsack bound: the most of `amount` (per cell) a network can hold with `weight` (per
/// cell) at most `limit`, required cells included, excluded cells left out.
fn knapsack_bound(problem: &Problem, amount: &[(u32, f64)], weight: &[f64], limit: f64) -> f64 {
    let mut room = limit;
    let mut protected = 0.0;
    for (i, st) in problem.status.iter().enumerate() {
        if *st == CellStatus::Required {
            room -= weight[i];
        }
    }
    let mut items: Vec<(f64, f64)> = Vec::new();
    for &(c, a) in amount {
        match problem.status[c as usize] {
            CellStatus::Required => protected += a,
            CellStatus::Excluded => {}
            CellStatus::Free => items.push((a, weight[c as usize])),
        }
    }
    // Free items (zero weight) first, then by amount per unit weight, descending.
    items.sort_by(|x, y| {
        let rx = if x.1 > 0.0 { x.0 / x.1 } else { f64::INFINITY };
        let ry = if y.1 > 0.0 { y.0 / y.1 } else { f64::INFINITY };
        ry.total_cmp(&rx)
    });
    for (a, w) in items {
        if w <= room {
            protected += a;
            room -= w;
        } else {
            if room > 0.0 {
                protected += a * room / w;
            }
            break;
        }
    }
    protected
}

/// Per feature that cannot reach its target: the target, the most achievable and the binding
/// reason (`region`, `excluded cells`, `budget`). Empty when every target passes every check.
pub fn diagnose(problem: &Problem) -> Vec<Shortfall> {
    let mut out = Vec::new();
    for f in &problem.features {
        if f.target <= 0.0 {
            continue;
        }
        let region: f64 = f.amounts.iter().map(|(_, a)| a).sum();
        let allowed: f64 = f
            .amounts
            .iter()
            .filter(|(c, _)| problem.status[*c as usize] != CellStatus::Excluded)
            .map(|(_, a)| a)
            .sum();
        let shortfall = |achievable: f64, binding: &str| Shortfall {
            feature: f.name.clone(),
            target: f.target,
            achievable,
            binding: binding.to_string(),
        };
        if !at_least(region, f.target) {
            out.push(shortfall(region, "region"));
            continue;
        }
        if !at_least(allowed, f.target) {
            out.push(shortfall(allowed, "excluded cells"));
            continue;
        }
        let mut bound = f64::INFINITY;
        if let Some(limit) = problem.budget.max_cost {
            bound = bound.min(knapsack_bound(problem, &f.amounts, &problem.cost, limit));
        }
        if let Some(limit) = problem.budget.max_area_km2 {
            bound = bound.min(knapsack_bound(
                problem,
                &f.amounts,
                &problem.area_km2,
                limit,
            ));
        }
        if !at_least(bound, f.target) {
            out.push(shortfall(bound, "budget"));
        }
    }
    out
}

/// One feature's row of `diagnosis.csv`.
#[derive(Debug, Clone, PartialEq)]
pub struct DiagnosisRow {
    /// Feature name.
    pub feature: String,
    /// Its total amount over the region.
    pub total: f64,
    /// Its target amount.
    pub target: f64,
    /// The most of it any network within the budget holds (required cells in, excluded
    /// cells out; the spatial rules are left aside).
    pub best: f64,
    /// Whether `best` is proven (false: a time limit cut the solve short; `best` is then the
    /// most found, and the true best may be higher).
    pub proven: bool,
}

impl DiagnosisRow {
    /// `best` as a share of the total (0–1; 0 when the total is 0).
    pub fn best_share(&self) -> f64 {
        if self.total > 0.0 {
            self.best / self.total
        } else {
            0.0
        }
    }

    /// How far `best` falls below the target (0 when the budget can reach it).
    pub fn shortfall(&self) -> f64 {
        if at_least(self.best, self.target) {
            0.0
        } else {
            self.target - self.best
        }
    }
}

/// The cheapest network that meets every target with the budget lifted.
#[derive(Debug, Clone, PartialEq)]
pub enum Cheapest {
    /// It exists: its cost, area and share of the region's sea, and whether it is proven
    /// cheapest (within the solver's gap).
    Network {
        /// Total cost.
        cost: f64,
        /// Sea area. Units: km².
        area_km2: f64,
        /// Area over the region's sea area (0–1).
        share: f64,
        /// Relative gap of that solve (the cheapest cost is at least cost·(1 − gap)).
        gap: f64,
    },
    /// Even without the budget some targets cannot be reached (region or excluded cells).
    Unreachable(Vec<Shortfall>),
    /// The solve could not tell (e.g. it stopped without a network); the reason.
    Unknown(String),
}

/// Why a budget is too tight: per feature the best it allows, and the least cost that meets
/// every target.
#[derive(Debug, Clone, PartialEq)]
pub struct Diagnosis {
    /// One row per feature with a target, in feature order.
    pub rows: Vec<DiagnosisRow>,
    /// The cheapest network meeting every target without the budget.
    pub cheapest: Cheapest,
}

impl Diagnosis {
    /// Rows that fall short, worst first (largest shortfall as a share of the target, then
    /// feature order).
    pub fn worst(&self) -> Vec<&DiagnosisRow> {
        let mut short: Vec<&DiagnosisRow> =
            self.rows.iter().filter(|r| r.shortfall() > 0.0).collect();
        short.sort_by(|a, b| (b.shortfall() / b.target).total_cmp(&(a.shortfall() / a.target)));
        short
    }
}

/// The best holding of each feature within the budget (an exact max-benefit solve of that
/// feature alone, cap = its total) and the cheapest network meeting every target (a min-cost
/// solve of `problem` without its budget). Half of `options`' time limit goes to the feature
/// solves, in equal parts, the rest to the cheapest network (see [`super::time`]).
pub fn diagnose_budget(problem: &Problem, options: &SolveOptions) -> Result<Diagnosis, SolveError> {
    problem.validate()?;
    let with_target: Vec<usize> = (0..problem.features.len())
        .filter(|&k| problem.features[k].target > 0.0)
        .collect();
    let clock = time::TimeBudget::start(options.time_limit_s.unwrap_or(f64::INFINITY));
    let quiet = SolveOptions {
        progress: None,
        ..options.clone()
    };
    let has_budget = problem.budget.max_cost.is_some() || problem.budget.max_area_km2.is_some();
    let mut rows = Vec::with_capacity(with_target.len());
    for &k in &with_target {
        let f = &problem.features[k];
        let total: f64 = f.amounts.iter().map(|(_, a)| a).sum();
        let (best, proven) = if !has_budget || total <= 0.0 {
            let allowed: f64 = f
                .amounts
                .iter()
                .filter(|(c, _)| problem.status[*c as usize] != CellStatus::Excluded)
                .map(|(_, a)| a)
                .sum();
            (allowed, true)
        } else {
            let alone = Problem {
                features: vec![crate::model::ModelFeature {
                    name: f.name.clone(),
                    scenario: None,
                    amounts: f.amounts.clone(),
                    target: total,
                    weight: 1.0,
                }],
                scenarios: vec![crate::model::Scenario {
                    name: "alone".into(),
                    weight: 1.0,
                }],
                objective: Objective::MaxBenefit,
                robustness: Robustness::EveryScenario,
                edge_penalty: None,
                link_reward: None,
                spacing: None,
                min_reserve: None,
                min_neighbours: None,
                scenario_best: None,
                ..problem.clone()
            };
            let o = SolveOptions {
                rel_gap: 0.0,
                ..clock.options(&quiet, 0.5, with_target.len())
            };
            // A one-row max-benefit knapsack proven at gap 0: the decomposition takes no
            // max-benefit model, and the direct model proves this one in moments.
            let sol = Highs::default().solve(&alone, &o)?;
            (
                evaluate(&alone, &sol.selected).protected[0],
                sol.status == super::SolveStatus::Optimal,
            )
        };
        rows.push(DiagnosisRow {
            feature: f.name.clone(),
            total,
            target: f.target,
            best,
            proven,
        });
    }
    let unbounded = Problem {
        objective: Objective::MinCost,
        budget: crate::model::Budget::default(),
        ..problem.clone()
    };
    let sea: f64 = problem.area_km2.iter().sum();
    // The plan without its budget, by the plan's method (the decomposition for a large model).
    let cheapest = match super::decompose::solve_exact(&unbounded, &clock.options(&quiet, 1.0, 1)) {
        Ok(sol) => {
            let e = evaluate(&unbounded, &sol.selected);
            Cheapest::Network {
                cost: e.cost,
                area_km2: e.area_km2,
                share: if sea > 0.0 { e.area_km2 / sea } else { 0.0 },
                gap: sol.gap,
            }
        }
        Err(SolveError::Infeasible(short)) => Cheapest::Unreachable(short),
        Err(e) => Cheapest::Unknown(e.to_string()),
    };
    Ok(Diagnosis { rows, cheapest })
}

/// `diagnosis.csv`: one row per feature with a target — total, target, the best amount and
/// share reachable within the budget, whether that best is proven, and the shortfall.
pub fn diagnosis_csv(d: &Diagnosis) -> String {
    let mut s =
        String::from("feature,total,target,best_within_budget,best_share,proven,shortfall\n");
    for r in &d.rows {
        let name = if r.feature.contains([',', '"', '\n']) {
            format!("\"{}\"", r.feature.replace('"', "\"\""))
        } else {
            r.feature.clone()
        };
        s.push_str(&format!(
            "{name},{},{},{},{:.6},{},{}\n",
            r.total,
            r.target,
            r.best,
            r.best_share(),
            r.proven,
            r.shortfall()
        ));
    }
    s
}

/// The terminal account of a diagnosis: the `limit` worst shortfalls, a count of the rest and
/// the cheapest network that meets every target.
pub fn diagnosis_text(d: &Diagnosis, limit: usize) -> String {
    let worst = d.worst();
    let mut s = String::new();
    if worst.is_empty() {
        s.push_str(
            "each target can be reached on its own within the budget, but not all of them \
             together\n",
        );
    } else {
        s.push_str(&format!(
            "{} of {} targets cannot be reached within the budget; the furthest below their \
             target:\n",
            worst.len(),
            d.rows.len()
        ));
        s.push_str(&format!(
            "  {:<40} {:>12} {:>12} {:>10}\n",
            "feature", "target", "best", "best share"
        ));
        for r in worst.iter().take(limit) {
            s.push_str(&format!(
                "  {:<40} {:>12.3} {:>12.3} {:>9.1}%{}\n",
                r.feature,
                r.target,
                r.best,
                100.0 * r.best_share(),
                if r.proven { "" } else { " (at least)" }
            ));
        }
        if worst.len() > limit {
            s.push_str(&format!(
                "  … and {} more (all in diagnosis.csv)\n",
                worst.len() - limit
            ));
        }
    }
    match &d.cheapest {
        Cheapest::Network {
            cost, share, gap, ..
        } => {
            s.push_str(&format!(
                "the cheapest network that meets every target costs {cost:.1} ({:.1}% of the \
                 region){}\n",
                100.0 * share,
                if gap.is_finite() && *gap > 1e-9 {
                    format!(
                        ", within {} of the least cost",
                        super::progress::gap_percent(*gap)
                    )
                } else {
                    String::new()
                }
            ));
        }
        Cheapest::Unreachable(short) => {
            s.push_str(&format!(
                "no budget is enough: {} targets cannot be reached by any network",
                short.len()
            ));
            if let Some(f) = short.first() {
                s.push_str(&format!(
                    " (e.g. {} needs {:.3} but at most {:.3} is there: {})",
                    f.feature, f.target, f.achievable, f.binding
                ));
            }
            s.push('\n');
        }
        Cheapest::Unknown(why) => {
            s.push_str(&format!(
                "the cheapest network that meets every target could not be found: {why}\n"
            ));
        }
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Budget, ModelFeature, Objective, Robustness, Scenario};

    fn problem(status: Vec<CellStatus>, target: f64, budget: Budget) -> Problem {
        Problem {
            cost: vec![1.0, 2.0, 4.0, 1.0],
            area_km2: vec![1.0; 4],
            status,
            scenarios: vec![Scenario {
                name: "s".into(),
                weight: 1.0,
            }],
            features: vec![ModelFeature {
                name: "kelp".into(),
                scenario: None,
                amounts: vec![(0, 1.0), (1, 4.0), (2, 4.0)],
                target,
                weight: 1.0,
            }],
            objective: Objective::MinCost,
            robustness: Robustness::EveryScenario,
            budget,
            edge_penalty: None,
            link_reward: None,
            spacing: None,
            scenario_best: None,
            min_reserve: None,
            min_neighbours: None,
            keep_objective: None,
            alternative: None,
            zoning: None,
        }
    }

    #[test]
    fn reasons_and_amounts() {
        let free = vec![CellStatus::Free; 4];
        // Region holds 1 + 4 + 4 = 9 < 10 → region, achievable 9.
        let d = diagnose(&problem(free.clone(), 10.0, Budget::default()));
        assert_eq!((d[0].achievable, d[0].binding.as_str()), (9.0, "region"));
        // Excluding cell 2 leaves 5 < 8 → excluded cells, achievable 5.
        let mut st = free.clone();
        st[2] = CellStatus::Excluded;
        let d = diagnose(&problem(st, 8.0, Budget::default()));
        assert_eq!(
            (d[0].achievable, d[0].binding.as_str()),
            (5.0, "excluded cells")
        );
        // Cost budget 3: ratios a/c = 1 (cell 0), 2 (cell 1), 1 (cell 2). Hand LP knapsack:
        // take cell 1 (cost 2, 4), then cell 0 (cost 1, 1): 5 with the budget used → 5 < 8.
        let b = Budget {
            max_cost: Some(3.0),
            max_area_km2: None,
        };
        let d = diagnose(&problem(free.clone(), 8.0, b));
        assert_eq!((d[0].achievable, d[0].binding.as_str()), (5.0, "budget"));
        // Budget 4: cell 1, cell 0, then 1/4 of cell 2 → 4 + 1 + 1 = 6.
        let b = Budget {
            max_cost: Some(4.0),
            max_area_km2: None,
        };
        assert_eq!(diagnose(&problem(free.clone(), 8.0, b))[0].achievable, 6.0);
        // Area budget 1 with cell 0 required: required uses it all → 1.
        let mut st = free.clone();
        st[0] = CellStatus::Required;
        let b = Budget {
            max_cost: None,
            max_area_km2: Some(1.0),
        };
        assert_eq!(diagnose(&problem(st, 3.0, b))[0].achievable, 1.0);
        // Feasible target → nothing reported.
        assert!(diagnose(&problem(free, 8.0, Budget::default())).is_empty());
    }
}
