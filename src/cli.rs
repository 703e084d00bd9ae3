//! Command definitions (clap) and handlers. Handlers parse, call the library and print; the
//! work itself lives in the library.

use anyhow::{Context, Result};
use clap::{Parser, Subcommand};
use driftplan::export;
use driftplan::pipeline::{self, Inputs};
use driftplan::plan::Plan;
use driftplan::solve::Solution;
use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::time::Instant;

/// Plan marine protected area networks that keep protecting species as their ranges shift
/// poleward under several warming scenarios.
///
/// Results are decision support built on projections with large uncertainty; siting
/// decisions rest with the planning authority, local law and consultation with those who use
/// the sea.
#[derive(Parser, Debug)]
#[command(name = "driftplan", version, about, long_about)]
pub struct Args {
    /// Print no progress messages.
    #[arg(long, short, global = true)]
    quiet: bool,
    /// What to do.
    #[command(subcommand)]
    command: Command,
}

/// Solver settings that override the plan's `[solver]` table.
#[derive(clap::Args, Debug, Clone, Default)]
struct SolverArgs {
    /// Stop after this many seconds and return the best network found (overrides the plan).
    #[arg(long, value_name = "SECONDS")]
    time_limit: Option<f64>,
    /// Stop when the proven relative gap is at most this, e.g. 0.01 for 1% (overrides the plan).
    #[arg(long, value_name = "SHARE")]
    gap: Option<f64>,
    /// Solver threads (overrides the plan).
    #[arg(long, value_name = "N")]
    threads: Option<u32>,
    /// Show the solver's own log on stderr.
    #[arg(long)]
    solver_log: bool,
}

#[derive(Subcommand, Debug)]
enum Command {
    /// Write the invented demo region (Merrow Coast) and its plan, then solve it.
    ///
    /// Writes DIR/demo-data/ and DIR/scenarios/demo.toml (the same files as the repository's
    /// demo-data/ and scenarios/demo.toml), then runs `solve` on that plan into DIR.
    Demo {
        /// Output folder.
        #[arg(long, default_value = "out/demo")]
        out: PathBuf,
        /// Only write the demo data and plan; do not solve.
        #[arg(long)]
        data_only: bool,
        #[command(flatten)]
        solver: SolverArgs,
    },
    /// Validate a plan file and every input it names; report every problem found.
    Check {
        /// The plan file (TOML).
        plan: PathBuf,
    },
    /// Build the equal-area grid and write it (grid.geojson, grid.csv).
    Grid {
        /// The plan file (TOML).
        plan: PathBuf,
        /// Output folder.
        #[arg(long)]
        out: PathBuf,
    },
    /// Build grid, layers and features and write them for inspection (cells.geojson, cells.csv).
    Features {
        /// The plan file (TOML).
        plan: PathBuf,
        /// Output folder.
        #[arg(long)]
        out: PathBuf,
    },
    /// Scaling benchmark: synthetic regions, time and peak memory of each stage.
    ///
    /// Builds a square synthetic region near 40°S (2 km cells, a land block in the middle),
    /// synthetic species bands that move south with warming (3 scenarios × 4 years), and runs
    /// grid → layers → features → model → solve → assess → export on it.
    Bench {
        /// Approximate cell counts to run, comma-separated.
        #[arg(long, value_delimiter = ',', default_value = "10000,100000")]
        cells: Vec<usize>,
        /// Species per region (each gives 12 features).
        #[arg(long, default_value_t = 10)]
        species: usize,
        /// Solver time limit per run. Units: s.
        #[arg(long, default_value_t = 120.0)]
        time_limit: f64,
        /// Solver relative gap.
        #[arg(long, default_value_t = 0.01)]
        gap: f64,
        /// Edge-penalty weight per km of exposed reserve edge (off when not given).
        #[arg(long, value_name = "WEIGHT")]
        edge_penalty: Option<f64>,
        /// Also run the greedy and simulated-annealing baselines (annealing gets the time
        /// HiGHS took), to show what the exact solve buys.
        #[arg(long)]
        baselines: bool,
        /// Skip HiGHS: run only the baselines (annealing gets the time limit).
        #[arg(long)]
        no_exact: bool,
    },
    /// The whole run: grid → features → optimise → assess → export.
    ///
    /// Writes network.geojson, cells.geojson, cells.csv, coverage.csv, summary.json,
    /// stress.csv (each scenario solved alone and the network scored in every scenario) and
    /// report.html.
    Solve {
        /// The plan file (TOML).
        plan: PathBuf,
        /// Output folder.
        #[arg(long)]
        out: PathBuf,
        #[command(flatten)]
        solver: SolverArgs,
        /// Skip the scenario stress test (one extra solve per scenario).
        #[arg(long)]
        no_stress: bool,
    },
    /// Score a given network (GeoJSON polygons or a CSV of cell ids) under the plan.
    ///
    /// Writes coverage.csv, reserves.csv, assessment.json (every measure), network.geojson
    /// (the chosen cells dissolved into reserves), stress.csv and report.html.
    Assess {
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
    },
    /// Assess several networks side by side: a table, compare.csv, compare.json, stress.csv.
    Compare {
        /// The plan file (TOML).
        plan: PathBuf,
        /// Two or more networks (GeoJSON polygons or cell-id CSV).
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
    },
    /// One max-benefit solve per budget: the cost–benefit curve, the budget at which each
    /// target is first met, and how often each cell is chosen.
    ///
    /// Writes sweep.csv, first-met.csv, selection-frequency.csv, selection-frequency.geojson
    /// and report.html. Budgets are shares of the region's sea area; `...` continues an even
    /// step (`5%,10%,...,40%`).
    Sweep {
        /// The plan file (TOML).
        plan: PathBuf,
        /// Budgets, e.g. `5%,10%,...,40%` or `0.05,0.1`.
        #[arg(long, default_value = "5%,10%,...,40%")]
        budgets: String,
        /// Output folder.
        #[arg(long)]
        out: PathBuf,
        #[command(flatten)]
        solver: SolverArgs,
    },
}

