//! Command definitions (clap) and handlers, one file per command. Each handler parses its
//! arguments, calls the library and prints; the work itself lives in the library.

use anyhow::Result;
use clap::{Parser, Subcommand};
use driftplan::pipeline;
use driftplan::plan::{Plan, SolverPlan};
use driftplan::solve::progress::ProgressSink;
use driftplan::solve::time;
use std::io::IsTerminal;
use std::path::Path;
use std::time::Instant;

mod assess;
mod bench;
mod check;
mod cluster;
mod compare;
mod demo;
mod features;
mod grid;
mod irreplaceability;
mod merge;
mod portfolio;
mod rank;
mod solve;
mod sweep;
mod verify;

/// Plan marine protected area networks that keep protecting species as their ranges shift
/// poleward under several warming scenarios.
///
/// Results are decision support built on projections with large uncertainty; siting
/// decisions rest with the planning authority, local law and consultation with those who use
/// the sea.
///
/// Exit codes: 0 success; 1 a bad plan, bad input or a failure; 2 a bad command line; 3 the
/// plan is valid but its targets cannot all be reached (see diagnosis.csv).
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

#[derive(Subcommand, Debug)]
enum Command {
    /// Write the invented demo region (Merrow Coast) and its plan, then solve it.
    ///
    /// Writes DIR/demo-data/ and DIR/scenarios/demo.toml (the same files as the repository's
    /// demo-data/ and scenarios/demo.toml), then runs `solve` on that plan into DIR.
    Demo(demo::Args),
    /// Validate a plan file and every input it names; report every problem found.
    Check(check::Args),
    /// Build the equal-area grid and write it (grid.geojson, grid.csv).
    Grid(grid::Args),
    /// Build grid, layers and features and write them for inspection (cells.geojson, cells.csv).
    Features(features::Args),
    /// Scaling benchmark: synthetic regions, time and peak memory of each stage.
    ///
    /// Builds a square synthetic region near 40°S (2 km cells, a land block in the middle),
    /// synthetic species bands that move south with warming (3 scenarios × 4 years), and runs
    /// grid → layers → features → model → solve → assess → export on it.
    Bench(bench::Args),
    /// The whole run: grid → features → optimise → assess → export.
    ///
    /// Writes network.geojson (one polygon per reserve), cells.csv and cells.geojson (every
    /// cell; cells.geojson above 20 000 cells only with --cells-geojson), coverage.csv,
    /// reserves.csv, features.csv, edge-shifts.csv, summary.json, driftplan.gpkg, stress.csv
    /// (each scenario solved alone and the network scored in every scenario), zones.csv (plans
    /// with zones), report.html, and run.json last (every file's size and SHA-256). When the
    /// targets cannot all be reached it writes only diagnosis.csv (per feature the best the
    /// budget allows), says what the cheapest network meeting every target costs, and exits
    /// with code 3.
    Solve(solve::Args),
    /// Score a given network (GeoJSON polygons or a CSV of cell ids) under the plan.
    ///
    /// Writes coverage.csv, reserves.csv, assessment.json (every measure, and warnings when the
    /// network lies outside the region, covers excluded cells or leaves out required ones),
    /// network.geojson (the chosen cells dissolved into reserves), stress.csv, zones.csv (plans
    /// with zones), report.html and run.json last.
    Assess(assess::Args),
    /// Assess two or more networks side by side: a table, compare.csv, compare.json,
    /// report.html, stress.csv and run.json last.
    ///
    /// Target coverage comes first: a measure's best is awarded only among the networks that
    /// meet the most targets. One network is an error: use `assess` to score it.
    Compare(compare::Args),
    /// One max-benefit solve per budget: the cost–benefit curve, the budget at which each
    /// target is first reached, and how often each cell is chosen.
    ///
    /// Writes sweep.csv, first-reached.csv, selection-frequency.csv, selection-frequency.geojson,
    /// networks/budget-<share>pct.geojson (one per budget), report.html and run.json
    /// last. Budgets are shares
    /// of the region's sea area (or total cost, `--budget-of cost`); `...` continues an even
    /// step (`5%,10%,...,40%`). Each budget gets the best benefit it allows at the least cost
    /// for that benefit. With `--shard K/N` it solves every N-th job only (budgets, then
    /// scenario designs) and writes shard.json and run.json; `merge` joins the shards.
    Sweep(sweep::Args),
    /// Several near-optimal networks, each within a share of the optimum and as different from
    /// the others as that share allows.
    ///
    /// Writes portfolio.csv (each member's objective, cost, area and difference),
    /// networks/member-<k>.geojson, selection-share.geojson (share of members choosing each
    /// cell), compare.csv and report.html. Member 1 is the optimum; each next member maximises its
    /// total Hamming distance to the earlier ones and differs from each in at least
    /// `--min-difference` cells.
    Portfolio(portfolio::Args),
    /// A priority rank for every cell from nested solves over growing budgets.
    ///
    /// Writes rank.csv (cell, rank, budget share of its step), rank-curve.csv (one row per step:
    /// budget, cost, targets reached, cells added, status, gap), rank.geojson and report.html.
    /// Each step is the best network at its budget that contains the previous step's network, so
    /// the cells ranked 1 are inside those ranked 1–2, and so on; 0 marks plan-required cells.
    Rank(rank::Args),
    /// Replacement cost of each reserve (or, with --cells, each chosen cell) of the optimum.
    ///
    /// Writes irreplaceability.csv (per unit: cells forbidden, objective without it,
    /// replacement cost with the interval it lies in, status, gap), network.geojson and
    /// report.html. A unit without which no network meets every rule is irreplaceable. With
    /// `--shard K/N` it solves the optimum and every N-th unit's re-solve, and writes
    /// shard.json and run.json; `merge` joins the shards.
    Irreplaceability(irreplaceability::Args),
    /// Say whether an output folder holds one complete run, whole.
    ///
    /// Every command writes its outputs into a staging folder inside --out and moves them into
    /// place only when all are written, then writes run.json last (each file's size and
    /// SHA-256, the plan hash, the driftplan version). verify checks every file against
    /// run.json; with --plan, also that the run is of that plan as it is now. Exit code 0: one
    /// complete run; 1: not (the reasons are listed).
    Verify(verify::Args),
    /// Join the shards of a study (run with `--shard K/N --out DIR/shards/K`) into the
    /// outputs of a one-machine run.
    ///
    /// Checks that every shard 1 … N is there, is one complete run (its run.json verifies)
    /// and has the same plan hash, driftplan version and study arguments; then writes the
    /// study's outputs into DIR (or --out), the same bytes as a one-machine run apart from
    /// timing fields (solve times, the manifest's finishing time).
    Merge(merge::Args),
    /// Run a study's shards on a cluster scheduler: writes (and with --submit submits) a job
    /// array with one task per shard and a merge job that waits for all of them.
    Cluster(cluster::Args),
}

