//! `driftplan sweep`: one solve per budget, the cost–benefit curve.

use super::{load_with, solve_options, stress, Progress, SolverArgs};
use anyhow::Result;
use driftplan::solve::time;
use driftplan::study::shard::{self, ShardSpec};
use driftplan::{export, pipeline};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// Arguments of `driftplan sweep`.
#[derive(clap::Args, Debug)]
pub(crate) struct Args {
    /// The plan file (TOML).
    pub(crate) plan: PathBuf,
    /// Budgets, e.g. `5%,10%,...,40%` or `0.05,0.1`.
    #[arg(long, default_value = "5%,10%,...,40%")]
    pub(crate) budgets: String,
    /// What the budgets are shares of: the region's sea `area`, or its total `cost` (the
    /// plan's cost summed over every cell; cost then never falls as the budget grows).
    #[arg(long, default_value = "area", value_parser = ["area", "cost"])]
    budget_of: String,
    /// Output folder.
    #[arg(long)]
    pub(crate) out: PathBuf,
    #[command(flatten)]
    pub(crate) solver: SolverArgs,
    /// Solve only part K of N of the sweep's jobs (every N-th of its budgets, then scenario
    /// designs) and write shard.json; `driftplan merge` joins the parts, e.g. `--shard 2/4
    /// --out study/shards/2`.
    #[arg(long, value_name = "K/N")]
    pub(crate) shard: Option<String>,
    /// Read the grid, layers and features from the inputs cache that `driftplan features PLAN
    /// --out DIR` wrote (DIR/inputs.bin) instead of the plan's files: shards of a study then
    /// do not each sample the same rasters. The cache must come from this plan file as it is
    /// now (its SHA-256 is checked).
    #[arg(long, value_name = "FILE")]
    pub(crate) inputs: Option<PathBuf>,
}

pub(crate) fn run(a: Args, progress: &Progress) -> Result<()> {
    let shares = driftplan::study::parse_budgets(&a.budgets)
        .map_err(|e| anyhow::anyhow!("--budgets: {e}"))?;
    let spec = a.shard.as_deref().map(ShardSpec::parse).transpose()?;
    let mut run = export::RunFolder::begin(&a.out, "sweep")?;
    let plan = load_with(&a.plan, &a.solver)?;
    run.set_plan(&plan.file, &plan.hash);
    let inputs = super::prepare_or_cached(&plan, a.inputs.as_deref(), progress)?;
    let problem = pipeline::problem(&plan, &inputs);
    let options = solve_options(&plan, &a.solver)?;
    let of = if a.budget_of == "cost" {
        driftplan::study::SweepBudget::Cost(inputs.cost.iter().sum())
    } else {
        driftplan::study::SweepBudget::Area(inputs.grid.sea_area_km2)
    };
    if let Some(spec) = spec {
        let arguments = arguments(&shares, &a.budget_of, &a.solver);
        return shard(
            spec, &plan, &inputs, &problem, &shares, of, arguments, &options, run, progress,
        );
    }
    progress.say(&format!(
        "sweep: {} budgets from {:.1}% to {:.1}% of {}, solved in parallel",
        shares.len(),
        100.0 * shares[0],
        100.0 * shares[shares.len() - 1],
        what(&a.budget_of)
    ));
    let bar = progress.bar(shares.len() as u64, "budgets");
    // One time limit for every solve of the command (solve::time): the budgets' share, in
    // rounds of parallel solves, up to two solves per budget; the stress test the rest.
    let clock = driftplan::solve::time::TimeBudget::start(plan.solver.time_limit_s);
    let stress_solves = problem.scenarios.len() * usize::from(problem.scenarios.len() > 1);
    let rounds = 2 * time::parallel_rounds(shares.len(), time::workers());
    let sw = driftplan::study::sweep_of(
        &problem,
        &shares,
        of,
        &clock.options(
            &options,
            time::sweep_share(shares.len(), stress_solves),
            rounds,
        ),
        &|| bar.inc(1),
    )?;
    bar.finish_and_clear();
    // Scenario-specific designs at the plan's own budget, for the frequency layer.
    let matrix = stress(
        &problem,
        &[],
        &clock.options(&options, 1.0, 1),
        false,
        progress,
    )?;
    write(&plan, &inputs, &sw, matrix.as_ref(), &a.budget_of, run)
}

