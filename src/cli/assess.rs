//! `driftplan assess`: score a given network under the plan.

use super::{file_stem, load, read_network, solve_options, stress, Progress, SolverArgs};
use anyhow::Result;
use driftplan::{export, pipeline};
use std::path::{Path, PathBuf};

/// Arguments of `driftplan assess`.
#[derive(clap::Args, Debug)]
pub(crate) struct Args {
    /// The plan file (TOML).
    plan: PathBuf,
    /// The network: GeoJSON (Multi)Polygons in lon/lat, or CSV with a `cell` column.
    network: PathBuf,
    /// Output folder.
    #[arg(long)]
    out: PathBuf,
    /// A cell counts as chosen when at least this share of its sea area lies inside the
    /// network's polygons (GeoJSON only).
    #[arg(long, default_value_t = 0.5, value_name = "SHARE")]
    min_share: f64,
    /// Skip the scenario stress test (one extra solve per scenario).
    #[arg(long)]
    no_stress: bool,
    #[command(flatten)]
    solver: SolverArgs,
}

pub(crate) fn run(a: Args, progress: &Progress) -> Result<()> {
    assess(
        &a.plan,
        &a.network,
        &a.out,
        a.min_share,
        a.no_stress,
        &a.solver,
        progress,
    )
}

fn assess(
    plan_path: &Path,
    network: &Path,
    out: &Path,
    min_share: f64,
    no_stress: bool,
    solver: &SolverArgs,
    progress: &Progress,
) -> Result<()> {
    let mut run = export::RunFolder::begin(out, "assess")?;
    let plan = load(plan_path)?;
    run.set_plan(&plan.file, &plan.hash);
    let inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    let given = read_network(network, &inputs, min_share)?;
    let selected = given.selected;
    let a = pipeline::assess_network(&inputs, &selected);
    let name = file_stem(network);
    let problem = pipeline::problem(&plan, &inputs);
    let options = solve_options(&plan, solver)?;
    let matrix = stress(
        &problem,
        &[(name.clone(), selected.clone())],
        &options,
        no_stress,
        progress,
    )?;
    let mut cmp = driftplan::compare::compare(&[(name.clone(), &a)])?;
    cmp.warnings = given
        .warnings
        .iter()
        .map(|w| (name.clone(), w.clone()))
        .collect();
    let mut facts = vec![("network".to_string(), network.display().to_string())];
    facts.extend(
        given
            .warnings
            .iter()
            .map(|w| ("warning".to_string(), w.clone())),
    );
    let mut files = vec![
        ("coverage.csv", export::coverage_csv(&a)),
        ("reserves.csv", export::reserves_csv(&a)),
        ("assessment.json", driftplan::compare::compare_json(&cmp)),
        (
            "network.geojson",
            export::geojson::network_geojson(&inputs.grid, &a)?,
        ),
        (
            "report.html",
            pipeline::report_html(
                &plan,
                &inputs,
                &selected,
                &a,
                pipeline::ReportExtras {
                    stress: matrix.as_ref(),
                    facts,
                    ..Default::default()
                },
            )?,
        ),
    ];
    if let Some(m) = &matrix {
        files.push(("stress.csv", driftplan::study::stress::stress_csv(m)));
    }
    let links = export::connectivity::connectivity_files(
        &inputs.grid,
        &plan.scenarios,
        &inputs.connectivity,
        &inputs.features,
        Some(&selected),
    );
    // Only the network's summary: the matrices are the plan's, written by `features`.
    files.extend(
        links
            .iter()
            .filter(|(n, _)| n == "connectivity.csv")
            .map(|(n, t)| (n.as_str(), t.clone())),
    );
    export::write_outputs(run.dir(), &files)?;
    run.finish("done")?;
    println!(
        "{name}: {} cells, cost {:.1}, {:.0} km² ({:.1}% of the sea), {} reserves, {} targets reached",
        a.cells_selected,
        a.cost,
        a.area_km2,
        100.0 * a.share_of_region,
        a.reserves.len(),
        driftplan::assess::targets_reached_text(&a)
    );
    for w in &given.warnings {
        println!("  warning: {w}");
    }
    for note in driftplan::features::absent::first_notes(
        driftplan::features::absent::absent_notes(&inputs.features),
        10,
    ) {
        println!("  absent: {note}");
    }
    if let Some(m) = &matrix {
        println!(
            "  stress test (rows: designed for, columns: evaluated in; {})",
            export::BENEFIT
        );
        print!("{}", driftplan::study::stress::stress_table(m));
    }
    println!("  outputs {}", out.display());
    println!("{}", export::CAUTION);
    Ok(())
}
