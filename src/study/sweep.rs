//! Budget sweep: one max-benefit solve per budget (a share of the region's sea area), giving
//! the cost–benefit curve and, per feature, the smallest budget at which its target is reached.
//! Each budget gets the least cost for what it buys:
//! * a budget that buys every target gets the least-cost network that holds them all;
//! * a smaller one is solved lexicographically: the best benefit of the plan's rule first,
//!   then the least cost at that benefit ([`Problem::keep_objective`]),
//!
//! so no budget spends cost that buys nothing. Measured in cost ([`SweepBudget::Cost`]), cost
//! then never falls as the budget grows: a larger budget's network either fits the smaller
//! budget, and then buys no more and costs no less, or costs more than the smaller budget,
//! which bounds the smaller network's cost. The same holds for area budgets when cost is the
//! cells' area. With an area budget and another cost layer, a larger area budget can admit a
//! cheaper network of the same benefit; [`Sweep::cost_falls`] lists where that happens.
//! Budgets are solved in parallel, one solver thread each, and collected in budget order, so
//! the result does not depend on the number of threads (unless a time limit cuts solves short).
//!
//! The benefit stage and the every-target stage follow `[solver] method`
//! ([`solve_exact`]: the decomposition takes the min-cost every-target stage of a large model;
//! max-benefit falls back to the direct model by itself). The least-cost stage under a kept
//! benefit stays with the direct model: the kept objective row is HiGHS's alone.

use rayon::prelude::*;

use crate::model::{evaluate_zoned, Objective, Problem, Robustness};
use crate::solve::decompose::solve_exact;
use crate::solve::ilp::Highs;
use crate::solve::{Solution, SolveError, SolveOptions, Solver};

/// What a sweep's budget shares are shares of.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum SweepBudget {
    /// Of the region's sea area (`budget.max_area_km2` per run). Units: km².
    Area(f64),
    /// Of the whole region's cost (`budget.max_cost` per run): with the budget in the cost's
    /// own unit, cost never falls as the budget grows (module doc). Units: the plan's cost.
    Cost(f64),
}

impl SweepBudget {
    /// The word used in outputs: `area` or `cost`.
    pub fn as_str(self) -> &'static str {
        match self {
            SweepBudget::Area(_) => "area",
            SweepBudget::Cost(_) => "cost",
        }
    }
}

/// One budget's solve.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepRun {
    /// Budget as a share of the region's sea area or cost (0–1, see [`SweepBudget`]).
    pub share: f64,
    /// The budget as area (NaN when the budget is a share of cost). Units: km².
    pub budget_km2: f64,
    /// The budget as cost (NaN when the budget is a share of area).
    pub budget_cost: f64,
    /// The solve (objective = combined benefit of the plan's rule, minus any edge penalty).
    pub solution: Solution,
    /// Cost of the network.
    pub cost: f64,
    /// Area of the network. Units: km².
    pub area_km2: f64,
    /// Targets reached (all scenarios).
    pub targets_reached: usize,
    /// Whether each feature's target is reached, in feature order.
    pub reached: Vec<bool>,
    /// Relative gap of the least-cost stage (module doc). `solution` is that stage's network
    /// with the benefit as its objective; its status, bound and gap are the benefit stage's
    /// (or proven optimal when every target is reached: no benefit is higher).
    pub cost_gap: f64,
}

/// All budgets' solves, in ascending budget order.
#[derive(Debug, Clone, PartialEq)]
pub struct Sweep {
    /// One run per budget.
    pub runs: Vec<SweepRun>,
    /// Feature names, in feature order.
    pub features: Vec<String>,
}

impl Sweep {
    /// Per feature, the smallest budget share whose network meets its target (`None`: no
    /// budget of the sweep does).
    pub fn first_reached(&self) -> Vec<Option<f64>> {
        (0..self.features.len())
            .map(|k| self.runs.iter().find(|r| r.reached[k]).map(|r| r.share))
            .collect()
    }
}

impl Sweep {
    /// Consecutive budgets `(smaller, larger)` (indices into `runs`) where the cost falls as
    /// the budget grows by more than round-off. Empty for cost budgets and when cost is the
    /// cells' area (module doc); otherwise worth telling the planner: the smaller budget's
    /// network costs more than a network of at least its benefit that needs more area.
    pub fn cost_falls(&self) -> Vec<(usize, usize)> {
        (1..self.runs.len())
            .filter(|&i| {
                let (a, b) = (self.runs[i - 1].cost, self.runs[i].cost);
                b < a - 1e-9 * a.abs().max(1.0)
            })
            .map(|i| (i - 1, i))
            .collect()
    }
}

