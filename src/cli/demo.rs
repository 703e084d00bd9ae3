//! `driftplan demo`: write the invented demo region and its plan, then solve it.

use super::{Progress, SolverArgs};
use anyhow::{Context, Result};
use std::path::PathBuf;

/// Arguments of `driftplan demo`.
#[derive(clap::Args, Debug)]
pub(crate) struct Args {
    /// Output folder.
    #[arg(long, default_value = "out/demo")]
    out: PathBuf,
    /// Only write the demo data and plan; do not solve.
    #[arg(long)]
    data_only: bool,
    #[command(flatten)]
    solver: SolverArgs,
}

pub(crate) fn run(args: Args, progress: &Progress) -> Result<()> {
    let mut run = driftplan::export::RunFolder::begin(&args.out, "demo")?;
    let (plan_path, written) = driftplan::demo::write(&args.out)
        .with_context(|| format!("writing the demo files under {}", args.out.display()))?;
    run.add_inputs(written);
    progress.say(&format!(
        "wrote the invented Merrow Coast demo data and plan {}",
        plan_path.display()
    ));
    if args.data_only {
        run.finish("data only")?;
        return Ok(());
    }
    super::solve::solve(
        &plan_path,
        run,
        &args.solver,
        false,
        super::solve::Outputs::default(),
        progress,
    )
}