/// Runs one command.
pub fn run(args: Args) -> Result<()> {
    let progress = Progress::new(args.quiet);
    match args.command {
        Command::Demo(a) => demo::run(a, &progress),
        Command::Check(a) => check::run(a, &progress),
        Command::Grid(a) => grid::run(a, &progress),
        Command::Features(a) => features::run(a, &progress),
        Command::Bench(a) => bench::run(a, &progress),
        Command::Solve(a) => solve::run(a, &progress),
        Command::Assess(a) => assess::run(a, &progress),
        Command::Compare(a) => compare::run(a, &progress),
        Command::Sweep(a) => sweep::run(a, &progress),
        Command::Portfolio(a) => portfolio::run(a, &progress),
        Command::Rank(a) => rank::run(a, &progress),
        Command::Irreplaceability(a) => irreplaceability::run(a, &progress),
        Command::Verify(a) => verify::run(a),
        Command::Merge(a) => merge::run(a, &progress),
        Command::Cluster(a) => cluster::run(a, &progress),
    }
}

/// Solver settings that override the plan's `[solver]` table.
#[derive(clap::Args, Debug, Clone, Default)]
pub(crate) struct SolverArgs {
    /// Seconds for all the solves of the command together (main solve, stress or sweep
    /// solves); the best networks found by then are returned. Overrides the plan; default 300.
    #[arg(long, value_name = "SECONDS")]
    time_limit: Option<f64>,
    /// Stop when the proven relative gap is at most this, e.g. 0.01 for 1% (overrides the plan;
    /// default 0.005).
    #[arg(long, value_name = "SHARE")]
    gap: Option<f64>,
    /// Solver threads (overrides the plan).
    #[arg(long, value_name = "N")]
    threads: Option<u32>,
    /// Show the solver's own log on stderr.
    #[arg(long)]
    solver_log: bool,
}