/// The arguments that decide a sweep's results, as a shard records them (`study::shard`):
/// the budgets (exact), what they are shares of and the solver overrides.
fn arguments(shares: &[f64], budget_of: &str, solver: &SolverArgs) -> BTreeMap<String, String> {
    let mut m = solver_arguments(solver);
    m.insert(
        "budgets".to_string(),
        shares
            .iter()
            .map(|v| format!("{v:?}"))
            .collect::<Vec<_>>()
            .join(","),
    );
    m.insert("budget_of".to_string(), budget_of.to_string());
    m
}

/// The solver overrides of the command line as a shard records them (exact text; empty when
/// not given).
pub(crate) fn solver_arguments(solver: &SolverArgs) -> BTreeMap<String, String> {
    let exact = |v: f64| format!("{v:?}");
    BTreeMap::from([
        (
            "time_limit".to_string(),
            solver.time_limit.map(exact).unwrap_or_default(),
        ),
        ("gap".to_string(), solver.gap.map(exact).unwrap_or_default()),
        (
            "threads".to_string(),
            solver.threads.map(|t| t.to_string()).unwrap_or_default(),
        ),
    ])
}

/// The solver overrides back from a shard's arguments.
pub(crate) fn solver_from_arguments(args: &BTreeMap<String, String>) -> Result<SolverArgs> {
    fn opt<T: std::str::FromStr>(args: &BTreeMap<String, String>, k: &str) -> Result<Option<T>> {
        let v = args
            .get(k)
            .ok_or_else(|| anyhow::anyhow!("the shards record no `{k}` argument"))?;
        if v.is_empty() {
            return Ok(None);
        }
        v.parse()
            .map(Some)
            .map_err(|_| anyhow::anyhow!("the shards' `{k}` argument `{v}` is not a number"))
    }
    Ok(SolverArgs {
        time_limit: opt(args, "time_limit")?,
        gap: opt(args, "gap")?,
        threads: opt(args, "threads")?,
        solver_log: false,
    })
}

/// The sweep's `--budget-of` and solver overrides back from a shard's arguments.
pub(crate) fn from_arguments(args: &BTreeMap<String, String>) -> Result<(String, SolverArgs)> {
    let budget_of = args.get("budget_of").cloned().unwrap_or_default();
    anyhow::ensure!(
        budget_of == "area" || budget_of == "cost",
        "the shards' `budget_of` argument is `{budget_of}`, expected `area` or `cost`"
    );
    Ok((budget_of, solver_from_arguments(args)?))
}

fn what(budget_of: &str) -> &'static str {
    if budget_of == "cost" {
        "the region's total cost"
    } else {
        "the sea"
    }
}