/// Prints progress lines on stderr unless quiet; stays quiet when stderr is not a terminal
/// only if asked to (plain lines are harmless in logs).
struct Progress {
    quiet: bool,
    start: Instant,
}

impl Progress {
    /// Bars and spinners only on a terminal, and never with `--quiet`.
    fn shows_bars(&self) -> bool {
        !self.quiet && std::io::stderr().is_terminal()
    }

    /// A progress bar on stderr, hidden with `--quiet` or when stderr is not a terminal.
    fn bar(&self, len: u64, what: &str) -> indicatif::ProgressBar {
        if !self.shows_bars() {
            return indicatif::ProgressBar::hidden();
        }
        let bar = indicatif::ProgressBar::new(len);
        bar.set_style(
            indicatif::ProgressStyle::with_template("{bar:30} {pos}/{len} {msg} ({elapsed})")
                .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
        );
        bar.set_message(what.to_string());
        bar
    }

    /// A spinner for one long step, hidden like [`Progress::bar`].
    fn spinner(&self, what: &str) -> indicatif::ProgressBar {
        if !self.shows_bars() {
            return indicatif::ProgressBar::hidden();
        }
        let s = indicatif::ProgressBar::new_spinner();
        s.set_message(what.to_string());
        s.enable_steady_tick(std::time::Duration::from_millis(200));
        s
    }

    fn new(quiet: bool) -> Progress {
        Progress {
            quiet,
            start: Instant::now(),
        }
    }
    fn say(&self, msg: &str) {
        if !self.quiet {
            let t = self.start.elapsed().as_secs_f64();
            if std::io::stderr().is_terminal() {
                eprintln!("\x1b[2m[{t:6.1}s]\x1b[0m {msg}");
            } else {
                eprintln!("[{t:6.1}s] {msg}");
            }
        }
    }
}

