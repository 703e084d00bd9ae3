//! Scenario stress test: a matrix of designed-for × evaluated-in scenario. Each scenario is
//! solved alone (same objective, budget and spatial rules, only its own features), then every
//! network — those single-scenario ones and the given (robust) ones — is evaluated under every
//! scenario. The diagonal is each scenario's own optimum; a robust network's row shows what it
//! gives up in the scenario it was not tailored to, and its worst case sits beside theirs.
//!
//! Zoned problems ([`crate::model::zones`]) are solved with their zones in every scenario, and
//! every network is evaluated with its own zone assignment: each zone's credit counts toward
//! the targets and its cost share toward the cost.

use rayon::prelude::*;

use crate::model::{evaluate_zoned, Problem, ScenarioResult};
use crate::solve::decompose::solve_exact;
use crate::solve::{SolveError, SolveOptions};

/// One network's row of the matrix.
#[derive(Debug, Clone, PartialEq)]
pub struct StressRow {
    /// What the network was designed for: a scenario name, or a network's own name.
    pub designed_for: String,
    /// Solver status of the single-scenario solve (`optimal`, `gap-limit`, ...), or `given`
    /// for a network passed in, or `infeasible: …` when the scenario alone has no network.
    pub status: String,
    /// Relative gap of the solve (NaN for given networks).
    pub gap: f64,
    /// How the network fares in each scenario (empty when there is no network).
    pub evaluated: Vec<ScenarioResult>,
    /// The network (empty when there is none).
    pub selected: Vec<bool>,
    /// Zone of each cell of a zoned network ([`crate::model::zones`]: 0 outside, 1 + zone
    /// index); `None` without zones or without a network.
    pub zones: Option<Vec<u8>>,
    /// Which exact method solved the scenario (`decompose` or `highs`, as
    /// [`crate::solve::Solution::solver`]); empty for a given network or no network.
    pub solver: String,
}

impl StressRow {
    /// The lowest benefit over the scenarios (NaN without a network). Units: weighted targets.
    pub fn worst_benefit(&self) -> f64 {
        self.evaluated
            .iter()
            .map(|r| r.benefit)
            .reduce(f64::min)
            .unwrap_or(f64::NAN)
    }

    /// The fewest targets reached in any scenario (`None` without a network).
    pub fn worst_targets_reached(&self) -> Option<usize> {
        self.evaluated.iter().map(|r| r.targets_reached).min()
    }
}

/// The designed-for × evaluated-in matrix.
#[derive(Debug, Clone, PartialEq)]
pub struct StressMatrix {
    /// Scenario names (the columns).
    pub scenarios: Vec<String>,
    /// One row per scenario solved alone (in scenario order), then one per given network.
    pub rows: Vec<StressRow>,
}

/// The problem of scenario `s` alone: its own features and the scenario-free ones, one
/// scenario, the same objective, budget and spatial rules (edge penalty, max gap, minimum
/// size). Unlike the least-regret sub-problem it keeps the objective (min-cost stays
/// min-cost) and the edge penalty, because its network is a design, not a bound.
pub fn single_scenario_problem(problem: &Problem, s: usize) -> Problem {
    crate::model::robust::restrict_to_scenario(problem, s)
}

/// Runs the stress test (module doc): solves each scenario alone by the plan's exact method
/// ([`solve_exact`]: the decomposition for a large min-cost model, HiGHS otherwise) in
/// parallel, one solver thread each (so the result does not depend on the thread count unless
/// a time limit cuts a solve short), then evaluates those networks and each of `given` under every
/// scenario of `problem`. `problem` should carry Bₛ* (least-regret) so regrets are reported.
/// `on_solved` is called after each scenario solve (for a progress bar).
///
/// Each given network is an assignment, one value per cell: 0 outside, otherwise 1 + its zone
/// index on a zoned problem, or any non-zero value for "chosen" on one without zones
/// ([`crate::model::evaluate_zoned`]).
pub fn stress_test(
    problem: &Problem,
    given: &[(String, Vec<u8>)],
    options: &SolveOptions,
    on_solved: &(dyn Fn() + Sync),
) -> Result<StressMatrix, SolveError> {
    let every: Vec<usize> = (0..problem.scenarios.len()).collect();
    stress_test_part(problem, given, &every, options, on_solved)
}

