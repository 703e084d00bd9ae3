//! `driftplan solve`: the whole run, grid → features → optimise → assess → export.

use super::{load_with, solve_options, stress_assigned, CannotBeReached, Progress, SolverArgs};
use anyhow::Result;
use driftplan::export;
use driftplan::model::Problem;
use driftplan::pipeline::{self, Inputs, RunError};
use driftplan::plan::Plan;
use driftplan::solve::diagnose::{diagnose_budget, diagnosis_csv, diagnosis_text};
use driftplan::solve::progress::gap_percent;
use driftplan::solve::time::{self, TimeBudget};
use driftplan::solve::{Solution, SolveError, SolveOptions};
use std::path::{Path, PathBuf};

/// Which optional outputs `solve` writes.
#[derive(Debug, Clone, Copy, Default)]
pub(crate) struct Outputs {
    /// cells.geojson even above [`export::CELLS_GEOJSON_MAX_CELLS`] cells.
    pub(crate) cells_geojson: bool,
    /// WGS84 layers in driftplan.gpkg.
    pub(crate) gpkg_wgs84: bool,
}

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
    /// Write cells.geojson even for a large grid (it is skipped above 20 000 cells, where it
    /// runs to hundreds of MB; cells.csv holds the same values).
    #[arg(long)]
    cells_geojson: bool,
    /// Also write the network and cells in WGS84 lon/lat (layers `network_wgs84`,
    /// `cells_wgs84`) into driftplan.gpkg, beside the grid's equal-area CRS.
    #[arg(long)]
    gpkg_wgs84: bool,
}

pub(crate) fn run(args: Args, progress: &Progress) -> Result<()> {
    let run = export::RunFolder::begin(&args.out, "solve")?;
    solve(
        &args.plan,
        run,
        &args.solver,
        args.no_stress,
        Outputs {
            cells_geojson: args.cells_geojson,
            gpkg_wgs84: args.gpkg_wgs84,
        },
        progress,
    )
}

