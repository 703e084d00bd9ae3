//! `driftplan compare`: several networks side by side.

use super::{file_stem, load, read_network, solve_options, stress, Progress, SolverArgs};
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
    let mut given = Vec::new();
    let mut warnings = Vec::new();
    for (i, path) in networks.iter().enumerate() {
        let name = names.get(i).cloned().unwrap_or_else(|| file_stem(path));
        let network = read_network(path, &inputs, min_share)?;
        warnings.extend(network.warnings.into_iter().map(|w| (name.clone(), w)));
        given.push((name, network.selected));
    }
    let assessments: Vec<driftplan::assess::Assessment> = given
        .iter()
        .map(|(_, sel)| pipeline::assess_network(&inputs, sel))
        .collect();
    let named: Vec<(String, &driftplan::assess::Assessment)> = given
        .iter()
        .zip(&assessments)
        .map(|((n, _), a)| (n.clone(), a))
        .collect();
    let mut cmp = driftplan::compare::compare(&named)?;
    cmp.warnings = warnings;
    let problem = pipeline::problem(&plan, &inputs);
    let options = solve_options(&plan, solver)?;
    let matrix = stress(&problem, &given, &options, no_stress, progress)?;
    let panels = driftplan::report::NetworkPanels {
        title: "Networks side by side".into(),
        note: "One map per network, in the order given; reserves in green, excluded cells tinted, required cells outlined in blue.".into(),
        panels: given
            .iter()
            .zip(&assessments)
            .map(|((name, _), a)| driftplan::report::NetworkPanel {
                label: format!(
                    "{name}: cost {:.1}, {} of {} targets reached, {} reserves",
                    a.cost,
                    a.targets_reached,
                    a.coverage.len(),
                    a.reserves.len()
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
    println!("{}", export::CAUTION);
    Ok(())
}