/// Runs one command.
pub fn run(args: Args) -> Result<()> {
    let progress = Progress::new(args.quiet);
    match args.command {
        Command::Demo {
            out,
            data_only,
            solver,
        } => {
            let plan_path = driftplan::demo::write(&out)
                .with_context(|| format!("writing the demo files under {}", out.display()))?;
            progress.say(&format!(
                "wrote the invented Merrow Coast demo data and plan {}",
                plan_path.display()
            ));
            if data_only {
                return Ok(());
            }
            solve(&plan_path, &out, &solver, false, &progress)
        }
        Command::Check { plan } => check(&plan, &progress),
        Command::Grid { plan, out } => {
            let plan = load(&plan)?;
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
                    export::cells_geojson(&grid, &[], &empty, &none)?,
                ),
                ("grid.csv", export::cells_csv(&grid, &[], &empty, &none)?),
            ];
            export::write_outputs(&out, &files)?;
            progress.say(&format!(
                "wrote grid.geojson and grid.csv to {}",
                out.display()
            ));
            Ok(())
        }
        Command::Features { plan, out } => {
            let plan = load(&plan)?;
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
                    )?,
                ),
                (
                    "cells.csv",
                    export::cells_csv(&inputs.grid, &inputs.layers, &inputs.features, &none)?,
                ),
                ("features.csv", export::features_csv(&inputs.features)?),
                (
                    "edge-shifts.csv",
                    export::edge_shifts_csv(&inputs.edge_shifts)?,
                ),
            ];
            export::write_outputs(&out, &files)?;
            progress.say(&format!(
                "wrote cells.geojson, cells.csv and features.csv to {}",
                out.display()
            ));
            Ok(())
        }
        Command::Solve {
            plan,
            out,
            solver,
            no_stress,
        } => solve(&plan, &out, &solver, no_stress, &progress),
        Command::Assess {
            plan,
            network,
            out,
            min_share,
            no_stress,
            solver,
        } => assess(
            &plan, &network, &out, min_share, no_stress, &solver, &progress,
        ),
        Command::Compare {
            plan,
            networks,
            out,
            names,
            min_share,
            no_stress,
            solver,
        } => compare(
            &plan, &networks, &names, &out, min_share, no_stress, &solver, &progress,
        ),
        Command::Sweep {
            plan,
            budgets,
            out,
            solver,
        } => sweep(&plan, &budgets, &out, &solver, &progress),
        Command::Bench {
            cells,
            species,
            time_limit,
            gap,
            edge_penalty,
            baselines,
            no_exact,
        } => {
            println!(
                "{:>9}  {:<24} {:>9} {:>10}  note",
                "cells", "stage", "seconds", "peak MiB"
            );
            for n in cells {
                anyhow::ensure!(n >= 100, "--cells values must be at least 100, got {n}");
                let spec = driftplan::bench::BenchSpec {
                    cells: n,
                    species,
                    time_limit_s: time_limit,
                    gap,
                    edge_penalty,
                    baselines,
                    exact: !no_exact,
                };
                for f in driftplan::bench::run(&spec, &|m| progress.say(m))? {
                    println!(
                        "{n:>9}  {:<24} {:>9.2} {:>10.1}  {}",
                        f.stage, f.seconds, f.peak_mib, f.note
                    );
                }
            }
            Ok(())
        }
    }
}

fn load(path: &Path) -> Result<Plan> {
    Ok(Plan::load(path)?)
}

fn check(path: &Path, progress: &Progress) -> Result<()> {
    let plan = load(path)?;
    progress.say("plan file is valid; reading every input");
    let inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    println!(
        "{}: OK — {} cells, {} features ({} species × {} scenarios × {} years), {} required and {} excluded cells",
        path.display(),
        inputs.grid.len(),
        inputs.features.features.len(),
        plan.species.len(),
        plan.scenarios.len(),
        plan.years.len(),
        inputs.status.iter().filter(|s| **s == driftplan::model::CellStatus::Required).count(),
        inputs.status.iter().filter(|s| **s == driftplan::model::CellStatus::Excluded).count(),
    );
    Ok(())
}

