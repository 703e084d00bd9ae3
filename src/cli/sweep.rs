//! `driftplan sweep`: one solve per budget, the cost–benefit curve.

use super::{load_with, solve_options, stress, Progress, SolverArgs};
use anyhow::Result;
use driftplan::solve::time;
use driftplan::{export, pipeline};
use std::path::{Path, PathBuf};

/// Arguments of `driftplan sweep`.
#[derive(clap::Args, Debug)]
pub(crate) struct Args {
    /// The plan file (TOML).
    plan: PathBuf,
    /// Budgets, e.g. `5%,10%,...,40%` or `0.05,0.1`.
    #[arg(long, default_value = "5%,10%,...,40%")]
    budgets: String,
    /// Output folder.
    #[arg(long)]
    out: PathBuf,
    #[command(flatten)]
    solver: SolverArgs,
}

pub(crate) fn run(a: Args, progress: &Progress) -> Result<()> {
    sweep(&a.plan, &a.budgets, &a.out, &a.solver, progress)
}

fn sweep(
    plan_path: &Path,
    budgets: &str,
    out: &Path,
    solver: &SolverArgs,
    progress: &Progress,
) -> Result<()> {
    let shares =
        driftplan::study::parse_budgets(budgets).map_err(|e| anyhow::anyhow!("--budgets: {e}"))?;
    let plan = load_with(plan_path, solver)?;
    let inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    let problem = pipeline::problem(&plan, &inputs);
    let options = solve_options(&plan, solver)?;
    progress.say(&format!(
        "sweep: {} budgets from {:.1}% to {:.1}% of the sea, solved in parallel",
        shares.len(),
        100.0 * shares[0],
        100.0 * shares[shares.len() - 1]
    ));
    let bar = progress.bar(shares.len() as u64, "budgets");
    // One time limit for every solve of the command (solve::time): the budgets' share, in
    // rounds of parallel solves, up to two solves per budget; the stress test the rest.
    let clock = driftplan::solve::time::TimeBudget::start(plan.solver.time_limit_s);
    let stress_solves = problem.scenarios.len() * usize::from(problem.scenarios.len() > 1);
    let rounds = 2 * time::parallel_rounds(shares.len(), time::workers());
    let sw = driftplan::study::sweep(
        &problem,
        &shares,
        inputs.grid.sea_area_km2,
        &clock.options(
            &options,
            time::sweep_share(shares.len(), stress_solves),
            rounds,
        ),
        &|| bar.inc(1),
    )?;
    bar.finish_and_clear();
    // Scenario-specific designs at the plan's own budget, for the frequency layer.
    let matrix = stress(
        &problem,
        &[],
        &clock.options(&options, 1.0, 1),
        false,
        progress,
    )?;
    let n = inputs.grid.len();
    let freq = driftplan::study::frequency::SweepFrequency::new(n, &sw, matrix.as_ref());
    let f_all = &freq.all;
    let layers = freq.layers();
    let core = f_all.core();
    let empty = driftplan::features::FeatureTable::default();
    // The report maps the largest budget's network, with the selection share beside it.
    let largest = &sw.runs[sw.runs.len() - 1];
    let shown = pipeline::assess_network(&inputs, &largest.solution.selected);
    let files = vec![
        ("sweep.csv", driftplan::study::sweep::sweep_csv(&sw)),
        ("first-met.csv", driftplan::study::sweep::first_met_csv(&sw)),
        (
            "selection-frequency.csv",
            driftplan::study::frequency::frequency_csv(f_all),
        ),
        (
            "selection-frequency.geojson",
            export::geojson::cells_geojson(&inputs.grid, &layers, &empty, &core, None)?,
        ),
        (
            "report.html",
            pipeline::report_html(
                &plan,
                &inputs,
                &largest.solution.selected,
                &shown,
                pipeline::ReportExtras {
                    solution: Some(&largest.solution),
                    stress: matrix.as_ref(),
                    sweep: Some(&sw),
                    facts: vec![
                        (
                            "network shown".into(),
                            format!(
                                "the largest budget, {:.1}% of the sea",
                                100.0 * largest.share
                            ),
                        ),
                        (
                            "robust core".into(),
                            format!(
                                "{} cells chosen in all {} networks (sweep and scenario designs)",
                                core.iter().filter(|c| **c).count(),
                                f_all.networks
                            ),
                        ),
                    ],
                    maps: vec![(
                        "selection share (sweep and scenario designs)".into(),
                        f_all.share.clone(),
                    )],
                },
            )?,
        ),
    ];
    export::write_outputs(out, &files)?;
    println!(
        "{:>8} {:>10} {:>12} {:>9}  {:<10} gap",
        "budget", "cost", "objective", "targets", "status"
    );
    for r in &sw.runs {
        println!(
            "{:>7.1}% {:>10.1} {:>12.4} {:>4}/{:<4}  {:<10} {}",
            100.0 * r.share,
            r.cost,
            r.solution.objective,
            r.targets_met,
            r.met.len(),
            r.solution.status.as_str(),
            driftplan::solve::progress::gap_percent(r.solution.gap)
        );
    }
    for r in &sw.runs {
        for w in driftplan::solve::warnings(&r.solution) {
            println!("warning: budget {:.1}%: {w}", 100.0 * r.share);
        }
    }
    println!(
        "robust core: {} cells chosen in all {} networks (the report maps it); outputs {}",
        core.iter().filter(|c| **c).count(),
        f_all.networks,
        out.display()
    );
    println!("{}", export::CAUTION);
    Ok(())
}