/// Prints progress lines on stderr unless quiet; stays quiet when stderr is not a terminal
/// only if asked to (plain lines are harmless in logs).
pub(crate) struct Progress {
    quiet: bool,
    start: Instant,
}

impl Progress {
    /// Bars and spinners only on a terminal, and never with `--quiet`.
    fn shows_bars(&self) -> bool {
        !self.quiet && std::io::stderr().is_terminal()
    }

    /// A progress bar on stderr, hidden with `--quiet` or when stderr is not a terminal.
    pub(crate) fn bar(&self, len: u64, what: &str) -> indicatif::ProgressBar {
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
    pub(crate) fn spinner(&self, what: &str) -> indicatif::ProgressBar {
        if !self.shows_bars() {
            return indicatif::ProgressBar::hidden();
        }
        let s = indicatif::ProgressBar::new_spinner();
        s.set_message(what.to_string());
        s.enable_steady_tick(std::time::Duration::from_millis(200));
        s
    }

    /// Where a solve's live progress goes: the spinner's message on a terminal, a plain line
    /// every 30 s otherwise (logs), nothing with `--quiet`.
    pub(crate) fn solver_sink(&self, spinner: &indicatif::ProgressBar) -> ProgressSink {
        let bars = self.shows_bars();
        let quiet = self.quiet;
        let start = self.start;
        let spinner = spinner.clone();
        let last = std::sync::Mutex::new(0.0f64);
        ProgressSink::new(move |p| {
            if bars {
                spinner.set_message(format!("solving: {}", p.describe()));
            } else if !quiet {
                let mut last = last.lock().unwrap_or_else(|e| e.into_inner());
                if p.elapsed_s - *last >= 30.0 {
                    *last = p.elapsed_s;
                    let t = start.elapsed().as_secs_f64();
                    eprintln!("[{t:6.1}s] solving: {}", p.describe());
                }
            }
        })
    }

    fn new(quiet: bool) -> Progress {
        Progress {
            quiet,
            start: Instant::now(),
        }
    }

    /// One progress line with the elapsed time.
    pub(crate) fn say(&self, msg: &str) {
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

/// Reads and validates a plan file.
pub(crate) fn load(path: &Path) -> Result<Plan> {
    Ok(Plan::load(path)?)
}

/// Reads and validates a plan file, then applies the command line's solver overrides to its
/// `[solver]` settings (so headers, `check` and the report show what is used).
pub(crate) fn load_with(path: &Path, solver: &SolverArgs) -> Result<Plan> {
    let mut plan = load(path)?;
    plan.solver = solver_settings(&plan, solver)?;
    Ok(plan)
}

/// The plan's `[solver]` settings with the command line's overrides.
pub(crate) fn solver_settings(plan: &Plan, solver: &SolverArgs) -> Result<SolverPlan> {
    let mut s = plan.solver.clone();
    if let Some(t) = solver.time_limit {
        anyhow::ensure!(
            t.is_finite() && t > 0.0,
            "--time-limit must be a positive number of seconds, got {t}"
        );
        s.time_limit_s = t;
        s.time_limit_is_default = false;
    }
    if let Some(g) = solver.gap {
        anyhow::ensure!(
            g.is_finite() && (0.0..1.0).contains(&g),
            "--gap must be in [0, 1), e.g. 0.01 for 1%; got {g}"
        );
        s.gap = g;
        s.gap_is_default = false;
    }
    if let Some(n) = solver.threads {
        anyhow::ensure!(n > 0, "--threads must be at least 1");
        s.threads = Some(n);
    }
    Ok(s)
}

/// Solver options from the plan with the command line's overrides. The time limit is the
/// whole command's; callers share it out with [`driftplan::solve::time::TimeBudget`].
pub(crate) fn solve_options(
    plan: &Plan,
    solver: &SolverArgs,
) -> Result<driftplan::solve::SolveOptions> {
    let settings = solver_settings(plan, solver)?;
    let mut options = pipeline::solve_options(plan);
    options.time_limit_s = Some(settings.time_limit_s);
    options.rel_gap = settings.gap;
    options.threads = settings.threads;
    options.verbose = solver.solver_log;
    Ok(options)
}

/// A plan whose targets cannot all be reached (exit code 3, distinct from a bad plan's 1).
#[derive(Debug)]
pub(crate) struct CannotBeReached(pub String);

impl std::fmt::Display for CannotBeReached {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for CannotBeReached {}

/// Exit code for "the plan's targets cannot all be reached".
pub(crate) const EXIT_CANNOT_BE_MET: i32 = 3;

/// The stress test of networks given as chosen flags (each chosen cell in the first zone of a
/// zoned plan): see [`stress_assigned`].
pub(crate) fn stress(
    problem: &driftplan::model::Problem,
    given: &[(String, Vec<bool>)],
    options: &driftplan::solve::SolveOptions,
    skip: bool,
    progress: &Progress,
) -> Result<Option<driftplan::study::StressMatrix>> {
    let given: Vec<(String, Vec<u8>)> = given
        .iter()
        .map(|(n, s)| (n.clone(), driftplan::model::zones::first_zone(s)))
        .collect();
    stress_assigned(problem, &given, options, skip, progress)
}

/// The stress test with a progress bar (skipped with one scenario or when asked). Each given
/// network is a zone assignment (`model::zones`: 0 outside, 1 + zone index; 1 = chosen
/// without zones). The time limit in `options` is the whole test's.
pub(crate) fn stress_assigned(
    problem: &driftplan::model::Problem,
    given: &[(String, Vec<u8>)],
    options: &driftplan::solve::SolveOptions,
    skip: bool,
    progress: &Progress,
) -> Result<Option<driftplan::study::StressMatrix>> {
    if skip || problem.scenarios.len() < 2 {
        return Ok(None);
    }
    let n = problem.scenarios.len();
    // `options`' time limit is the whole stress test's: its solves share it in rounds.
    let rounds = time::parallel_rounds(n, time::workers());
    let options = driftplan::solve::SolveOptions {
        time_limit_s: options
            .time_limit_s
            .map(|t| time::share_limit(t, 1.0, rounds)),
        progress: None,
        ..options.clone()
    };
    progress.say(&format!(
        "stress test: solving each of {n} scenarios alone{}",
        options
            .time_limit_s
            .map(|t| format!(" (at most {t:.0} s each)"))
            .unwrap_or_default()
    ));
    let bar = progress.bar(n as u64, "scenario solves");
    let m = driftplan::study::stress_test(problem, given, &options, &|| bar.inc(1))?;
    bar.finish_and_clear();
    Ok(Some(m))
}

/// The plan's inputs: from the inputs cache when one is given (checked against the plan),
/// else prepared from the plan's files.
pub(crate) fn prepare_or_cached(
    plan: &driftplan::plan::Plan,
    cache: Option<&Path>,
    progress: &Progress,
) -> Result<pipeline::Inputs> {
    Ok(match cache {
        Some(path) => {
            progress.say(&format!("reading the inputs cache {}", path.display()));
            pipeline::load_inputs_cache(path, plan)?
        }
        None => pipeline::prepare(plan, &|m| progress.say(m))?,
    })
}

/// The last lines of a command that wrote a report: the caution, then the report to open.
pub(crate) fn closing_lines(out: &Path) {
    println!("{}", driftplan::export::CAUTION);
    println!("open {}", out.join("report.html").display());
}

/// The file name without its extension, as a default network name.
pub(crate) fn file_stem(p: &Path) -> String {
    p.file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| p.display().to_string())
}
