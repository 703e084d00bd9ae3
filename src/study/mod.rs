//! Studies: the pipeline's model and solve stages run many times over — one solve per
//! scenario (the stress test), one per budget (the sweep), nested budgets (the priority
//! ranking), near-optimal alternatives (portfolios), one re-solve per forbidden place
//! (replacement cost) — and what the runs share (how often each cell is chosen). They sit after
//! `solve` and before `assess`/`export` in the pipeline.

pub mod frequency;
pub mod portfolio;
pub mod rank;
pub mod replacement;
pub mod shard;
pub mod stress;
pub mod sweep;

pub use frequency::{selection_frequency, SelectionFrequency};
pub use portfolio::{portfolio, Portfolio};
pub use rank::{rank, Ranking};
pub use replacement::{replacement_costs, Replacement};
pub use stress::{single_scenario_problem, stress_test, stress_test_part, StressMatrix, StressRow};
pub use sweep::{parse_budgets, sweep, sweep_of, Sweep, SweepBudget, SweepRun};

/// The budget sweep's outputs (its networks, selection frequency and first-reached budgets)
/// know no zones yet, so it refuses a zoned problem with a clear word rather than showing it
/// as if unzoned. The stress test, portfolio, rank and replacement cost handle zones.
pub(crate) fn unzoned(
    problem: &crate::model::Problem,
    study: &str,
) -> Result<(), crate::solve::SolveError> {
    match problem.zoning {
        None => Ok(()),
        Some(_) => Err(crate::solve::SolveError::Model(
            crate::model::ModelError::Combination(format!(
                "{study} does not handle `[[zones]]` yet: `solve` assigns zones; remove the zones \
             from the plan to run {study}"
            )),
        )),
    }
}

/// One line saying which exact method solved a study's networks, from each solve's
/// [`crate::solve::Solution::solver`]: `exact method: the decomposition for 3 solves, direct
/// HiGHS for 1`. Empty names (a given network, no network) are skipped; `None` when none is
/// left. Methods are listed in name order, so the line does not depend on solve order.
pub fn methods_line<'a>(solvers: impl IntoIterator<Item = &'a str>) -> Option<String> {
    let mut counts = std::collections::BTreeMap::new();
    for s in solvers.into_iter().filter(|s| !s.is_empty()) {
        *counts.entry(s).or_insert(0usize) += 1;
    }
    if counts.is_empty() {
        return None;
    }
    let parts: Vec<String> = counts
        .iter()
        .map(|(name, n)| {
            let method = match *name {
                "decompose" => "the decomposition",
                "highs" => "direct HiGHS",
                other => other,
            };
            format!("{method} for {n} solve{}", if *n == 1 { "" } else { "s" })
        })
        .collect();
    Some(format!("exact method: {}", parts.join(", ")))
}

#[cfg(test)]
mod tests {
    #[test]
    fn the_methods_line_counts_each_solver() {
        // Hand count: two decompositions, one direct solve, one given network (skipped).
        let line = super::methods_line(["highs", "decompose", "", "decompose"]).unwrap();
        assert_eq!(
            line,
            "exact method: the decomposition for 2 solves, direct HiGHS for 1 solve"
        );
        assert_eq!(super::methods_line(["", ""]), None);
    }
}