/// Solves the plan at `plan_path` into the run folder `run` (shared with `demo`).
pub(crate) fn solve(
    plan_path: &Path,
    mut run: export::RunFolder,
    solver: &SolverArgs,
    no_stress: bool,
    outputs: Outputs,
    progress: &Progress,
) -> Result<()> {
    let plan = load_with(plan_path, solver)?;
    run.set_plan(&plan.file, &plan.hash);
    let mut inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    for note in pipeline::input_notes(&inputs) {
        progress.say(&note);
    }
    pipeline::check_budget(&plan, &inputs)?;
    // One time limit for every solve of the command (solve::time), building the model included.
    let clock = TimeBudget::start(plan.solver.time_limit_s);
    // The amounts move into the problem (one copy while solving: gigabytes at 1M cells) and
    // are copied back for the assessment once the network is chosen.
    let mut problem = pipeline::problem_taking_amounts(&plan, &mut inputs);
    let options = solve_options(&plan, solver)?;
    let stress_solves = if no_stress || problem.scenarios.len() < 2 {
        0
    } else {
        problem.scenarios.len()
    };
    let main = clock.options(&options, time::main_solve_share(stress_solves), 1);
    progress.say(&format!(
        "optimising with HiGHS: {} cells, {} feature targets; {}; this solve at most {:.0} s{}",
        problem.n_cells(),
        problem.features.len(),
        plan.solver.describe(),
        main.time_limit_s.unwrap_or(f64::INFINITY),
        if stress_solves > 0 {
            ", the stress test the rest"
        } else {
            ""
        }
    ));
    let least_regret = driftplan::model::robust::effective_robustness(&problem)
        == driftplan::model::Robustness::LeastRegret;
    let spinner = progress.spinner(if least_regret {
        "solving: each scenario alone first (its best benefit), then the robust network"
    } else {
        "solving: building the integer program"
    });
    let main = SolveOptions {
        progress: Some(progress.solver_sink(&spinner)),
        ..main
    };
    let solution = match pipeline::optimise(&problem, &main) {
        Ok(s) => s,
        Err(RunError::Solve(
            e @ (SolveError::Infeasible(_) | SolveError::JointlyInfeasible(_)),
        )) => {
            spinner.finish_and_clear();
            return Err(cannot_be_reached(
                &plan, &problem, &clock, &options, &e, run, progress,
            )?);
        }
        Err(e) => return Err(e.into()),
    };
    spinner.finish_and_clear();
    if solution.status == driftplan::solve::SolveStatus::TimeLimit {
        let cells = driftplan::solve::gap_in_cells(
            &problem,
            &solution.selected,
            solution.objective,
            main.rel_gap,
        );
        if let Some(c) = cells.filter(|&c| c < 1.0) {
            progress.say(&format!(
                "note: the requested gap of {} is {c:.2} of one chosen cell's cost at this cell \
                 size; proving the optimum that closely is slow on a coarse grid (docs/method.md \
                 §6b): a gap of at least {:.2}% or smaller cells finish sooner",
                driftplan::solve::progress::gap_percent(main.rel_gap),
                100.0 * main.rel_gap / c
            ));
        }
    }
    pipeline::copy_model_amounts(&mut inputs.features, &problem.features);
    let (assessment, zone_shares) = pipeline::assess_solution(&inputs, &problem, &solution);
    if let Some(z) = &solution.zones {
        // The `zone` column of the cell outputs: 0 outside, k for the plan's k-th zone.
        inputs.layers.push(driftplan::layers::Layer {
            name: "zone".into(),
            values: z.iter().map(|&v| f64::from(v)).collect(),
        });
    }
    problem.scenario_best = solution.scenario_best.clone();
    let label = if problem.scenarios.len() > 1 {
        format!("robust ({})", plan.robustness.as_str())
    } else {
        "plan".to_string()
    };
    // A zoned network is stressed with its zones (each zone's credit and cost share).
    let assignment = solution.assignment();
    let matrix = stress_assigned(
        &problem,
        &[(label, assignment)],
        &clock.options(&options, 1.0, 1),
        no_stress,
        progress,
    )?;
    let zoned = solution.zones.as_deref().zip(zone_shares.as_deref());
    let connectivity = driftplan::assess::connectivity::network_connectivity(
        &inputs.grid,
        &plan.scenarios,
        &inputs.connectivity,
        &inputs.features,
        &solution.selected,
    );
    let reward = problem
        .link_reward
        .as_ref()
        .map(|r| export::RewardSummary::new(r, &solution.selected));
    write_solution(
        &plan,
        &inputs,
        &solution,
        (&connectivity, reward),
        &assessment,
        zoned,
        run.dir(),
        outputs,
        progress,
    )?;
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
                facts: zone_shares
                    .iter()
                    .flatten()
                    .filter(|z| z.reserve.is_none())
                    .map(|z| (format!("zone {}", z.zone), super::assess::zone_line(z)))
                    .collect(),
                ..Default::default()
            },
        )?,
    )];
    if let Some(m) = &matrix {
        files.push(("stress.csv", driftplan::study::stress::stress_csv(m)));
    }
    if let Some(z) = &zone_shares {
        files.push(("zones.csv", driftplan::assess::zones::zones_csv(z)));
    }
    let links = export::connectivity::connectivity_files(
        &inputs.grid,
        &plan.scenarios,
        &inputs.connectivity,
        &inputs.features,
        Some(&solution.selected),
    );
    files.extend(links.iter().map(|(n, t)| (n.as_str(), t.clone())));
    export::write_outputs(run.dir(), &files)?;
    let out = run.out().to_path_buf();
    run.finish("done")?;
    print_summary(
        &plan,
        &inputs,
        &solution,
        &assessment,
        zone_shares.as_deref(),
        &out,
    );
    if let Some(r) = reward {
        println!(
            "  links       {} kept; the network holds link strength {:.3} (reward {:.1} at weight {})",
            driftplan::export::words::count(r.links_kept, "link"),
            r.linked,
            r.reward,
            r.weight
        );
    }
    for line in driftplan::assess::connectivity::connectivity_lines(&connectivity) {
        println!("  larvae      {line}");
    }
    if let Some(m) = &matrix {
        println!(
            "  stress test (targets reached and benefit; rows: designed for, columns: evaluated in)"
        );
        if plan.objective != driftplan::model::Objective::MaxBenefit {
            println!("  ({})", export::BENEFIT);
        }
        for line in driftplan::study::stress::stress_table(m).lines() {
            println!("    {line}");
        }
    }
    super::closing_lines(&out);
    Ok(())
}