/// Solver options from the plan with the command line's overrides.
fn solve_options(plan: &Plan, solver: &SolverArgs) -> Result<driftplan::solve::SolveOptions> {
    let mut options = pipeline::solve_options(plan);
    if let Some(t) = solver.time_limit {
        anyhow::ensure!(
            t.is_finite() && t > 0.0,
            "--time-limit must be a positive number of seconds, got {t}"
        );
        options.time_limit_s = Some(t);
    }
    if let Some(g) = solver.gap {
        anyhow::ensure!(
            g.is_finite() && (0.0..1.0).contains(&g),
            "--gap must be in [0, 1), e.g. 0.01 for 1%; got {g}"
        );
        options.rel_gap = g;
    }
    if let Some(n) = solver.threads {
        anyhow::ensure!(n > 0, "--threads must be at least 1");
        options.threads = Some(n);
    }
    options.verbose = solver.solver_log;
    Ok(options)
}

/// The stress test with a progress bar (skipped with one scenario or when asked).
fn stress(
    problem: &driftplan::model::Problem,
    given: &[(String, Vec<bool>)],
    options: &driftplan::solve::SolveOptions,
    skip: bool,
    progress: &Progress,
) -> Result<Option<driftplan::study::StressMatrix>> {
    if skip || problem.scenarios.len() < 2 {
        return Ok(None);
    }
    progress.say(&format!(
        "stress test: solving each of {} scenarios alone",
        problem.scenarios.len()
    ));
    let bar = progress.bar(problem.scenarios.len() as u64, "scenario solves");
    let m = driftplan::study::stress_test(problem, given, options, &|| bar.inc(1))?;
    bar.finish_and_clear();
    Ok(Some(m))
}

fn solve(
    plan_path: &Path,
    out: &Path,
    solver: &SolverArgs,
    no_stress: bool,
    progress: &Progress,
) -> Result<()> {
    let plan = load(plan_path)?;
    let inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    let mut problem = pipeline::problem(&plan, &inputs);
    let options = solve_options(&plan, solver)?;
    progress.say(&format!(
        "optimising with HiGHS: {} cells, {} feature targets{}",
        problem.n_cells(),
        problem.features.len(),
        options
            .time_limit_s
            .map(|t| format!(", time limit {t} s"))
            .unwrap_or_default()
    ));
    let spinner = progress.spinner("solving");
    let solution = pipeline::optimise(&problem, &options)?;
    spinner.finish_and_clear();
    let assessment = pipeline::assess_network(&inputs, &solution.selected);
    problem.scenario_best = solution.scenario_best.clone();
    let label = if problem.scenarios.len() > 1 {
        format!("robust ({})", plan.robustness.as_str())
    } else {
        "plan".to_string()
    };
    let matrix = stress(
        &problem,
        &[(label, solution.selected.clone())],
        &options,
        no_stress,
        progress,
    )?;
    write_solution(&plan, &inputs, &solution, &assessment, out)?;
    let mut files = vec![(
        "report.html",
        pipeline::report_html(
            &plan,
            &inputs,
            &solution.selected,
            &assessment,
            pipeline::ReportExtras {
                solution: Some(&solution),
                stress: matrix.as_ref(),
                ..Default::default()
            },
        )?,
    )];
    if let Some(m) = &matrix {
        files.push(("stress.csv", driftplan::study::stress::stress_csv(m)));
    }
    export::write_outputs(out, &files)?;
    print_summary(&plan, &inputs, &solution, &assessment, out);
    if let Some(m) = &matrix {
        println!(
            "  stress test (targets met and benefit; rows: designed for, columns: evaluated in)"
        );
        for line in driftplan::study::stress::stress_table(m).lines() {
            println!("    {line}");
        }
    }
    Ok(())
}

/// Reads a network file into one flag per cell.
fn read_network(path: &Path, inputs: &Inputs, min_share: f64) -> Result<Vec<bool>> {
    Ok(driftplan::assess::network_input::read_network(
        path,
        &inputs.grid,
        min_share,
    )?)
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
    let plan = load(plan_path)?;
    let inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    let selected = read_network(network, &inputs, min_share)?;
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
    let cmp = driftplan::compare::compare(&[(name.clone(), &a)])?;
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
                    facts: vec![("network".into(), network.display().to_string())],
                    ..Default::default()
                },
            )?,
        ),
    ];
    if let Some(m) = &matrix {
        files.push(("stress.csv", driftplan::study::stress::stress_csv(m)));
    }
    export::write_outputs(out, &files)?;
    println!(
        "{name}: {} cells, cost {:.1}, {:.0} km² ({:.1}% of the sea), {} reserves, {} of {} targets met",
        a.cells_selected,
        a.cost,
        a.area_km2,
        100.0 * a.share_of_region,
        a.reserves.len(),
        a.targets_met,
        a.coverage.len()
    );
    if let Some(m) = &matrix {
        print!("{}", driftplan::study::stress::stress_table(m));
    }
    println!("  outputs {}", out.display());
    println!("{}", export::CAUTION);
    Ok(())
}

