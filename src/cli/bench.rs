//! `driftplan bench`: the scaling benchmark (figures printed, never asserted).

use super::Progress;
use anyhow::Result;

/// Arguments of `driftplan bench`.
#[derive(clap::Args, Debug)]
pub(crate) struct Args {
    /// Approximate cell counts to run, comma-separated.
    #[arg(long, value_delimiter = ',', default_value = "10000,100000")]
    cells: Vec<usize>,
    /// Species per region (each gives 12 features).
    #[arg(long, default_value_t = 10)]
    species: usize,
    /// Habitat shape: `smooth` bands, or `patchy` (bands times a smooth seeded random field,
    /// and costs that vary from cell to cell).
    #[arg(long, default_value = "smooth")]
    habitat: String,
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
    /// HiGHS took, and in a second row the decomposition's time), to show what the exact
    /// solve buys.
    #[arg(long)]
    baselines: bool,
    /// Skip HiGHS: run only the baselines (annealing gets the time limit).
    #[arg(long)]
    no_exact: bool,
    /// Skip the direct HiGHS model but run the decomposition (for sizes where the direct
    /// model does not fit in memory, e.g. 1M cells).
    #[arg(long)]
    no_direct: bool,
    /// Also solve the LP relaxation of the whole model in HiGHS (within the time limit) and
    /// say when the decomposition's bound came within 1 % and 0.1 % of it.
    #[arg(long)]
    lp_bound: bool,
    /// Time limit of the LP relaxation of `--lp-bound`. Units: s.
    #[arg(long, value_name = "SECONDS", default_value_t = 600.0)]
    lp_time_limit: f64,
    /// HiGHS's LP algorithm for `--lp-bound`: `choose` (HiGHS decides), `simplex`, or `ipm`
    /// (interior point, then crossover to a vertex; often faster on large models).
    #[arg(long, default_value = "choose", value_parser = ["choose", "simplex", "ipm"])]
    lp_solver: String,
    /// Compare with this LP bound (printed by an earlier `--lp-bound` run of the same
    /// command) instead of solving the LP again; implies `--lp-bound`.
    #[arg(long, value_name = "VALUE")]
    lp_known: Option<f64>,
    /// Also time larval dispersal (a `connectivity` stage) with this many particles per cell.
    #[arg(long, value_name = "N", default_value_t = 0)]
    particles: u32,
    /// What the solvers optimise: `min-cost`, or `max-benefit` under a cost budget of
    /// `--budget-share` of the region's total cost.
    #[arg(long, default_value = "min-cost", value_parser = ["min-cost", "max-benefit"])]
    objective: String,
    /// How scenarios combine in a max-benefit run.
    #[arg(long, default_value = "every-scenario",
          value_parser = ["every-scenario", "worst-case", "expected", "least-regret"])]
    robustness: String,
    /// Max-benefit's cost budget as a share of the region's total cost (0–1).
    #[arg(long, default_value_t = 0.2)]
    budget_share: f64,
}

pub(crate) fn run(args: Args, progress: &Progress) -> Result<()> {
    println!(
        "{:>9}  {:<24} {:>9} {:>10}  note",
        "cells", "stage", "seconds", "peak MiB"
    );
    let habitat: driftplan::bench::patchy::Habitat = args
        .habitat
        .parse()
        .map_err(|e: String| anyhow::anyhow!(e))?;
    use driftplan::model::{Objective, Robustness};
    let objective = match args.objective.as_str() {
        "max-benefit" => Objective::MaxBenefit,
        _ => Objective::MinCost,
    };
    let robustness = match args.robustness.as_str() {
        "worst-case" => Robustness::WorstCase,
        "expected" => Robustness::Expected,
        "least-regret" => Robustness::LeastRegret,
        _ => Robustness::EveryScenario,
    };
    anyhow::ensure!(
        args.budget_share > 0.0 && args.budget_share <= 1.0,
        "--budget-share must be a share of the total cost above 0 and at most 1, e.g. 0.2; got {}",
        args.budget_share
    );
    for n in args.cells {
        anyhow::ensure!(n >= 100, "--cells values must be at least 100, got {n}");
        let spec = driftplan::bench::BenchSpec {
            cells: n,
            species: args.species,
            habitat,
            time_limit_s: args.time_limit,
            gap: args.gap,
            edge_penalty: args.edge_penalty,
            baselines: args.baselines,
            exact: !args.no_exact,
            direct: !args.no_direct,
            lp_bound: args.lp_bound || args.lp_known.is_some(),
            lp_known: args.lp_known,
            lp_time_limit_s: args.lp_time_limit,
            lp_solver: args.lp_solver.clone(),
            particles_per_cell: args.particles,
            objective,
            robustness,
            budget_share: args.budget_share,
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
