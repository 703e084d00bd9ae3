//! `driftplan portfolio`: several near-optimal networks, as different from each other as the
//! allowed share of the optimum lets them be.

use super::{load_with, solve_options, Progress, SolverArgs};
use anyhow::Result;
use driftplan::{export, pipeline};
use std::path::PathBuf;

/// Arguments of `driftplan portfolio`.
#[derive(clap::Args, Debug)]
pub(crate) struct Args {
    /// The plan file (TOML).
    plan: PathBuf,
    /// Members wanted, the optimum included.
    #[arg(long, default_value_t = 5)]
    count: usize,
    /// How far from the optimum's objective a member may be, e.g. `5%` or `0.05`.
    #[arg(long, default_value = "5%")]
    within: String,
    /// Fewest cells in which each member differs from each earlier one.
    #[arg(long, default_value_t = 1, value_name = "CELLS")]
    min_difference: usize,
    /// Output folder.
    #[arg(long)]
    out: PathBuf,
    #[command(flatten)]
    solver: SolverArgs,
}

/// `5%` or `0.05` as a share ≥ 0.
pub(crate) fn parse_share(text: &str, flag: &str) -> Result<f64> {
    let t = text.trim();
    let v = match t.strip_suffix('%') {
        Some(n) => n.trim().parse::<f64>().map(|v| v / 100.0),
        None => t.parse::<f64>(),
    };
    match v {
        Ok(v) if v.is_finite() && v >= 0.0 => Ok(v),
        _ => anyhow::bail!("{flag}: `{text}` is not a share; expected e.g. `5%` or `0.05`"),
    }
}