fn file_stem(p: &Path) -> String {
    p.file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| p.display().to_string())
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
        names.is_empty() || names.len() == networks.len(),
        "--names gives {} names for {} networks; give one name per network, in order",
        names.len(),
        networks.len()
    );
    let plan = load(plan_path)?;
    let inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    let mut given = Vec::new();
    for (i, path) in networks.iter().enumerate() {
        let name = names.get(i).cloned().unwrap_or_else(|| file_stem(path));
        given.push((name, read_network(path, &inputs, min_share)?));
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
    let cmp = driftplan::compare::compare(&named)?;
    let problem = pipeline::problem(&plan, &inputs);
    let options = solve_options(&plan, solver)?;
    let matrix = stress(&problem, &given, &options, no_stress, progress)?;
    let mut files = vec![
        ("compare.csv", driftplan::compare::compare_csv(&cmp)),
        ("compare.json", driftplan::compare::compare_json(&cmp)),
    ];
    if let Some(m) = &matrix {
        files.push(("stress.csv", driftplan::study::stress::stress_csv(m)));
    }
    export::write_outputs(out, &files)?;
    print!("{}", driftplan::compare::compare_table(&cmp));
    if let Some(m) = &matrix {
        println!(
            "stress test (targets met and benefit; rows: designed for, columns: evaluated in)"
        );
        print!("{}", driftplan::study::stress::stress_table(m));
    }
    println!("outputs {}", out.display());
    println!("{}", export::CAUTION);
    Ok(())
}