/// [`stress_test`] with only the scenarios `which` (indices, ascending) solved alone: a shard's
/// part of a study (`study::shard`); the rows of all parts, in scenario order, are the rows
/// [`stress_test`] makes.
pub fn stress_test_part(
    problem: &Problem,
    given: &[(String, Vec<u8>)],
    which: &[usize],
    options: &SolveOptions,
    on_solved: &(dyn Fn() + Sync),
) -> Result<StressMatrix, SolveError> {
    problem.validate()?;
    if let Some((name, bad)) = given.iter().find(|(_, a)| a.len() != problem.n_cells()) {
        return Err(SolveError::Model(crate::model::ModelError::Combination(
            format!(
                "network `{name}` has {} cell values but the problem has {} cells",
                bad.len(),
                problem.n_cells()
            ),
        )));
    }
    let zoned = problem.zoning.is_some();
    let one_thread = SolveOptions {
        threads: Some(1),
        ..options.clone()
    };
    let solved: Vec<Result<StressRow, SolveError>> = which
        .par_iter()
        .map(|&s| {
            let sub = single_scenario_problem(problem, s);
            let name = problem.scenarios[s].name.clone();
            let row = match solve_exact(&sub, &one_thread) {
                Ok(sol) => {
                    let assignment = sol.assignment();
                    Ok(StressRow {
                        designed_for: name,
                        status: sol.status.as_str().to_string(),
                        gap: sol.gap,
                        evaluated: evaluate_zoned(problem, &assignment).scenarios,
                        selected: sol.selected,
                        zones: zoned.then_some(assignment),
                        solver: sol.solver,
                    })
                }
                Err(e @ (SolveError::Infeasible(_) | SolveError::JointlyInfeasible(_))) => {
                    Ok(StressRow {
                        designed_for: name,
                        status: format!("infeasible: {e}"),
                        gap: f64::NAN,
                        evaluated: Vec::new(),
                        selected: Vec::new(),
                        zones: None,
                        solver: String::new(),
                    })
                }
                Err(e) => Err(e),
            };
            on_solved();
            row
        })
        .collect();
    let mut rows = solved.into_iter().collect::<Result<Vec<_>, _>>()?;
    for (name, assignment) in given {
        rows.push(StressRow {
            designed_for: name.clone(),
            status: "given".into(),
            gap: f64::NAN,
            evaluated: evaluate_zoned(problem, assignment).scenarios,
            selected: assignment.iter().map(|&v| v > 0).collect(),
            zones: zoned.then(|| assignment.clone()),
            solver: String::new(),
        });
    }
    Ok(StressMatrix {
        scenarios: problem.scenarios.iter().map(|s| s.name.clone()).collect(),
        rows,
    })
}

/// `stress.csv`: one row per designed-for × evaluated-in pair (long form), with targets reached,
/// benefit, its maximum and the regret when known; rows without a network are kept with empty
/// values so every design appears.
pub fn stress_csv(m: &StressMatrix) -> String {
    let mut rows = Vec::new();
    for row in &m.rows {
        if row.evaluated.is_empty() {
            for s in &m.scenarios {
                let mut r = vec![row.designed_for.clone(), row.status.clone(), s.clone()];
                r.extend(std::iter::repeat_n(String::new(), 5));
                rows.push(r);
            }
            continue;
        }
        for e in &row.evaluated {
            rows.push(vec![
                row.designed_for.clone(),
                row.status.clone(),
                e.name.clone(),
                e.targets_reached.to_string(),
                e.targets.to_string(),
                format!("{:.6}", e.benefit),
                format!("{:.6}", e.benefit_max),
                e.regret.map(|x| format!("{x:.6}")).unwrap_or_default(),
            ]);
        }
    }
    crate::export::table::csv_text(&STRESS_COLUMNS, rows)
}

/// Column names of `stress.csv`.
pub const STRESS_COLUMNS: [&str; 8] = [
    "designed_for",
    "status",
    "evaluated_in",
    "targets_reached",
    "targets",
    "benefit",
    "benefit_max",
    "regret",
];

