//! `driftplan compare`: several networks side by side.

use super::{file_stem, load, solve_options, stress_assigned, Progress, SolverArgs};
use anyhow::Result;
use driftplan::{export, pipeline};
use std::path::{Path, PathBuf};

/// Arguments of `driftplan compare`.
#[derive(clap::Args, Debug)]
pub(crate) struct Args {
    /// The plan file (TOML).
    plan: PathBuf,
    /// Two or more networks (GeoJSON polygons or cell-id CSV); to score one network, use
    /// `driftplan assess`.
    #[arg(required = true, num_args = 1..)]
    networks: Vec<PathBuf>,
    /// Output folder.
    #[arg(long)]
    out: PathBuf,
    /// Names for the networks, comma-separated, in order (default: file stems).
    #[arg(long, value_delimiter = ',')]
    names: Vec<String>,
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
    compare(
        &a.plan,
        &a.networks,
        &a.names,
        &a.out,
        a.min_share,
        a.no_stress,
        &a.solver,
        progress,
    )
}

#[allow(clippy::too_many_arguments)]
fn compare(
    plan_path: &Path,
    networks: &[PathBuf],
    names: &[String],
    out: &Path,
    min_share: f64,
    no_stress: bool,
    solver: &SolverArgs,
    progress: &Progress,
) -> Result<()> {
    anyhow::ensure!(
        networks.len() >= 2,
        "compare needs two or more networks (got one: {}); to score a single network use `driftplan assess PLAN NETWORK --out DIR`",
        networks
            .first()
            .map(|p| p.display().to_string())
            .unwrap_or_default()
    );
    anyhow::ensure!(
        names.is_empty() || names.len() == networks.len(),
        "--names gives {} names for {} networks; give one name per network, in order",
        names.len(),
        networks.len()
    );
    let mut run = export::RunFolder::begin(out, "compare")?;
    let plan = load(plan_path)?;
    run.set_plan(&plan.file, &plan.hash);
    let inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    // Under a zoned plan each file's zones are read (a file without zones: the first zone).
    let zone_names: Vec<String> = plan.zones.iter().map(|z| z.name.clone()).collect();
    let problem = pipeline::problem(&plan, &inputs);
    let mut given = Vec::new();
    let mut assignments = Vec::new();
    let mut zone_notes = Vec::new();
    let mut warnings = Vec::new();
    for (i, path) in networks.iter().enumerate() {
        let name = names.get(i).cloned().unwrap_or_else(|| file_stem(path));
        // The reader's errors already name the file.
        let read = driftplan::assess::network_input::read_plan_network(
            path,
            &inputs.grid,
            min_share,
            &zone_names,
            None,
        )?;
        if let Some(n) = read.zone_source.note(path) {
            progress.say(&format!("zones: {n}"));
            zone_notes.push((format!("zones of `{name}`"), n));
        }
        assignments.push(
            read.zones
                .clone()
                .unwrap_or_else(|| driftplan::model::zones::first_zone(&read.selected)),
        );
        warnings.extend(
            driftplan::assess::network_input::network_warnings(
                &read.selected,
                &inputs.status,
                read.largest_share,
                min_share,
            )
            .into_iter()
            .map(|w| (name.clone(), w)),
        );
        given.push((name, read.selected));
    }
    let assessments: Vec<driftplan::assess::Assessment> = given
        .iter()
        .zip(&assignments)
        .map(|((_, sel), asg)| pipeline::assess_zoned(&inputs, &problem, sel, Some(asg)).0)
        .collect();
    let named: Vec<(String, &driftplan::assess::Assessment)> = given
        .iter()
        .zip(&assessments)
        .map(|((n, _), a)| (n.clone(), a))
        .collect();
    let mut cmp = driftplan::compare::compare(&named)?;
    cmp.warnings = warnings;
    let selections: Vec<&[bool]> = given.iter().map(|(_, s)| s.as_slice()).collect();
    pipeline::push_connectivity_measures(&mut cmp, &plan, &inputs, &selections);
    let options = solve_options(&plan, solver)?;
    let assigned: Vec<(String, Vec<u8>)> = given
        .iter()
        .zip(assignments)
        .map(|((n, _), a)| (n.clone(), a))
        .collect();
    let matrix = stress_assigned(&problem, &assigned, &options, no_stress, progress)?;
    let panels = driftplan::report::NetworkPanels {
        title: "Networks side by side".into(),
        note: "One map per network, in the order given; reserves in green, excluded cells tinted, required cells outlined in blue.".into(),
        panels: given
            .iter()
            .zip(&assessments)
            .map(|((name, _), a)| driftplan::report::NetworkPanel {
                label: format!(
                    "{name}: cost {:.1}, {} of {} targets reached, {}",
                    a.cost,
                    a.targets_reached,
                    a.coverage.len(),
                    driftplan::export::words::count(a.reserves.len(), "reserve")
                ),
                reserves: a.reserves.clone(),
            })
            .collect(),
    };
    let mut facts = vec![
        ("plan".to_string(), plan.name.clone()),
        ("plan file SHA-256".to_string(), plan.hash.clone()),
    ];
    for ((name, _), path) in given.iter().zip(networks) {
        facts.push((format!("network `{name}`"), path.display().to_string()));
    }
    facts.extend(zone_notes);
    for (name, w) in &cmp.warnings {
        facts.push(("warning".to_string(), format!("{name}: {w}")));
    }
    let report = driftplan::report::compare_report_html(&driftplan::report::CompareReport {
        title: &plan.name,
        facts,
        grid: &inputs.grid,
        status: &inputs.status,
        panels,
        comparison: &cmp,
    })?;
    let mut files = vec![
        ("compare.csv", driftplan::compare::compare_csv(&cmp)),
        ("compare.json", driftplan::compare::compare_json(&cmp)),
        ("report.html", report),
    ];
    if let Some(m) = &matrix {
        files.push(("stress.csv", driftplan::study::stress::stress_csv(m)));
    }
    if !inputs.connectivity.is_empty() {
        files.push((
            "connectivity.csv",
            export::connectivity::compare_connectivity_csv(
                &inputs.grid,
                &plan.scenarios,
                &inputs.connectivity,
                &inputs.features,
                &given,
            ),
        ));
    }
    export::write_outputs(run.dir(), &files)?;
    run.finish("done")?;
    print!("{}", driftplan::compare::compare_table(&cmp));
    for (name, w) in &cmp.warnings {
        println!("warning: {name}: {w}");
    }
    if let Some(m) = &matrix {
        println!(
            "stress test (targets reached and benefit; rows: designed for, columns: evaluated in)"
        );
        println!("({})", export::BENEFIT);
        print!("{}", driftplan::study::stress::stress_table(m));
    }
    println!("outputs {}", out.display());
    super::closing_lines(out);
    Ok(())
}
