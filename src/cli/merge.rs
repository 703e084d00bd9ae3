//! `driftplan merge`: joins the shards of a study (`--shard K/N`) into one run's outputs.

use super::{load_with, Progress};
use anyhow::{Context, Result};
use driftplan::solve::SolveStatus;
use driftplan::study::shard;
use driftplan::{export, pipeline};
use std::path::PathBuf;

/// Arguments of `driftplan merge`.
#[derive(clap::Args, Debug)]
pub(crate) struct Args {
    /// The study folder: its shards are DIR/shards/1 … DIR/shards/N.
    dir: PathBuf,
    /// Output folder (default: DIR itself, beside its shards).
    #[arg(long)]
    out: Option<PathBuf>,
    /// The plan file, when it is no longer where the shards read it (its SHA-256 must still
    /// be the shards').
    #[arg(long)]
    plan: Option<PathBuf>,
}

pub(crate) fn run(a: Args, progress: &Progress) -> Result<()> {
    let out = a.out.clone().unwrap_or_else(|| a.dir.clone());
    export::run_folder::check_out(&out)?;
    let merged = shard::read_shards(&a.dir)?;
    progress.say(&format!(
        "merge: {} shards of `{}`, {} jobs, all complete and of one plan",
        merged.shards,
        merged.study,
        merged.outcomes.len()
    ));
    let plan_path = a
        .plan
        .clone()
        .unwrap_or_else(|| PathBuf::from(&merged.plan));
    match merged.study.as_str() {
        "sweep" => {
            let (budget_of, solver) = super::sweep::from_arguments(&merged.arguments)?;
            let mut run = export::RunFolder::begin(&out, "sweep")?;
            let (plan, inputs) = load_checked(&plan_path, &solver, &merged, progress)?;
            run.set_plan(&plan.file, &plan.hash);
            let problem = pipeline::problem(&plan, &inputs);
            let (runs, rows) = shard::sweep_outcomes(&merged.outcomes, merged.cells)
                .map_err(|e| anyhow::anyhow!("{}: {e}", a.dir.display()))?;
            anyhow::ensure!(!runs.is_empty(), "the shards hold no budget of the sweep");
            let sw = driftplan::study::Sweep {
                runs,
                features: problem.features.iter().map(|f| f.name.clone()).collect(),
            };
            let matrix = (!rows.is_empty()).then(|| driftplan::study::StressMatrix {
                scenarios: problem.scenarios.iter().map(|s| s.name.clone()).collect(),
                rows,
            });
            let stopped = sw
                .runs
                .iter()
                .filter(|r| r.solution.status == SolveStatus::TimeLimit)
                .count()
                + matrix
                    .iter()
                    .flat_map(|m| &m.rows)
                    .filter(|r| r.status == SolveStatus::TimeLimit.as_str())
                    .count();
            super::sweep::write(&plan, &inputs, &sw, matrix.as_ref(), &budget_of, run)?;
            time_limit_note(stopped);
            Ok(())
        }
        "irreplaceability" => {
            let (cells, solver) = super::irreplaceability::from_arguments(&merged.arguments)?;
            let mut run = export::RunFolder::begin(&out, "irreplaceability")?;
            let (plan, inputs) = load_checked(&plan_path, &solver, &merged, progress)?;
            run.set_plan(&plan.file, &plan.hash);
            let problem = pipeline::problem(&plan, &inputs);
            let base = merged
                .base
                .as_ref()
                .ok_or_else(|| anyhow::anyhow!("{}: the shards hold no optimum", a.dir.display()))?
                .solution(merged.cells)
                .map_err(|e| anyhow::anyhow!("{}: the optimum: {e}", a.dir.display()))?;
            let (assessment, zone_shares) = pipeline::assess_solution(&inputs, &problem, &base);
            let units = super::irreplaceability::units(&assessment, &base, cells);
            let rows = shard::replacement_outcomes(&merged.outcomes, merged.cells)
                .map_err(|e| anyhow::anyhow!("{}: {e}", a.dir.display()))?;
            anyhow::ensure!(
                rows.len() == units.len()
                    && rows.iter().zip(&units).all(|(r, (label, _))| &r.label == label),
                "{}: the shards' units do not match the optimum's reserves or cells",
                a.dir.display()
            );
            let minimise = driftplan::model::robust::is_minimisation(&problem);
            let rows = driftplan::study::replacement::with_intervals(minimise, &base, rows);
            let stopped = rows
                .iter()
                .filter_map(|r| r.without.as_ref())
                .chain([&base])
                .filter(|s| s.status == SolveStatus::TimeLimit)
                .count();
            super::irreplaceability::write(
                &plan,
                &inputs,
                &base,
                &assessment,
                zone_shares.as_deref(),
                &units,
                &rows,
                minimise,
                cells,
                run,
            )?;
            time_limit_note(stopped);
            Ok(())
        }
        other => anyhow::bail!(
            "{}: shards of `{other}` cannot be merged by this driftplan (it merges `sweep` and `irreplaceability`)",
            a.dir.display()
        ),
    }
}

/// Says when solves stopped at their time limit: then a one-machine run, which shares the limit
/// out differently, may find other networks.
fn time_limit_note(stopped: usize) {
    if stopped > 0 {
        println!(
            "note: {stopped} solve{} of the shards stopped at the time limit; a one-machine run shares the limit out differently and may differ there (raise --time-limit for results that do not depend on how the study is split)",
            if stopped == 1 { "" } else { "s" }
        );
    }
}

/// Loads the plan the shards ran (its SHA-256 must still be theirs) and pre-processes it once
/// (grid, layers, features) for the outputs.
fn load_checked(
    plan_path: &std::path::Path,
    solver: &super::SolverArgs,
    merged: &shard::Merged,
    progress: &Progress,
) -> Result<(driftplan::plan::Plan, pipeline::Inputs)> {
    let plan = load_with(plan_path, solver).with_context(|| {
        format!(
            "the plan the shards were run on ({}; give --plan if it moved)",
            plan_path.display()
        )
    })?;
    anyhow::ensure!(
        plan.hash == merged.plan_sha256,
        "{}: the plan file changed since the shards ran (SHA-256 {} now, {} in the shards); run the shards again",
        plan.file.display(),
        &plan.hash[..plan.hash.len().min(12)],
        &merged.plan_sha256[..merged.plan_sha256.len().min(12)]
    );
    let inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    anyhow::ensure!(
        inputs.grid.len() == merged.cells,
        "the plan's grid has {} cells, the shards' {}: they were run by another driftplan",
        inputs.grid.len(),
        merged.cells
    );
    Ok((plan, inputs))
}
