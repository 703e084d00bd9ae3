//! `driftplan features`: build grid, layers and features and write them for inspection.

use super::{load, Progress};
use anyhow::Result;
use driftplan::{export, pipeline};
use std::path::PathBuf;

/// Arguments of `driftplan features`.
#[derive(clap::Args, Debug)]
pub(crate) struct Args {
    /// The plan file (TOML).
    plan: PathBuf,
    /// Output folder.
    #[arg(long)]
    out: PathBuf,
}

pub(crate) fn run(args: Args, progress: &Progress) -> Result<()> {
    let mut run = export::RunFolder::begin(&args.out, "features")?;
    let plan = load(&args.plan)?;
    run.set_plan(&plan.file, &plan.hash);
    let inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    let none = vec![false; inputs.grid.len()];
    let files = vec![
        (
            "cells.geojson",
            export::geojson::cells_geojson(
                &inputs.grid,
                &inputs.layers,
                &inputs.features,
                &none,
                None,
            )?,
        ),
        (
            "cells.csv",
            export::cells_csv(&inputs.grid, &inputs.layers, &inputs.features, &none, None)?,
        ),
        ("features.csv", export::features_csv(&inputs.features)?),
        (
            "edge-shifts.csv",
            export::edge_shifts_csv(&inputs.edge_shifts)?,
        ),
    ];
    let extra = export::connectivity::connectivity_files(
        &inputs.grid,
        &plan.scenarios,
        &inputs.connectivity,
        &inputs.features,
        None,
    );
    let mut files = files;
    files.extend(extra.iter().map(|(n, t)| (n.as_str(), t.clone())));
    export::write_outputs(run.dir(), &files)?;
    export::write_atomic(
        &run.dir().join(pipeline::INPUTS_CACHE),
        &pipeline::inputs_cache_bytes(&plan, &inputs)?,
    )?;
    run.finish("done")?;
    progress.say(&format!(
        "wrote cells.geojson, cells.csv, features.csv and {} (the inputs cache that `sweep` and `irreplaceability` read with --inputs) to {}",
        pipeline::INPUTS_CACHE,
        args.out.display()
    ));
    Ok(())
}