/// The "cannot be reached" error for an infeasible plan, after writing `diagnosis.csv` (per
/// feature: the best the budget allows) and finding the cheapest network meeting every target.
fn cannot_be_reached(
    plan: &Plan,
    problem: &Problem,
    clock: &TimeBudget,
    options: &SolveOptions,
    error: &SolveError,
    run: export::RunFolder,
    progress: &Progress,
) -> Result<anyhow::Error> {
    if problem.objective != driftplan::model::Objective::MinCost {
        return Ok(CannotBeReached(format!("the plan cannot be reached: {error}")).into());
    }
    progress.say("the targets cannot all be reached: finding the best each target can reach and the cheapest network that meets them all");
    let d = diagnose_budget(problem, &clock.options(options, 1.0, 1))?;
    export::write_outputs(run.dir(), &[("diagnosis.csv", diagnosis_csv(&d))])?;
    let out = run.out().to_path_buf();
    run.finish("targets cannot be reached")?;
    let keys: Vec<String> = [
        plan.budget
            .max_cost
            .map(|c| format!("`budget.max_cost` = {c}")),
        plan.budget
            .max_share
            .map(|s| format!("`budget.max_share` = {s}")),
    ]
    .into_iter()
    .flatten()
    .collect();
    let within = if keys.is_empty() {
        String::new()
    } else {
        format!(" within {}", keys.join(" and "))
    };
    Ok(CannotBeReached(format!(
        "the targets of {} cannot all be reached{within}:\n{}per-feature details in {}",
        plan.file.display(),
        diagnosis_text(&d, 10),
        out.join("diagnosis.csv").display()
    ))
    .into())
}

