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
    },
    /// The whole run: grid → features → optimise → assess → export.
    ///
    /// Writes network.geojson, cells.geojson, cells.csv, coverage.csv and summary.json.
    Solve {
        /// The plan file (TOML).
        plan: PathBuf,
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
            solve(&plan_path, &out, &solver, &progress)
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
        Command::Solve { plan, out, solver } => solve(&plan, &out, &solver, &progress),
        Command::Bench {
            cells,
            species,
            time_limit,
            gap,
            edge_penalty,
            baselines,
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

fn solve(plan_path: &Path, out: &Path, solver: &SolverArgs, progress: &Progress) -> Result<()> {
    let plan = load(plan_path)?;
    let inputs = pipeline::prepare(&plan, &|m| progress.say(m))?;
    let problem = pipeline::problem(&plan, &inputs);
    let mut options = pipeline::solve_options(&plan);
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
    progress.say(&format!(
        "optimising with HiGHS: {} cells, {} feature targets{}",
        problem.n_cells(),
        problem.features.len(),
        options
            .time_limit_s
            .map(|t| format!(", time limit {t} s"))
            .unwrap_or_default()
    ));
    let solution = pipeline::optimise(&problem, &options)?;
    let assessment = pipeline::assess_network(&inputs, &solution.selected);
    write_solution(&plan, &inputs, &solution, &assessment, out)?;
    print_summary(&plan, &inputs, &solution, &assessment, out);
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