/// File stem of one budget's network: `budget-10pct` for 10 %, `budget-2.5pct` for 2.5 %
/// (the percentage to at most six decimals, trailing zeros dropped).
pub fn budget_stem(share: f64) -> String {
    let pct = format!("{:.6}", 100.0 * share);
    let pct = pct.trim_end_matches('0').trim_end_matches('.');
    format!("budget-{pct}pct")
}

/// Parses a budget list such as `5%,10%,20%` or `0.05,0.1`, with `...` to continue an even
/// step (`5%,10%,...,40%` is 5, 10, 15, …, 40 %). Returns sorted, distinct shares in (0, 1].
pub fn parse_budgets(text: &str) -> Result<Vec<f64>, String> {
    let parse_one = |t: &str| -> Result<f64, String> {
        let t = t.trim();
        let (num, scale) = match t.strip_suffix('%') {
            Some(n) => (n, 0.01),
            None => (t, 1.0),
        };
        let v: f64 = num.trim().parse().map_err(|_| {
            format!("budget `{t}` is not a number; expected a share like `10%` or `0.1`")
        })?;
        let v = v * scale;
        if !(v > 0.0 && v <= 1.0) {
            return Err(format!(
                "budget `{t}` is outside (0, 100%]; budgets are shares of the region's sea area"
            ));
        }
        Ok(v)
    };
    let tokens: Vec<&str> = text.split(',').map(str::trim).collect();
    let mut out: Vec<f64> = Vec::new();
    for (i, t) in tokens.iter().enumerate() {
        if *t == "..." {
            let (Some(&b), Some(next)) =
                (out.len().checked_sub(2).map(|j| &out[j]), tokens.get(i + 1))
            else {
                return Err(
                    "`...` needs two budgets before it and one after, e.g. `5%,10%,...,40%`".into(),
                );
            };
            let a = out[out.len() - 1];
            let step = a - b;
            let end = parse_one(next)?;
            if step <= 0.0 {
                return Err("budgets before `...` must increase".into());
            }
            let mut v = a + step;
            // Stop before the end (it is the next token); 1e-9 absorbs step rounding.
            while v < end - 1e-9 {
                out.push((v * 1e9).round() / 1e9);
                v += step;
            }
        } else {
            out.push(parse_one(t)?);
        }
    }
    if out.is_empty() {
        return Err("no budgets given; expected e.g. `--budgets 5%,10%,20%`".into());
    }
    out.sort_by(f64::total_cmp);
    out.dedup_by(|a, b| (*a - *b).abs() < 1e-12);
    Ok(out)
}

/// Solves `problem` as max-benefit under each budget share (of `sea_area_km2`), keeping its
/// robustness rule, cost limit, cell status and spatial rules (module doc). `on_solved` is
/// called after each budget (for a progress bar).
pub fn sweep(
    problem: &Problem,
    shares: &[f64],
    sea_area_km2: f64,
    options: &SolveOptions,
    on_solved: &(dyn Fn() + Sync),
) -> Result<Sweep, SolveError> {
    sweep_of(
        problem,
        shares,
        SweepBudget::Area(sea_area_km2),
        options,
        on_solved,
    )
}

/// [`sweep`] with the budget shares taken of the region's area or of its total cost. A cost
/// budget replaces the plan's `max_cost` and keeps its area limit; an area budget replaces the
/// area limit and keeps `max_cost`.
pub fn sweep_of(
    problem: &Problem,
    shares: &[f64],
    of: SweepBudget,
    options: &SolveOptions,
    on_solved: &(dyn Fn() + Sync),
) -> Result<Sweep, SolveError> {
    super::unzoned(problem, "the budget sweep")?;
    problem.validate()?;
    // Required cells are in every network: a budget below their use cannot be solved, and
    // the planner needs to hear which budget and where to start instead.
    let (used, total, unit) = match of {
        SweepBudget::Area(total) => (
            required_sum(problem, &problem.area_km2),
            total,
            "the sea area",
        ),
        SweepBudget::Cost(total) => (required_sum(problem, &problem.cost), total, "the cost"),
    };
    if let Some(&low) = shares.iter().find(|&&s| s * total < used) {
        return Err(SolveError::Model(crate::model::ModelError::Combination(
            format!(
                "budget {:.1}% ({:.1}) is less than the required cells alone use ({used:.1}, {:.1}% of {unit}); start the sweep at a budget of at least {:.1}%",
                100.0 * low,
                low * total,
                100.0 * used / total,
                (1000.0 * used / total).ceil() / 10.0
            ),
        )));
    }
    let one_thread = SolveOptions {
        threads: Some(1),
        ..options.clone()
    };
    let runs: Vec<Result<SweepRun, SolveError>> = shares
        .par_iter()
        .map(|&share| {
            let run = solve_at_budget(problem, share, of, &one_thread);
            on_solved();
            run
        })
        .collect();
    Ok(Sweep {
        runs: runs.into_iter().collect::<Result<_, _>>()?,
        features: problem.features.iter().map(|f| f.name.clone()).collect(),
    })
}

