//! `driftplan solve`: the whole run, grid → features → optimise → assess → export.

use super::{load, solve_options, stress, Progress, SolverArgs};
use anyhow::Result;
use driftplan::export;
use driftplan::pipeline::{self, Inputs};
use driftplan::plan::Plan;
use driftplan::solve::Solution;
use std::path::{Path, PathBuf};

/// Arguments of `driftplan solve`.
#[derive(clap::Args, Debug)]
pub(crate) struct Args {
    /// The plan file (TOML).
    plan: PathBuf,
    /// Output folder.
    #[arg(long)]
    out: PathBuf,
    #[command(flatten)]
    solver: SolverArgs,
    /// Skip the scenario stress test (one extra solve per scenario).
    #[arg(long)]
    no_stress: bool,
}

pub(crate) fn run(args: Args, progress: &Progress) -> Result<()> {
    solve(
        &args.plan,
        &args.out,
        &args.solver,
        args.no_stress,
        progress,
    )
}

/// Solves the plan at `plan_path` into `out` (shared with `demo`).
pub(crate) fn solve(
    plan_path: &Path,
    out: &Path,
    solver: &SolverArgs,
    no_stress: bool,
    progress: &Progress,
) -> Result<()> {
    let plan = load(plan_path)?;
    let inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    let mut problem = pipeline::problem(&plan, &inputs);
    let options = solve_options(&plan, solver)?;
    progress.say(&format!(
        "optimising with HiGHS: {} cells, {} feature targets{}",
        problem.n_cells(),
        problem.features.len(),
        options
            .time_limit_s
            .map(|t| format!(", time limit {t} s"))
            .unwrap_or_default()
    ));
    let spinner = progress.spinner("solving");
    let solution = pipeline::optimise(&problem, &options)?;
    spinner.finish_and_clear();
    let assessment = pipeline::assess_network(&inputs, &solution.selected);
    problem.scenario_best = solution.scenario_best.clone();
    let label = if problem.scenarios.len() > 1 {
        format!("robust ({})", plan.robustness.as_str())
    } else {
        "plan".to_string()
    };
    let matrix = stress(
        &problem,
        &[(label, solution.selected.clone())],
        &options,
        no_stress,
        progress,
    )?;
    write_solution(&plan, &inputs, &solution, &assessment, out)?;
    let mut files = vec![(
        "report.html",
        pipeline::report_html(
            &plan,
            &inputs,
            &solution.selected,
            &assessment,
            pipeline::ReportExtras {
                solution: Some(&solution),
                stress: matrix.as_ref(),
                ..Default::default()
            },
        )?,
    )];
    if let Some(m) = &matrix {
        files.push(("stress.csv", driftplan::study::stress::stress_csv(m)));
    }
    export::write_outputs(out, &files)?;
    print_summary(&plan, &inputs, &solution, &assessment, out);
    if let Some(m) = &matrix {
        println!(
            "  stress test (targets met and benefit; rows: designed for, columns: evaluated in)"
        );
        if plan.objective != driftplan::model::Objective::MaxBenefit {
            println!("  ({})", export::BENEFIT);
        }
        for line in driftplan::study::stress::stress_table(m).lines() {
            println!("    {line}");
        }
    }
    Ok(())
}

fn write_solution(
    plan: &Plan,
    inputs: &Inputs,
    solution: &Solution,
    assessment: &driftplan::assess::Assessment,
    out: &Path,
) -> Result<()> {
    let summary = export::Summary::new(
        &plan.name,
        &plan.hash,
        solution,
        assessment,
        inputs.grid.len(),
    );
    let files = vec![
        (
            "network.geojson",
            export::geojson::network_geojson(&inputs.grid, assessment)?,
        ),
        (
            "cells.geojson",
            export::geojson::cells_geojson(
                &inputs.grid,
                &inputs.layers,
                &inputs.features,
                &solution.selected,
            )?,
        ),
        (
            "cells.csv",
            export::cells_csv(
                &inputs.grid,
                &inputs.layers,
                &inputs.features,
                &solution.selected,
            )?,
        ),
        ("coverage.csv", export::coverage_csv(assessment)),
        ("reserves.csv", export::reserves_csv(assessment)),
        ("summary.json", export::summary_json(&summary)),
        ("features.csv", export::features_csv(&inputs.features)?),
        (
            "edge-shifts.csv",
            export::edge_shifts_csv(&inputs.edge_shifts)?,
        ),
    ];
    export::write_outputs(out, &files)?;
    Ok(())
}

fn print_summary(
    plan: &Plan,
    inputs: &Inputs,
    solution: &Solution,
    a: &driftplan::assess::Assessment,
    out: &Path,
) {
    println!(
        "driftplan — {} ({} cells, {} scenarios × {} years)",
        plan.name,
        inputs.grid.len(),
        plan.scenarios.len(),
        plan.years.len()
    );
    println!(
        "  solver      HiGHS, {} (objective {:.3}, bound {:.3}, gap {:.3}%) in {:.1} s",
        solution.status.as_str(),
        solution.objective,
        solution.bound,
        100.0 * solution.gap,
        solution.seconds
    );
    println!("  cost        {:.1}", a.cost);
    println!(
        "  area        {:.0} km² ({:.1}% of the region's sea)",
        a.area_km2,
        100.0 * a.share_of_region
    );
    println!("  reserves    {}", a.reserves.len());
    println!("  targets met {}", driftplan::assess::targets_met_text(a));
    for note in driftplan::features::absent::first_notes(
        driftplan::features::absent::absent_notes(&inputs.features),
        10,
    ) {
        println!("    absent: {note}");
    }
    for note in driftplan::features::derive::clipped_notes(&inputs.edge_shifts) {
        println!("  clipped edge: {note}");
    }
    // Benefit is what max-benefit maximises; in a min-cost run every target is a hard rule,
    // so only the targets met are shown.
    let max_benefit = plan.objective == driftplan::model::Objective::MaxBenefit;
    if max_benefit {
        println!("  ({})", export::BENEFIT);
    }
    for s in &solution.scenarios {
        let absent = if s.absent > 0 {
            format!(" ({} absent)", s.absent)
        } else {
            String::new()
        };
        let benefit = if max_benefit {
            format!(", benefit {:.3} of {:.0}", s.benefit, s.benefit_max)
        } else {
            String::new()
        };
        let regret = s
            .regret
            .map(|r| format!(", regret {r:.3}"))
            .unwrap_or_default();
        println!(
            "    {:<12} {} of {} targets met{absent}{benefit}{regret}",
            s.name, s.targets_met, s.targets
        );
    }
    println!("  outputs     {}", out.display());
    println!("Decision support only: results rest on projections with large uncertainty; siting decisions rest with the planning authority, local law and consultation with those who use the sea.");
}
