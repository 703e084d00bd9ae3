//! `driftplan rank`: a priority rank for every cell from nested solves over growing budgets.

use super::{load_with, solve_options, Progress, SolverArgs};
use anyhow::Result;
use driftplan::study::SweepBudget;
use driftplan::{export, pipeline};
use std::path::PathBuf;

/// Arguments of `driftplan rank`.
#[derive(clap::Args, Debug)]
pub(crate) struct Args {
    /// The plan file (TOML).
    plan: PathBuf,
    /// Equal budget steps up to the share the least-cost network reaching every target uses.
    #[arg(long, default_value_t = 10, conflicts_with = "budgets")]
    steps: usize,
    /// Explicit budgets instead of `--steps`, e.g. `5%,10%,...,40%`.
    #[arg(long)]
    budgets: Option<String>,
    /// What the budgets are shares of: the region's sea `area`, or its total `cost`.
    #[arg(long, default_value = "area", value_parser = ["area", "cost"])]
    budget_of: String,
    /// Output folder.
    #[arg(long)]
    out: PathBuf,
    #[command(flatten)]
    solver: SolverArgs,
}

pub(crate) fn run(a: Args, progress: &Progress) -> Result<()> {
    anyhow::ensure!(a.steps >= 1, "--steps must be at least 1");
    let mut run = export::RunFolder::begin(&a.out, "rank")?;
    let plan = load_with(&a.plan, &a.solver)?;
    run.set_plan(&plan.file, &plan.hash);
    let inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    let problem = pipeline::problem(&plan, &inputs);
    let options = solve_options(&plan, &a.solver)?;
    let of = if a.budget_of == "cost" {
        SweepBudget::Cost(inputs.cost.iter().sum())
    } else {
        SweepBudget::Area(inputs.grid.sea_area_km2)
    };
    let n_steps = match &a.budgets {
        Some(b) => driftplan::study::parse_budgets(b)
            .map_err(|e| anyhow::anyhow!("--budgets: {e}"))?
            .len(),
        None => a.steps,
    };
    // Steps run one after the other (each needs the last), each with an equal part of the
    // time; with `--steps` one more solve first finds where every target is reached.
    let solves = n_steps + usize::from(a.budgets.is_none());
    let step_options = driftplan::solve::SolveOptions {
        time_limit_s: options.time_limit_s.map(|t| t / solves as f64),
        ..options.clone()
    };
    let shares = match &a.budgets {
        Some(b) => {
            driftplan::study::parse_budgets(b).map_err(|e| anyhow::anyhow!("--budgets: {e}"))?
        }
        None => {
            progress.say("rank: finding the budget at which every target is reached");
            let full = driftplan::study::rank::full_share(&problem, of, &step_options)?;
            driftplan::study::rank::step_shares(a.steps, full)
        }
    };
    progress.say(&format!(
        "rank: {} nested budget steps from {:.1}% to {:.1}% of {}, solved one after the other",
        shares.len(),
        100.0 * shares[0],
        100.0 * shares[shares.len() - 1],
        if a.budget_of == "cost" {
            "the region's total cost"
        } else {
            "the sea"
        }
    ));
    let bar = progress.bar(shares.len() as u64, "budget steps");
    let ranking = driftplan::study::rank(&problem, &shares, of, &step_options, &|_| bar.inc(1))?;
    bar.finish_and_clear();
    let last = &ranking.steps[ranking.steps.len() - 1].run;
    let shown = pipeline::assess_solution(&inputs, &problem, &last.solution).0;
    // The rank as a map value: 0 for required cells, the step for ranked ones, NaN for none.
    let rank_values: Vec<f64> = ranking
        .rank
        .iter()
        .map(|r| r.map_or(f64::NAN, |k| k as f64))
        .collect();
    let rank_layer = driftplan::layers::Layer {
        name: "rank".into(),
        values: rank_values.clone(),
    };
    let files = vec![
        ("rank.csv", driftplan::study::rank::rank_csv(&ranking)),
        ("rank-curve.csv", driftplan::study::rank::rank_curve_csv(&ranking)),
        (
            "rank.geojson",
            export::geojson::cells_geojson_with_text(
                &inputs.grid,
                &[rank_layer],
                &[],
                &driftplan::features::FeatureTable::default(),
                &last.solution.selected,
                None,
            )?,
        ),
        (
            "report.html",
            pipeline::report_html(
                &plan,
                &inputs,
                &last.solution.selected,
                &shown,
                pipeline::ReportExtras {
                    solution: Some(&last.solution),
                    facts: vec![
                        (
                            "network shown".into(),
                            format!("the last step, {:.1}% budget", 100.0 * last.share),
                        ),
                        (
                            "ranking".into(),
                            format!(
                                "{} nested steps in {:.1} s; rank 1 is protected first, 0 marks plan-required cells, unranked cells are needed at no step",
                                ranking.steps.len(),
                                ranking.seconds
                            ),
                        ),
                    ],
                    maps: vec![("priority rank (nested budget step)".into(), rank_values)],
                    ..Default::default()
                },
            )?,
        ),
    ];
    export::write_outputs(run.dir(), &files)?;
    run.finish("done")?;
    println!(
        "{:>5} {:>8} {:>10} {:>9} {:>6}  {:<10} gap",
        "step", "budget", "cost", "targets", "added", "status"
    );
    for (k, s) in ranking.steps.iter().enumerate() {
        println!(
            "{:>5} {:>7.1}% {:>10.1} {:>4}/{:<4} {:>6}  {:<10} {}",
            k + 1,
            100.0 * s.run.share,
            s.run.cost,
            s.run.targets_reached,
            s.run.reached.len(),
            s.added,
            s.run.solution.status.as_str(),
            driftplan::solve::progress::gap_percent(s.run.solution.gap)
        );
    }
    let solvers = ranking.steps.iter().map(|s| s.run.solution.solver.as_str());
    if let Some(line) = driftplan::study::methods_line(solvers) {
        println!("{line}");
    }
    let ranked = ranking.rank.iter().filter(|r| r.is_some()).count();
    println!(
        "{ranked} of {} cells ranked in {} steps ({:.1} s); outputs {}",
        ranking.rank.len(),
        ranking.steps.len(),
        ranking.seconds,
        a.out.display()
    );
    super::closing_lines(&a.out);
    Ok(())
}