/// One budget's solve (module doc): the best benefit of the plan's rule under `share` of the
/// budget measure, then the least cost at that benefit — or, when the budget buys every
/// target, the least-cost network holding them all. `problem`'s cell status is kept, so a
/// nested study (the priority ranking) can require an earlier network's cells.
pub fn solve_at_budget(
    problem: &Problem,
    share: f64,
    of: SweepBudget,
    options: &SolveOptions,
) -> Result<SweepRun, SolveError> {
    let mut p = problem.clone();
    p.objective = Objective::MaxBenefit;
    p.scenario_best = None;
    match of {
        SweepBudget::Area(total) => p.budget.max_area_km2 = Some(share * total),
        SweepBudget::Cost(total) => p.budget.max_cost = Some(share * total),
    }
    let first = solve_exact(&p, options)?;
    let e = evaluate_zoned(&p, &first.assignment());
    let mut q = p.clone();
    q.objective = Objective::MinCost;
    q.robustness = Robustness::EveryScenario;
    // Whether the budget buys every target. The benefit stage shows it when its network
    // meets them all; under worst-case and least-regret a network of the best benefit
    // may miss targets of the easier scenarios although the budget buys them, so the
    // least-cost every-target solve is tried and an infeasible one means no.
    let absent = e.absent.iter().filter(|a| **a).count();
    let every_target = if e.targets_reached + absent == e.reached.len() {
        Some(solve_exact(&q, options)?)
    } else if matches!(
        p.robustness,
        Robustness::WorstCase | Robustness::LeastRegret
    ) {
        match solve_exact(&q, options) {
            Ok(s) => Some(s),
            Err(SolveError::Infeasible(_) | SolveError::JointlyInfeasible(_)) => None,
            Err(other) => return Err(other),
        }
    } else {
        None
    };
    let (solution, e, cost_gap) = match every_target {
        Some(cheap) => {
            // The least-cost network holding every target under the same budget and
            // rules; every target reached is the most benefit there is: proven optimal.
            let e = evaluate_zoned(&p, &cheap.assignment());
            let cost_gap = cheap.gap;
            let solution = crate::solve::Solution {
                objective: e.objective,
                bound: e.objective,
                gap: 0.0,
                status: crate::solve::SolveStatus::Optimal,
                seconds: first.seconds + cheap.seconds,
                scenarios: e.scenarios.clone(),
                ..cheap
            };
            (solution, e, cost_gap)
        }
        None => {
            // Lexicographic: the best benefit first, then the least cost at that
            // benefit, so cost buys benefit and is not spent for nothing.
            let q = Problem {
                keep_objective: Some(e.objective),
                ..p.clone()
            };
            // The benefit stage's network meets the kept row, so the cost stage cannot be
            // infeasible; if the solver finds no network in its time (it gets no warm
            // start: greedy knows no kept row), the benefit stage's network stands. The
            // kept row needs the direct model (the decomposition does not relax it).
            let cheap = match Highs::default().solve(&q, options) {
                Ok(c) => c,
                Err(SolveError::Solver(_)) => crate::solve::Solution {
                    gap: f64::NAN,
                    ..first.clone()
                },
                Err(other) => return Err(other),
            };
            let kept = evaluate_zoned(&p, &cheap.assignment());
            // The benefit stage's status, bound and gap stand: the second stage only
            // chooses among networks with (within slack) the same benefit.
            let solution = crate::solve::Solution {
                objective: kept.objective,
                scenarios: kept.scenarios.clone(),
                selected: cheap.selected,
                zones: cheap.zones,
                seconds: first.seconds + cheap.seconds,
                ..first
            };
            (solution, kept, cheap.gap)
        }
    };
    Ok(SweepRun {
        share,
        budget_km2: match of {
            SweepBudget::Area(total) => share * total,
            SweepBudget::Cost(_) => f64::NAN,
        },
        budget_cost: match of {
            SweepBudget::Cost(total) => share * total,
            SweepBudget::Area(_) => f64::NAN,
        },
        cost: e.cost,
        area_km2: e.area_km2,
        targets_reached: e.targets_reached,
        reached: e.reached,
        cost_gap,
        solution,
    })
}

/// Sum of `values` over the required cells.
fn required_sum(problem: &Problem, values: &[f64]) -> f64 {
    problem
        .status
        .iter()
        .zip(values)
        .filter(|(s, _)| **s == crate::model::CellStatus::Required)
        .map(|(_, v)| v)
        .sum()
}

