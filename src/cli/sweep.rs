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
    /// What the budgets are shares of: the region's sea `area`, or its total `cost` (the
    /// plan's cost summed over every cell; cost then never falls as the budget grows).
    #[arg(long, default_value = "area", value_parser = ["area", "cost"])]
    budget_of: String,
    /// Output folder.
    #[arg(long)]
    out: PathBuf,
    #[command(flatten)]
    solver: SolverArgs,
}

pub(crate) fn run(a: Args, progress: &Progress) -> Result<()> {
    sweep(
        &a.plan,
        &a.budgets,
        &a.budget_of,
        &a.out,
        &a.solver,
        progress,
    )
}

fn sweep(
    plan_path: &Path,
    budgets: &str,
    budget_of: &str,
    out: &Path,
    solver: &SolverArgs,
    progress: &Progress,
) -> Result<()> {
    let shares =
        driftplan::study::parse_budgets(budgets).map_err(|e| anyhow::anyhow!("--budgets: {e}"))?;
    let mut run = export::RunFolder::begin(out, "sweep")?;
    let plan = load_with(plan_path, solver)?;
    run.set_plan(&plan.file, &plan.hash);
    let inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    let problem = pipeline::problem(&plan, &inputs);
    let options = solve_options(&plan, solver)?;
    let of = if budget_of == "cost" {
        driftplan::study::SweepBudget::Cost(inputs.cost.iter().sum())
    } else {
        driftplan::study::SweepBudget::Area(inputs.grid.sea_area_km2)
    };
    let what = if budget_of == "cost" {
        "the region's total cost"
    } else {
        "the sea"
    };
    progress.say(&format!(
        "sweep: {} budgets from {:.1}% to {:.1}% of {what}, solved in parallel",
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
    let sw = driftplan::study::sweep_of(
        &problem,
        &shares,
        of,
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
    // The report maps the largest budget's network, with the selection share beside it, and
    // every budget's network side by side; each is also written to networks/.
    let largest = &sw.runs[sw.runs.len() - 1];
    let shown = pipeline::assess_network(&inputs, &largest.solution.selected);
    let per_budget: Vec<driftplan::assess::Assessment> = sw
        .runs
        .iter()
        .map(|r| pipeline::assess_network(&inputs, &r.solution.selected))
        .collect();
    let mut network_files = Vec::new();
    for (r, a) in sw.runs.iter().zip(&per_budget) {
        network_files.push((
            format!("{}.geojson", driftplan::study::sweep::budget_stem(r.share)),
            export::geojson::network_geojson(&inputs.grid, a)?,
        ));
    }
    let panels = driftplan::report::NetworkPanels {
        title: "Network at each budget".into(),
        note: "One map per budget of the sweep (also written as networks/budget-<share>pct.geojson); reserves in green, excluded cells tinted, required cells outlined in blue.".into(),
        panels: sw
            .runs
            .iter()
            .zip(&per_budget)
            .map(|(r, a)| driftplan::report::NetworkPanel {
                label: format!(
                    "budget {:.1}%: cost {:.1}, {} of {} targets reached, {} reserves",
                    100.0 * r.share,
                    r.cost,
                    r.targets_reached,
                    r.reached.len(),
                    a.reserves.len()
                ),
                reserves: a.reserves.clone(),
            })
            .collect(),
    };
    let files = vec![
        ("sweep.csv", driftplan::study::sweep::sweep_csv(&sw)),
        (
            "first-reached.csv",
            driftplan::study::sweep::first_reached_csv(&sw),
        ),
        (
            "selection-frequency.csv",
            driftplan::study::frequency::frequency_csv(f_all),
        ),
        (
            "selection-frequency.geojson",
            export::geojson::cells_geojson_with_text(
                &inputs.grid,
                &layers,
                &[export::geojson::TextLayer {
                    name: "class".into(),
                    values: f_all.classes(),
                }],
                &empty,
                &core,
                None,
            )?,
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
                                "the largest budget, {:.1}% of {what}",
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
                    panels: Some(panels),
                },
            )?,
        ),
    ];
    let network_files: Vec<(&str, String)> = network_files
        .iter()
        .map(|(n, t)| (n.as_str(), t.clone()))
        .collect();
    export::write_outputs(&run.dir().join("networks"), &network_files)?;
    export::write_outputs(run.dir(), &files)?;
    run.finish("done")?;
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
            r.targets_reached,
            r.reached.len(),
            r.solution.status.as_str(),
            driftplan::solve::progress::gap_percent(r.solution.gap)
        );
    }
    for r in &sw.runs {
        for w in driftplan::solve::warnings(&r.solution) {
            println!("warning: budget {:.1}%: {w}", 100.0 * r.share);
        }
    }
    for (a, b) in sw.cost_falls() {
        println!(
            "note: cost falls from {:.1} at {:.1}% to {:.1} at {:.1}%: the larger area budget admits a cheaper network of at least the same benefit (the plan's cost is not area; `--budget-of cost` measures budgets in cost, where cost cannot fall)",
            sw.runs[a].cost,
            100.0 * sw.runs[a].share,
            sw.runs[b].cost,
            100.0 * sw.runs[b].share
        );
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
