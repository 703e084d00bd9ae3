//! `driftplan grid`: build the equal-area grid and write it.

use super::{load, Progress};
use anyhow::Result;
use driftplan::{export, pipeline};
use std::path::PathBuf;

/// Arguments of `driftplan grid`.
#[derive(clap::Args, Debug)]
pub(crate) struct Args {
    /// The plan file (TOML).
    plan: PathBuf,
    /// Output folder.
    #[arg(long)]
    out: PathBuf,
}

pub(crate) fn run(args: Args, progress: &Progress) -> Result<()> {
    let mut run = export::RunFolder::begin(&args.out, "grid")?;
    let plan = load(&args.plan)?;
    run.set_plan(&plan.file, &plan.hash);
    let grid = pipeline::grid(&plan)?;
    progress.say(&format!(
        "grid: {} cells, {:.0} km² of sea",
        grid.len(),
        grid.sea_area_km2
    ));
    let empty = driftplan::features::FeatureTable::default();
    let none = vec![false; grid.len()];
    let files = vec![
        (
            "grid.geojson",
            export::cells_geojson(&grid, &[], &empty, &none, None)?,
        ),
        (
            "grid.csv",
            export::cells_csv(&grid, &[], &empty, &none, None)?,
        ),
    ];
    export::write_outputs(run.dir(), &files)?;
    run.finish("done")?;
    progress.say(&format!(
        "wrote grid.geojson and grid.csv to {}",
        args.out.display()
    ));
    Ok(())
}