/// Column names of `sweep.csv` before the per-scenario benefit columns.
pub const SWEEP_COLUMNS: [&str; 10] = [
    "budget_share",
    "budget_km2",
    "budget_cost",
    "status",
    "gap",
    "objective",
    "cost",
    "area_km2",
    "targets_reached",
    "targets",
];

/// The header of `sweep.csv`: [`SWEEP_COLUMNS`], then `benefit_<scenario>` for each scenario
/// (in plan order), then `cost_gap`.
pub fn sweep_columns(s: &Sweep) -> Vec<String> {
    let mut h: Vec<String> = SWEEP_COLUMNS.iter().map(|c| c.to_string()).collect();
    if let Some(r) = s.runs.first() {
        h.extend(
            r.solution
                .scenarios
                .iter()
                .map(|x| format!("benefit_{}", x.name)),
        );
    }
    h.push("cost_gap".into());
    h
}

/// Three decimals, or empty when not a number.
fn num3(v: f64) -> String {
    if v.is_nan() {
        String::new()
    } else {
        format!("{v:.3}")
    }
}

/// `sweep.csv`: the cost–benefit curve, one row per budget, columns [`sweep_columns`];
/// `budget_km2` or `budget_cost` is empty, whichever the budget is not measured in.
/// `objective` is the plan rule's combined benefit; each `benefit_<scenario>` is that
/// scenario's benefit Bₛ (weighted targets reached, partly reached ones counting their share; see
/// [`crate::model::robust`]); `cost_gap` is the relative gap of the least-cost stage (empty
/// when the solver reports none).
pub fn sweep_csv(s: &Sweep) -> String {
    let header = sweep_columns(s);
    let header: Vec<&str> = header.iter().map(String::as_str).collect();
    let rows = s.runs.iter().map(|r| {
        let mut row = vec![
            format!("{:.6}", r.share),
            num3(r.budget_km2),
            num3(r.budget_cost),
            r.solution.status.as_str().to_string(),
            format!("{:.6}", r.solution.gap),
            format!("{:.6}", r.solution.objective + 0.0),
            format!("{:.3}", r.cost + 0.0),
            format!("{:.3}", r.area_km2 + 0.0),
            r.targets_reached.to_string(),
            r.reached.len().to_string(),
        ];
        row.extend(
            r.solution
                .scenarios
                .iter()
                .map(|x| format!("{:.6}", x.benefit + 0.0)),
        );
        row.push(if r.cost_gap.is_nan() {
            String::new()
        } else {
            format!("{:.6}", r.cost_gap)
        });
        row
    });
    crate::export::table::csv_text(&header, rows)
}

/// `first-reached.csv`: per feature, the smallest budget share of the sweep that meets its target
/// (empty when none does).
pub fn first_reached_csv(s: &Sweep) -> String {
    let rows = s
        .features
        .iter()
        .zip(s.first_reached())
        .map(|(f, m)| vec![f.clone(), m.map(|v| format!("{v:.6}")).unwrap_or_default()]);
    crate::export::table::csv_text(&["feature", "first_reached_budget_share"], rows)
}

/// The sweep in the report's form.
pub fn report_points(s: &Sweep) -> Vec<crate::report::SweepPoint> {
    s.runs
        .iter()
        .map(|r| crate::report::SweepPoint {
            budget_share: r.share,
            cost: r.cost,
            benefit: r.solution.objective,
            gap: r.solution.gap,
            targets_reached: r.targets_reached,
            targets_total: r.reached.len(),
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn budget_lists_parse() {
        assert_eq!(parse_budgets("5%,10%,20%").unwrap(), vec![0.05, 0.1, 0.2]);
        assert_eq!(parse_budgets("0.2, 0.1").unwrap(), vec![0.1, 0.2]);
        // Hand expansion: 5, 10, 15, 20, 25, 30, 35, 40 %.
        let r = parse_budgets("5%,10%,...,40%").unwrap();
        assert_eq!(r.len(), 8);
        assert!((r[2] - 0.15).abs() < 1e-12 && (r[7] - 0.4).abs() < 1e-12);
        assert!(parse_budgets("0%").is_err());
        assert!(parse_budgets("ten").unwrap_err().contains("`ten`"));
        assert!(parse_budgets("10%,...").is_err());
    }

    #[test]
    fn budget_file_stems() {
        // Hand: 0.1 → 10 %, 0.025 → 2.5 %, 1/3 → 33.333333 % (six decimals), 1 → 100 %.
        assert_eq!(budget_stem(0.1), "budget-10pct");
        assert_eq!(budget_stem(0.025), "budget-2.5pct");
        assert_eq!(budget_stem(1.0 / 3.0), "budget-33.333333pct");
        assert_eq!(budget_stem(1.0), "budget-100pct");
    }
}