/// One shard of the sweep: solves its budgets and designs (`study::shard`) and writes
/// `shard.json`.
#[allow(clippy::too_many_arguments)]
fn shard(
    spec: ShardSpec,
    plan: &driftplan::plan::Plan,
    inputs: &pipeline::Inputs,
    problem: &driftplan::model::Problem,
    shares: &[f64],
    of: driftplan::study::SweepBudget,
    arguments: BTreeMap<String, String>,
    options: &driftplan::solve::SolveOptions,
    run: export::RunFolder,
    progress: &Progress,
) -> Result<()> {
    let jobs = shard::sweep_jobs(shares.len(), problem.scenarios.len());
    let designs = jobs.len() - shares.len();
    spec.check(
        jobs.len(),
        &format!("{} budgets and {designs} scenario designs", shares.len()),
    )?;
    let mine = spec.jobs(jobs.len());
    let my_shares: Vec<f64> = mine
        .iter()
        .filter_map(|&j| match jobs[j] {
            shard::SweepJob::Budget(i) => Some(shares[i]),
            shard::SweepJob::Design(_) => None,
        })
        .collect();
    let my_designs: Vec<usize> = mine
        .iter()
        .filter_map(|&j| match jobs[j] {
            shard::SweepJob::Design(s) => Some(s),
            shard::SweepJob::Budget(_) => None,
        })
        .collect();
    progress.say(&format!(
        "sweep shard {}/{}: {} budget{} and {} scenario design{} of {} jobs",
        spec.k,
        spec.n,
        my_shares.len(),
        if my_shares.len() == 1 { "" } else { "s" },
        my_designs.len(),
        if my_designs.len() == 1 { "" } else { "s" },
        jobs.len()
    ));
    let bar = progress.bar(mine.len() as u64, "jobs");
    // The shard's time limit is shared among its own solves as a whole sweep shares it.
    let clock = time::TimeBudget::start(plan.solver.time_limit_s);
    let rounds = 2 * time::parallel_rounds(my_shares.len(), time::workers());
    let runs = if my_shares.is_empty() {
        Vec::new()
    } else {
        driftplan::study::sweep_of(
            problem,
            &my_shares,
            of,
            &clock.options(
                options,
                time::sweep_share(my_shares.len(), my_designs.len()),
                rounds,
            ),
            &|| bar.inc(1),
        )?
        .runs
    };
    let rows = if my_designs.is_empty() {
        Vec::new()
    } else {
        let rounds = time::parallel_rounds(my_designs.len(), time::workers());
        let o = clock.options(options, 1.0, rounds);
        driftplan::study::stress_test_part(
            problem,
            &[],
            &my_designs,
            &driftplan::solve::SolveOptions {
                progress: None,
                ..o
            },
            &|| bar.inc(1),
        )?
        .rows
    };
    bar.finish_and_clear();
    let results = mine
        .iter()
        .zip(
            runs.iter()
                .map(|r| shard::Outcome::Budget(r.into()))
                .chain(rows.iter().map(|r| shard::Outcome::Design(r.into()))),
        )
        .map(|(&job, outcome)| shard::JobResult { job, outcome })
        .collect();
    let part = shard::ShardPart {
        format: shard::FORMAT,
        study: "sweep".into(),
        arguments,
        plan: absolute(&plan.file),
        plan_sha256: plan.hash.clone(),
        shard: spec.k,
        shards: spec.n,
        jobs: jobs.len(),
        cells: inputs.grid.len(),
        base: None,
        results,
    };
    export::write_outputs(run.dir(), &[(shard::SHARD_FILE, part.to_json())])?;
    let out = run.out().to_path_buf();
    run.finish("done")?;
    println!(
        "shard {}/{}: {} of {} jobs solved; outputs {} (join the shards with `driftplan merge`)",
        spec.k,
        spec.n,
        mine.len(),
        jobs.len(),
        out.display()
    );
    Ok(())
}

/// The plan file's absolute path (as given when it cannot be resolved).
pub(crate) fn absolute(p: &Path) -> String {
    std::fs::canonicalize(p)
        .unwrap_or_else(|_| p.to_path_buf())
        .display()
        .to_string()
}

