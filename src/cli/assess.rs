//! `driftplan assess`: score a given network under the plan.

use super::{file_stem, load, solve_options, stress_assigned, Progress, SolverArgs};
use anyhow::Result;
use driftplan::{export, pipeline};
use std::path::PathBuf;

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
    /// Under a plan with `[[zones]]`: the zone of every chosen cell when the network file
    /// names none (default: the plan's first zone). A file's own `zone` property (GeoJSON) or
    /// column (CSV) always wins.
    #[arg(long, value_name = "ZONE")]
    zone: Option<String>,
    #[command(flatten)]
    solver: SolverArgs,
}

pub(crate) fn run(a: Args, progress: &Progress) -> Result<()> {
    assess(&a, progress)
}

fn assess(args: &Args, progress: &Progress) -> Result<()> {
    let (network, out) = (&args.network, &args.out);
    let mut run = export::RunFolder::begin(out, "assess")?;
    let plan = load(&args.plan)?;
    run.set_plan(&plan.file, &plan.hash);
    let inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    let zone_names: Vec<String> = plan.zones.iter().map(|z| z.name.clone()).collect();
    // The reader's errors already name the file.
    let read = driftplan::assess::network_input::read_plan_network(
        network,
        &inputs.grid,
        args.min_share,
        &zone_names,
        args.zone.as_deref(),
    )?;
    let zone_note = read.zone_source.note(network);
    if let Some(n) = &zone_note {
        progress.say(&format!("zones: {n}"));
    }
    let selected = &read.selected;
    let warnings = driftplan::assess::network_input::network_warnings(
        selected,
        &inputs.status,
        read.largest_share,
        args.min_share,
    );
    let problem = pipeline::problem(&plan, &inputs);
    let (a, shares) = pipeline::assess_zoned(&inputs, &problem, selected, read.zones.as_deref());
    let name = file_stem(network);
    let options = solve_options(&plan, &args.solver)?;
    let assignment = read
        .zones
        .clone()
        .unwrap_or_else(|| driftplan::model::zones::first_zone(selected));
    let matrix = stress_assigned(
        &problem,
        &[(name.clone(), assignment.clone())],
        &options,
        args.no_stress,
        progress,
    )?;
    let mut cmp = driftplan::compare::compare(&[(name.clone(), &a)])?;
    pipeline::push_connectivity_measures(&mut cmp, &plan, &inputs, &[selected]);
    cmp.warnings = warnings.iter().map(|w| (name.clone(), w.clone())).collect();
    // Zone rules a network from a file may break (a solve's never does).
    let broken = driftplan::assess::zones::zone_rule_notes(&problem, &assignment);
    let zones_json = shares.as_ref().map(|s| {
        driftplan::assess::zones::zones_json(&read.zone_source, zone_note.as_deref(), &broken, s)
    });
    let (network_geojson, reserves_csv) = match (&read.zones, &shares) {
        (Some(asg), Some(s)) => (
            export::network_geojson_zoned(&inputs.grid, &a, asg, s)?,
            export::reserves_csv_zoned(&a, &zone_names, s),
        ),
        _ => (
            export::geojson::network_geojson(&inputs.grid, &a)?,
            export::reserves_csv(&a),
        ),
    };
    let mut facts = vec![("network".into(), network.display().to_string())];
    if let Some(n) = &zone_note {
        facts.push(("zones".into(), n.clone()));
    }
    for w in &warnings {
        facts.push(("warning".into(), w.clone()));
    }
    for b in &broken {
        facts.push(("zone rule broken".into(), b.clone()));
    }
    for z in shares.iter().flatten().filter(|z| z.reserve.is_none()) {
        facts.push((format!("zone {}", z.zone), zone_line(z)));
    }
    let mut files = vec![
        ("coverage.csv", export::coverage_csv(&a)),
        ("reserves.csv", reserves_csv),
        (
            "assessment.json",
            driftplan::compare::compare_json_with_zones(&cmp, zones_json.as_ref()),
        ),
        ("network.geojson", network_geojson),
        (
            "report.html",
            pipeline::report_html_zoned(
                &plan,
                &inputs,
                selected,
                read.zones.as_deref(),
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
    if let Some(s) = &shares {
        files.push(("zones.csv", driftplan::assess::zones::zones_csv(s)));
    }

    let links = export::connectivity::connectivity_files(
        &inputs.grid,
        &plan.scenarios,
        &inputs.connectivity,
        &inputs.features,
        Some(selected),
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
        "{name}: {}, cost {:.1}, {:.0} km² ({:.1}% of the sea), {}, {} targets reached",
        driftplan::export::words::count(a.cells_selected, "cell"),
        a.cost,
        a.area_km2,
        100.0 * a.share_of_region,
        driftplan::export::words::count(a.reserves.len(), "reserve"),
        driftplan::assess::targets_reached_text(&a)
    );
    for z in shares.iter().flatten().filter(|z| z.reserve.is_none()) {
        println!("  zone {}: {}", z.zone, zone_line(z));
    }
    if let Some(n) = &zone_note {
        println!("  zones: {n}");
    }
    for w in warnings.iter().chain(&broken) {
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
    super::closing_lines(out);
    Ok(())
}

/// One zone's share of the network in words.
pub(crate) fn zone_line(z: &driftplan::assess::zones::ZoneShare) -> String {
    format!(
        "{} cell{}, {:.0} km², cost {:.1}",
        z.cells,
        if z.cells == 1 { "" } else { "s" },
        z.area_km2,
        z.cost
    )
}
