//! Budget sweep: one max-benefit solve per budget (a share of the region's sea area), giving
//! the cost–benefit curve and, per feature, the smallest budget at which its target is met.
//! A budget that buys every target gets the least-cost network that holds them all (rather
//! than an arbitrary one that spends the whole budget), so the curve flattens in cost too.
//! Budgets are solved in parallel, one solver thread each, and collected in budget order, so
//! the result does not depend on the number of threads (unless a time limit cuts solves short).

use rayon::prelude::*;

use crate::model::{evaluate, Objective, Problem};
use crate::solve::ilp::Highs;
use crate::solve::{Solution, SolveError, SolveOptions, Solver};

/// One budget's solve.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepRun {
    /// Budget as a share of the region's sea area (0–1).
    pub share: f64,
    /// The same budget as area. Units: km².
    pub budget_km2: f64,
    /// The solve (objective = combined benefit of the plan's rule, minus any edge penalty).
    pub solution: Solution,
    /// Cost of the network.
    pub cost: f64,
    /// Area of the network. Units: km².
    pub area_km2: f64,
    /// Targets met (all scenarios).
    pub targets_met: usize,
    /// Whether each feature's target is met, in feature order.
    pub met: Vec<bool>,
    /// Whether the budget buys every target, so the network is the least-cost one that holds
    /// them all (the max-benefit optimum is then not unique and would spend the budget on
    /// nothing); `solution` is that min-cost network, its objective the benefit again.
    pub cost_minimised: bool,
    /// Relative gap of that least-cost solve (NaN when not cost-minimised).
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
    pub fn first_met(&self) -> Vec<Option<f64>> {
        (0..self.features.len())
            .map(|k| self.runs.iter().find(|r| r.met[k]).map(|r| r.share))
            .collect()
    }
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
    problem.validate()?;
    let one_thread = SolveOptions {
        threads: Some(1),
        ..options.clone()
    };
    let runs: Vec<Result<SweepRun, SolveError>> = shares
        .par_iter()
        .map(|&share| {
            let mut p = problem.clone();
            p.objective = Objective::MaxBenefit;
            p.scenario_best = None;
            p.budget.max_area_km2 = Some(share * sea_area_km2);
            let mut solution = Highs::default().solve(&p, &one_thread)?;
            let mut e = evaluate(&p, &solution.selected);
            let mut cost_minimised = false;
            let mut cost_gap = f64::NAN;
            if e.targets_met == e.met.len() {
                // Every target held: the least-cost network holding them all under the same
                // budget and rules (feasible: the max-benefit network is one).
                let mut q = p.clone();
                q.objective = Objective::MinCost;
                q.robustness = crate::model::Robustness::EveryScenario;
                let cheap = Highs::default().solve(&q, &one_thread)?;
                let objective = evaluate(&p, &cheap.selected).objective;
                cost_gap = cheap.gap;
                // Every target met is the most benefit there is: proven optimal as benefit.
                solution = crate::solve::Solution {
                    objective,
                    bound: objective,
                    gap: 0.0,
                    status: crate::solve::SolveStatus::Optimal,
                    ..cheap
                };
                e = evaluate(&p, &solution.selected);
                cost_minimised = true;
            }
            on_solved();
            Ok(SweepRun {
                share,
                budget_km2: share * sea_area_km2,
                cost: e.cost,
                area_km2: e.area_km2,
                targets_met: e.targets_met,
                met: e.met,
                cost_minimised,
                cost_gap,
                solution,
            })
        })
        .collect();
    Ok(Sweep {
        runs: runs.into_iter().collect::<Result<_, _>>()?,
        features: problem.features.iter().map(|f| f.name.clone()).collect(),
    })
}

/// Column names of `sweep.csv`.
pub const SWEEP_COLUMNS: [&str; 11] = [
    "budget_share",
    "budget_km2",
    "status",
    "gap",
    "objective",
    "cost",
    "area_km2",
    "targets_met",
    "targets",
    "scenario_benefits",
    "cost_gap",
];

/// `sweep.csv`: the cost–benefit curve, one row per budget; `scenario_benefits` lists
/// `name=benefit` pairs separated by `;`; `cost_gap` is the gap of the least-cost solve of a
/// budget that buys every target (empty otherwise).
pub fn sweep_csv(s: &Sweep) -> String {
    let rows = s.runs.iter().map(|r| {
        vec![
            format!("{:.6}", r.share),
            format!("{:.3}", r.budget_km2),
            r.solution.status.as_str().to_string(),
            format!("{:.6}", r.solution.gap),
            format!("{:.6}", r.solution.objective),
            format!("{:.3}", r.cost),
            format!("{:.3}", r.area_km2),
            r.targets_met.to_string(),
            r.met.len().to_string(),
            r.solution
                .scenarios
                .iter()
                .map(|x| format!("{}={:.6}", x.name, x.benefit))
                .collect::<Vec<_>>()
                .join(";"),
            if r.cost_gap.is_nan() {
                String::new()
            } else {
                format!("{:.6}", r.cost_gap)
            },
        ]
    });
    crate::export::table::csv_text(&SWEEP_COLUMNS, rows)
}

/// `first-met.csv`: per feature, the smallest budget share of the sweep that meets its target
/// (empty when none does).
pub fn first_met_csv(s: &Sweep) -> String {
    let rows = s
        .features
        .iter()
        .zip(s.first_met())
        .map(|(f, m)| vec![f.clone(), m.map(|v| format!("{v:.6}")).unwrap_or_default()]);
    crate::export::table::csv_text(&["feature", "first_met_budget_share"], rows)
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
}