/// Writes a sweep's outputs into `run` and prints its table: the one-machine run and the merge
/// of its shards both end here, so their outputs are the same bytes.
pub(crate) fn write(
    plan: &driftplan::plan::Plan,
    inputs: &pipeline::Inputs,
    sw: &driftplan::study::Sweep,
    matrix: Option<&driftplan::study::StressMatrix>,
    budget_of: &str,
    run: export::RunFolder,
) -> Result<()> {
    let what = what(budget_of);
    let out = run.out().to_path_buf();
    let n = inputs.grid.len();
    let freq = driftplan::study::frequency::SweepFrequency::new(n, sw, matrix);
    let f_all = &freq.all;
    let layers = freq.layers();
    let core = f_all.core();
    let empty = driftplan::features::FeatureTable::default();
    // The report maps the largest budget's network, with the selection share beside it, and
    // every budget's network side by side; each is also written to networks/.
    let largest = &sw.runs[sw.runs.len() - 1];
    let shown = pipeline::assess_network(inputs, &largest.solution.selected);
    let per_budget: Vec<driftplan::assess::Assessment> = sw
        .runs
        .iter()
        .map(|r| pipeline::assess_network(inputs, &r.solution.selected))
        .collect();
    let mut network_files = Vec::new();
    for (r, a) in sw.runs.iter().zip(&per_budget) {
        network_files.push((
            format!("{}.geojson", driftplan::study::sweep::budget_stem(r.share)),
            export::geojson::network_geojson(&inputs.grid, a)?,
        ));
    }
    let panels = driftplan::report::NetworkPanels {
        title: "Network at each budget".into(),
        note: "One map per budget of the sweep (also written as networks/budget-<share>pct.geojson); reserves in green, excluded cells tinted, required cells outlined in blue.".into(),
        panels: sw
            .runs
            .iter()
            .zip(&per_budget)
            .map(|(r, a)| driftplan::report::NetworkPanel {
                label: format!(
                    "budget {:.1}%: cost {:.1}, {} of {} targets reached, {} reserves",
                    100.0 * r.share,
                    r.cost,
                    r.targets_reached,
                    r.reached.len(),
                    a.reserves.len()
                ),
                reserves: a.reserves.clone(),
            })
            .collect(),
    };
    let files = vec![
        ("sweep.csv", driftplan::study::sweep::sweep_csv(sw)),
        (
            "first-reached.csv",
            driftplan::study::sweep::first_reached_csv(sw),
        ),
        (
            "selection-frequency.csv",
            driftplan::study::frequency::frequency_csv(f_all),
        ),
        (
            "selection-frequency.geojson",
            export::geojson::cells_geojson_with_text(
                &inputs.grid,
                &layers,
                &[export::geojson::TextLayer {
                    name: "class".into(),
                    values: f_all.classes(),
                }],
                &empty,
                &core,
                None,
            )?,
        ),
        (
            "report.html",
            pipeline::report_html(
                plan,
                inputs,
                &largest.solution.selected,
                &shown,
                pipeline::ReportExtras {
                    solution: Some(&largest.solution),
                    stress: matrix,
                    sweep: Some(sw),
                    facts: vec![
                        (
                            "network shown".into(),
                            format!(
                                "the largest budget, {:.1}% of {what}",
                                100.0 * largest.share
                            ),
                        ),
                        (
                            "robust core".into(),
                            format!(
                                "{} cells chosen in all {} networks (sweep and scenario designs)",
                                core.iter().filter(|c| **c).count(),
                                f_all.networks
                            ),
                        ),
                    ],
                    maps: vec![
                        (
                            "selection share (sweep and scenario designs)".into(),
                            f_all.share.clone(),
                        ),
                        (
                            "selection class (0 never · 1 occasional · 2 frequent · 3 core)".into(),
                            f_all.class_codes(),
                        ),
                    ],
                    panels: Some(panels),
                },
            )?,
        ),
    ];
    let network_files: Vec<(&str, String)> = network_files
        .iter()
        .map(|(n, t)| (n.as_str(), t.clone()))
        .collect();
    export::write_outputs(&run.dir().join("networks"), &network_files)?;
    export::write_outputs(run.dir(), &files)?;
    run.finish("done")?;
    println!(
        "{:>8} {:>10} {:>12} {:>9}  {:<10} gap",
        "budget", "cost", "objective", "targets", "status"
    );
    for r in &sw.runs {
        println!(
            "{:>7.1}% {:>10.1} {:>12.4} {:>4}/{:<4}  {:<10} {}",
            100.0 * r.share,
            r.cost,
            r.solution.objective,
            r.targets_reached,
            r.reached.len(),
            r.solution.status.as_str(),
            driftplan::solve::progress::gap_percent(r.solution.gap)
        );
    }
    let solvers = sw.runs.iter().map(|r| r.solution.solver.as_str());
    if let Some(line) = driftplan::study::methods_line(solvers) {
        println!("{line}");
    }
    for r in &sw.runs {
        for w in driftplan::solve::warnings(&r.solution) {
            println!("warning: budget {:.1}%: {w}", 100.0 * r.share);
        }
    }
    for (a, b) in sw.cost_falls() {
        println!(
            "note: cost falls from {:.1} at {:.1}% to {:.1} at {:.1}%: the larger area budget admits a cheaper network of at least the same benefit (the plan's cost is not area; `--budget-of cost` measures budgets in cost, where cost cannot fall)",
            sw.runs[a].cost,
            100.0 * sw.runs[a].share,
            sw.runs[b].cost,
            100.0 * sw.runs[b].share
        );
    }
    println!(
        "robust core: {} cells chosen in all {} networks (the report maps it); outputs {}",
        core.iter().filter(|c| **c).count(),
        f_all.networks,
        out.display()
    );
    super::closing_lines(&out);
    Ok(())
}
