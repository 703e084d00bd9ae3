//! `driftplan irreplaceability`: replacement cost of each reserve (or cell) of the optimum.

use super::{load_with, solve_options, Progress, SolverArgs};
use anyhow::Result;
use driftplan::solve::time;
use driftplan::study::shard::{self, ShardSpec};
use driftplan::{export, pipeline};
use std::collections::BTreeMap;
use std::path::PathBuf;

/// Arguments of `driftplan irreplaceability`.
#[derive(clap::Args, Debug)]
pub(crate) struct Args {
    /// The plan file (TOML).
    pub(crate) plan: PathBuf,
    /// Re-solve once per chosen cell instead of once per reserve (many more solves).
    #[arg(long)]
    cells: bool,
    /// Seconds for each re-solve (default: an equal part of the command's time limit).
    #[arg(long, value_name = "SECONDS")]
    per_solve_limit: Option<f64>,
    /// Output folder.
    #[arg(long)]
    pub(crate) out: PathBuf,
    #[command(flatten)]
    pub(crate) solver: SolverArgs,
    /// Re-solve only part K of N of the units (every N-th reserve or cell of the optimum,
    /// which every shard solves first) and write shard.json; `driftplan merge` joins the parts.
    #[arg(long, value_name = "K/N")]
    pub(crate) shard: Option<String>,
    /// Read the grid, layers and features from the inputs cache that `driftplan features PLAN
    /// --out DIR` wrote (DIR/inputs.bin) instead of the plan's files: shards of a study then
    /// do not each sample the same rasters. The cache must come from this plan file as it is
    /// now (its SHA-256 is checked).
    #[arg(long, value_name = "FILE")]
    pub(crate) inputs: Option<PathBuf>,
}

pub(crate) fn run(a: Args, progress: &Progress) -> Result<()> {
    if let Some(t) = a.per_solve_limit {
        anyhow::ensure!(
            t.is_finite() && t > 0.0,
            "--per-solve-limit must be a positive number of seconds, got {t}"
        );
    }
    let spec = a.shard.as_deref().map(ShardSpec::parse).transpose()?;
    let mut run = export::RunFolder::begin(&a.out, "irreplaceability")?;
    let plan = load_with(&a.plan, &a.solver)?;
    run.set_plan(&plan.file, &plan.hash);
    let inputs = super::prepare_or_cached(&plan, a.inputs.as_deref(), progress)?;
    let problem = pipeline::problem(&plan, &inputs);
    let options = solve_options(&plan, &a.solver)?;
    let clock = time::TimeBudget::start(plan.solver.time_limit_s);
    progress.say("irreplaceability: solving the plan");
    let base_problem = driftplan::solve::with_scenario_best(
        &problem,
        &driftplan::solve::decompose::choose::Exact,
        &clock.options(&options, 0.2, 1),
    )?;
    let base = pipeline::optimise(&base_problem, &clock.options(&options, 0.2, 1))?;
    let (assessment, zone_shares) = pipeline::assess_solution(&inputs, &base_problem, &base);
    let all_units = units(&assessment, &base, a.cells);
    let mine: Vec<usize> = match spec {
        // A shard beyond the units has nothing to re-solve and writes an empty part: the
        // units are known only after the optimum, later than a job array is sized.
        Some(spec) => spec.jobs(all_units.len()),
        None => (0..all_units.len()).collect(),
    };
    let units: Vec<(String, Vec<u32>)> = mine.iter().map(|&j| all_units[j].clone()).collect();
    let rounds = time::parallel_rounds(units.len(), time::workers());
    let per = a
        .per_solve_limit
        .or_else(|| clock.options(&options, 1.0, rounds).time_limit_s);
    progress.say(&format!(
        "irreplaceability: {} re-solve{} with each {} forbidden{}",
        units.len(),
        if units.len() == 1 { "" } else { "s" },
        if a.cells { "cell" } else { "reserve" },
        per.map(|t| format!(" (at most {t:.0} s each)"))
            .unwrap_or_default()
    ));
    let bar = progress.bar(units.len() as u64, "re-solves");
    let rows = driftplan::study::replacement::replacement_solves(
        &base_problem,
        &base,
        &units,
        &driftplan::solve::SolveOptions {
            time_limit_s: per,
            ..options.clone()
        },
        &|| bar.inc(1),
    )?;
    bar.finish_and_clear();
    if let Some(spec) = spec {
        let part = shard::ShardPart {
            format: shard::FORMAT,
            study: "irreplaceability".into(),
            arguments: arguments(&a),
            plan: super::sweep::absolute(&plan.file),
            plan_sha256: plan.hash.clone(),
            shard: spec.k,
            shards: spec.n,
            jobs: all_units.len(),
            cells: inputs.grid.len(),
            base: Some((&base).into()),
            results: mine
                .iter()
                .zip(&rows)
                .map(|(&job, r)| shard::JobResult {
                    job,
                    outcome: shard::Outcome::Unit(r.into()),
                })
                .collect(),
        };
        export::write_outputs(run.dir(), &[(shard::SHARD_FILE, part.to_json())])?;
        run.finish("done")?;
        println!(
            "shard {}/{}: {} of {} re-solves; outputs {} (join the shards with `driftplan merge`)",
            spec.k,
            spec.n,
            mine.len(),
            all_units.len(),
            a.out.display()
        );
        return Ok(());
    }
    let minimise = driftplan::model::robust::is_minimisation(&base_problem);
    let rows = driftplan::study::replacement::with_intervals(minimise, &base, rows);
    write(
        &plan,
        &inputs,
        &base,
        &assessment,
        zone_shares.as_deref(),
        &all_units,
        &rows,
        minimise,
        a.cells,
        run,
    )
}