fn sweep(
    plan_path: &Path,
    budgets: &str,
    out: &Path,
    solver: &SolverArgs,
    progress: &Progress,
) -> Result<()> {
    let shares =
        driftplan::study::parse_budgets(budgets).map_err(|e| anyhow::anyhow!("--budgets: {e}"))?;
    let plan = load(plan_path)?;
    let inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    let problem = pipeline::problem(&plan, &inputs);
    let options = solve_options(&plan, solver)?;
    progress.say(&format!(
        "sweep: {} budgets from {:.1}% to {:.1}% of the sea, solved in parallel",
        shares.len(),
        100.0 * shares[0],
        100.0 * shares[shares.len() - 1]
    ));
    let bar = progress.bar(shares.len() as u64, "budgets");
    let sw = driftplan::study::sweep(
        &problem,
        &shares,
        inputs.grid.sea_area_km2,
        &options,
        &|| bar.inc(1),
    )?;
    bar.finish_and_clear();
    // Scenario-specific designs at the plan's own budget, for the frequency layer.
    let matrix = stress(&problem, &[], &options, false, progress)?;
    let n = inputs.grid.len();
    let freq = driftplan::study::frequency::SweepFrequency::new(n, &sw, matrix.as_ref());
    let f_all = &freq.all;
    let layers = freq.layers();
    let core = f_all.core();
    let empty = driftplan::features::FeatureTable::default();
    // The report maps the largest budget's network, with the selection share beside it.
    let largest = &sw.runs[sw.runs.len() - 1];
    let shown = pipeline::assess_network(&inputs, &largest.solution.selected);
    let files = vec![
        ("sweep.csv", driftplan::study::sweep::sweep_csv(&sw)),
        ("first-met.csv", driftplan::study::sweep::first_met_csv(&sw)),
        (
            "selection-frequency.csv",
            driftplan::study::frequency::frequency_csv(f_all),
        ),
        (
            "selection-frequency.geojson",
            export::geojson::cells_geojson(&inputs.grid, &layers, &empty, &core)?,
        ),
        (
            "report.html",
            pipeline::report_html(
                &plan,
                &inputs,
                &largest.solution.selected,
                &shown,
                pipeline::ReportExtras {
                    solution: Some(&largest.solution),
                    stress: matrix.as_ref(),
                    sweep: Some(&sw),
                    facts: vec![
                        (
                            "network shown".into(),
                            format!(
                                "the largest budget, {:.1}% of the sea",
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
                    maps: vec![(
                        "selection share (sweep and scenario designs)".into(),
                        f_all.share.clone(),
                    )],
                },
            )?,
        ),
    ];
    export::write_outputs(out, &files)?;
    println!(
        "{:>8} {:>10} {:>12} {:>9}  {:<10} gap",
        "budget", "cost", "objective", "targets", "status"
    );
    for r in &sw.runs {
        println!(
            "{:>7.1}% {:>10.1} {:>12.4} {:>4}/{:<4}  {:<10} {:.3}%",
            100.0 * r.share,
            r.cost,
            r.solution.objective,
            r.targets_met,
            r.met.len(),
            r.solution.status.as_str(),
            100.0 * r.solution.gap
        );
    }
    println!(
        "robust core: {} cells chosen in all {} networks (the report maps it); outputs {}",
        core.iter().filter(|c| **c).count(),
        f_all.networks,
        out.display()
    );
    println!("{}", export::CAUTION);
    Ok(())
}

fn write_solution(
    plan: &Plan,
    inputs: &Inputs,
    solution: &Solution,
    assessment: &driftplan::assess::Assessment,
    out: &Path,
) -> Result<()> {
    let summary = export::Summary::new(
        &plan.name,
        &plan.hash,
        solution,
        assessment,
        inputs.grid.len(),
    );
    let files = vec![
        (
            "network.geojson",
            export::geojson::network_geojson(&inputs.grid, assessment)?,
        ),
        (
            "cells.geojson",
            export::geojson::cells_geojson(
                &inputs.grid,
                &inputs.layers,
                &inputs.features,
                &solution.selected,
            )?,
        ),
        (
            "cells.csv",
            export::cells_csv(
                &inputs.grid,
                &inputs.layers,
                &inputs.features,
                &solution.selected,
            )?,
        ),
        ("coverage.csv", export::coverage_csv(assessment)),
        ("reserves.csv", export::reserves_csv(assessment)),
        ("summary.json", export::summary_json(&summary)),
        ("features.csv", export::features_csv(&inputs.features)?),
        (
            "edge-shifts.csv",
            export::edge_shifts_csv(&inputs.edge_shifts)?,
        ),
    ];
    export::write_outputs(out, &files)?;
    Ok(())
}

fn print_summary(
    plan: &Plan,
    inputs: &Inputs,
    solution: &Solution,
    a: &driftplan::assess::Assessment,
    out: &Path,
) {
    let n_targets = a.coverage.len();
    println!(
        "driftplan — {} ({} cells, {} scenarios × {} years)",
        plan.name,
        inputs.grid.len(),
        plan.scenarios.len(),
        plan.years.len()
    );
    println!(
        "  solver      HiGHS, {} (objective {:.3}, bound {:.3}, gap {:.3}%) in {:.1} s",
        solution.status.as_str(),
        solution.objective,
        solution.bound,
        100.0 * solution.gap,
        solution.seconds
    );
    println!("  cost        {:.1}", a.cost);
    println!(
        "  area        {:.0} km² ({:.1}% of the region's sea)",
        a.area_km2,
        100.0 * a.share_of_region
    );
    println!("  reserves    {}", a.reserves.len());
    println!("  targets met {} of {}", a.targets_met, n_targets);
    for s in &solution.scenarios {
        let regret = s
            .regret
            .map(|r| format!(", regret {r:.3}"))
            .unwrap_or_default();
        println!(
            "    {:<12} {} of {} targets met, benefit {:.3} of {:.0}{regret}",
            s.name, s.targets_met, s.targets, s.benefit, s.benefit_max
        );
    }
    println!("  outputs     {}", out.display());
    println!("Decision support only: results rest on projections with large uncertainty; siting decisions rest with the planning authority, local law and consultation with those who use the sea.");
}