pub(crate) fn run(a: Args, progress: &Progress) -> Result<()> {
    let within = parse_share(&a.within, "--within")?;
    anyhow::ensure!(a.count >= 1, "--count must be at least 1");
    let mut run = export::RunFolder::begin(&a.out, "portfolio")?;
    let plan = load_with(&a.plan, &a.solver)?;
    run.set_plan(&plan.file, &plan.hash);
    let inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    let problem = pipeline::problem(&plan, &inputs);
    // Members are solved one after the other; each gets an equal part of the time.
    let mut options = solve_options(&plan, &a.solver)?;
    options.time_limit_s = options.time_limit_s.map(|t| t / a.count as f64);
    progress.say(&format!(
        "portfolio: up to {} networks within {:.1}% of the optimum, each differing from the \
         others in at least {} cell{}",
        a.count,
        100.0 * within,
        a.min_difference,
        if a.min_difference == 1 { "" } else { "s" }
    ));
    let bar = progress.bar(a.count as u64, "members");
    let pf = driftplan::study::portfolio(
        &problem,
        a.count,
        within,
        a.min_difference,
        &options,
        &|_| bar.inc(1),
    )?;
    bar.finish_and_clear();
    let (assessed, zone_shares): (Vec<driftplan::assess::Assessment>, Vec<_>) = pf
        .members
        .iter()
        .map(|m| pipeline::assess_solution(&inputs, &problem, &m.solution))
        .unzip();
    let names: Vec<String> = (1..=pf.members.len())
        .map(|k| format!("member-{k}"))
        .collect();
    let comparison = driftplan::compare::compare(
        &names
            .iter()
            .cloned()
            .zip(assessed.iter())
            .collect::<Vec<_>>(),
    );
    let share = pf.selection_share();
    let mut files: Vec<(String, String)> = vec![
        (
            "portfolio.csv".into(),
            driftplan::study::portfolio::portfolio_csv(&pf, &problem),
        ),
        (
            "selection-share.geojson".into(),
            export::geojson::cells_geojson_with_text(
                &inputs.grid,
                &[driftplan::layers::Layer {
                    name: "selection_share".into(),
                    values: share.clone(),
                }],
                &[],
                &driftplan::features::FeatureTable::default(),
                &pf.members[0].solution.selected,
                None,
            )?,
        ),
    ];
    if let Ok(c) = &comparison {
        files.push(("compare.csv".into(), driftplan::compare::compare_csv(c)));
    }
    let panels = driftplan::report::NetworkPanels {
        title: "Portfolio members".into(),
        note: format!(
            "Each member is within {:.1}% of the optimum's objective and meets every rule of the plan; member 1 is the optimum (also written as networks/member-<k>.geojson).",
            100.0 * within
        ),
        panels: pf
            .members
            .iter()
            .zip(&assessed)
            .enumerate()
            .map(|(k, (m, a))| driftplan::report::NetworkPanel {
                label: format!(
                    "member {}: objective {:.2}, cost {:.1}, {} reserve{}",
                    k + 1,
                    m.objective,
                    a.cost,
                    a.reserves.len(),
                    if a.reserves.len() == 1 { "" } else { "s" }
                ),
                reserves: a.reserves.clone(),
            })
            .collect(),
    };
    let jaccard = pf.mean_jaccard();
    files.push((
        "report.html".into(),
        pipeline::report_html(
            &plan,
            &inputs,
            &pf.members[0].solution.selected,
            &assessed[0],
            pipeline::ReportExtras {
                solution: Some(&pf.members[0].solution),
                facts: vec![
                    ("network shown".into(), "member 1, the optimum".into()),
                    (
                        "portfolio".into(),
                        format!(
                            "{} of {} members found within {:.1}% of the optimum; mean pairwise Jaccard distance {}",
                            pf.members.len(),
                            pf.asked,
                            100.0 * within,
                            if jaccard.is_nan() { "n/a".into() } else { format!("{jaccard:.3}") }
                        ),
                    ),
                ],
                maps: vec![("share of portfolio members choosing the cell".into(), share)],
                panels: Some(panels),
                ..Default::default()
            },
        )?,
    ));
    let mut networks = Vec::new();
    for (k, ((a, shares), m)) in assessed
        .iter()
        .zip(&zone_shares)
        .zip(&pf.members)
        .enumerate()
    {
        networks.push((
            format!("member-{}.geojson", k + 1),
            match (&m.solution.zones, shares) {
                (Some(asg), Some(s)) => export::network_geojson_zoned(&inputs.grid, a, asg, s)?,
                _ => export::geojson::network_geojson(&inputs.grid, a)?,
            },
        ));
    }
    let net_refs: Vec<(&str, String)> = networks
        .iter()
        .map(|(n, t)| (n.as_str(), t.clone()))
        .collect();
    export::write_outputs(&run.dir().join("networks"), &net_refs)?;
    let file_refs: Vec<(&str, String)> =
        files.iter().map(|(n, t)| (n.as_str(), t.clone())).collect();
    export::write_outputs(run.dir(), &file_refs)?;
    run.finish("done")?;
    println!(
        "{:<10} {:>12} {:>10} {:>6}  differs",
        "member", "objective", "cost", "cells"
    );
    for (k, (m, ass)) in pf.members.iter().zip(&assessed).enumerate() {
        println!(
            "{:<10} {:>12.4} {:>10.1} {:>6}  {}",
            format!("member-{}", k + 1),
            m.objective,
            ass.cost,
            m.solution.selected.iter().filter(|s| **s).count(),
            m.differs_from_earlier
                .iter()
                .min()
                .map(|d| format!("≥ {d} cells from each earlier member"))
                .unwrap_or_else(|| "the optimum".into())
        );
    }
    let solvers = pf.members.iter().map(|m| m.solution.solver.as_str());
    if let Some(line) = driftplan::study::methods_line(solvers) {
        println!("{line}");
    }
    if pf.members.len() < pf.asked {
        println!(
            "note: only {} of {} members exist: no further network within {:.1}% of the optimum differs from those found in at least {} cell{}",
            pf.members.len(),
            pf.asked,
            100.0 * within,
            a.min_difference,
            if a.min_difference == 1 { "" } else { "s" }
        );
    }
    if !jaccard.is_nan() {
        println!("diversity: mean pairwise Jaccard distance {jaccard:.3} (0 = identical, 1 = no cell shared)");
    }
    println!("outputs {}", a.out.display());
    super::closing_lines(&a.out);
    Ok(())
}