/// The units of the study: each chosen cell (`cells`) or each reserve of the optimum.
pub(crate) fn units(
    assessment: &driftplan::assess::Assessment,
    base: &driftplan::solve::Solution,
    cells: bool,
) -> Vec<(String, Vec<u32>)> {
    if cells {
        (0..base.selected.len() as u32)
            .filter(|&c| base.selected[c as usize])
            .map(|c| (format!("cell {c}"), vec![c]))
            .collect()
    } else {
        assessment
            .reserves
            .iter()
            .enumerate()
            .map(|(k, r)| (format!("reserve {}", k + 1), r.cells.clone()))
            .collect()
    }
}

/// The arguments that decide the study's results, as a shard records them.
fn arguments(a: &Args) -> BTreeMap<String, String> {
    let exact = |v: f64| format!("{v:?}");
    let mut m = super::sweep::solver_arguments(&a.solver);
    m.insert("cells".into(), a.cells.to_string());
    m.insert(
        "per_solve_limit".into(),
        a.per_solve_limit.map(exact).unwrap_or_default(),
    );
    m
}

/// `--cells` and the solver overrides back from a shard's arguments.
pub(crate) fn from_arguments(args: &BTreeMap<String, String>) -> Result<(bool, SolverArgs)> {
    let cells = match args.get("cells").map(String::as_str) {
        Some("true") => true,
        Some("false") => false,
        other => anyhow::bail!("the shards' `cells` argument is {other:?}, expected true or false"),
    };
    Ok((cells, super::sweep::solver_from_arguments(args)?))
}

/// Writes the study's outputs into `run` and prints its table: the one-machine run and the
/// merge of its shards both end here.
#[allow(clippy::too_many_arguments)]
pub(crate) fn write(
    plan: &driftplan::plan::Plan,
    inputs: &pipeline::Inputs,
    base: &driftplan::solve::Solution,
    assessment: &driftplan::assess::Assessment,
    zone_shares: Option<&[driftplan::assess::zones::ZoneShare]>,
    units: &[(String, Vec<u32>)],
    rows: &[driftplan::study::Replacement],
    minimise: bool,
    cells: bool,
    run: export::RunFolder,
) -> Result<()> {
    let out = run.out().to_path_buf();
    let best = driftplan::study::replacement::best_base(minimise, base, rows);
    // Per-cell map value: the replacement cost of the unit holding the cell (NaN outside).
    let mut map = vec![f64::NAN; base.selected.len()];
    for (r, (_, cells)) in rows.iter().zip(units) {
        for &c in cells {
            map[c as usize] = if r.irreplaceable() { f64::MAX } else { r.cost };
        }
    }
    let finite_max = map
        .iter()
        .copied()
        .filter(|v| v.is_finite() && *v < f64::MAX)
        .fold(0.0, f64::max);
    let shown: Vec<f64> = map
        .iter()
        .map(|&v| if v == f64::MAX { finite_max } else { v })
        .collect();
    let files = vec![
        (
            "irreplaceability.csv",
            driftplan::study::replacement::replacement_csv(&best, rows),
        ),
        (
            "network.geojson",
            match (&base.zones, zone_shares) {
                (Some(asg), Some(shares)) => {
                    export::network_geojson_zoned(&inputs.grid, assessment, asg, shares)?
                }
                _ => export::geojson::network_geojson(&inputs.grid, assessment)?,
            },
        ),
        (
            "report.html",
            pipeline::report_html(
                plan,
                inputs,
                &base.selected,
                assessment,
                pipeline::ReportExtras {
                    solution: Some(base),
                    facts: vec![(
                        "irreplaceability".into(),
                        format!(
                            "replacement cost per {}: how much the objective worsens when it is forbidden; irreplaceable units (no network meets every rule without them) are drawn at the top of the scale",
                            if cells { "cell" } else { "reserve" }
                        ),
                    )],
                    maps: vec![("replacement cost".into(), shown)],
                    ..Default::default()
                },
            )?,
        ),
    ];
    export::write_outputs(run.dir(), &files)?;
    run.finish("done")?;
    println!(
        "{:<14} {:>6} {:>14}  status",
        "unit", "cells", "replacement"
    );
    for r in rows {
        println!(
            "{:<14} {:>6} {:>14}  {}",
            r.label,
            r.forbidden.len(),
            if r.irreplaceable() {
                "irreplaceable".to_string()
            } else {
                format!("{:.3}", r.cost + 0.0)
            },
            driftplan::study::replacement::status_word(r)
        );
    }
    let resolved = rows
        .iter()
        .filter(|r| !r.forbidden.is_empty())
        .filter_map(|r| r.without.as_ref());
    let solvers = std::iter::once(base)
        .chain(resolved)
        .map(|s| s.solver.as_str());
    if let Some(line) = driftplan::study::methods_line(solvers) {
        println!("{line}");
    }
    if best.objective != base.objective {
        println!(
            "note: a re-solve found a better network of the whole plan (objective {:.3} against {:.3}); replacement costs are measured from it",
            best.objective, base.objective
        );
    }
    println!("outputs {}", out.display());
    super::closing_lines(&out);
    Ok(())
}