/// `zones`: a zoned network's assignment and zone shares (network.geojson then has one feature
/// per reserve and zone, reserves.csv each reserve's cells and area per zone).
#[allow(clippy::too_many_arguments)]
fn write_solution(
    plan: &Plan,
    inputs: &Inputs,
    solution: &Solution,
    (connectivity, reward): (
        &[driftplan::assess::connectivity::NetworkConnectivity],
        Option<export::RewardSummary>,
    ),
    assessment: &driftplan::assess::Assessment,
    zones: Option<(&[u8], &[driftplan::assess::zones::ZoneShare])>,
    out: &Path,
    outputs: Outputs,
    progress: &Progress,
) -> Result<()> {
    let mut summary = export::Summary::new(
        &plan.name,
        &plan.hash,
        solution,
        assessment,
        inputs.grid.len(),
    );
    summary.sampling = inputs.sampling.clone();
    summary.velocity_floored_cells = inputs.velocity_floored.iter().cloned().collect();
    summary.grid_crs = Some(inputs.grid.crs.describe());
    summary.connectivity = connectivity.to_vec();
    summary.connectivity_reward = reward;
    summary.zones = zones
        .map(|(_, shares)| {
            shares
                .iter()
                .filter(|z| z.reserve.is_none())
                .cloned()
                .collect()
        })
        .unwrap_or_default();
    let reserves = driftplan::assess::reserve_of_cells(assessment, inputs.grid.len());
    let zone_names: Vec<String> = plan.zones.iter().map(|z| z.name.clone()).collect();
    let (network, reserves_csv) = match zones {
        Some((asg, shares)) => (
            export::network_geojson_zoned(&inputs.grid, assessment, asg, shares)?,
            export::reserves_csv_zoned(assessment, &zone_names, shares),
        ),
        None => (
            export::geojson::network_geojson(&inputs.grid, assessment)?,
            export::reserves_csv(assessment),
        ),
    };
    let mut files = vec![("network.geojson", network)];
    if outputs.cells_geojson || inputs.grid.len() <= export::CELLS_GEOJSON_MAX_CELLS {
        files.push((
            "cells.geojson",
            export::geojson::cells_geojson(
                &inputs.grid,
                &inputs.layers,
                &inputs.features,
                &solution.selected,
                Some(&reserves),
            )?,
        ));
    } else {
        progress.say(&format!(
            "cells.geojson not written: {} cells is over {} (it would be hundreds of MB); cells.csv has the same values, or pass --cells-geojson",
            inputs.grid.len(),
            export::CELLS_GEOJSON_MAX_CELLS
        ));
    }
    files.extend([
        (
            "cells.csv",
            export::cells_csv(
                &inputs.grid,
                &inputs.layers,
                &inputs.features,
                &solution.selected,
                Some(&reserves),
            )?,
        ),
        ("coverage.csv", export::coverage_csv(assessment)),
        ("reserves.csv", reserves_csv),
        ("summary.json", export::summary_json(&summary)),
        ("features.csv", export::features_csv(&inputs.features)?),
        (
            "edge-shifts.csv",
            export::edge_shifts_csv(&inputs.edge_shifts)?,
        ),
    ]);
    export::write_outputs(out, &files)?;
    export::gpkg::write_gpkg(
        &out.join("driftplan.gpkg"),
        &export::gpkg::GpkgContent {
            grid: &inputs.grid,
            assessment,
            layers: &inputs.layers,
            features: &inputs.features,
            selected: &solution.selected,
            reserves: &reserves,
            wgs84: outputs.gpkg_wgs84,
        },
    )?;
    Ok(())
}

fn print_summary(
    plan: &Plan,
    inputs: &Inputs,
    solution: &Solution,
    a: &driftplan::assess::Assessment,
    zones: Option<&[driftplan::assess::zones::ZoneShare]>,
    out: &Path,
) {
    println!(
        "driftplan — {} ({} cells, {} scenarios × {} years)",
        plan.name,
        inputs.grid.len(),
        plan.scenarios.len(),
        plan.years.len()
    );
    let bound = if solution.bound.is_finite() {
        format!("bound {:.3}", solution.bound)
    } else {
        "no bound proven".to_string()
    };
    println!(
        "  solver      HiGHS, {} (objective {:.3}, {bound}, gap {}) in {:.1} s",
        solution.status.as_str(),
        solution.objective,
        gap_percent(solution.gap),
        solution.seconds
    );
    println!("  settings    {}", plan.solver.describe());
    for w in driftplan::solve::warnings(solution) {
        println!("  warning     {w}");
    }
    println!("  cost        {:.1}", a.cost);
    println!(
        "  area        {:.0} km² ({:.1}% of the region's sea)",
        a.area_km2,
        100.0 * a.share_of_region
    );
    println!("  reserves    {}", a.reserves.len());
    for z in zones
        .iter()
        .flat_map(|z| z.iter())
        .filter(|z| z.reserve.is_none())
    {
        println!("  zone        {}: {}", z.zone, super::assess::zone_line(z));
    }
    println!(
        "  targets reached {}",
        driftplan::assess::targets_reached_text(a)
    );
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
    // so only the targets reached are shown.
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
            "    {:<12} {} of {} targets reached{absent}{benefit}{regret}",
            s.name, s.targets_reached, s.targets
        );
    }
    println!("  outputs     {}", out.display());
}