/// The matrix as a terminal table: targets reached / total and the benefit in each cell, the worst
/// case (fewest targets reached) last.
pub fn stress_table(m: &StressMatrix) -> String {
    let w = m
        .rows
        .iter()
        .map(|r| r.designed_for.chars().count())
        .chain(std::iter::once("designed for".len()))
        .max()
        .unwrap_or(12);
    let cw = m
        .scenarios
        .iter()
        .map(|s| s.chars().count())
        .chain(std::iter::once(15))
        .max()
        .unwrap_or(15);
    let mut out = format!("{:<w$}", "designed for");
    for s in &m.scenarios {
        out.push_str(&format!("  {s:>cw$}"));
    }
    out.push_str(&format!("  {:>cw$}\n", "worst"));
    for row in &m.rows {
        out.push_str(&format!("{:<w$}", row.designed_for));
        if row.evaluated.is_empty() {
            out.push_str(&format!("  {}\n", row.status));
            continue;
        }
        for r in &row.evaluated {
            out.push_str(&format!(
                "  {:>cw$}",
                format!("{}/{} {:.1}", r.targets_reached, r.targets, r.benefit)
            ));
        }
        let worst = row.worst_targets_reached().unwrap_or(0);
        out.push_str(&format!("  {worst:>cw$}\n"));
    }
    if let Some(line) = super::methods_line(m.rows.iter().map(|r| r.solver.as_str())) {
        out.push_str(&line);
        out.push('\n');
    }
    out
}

/// The matrix in the report's form.
pub fn report_table(m: &StressMatrix) -> crate::report::StressTable {
    let rows: Vec<&StressRow> = m.rows.iter().filter(|r| !r.evaluated.is_empty()).collect();
    crate::report::StressTable {
        designed_for: rows.iter().map(|r| r.designed_for.clone()).collect(),
        evaluated_in: m.scenarios.clone(),
        cells: rows
            .iter()
            .map(|r| {
                r.evaluated
                    .iter()
                    .map(|e| crate::report::StressCell {
                        targets_reached: e.targets_reached,
                        targets_total: e.targets,
                        benefit: e.benefit,
                    })
                    .collect()
            })
            .collect(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn result(name: &str, reached: usize, benefit: f64) -> ScenarioResult {
        ScenarioResult {
            name: name.into(),
            benefit,
            benefit_max: 2.0,
            best: None,
            regret: None,
            targets_reached: reached,
            targets: 2,
            absent: 0,
        }
    }

    fn matrix() -> StressMatrix {
        StressMatrix {
            scenarios: vec!["a".into(), "b".into()],
            rows: vec![
                StressRow {
                    designed_for: "a".into(),
                    status: "optimal".into(),
                    gap: 0.0,
                    evaluated: vec![result("a", 2, 2.0), result("b", 1, 1.5)],
                    selected: vec![true],
                    zones: None,
                    solver: "highs".into(),
                },
                StressRow {
                    designed_for: "b".into(),
                    status: "infeasible: no".into(),
                    gap: f64::NAN,
                    evaluated: vec![],
                    selected: vec![],
                    zones: None,
                    solver: String::new(),
                },
            ],
        }
    }

    #[test]
    fn worst_case_and_outputs_by_hand() {
        let m = matrix();
        // Hand values: row a has benefits 2 and 1.5 → worst 1.5; targets 2 and 1 → worst 1.
        assert_eq!(m.rows[0].worst_benefit(), 1.5);
        assert_eq!(m.rows[0].worst_targets_reached(), Some(1));
        assert!(m.rows[1].worst_benefit().is_nan());
        // CSV re-read with the csv crate: 2 rows for a, 2 empty rows for b.
        let text = stress_csv(&m);
        let mut r = csv::Reader::from_reader(text.as_bytes());
        assert_eq!(
            r.headers().unwrap(),
            &csv::StringRecord::from(STRESS_COLUMNS.to_vec())
        );
        let rows: Vec<csv::StringRecord> = r.records().map(|x| x.unwrap()).collect();
        assert_eq!(rows.len(), 4);
        assert_eq!(&rows[1][2], "b");
        assert_eq!(&rows[1][3], "1");
        assert_eq!(&rows[1][5], "1.500000");
        assert_eq!(&rows[3][3], "");
        let t = stress_table(&m);
        assert!(t.lines().nth(1).unwrap().contains("2/2 2.0"), "{t}");
        assert!(t.lines().nth(1).unwrap().contains("1/2 1.5"), "{t}");
        assert!(t.contains("infeasible: no"), "{t}");
        // The one solved row names its method; the infeasible one adds none.
        assert!(
            t.ends_with("exact method: direct HiGHS for 1 solve\n"),
            "{t}"
        );
        // The report keeps rows with a network only.
        let rt = report_table(&m);
        assert_eq!(rt.designed_for, vec!["a".to_string()]);
        assert_eq!(rt.cells[0][1].targets_reached, 1);
    }
}
