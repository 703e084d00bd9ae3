//! `driftplan check`: validate a plan and every input it names.

use super::{load, Progress};
use anyhow::Result;
use driftplan::model::CellStatus;
use driftplan::pipeline;
use std::path::PathBuf;

/// Arguments of `driftplan check`.
#[derive(clap::Args, Debug)]
pub(crate) struct Args {
    /// The plan file (TOML).
    plan: PathBuf,
}

pub(crate) fn run(args: Args, progress: &Progress) -> Result<()> {
    let plan = load(&args.plan)?;
    progress.say("plan file is valid; reading every input");
    let inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    pipeline::check_budget(&plan, &inputs)?;
    let count = |status| inputs.status.iter().filter(|s| **s == status).count();
    println!(
        "{}: OK — {} cells, {} features ({} species × {} scenarios × {} years), {} required and {} excluded cells",
        args.plan.display(),
        inputs.grid.len(),
        inputs.features.features.len(),
        plan.species.len(),
        plan.scenarios.len(),
        plan.years.len(),
        count(CellStatus::Required),
        count(CellStatus::Excluded),
    );
    for note in pipeline::input_notes(&inputs) {
        println!("  {note}");
    }
    println!("  solver: HiGHS, {}", plan.solver.describe());
    let absent = driftplan::features::absent::first_notes(
        driftplan::features::absent::absent_notes(&inputs.features),
        20,
    );
    if !absent.is_empty() {
        println!(
            "  absent (no amount in the region; reported as absent, never counted as reached):"
        );
        for note in absent {
            println!("    {note}");
        }
    }
    Ok(())
}
