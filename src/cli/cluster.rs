//! `driftplan cluster slurm`: writes (and with `--submit` submits) a Slurm job array for a
//! sharded study and the merge that follows it.

use super::{load_with, Progress};
use anyhow::{Context, Result};
use clap::{Parser, Subcommand};
use driftplan::pipeline;
use driftplan::study::shard;
use driftplan::study::shard::slurm::{quote, Resources, SlurmJob, SCRIPTS_DIR};
use std::path::{Path, PathBuf};

/// Arguments of `driftplan cluster`.
#[derive(clap::Args, Debug)]
pub(crate) struct Args {
    /// The scheduler.
    #[command(subcommand)]
    scheduler: Scheduler,
}

#[derive(Subcommand, Debug)]
enum Scheduler {
    /// Slurm: a job array with one task per shard, then a merge job that waits for all of
    /// them (`--dependency=afterok`).
    ///
    /// Give the cluster options first, then the study exactly as it would run on one machine:
    /// `driftplan cluster slurm --shards 8 sweep plan.toml --budgets 5%,10%,...,40% --out
    /// study`. Writes study/slurm/shards.sbatch, merge.sbatch and submit.sh, and prints how
    /// to submit them; shards go to study/shards/K, the merged outputs into study.
    Slurm(SlurmArgs),
}

#[derive(clap::Args, Debug)]
struct SlurmArgs {
    /// Tasks in the array (default for a sweep: one per job; replacement cost needs it, as its
    /// jobs are known only after the optimum is solved).
    #[arg(long, value_name = "N")]
    shards: Option<usize>,
    /// CPUs per task (default: the estimate in docs/architecture.md).
    #[arg(long, value_name = "N")]
    cpus: Option<usize>,
    /// Memory per task in MiB (default: the estimate).
    #[arg(long, value_name = "MIB")]
    mem: Option<u64>,
    /// Wall time per task in minutes (default: 1.5 × the time limit + 10).
    #[arg(long, value_name = "MINUTES")]
    time: Option<u64>,
    /// Slurm partition (default: a commented line to fill in).
    #[arg(long)]
    partition: Option<String>,
    /// Slurm account (default: a commented line to fill in).
    #[arg(long)]
    account: Option<String>,
    /// The driftplan binary as the compute nodes see it (default: this one).
    #[arg(long, value_name = "PATH")]
    driftplan: Option<PathBuf>,
    /// Submit with `sbatch` after writing the scripts.
    #[arg(long)]
    submit: bool,
    /// The study and its arguments, as on one machine (`sweep PLAN --budgets … --out DIR` or
    /// `irreplaceability PLAN … --out DIR`).
    #[arg(
        required = true,
        trailing_var_arg = true,
        allow_hyphen_values = true,
        value_name = "STUDY-ARGS"
    )]
    study: Vec<String>,
}

/// The study's command line, parsed as the study command itself would parse it.
#[derive(Parser, Debug)]
#[command(no_binary_name = true, name = "driftplan")]
struct StudyLine {
    #[command(subcommand)]
    study: Study,
}

#[derive(Subcommand, Debug)]
enum Study {
    Sweep(super::sweep::Args),
    Irreplaceability(super::irreplaceability::Args),
}

pub(crate) fn run(a: Args, progress: &Progress) -> Result<()> {
    let Scheduler::Slurm(a) = a.scheduler;
    match a.study[0].as_str() {
        "sweep" | "irreplaceability" => {}
        "portfolio" | "rank" => anyhow::bail!(
            "`{}` cannot be split into shards: each of its solves needs the one before it (a portfolio member must differ from the earlier members; a rank step contains the previous step's network); run it on one machine, e.g. as one Slurm job",
            a.study[0]
        ),
        other => anyhow::bail!(
            "`{other}` is not a study that runs as shards; `driftplan cluster slurm` takes `sweep` (its budgets and scenario designs) or `irreplaceability` (its re-solves)"
        ),
    }
    let line = StudyLine::try_parse_from(&a.study).map_err(|e| {
        anyhow::anyhow!(
            "the study's arguments: {}",
            e.render().to_string().trim_end()
        )
    })?;
    let (plan_path, out, shard_given, solver, name) = match &line.study {
        Study::Sweep(s) => (&s.plan, &s.out, &s.shard, &s.solver, "sweep"),
        Study::Irreplaceability(s) => (&s.plan, &s.out, &s.shard, &s.solver, "irreplaceability"),
    };
    anyhow::ensure!(
        shard_given.is_none(),
        "leave --shard out of the study's arguments: each task of the array adds its own"
    );
    driftplan::export::run_folder::check_out(out)?;
    let plan = load_with(plan_path, solver)?;
    progress.say("cluster: building the grid for the size estimate");
    let grid = pipeline::grid(&plan)?;
    // Feature rows: each species in each scenario and year (an upper bound before layers are
    // read), and up to six derived climate features per scenario.
    let rows = plan.species.len() * plan.scenarios.len().max(1) * plan.years.len().max(1)
        + plan
            .climate
            .as_ref()
            .map(|_| 6 * plan.scenarios.len().max(1))
            .unwrap_or(0);
    let jobs = match &line.study {
        Study::Sweep(s) => {
            let budgets = driftplan::study::parse_budgets(&s.budgets)
                .map_err(|e| anyhow::anyhow!("--budgets: {e}"))?;
            Some(shard::sweep_jobs(budgets.len(), plan.scenarios.len()).len())
        }
        Study::Irreplaceability(_) => None,
    };
    let shards = match (a.shards, jobs) {
        (Some(n), _) => n,
        (None, Some(j)) => j,
        (None, None) => anyhow::bail!(
            "give --shards N: replacement cost's jobs (the optimum's reserves or cells) are known only after solving"
        ),
    };
    anyhow::ensure!(shards >= 1, "--shards must be at least 1");
    if let Some(j) = jobs {
        anyhow::ensure!(
            shards <= j,
            "--shards {shards}: the sweep has only {j} jobs (its budgets, then one design per scenario); use at most {j} shards"
        );
    }
    let mut task = Resources::estimate(
        grid.len(),
        rows,
        jobs.map(|j| j.div_ceil(shards)),
        plan.solver.threads,
        plan.solver.time_limit_s,
    );
    task.cpus = a.cpus.unwrap_or(task.cpus);
    task.mem_mib = a.mem.unwrap_or(task.mem_mib);
    task.minutes = a.time.unwrap_or(task.minutes);
    let cwd = std::env::current_dir().context("the current folder")?;
    let out_abs = std::path::absolute(out).context("--out")?;
    let driftplan_bin = match &a.driftplan {
        Some(p) => std::path::absolute(p).context("--driftplan")?,
        None => std::env::current_exe().context("this driftplan binary's path")?,
    };
    let command = without_out(&a.study);
    let job = SlurmJob {
        study: name.to_string(),
        driftplan: driftplan_bin,
        workdir: cwd,
        out: out_abs.clone(),
        plan: plan_path.clone(),
        command,
        shards,
        task,
        merge: Resources::merge(grid.len(), rows),
        partition: a.partition.clone(),
        account: a.account.clone(),
    };
    let scripts = out_abs.join(SCRIPTS_DIR);
    driftplan::export::write_outputs(
        &scripts,
        &[
            ("shards.sbatch", job.array_script()),
            ("merge.sbatch", job.merge_script()),
            ("submit.sh", job.submit_script()),
        ],
    )?;
    println!(
        "wrote {} (array of {shards} tasks: {} CPUs, {} MiB, {} min each), merge.sbatch and submit.sh",
        scripts.join("shards.sbatch").display(),
        task.cpus,
        task.mem_mib,
        task.minutes
    );
    let array_cmd = format!(
        "sbatch --parsable {}",
        quote_path(&scripts.join("shards.sbatch"))
    );
    let merge_cmd = format!(
        "sbatch --dependency=afterok:<array job id> {}",
        quote_path(&scripts.join("merge.sbatch"))
    );
    if !a.submit {
        println!(
            "submit with:  bash {}",
            quote_path(&scripts.join("submit.sh"))
        );
        println!("  which runs: {array_cmd}");
        println!("         and: {merge_cmd}");
        println!("(check --partition, --account and --time in the scripts first)");
        return Ok(());
    }
    let array = sbatch(&[
        "--parsable".into(),
        scripts.join("shards.sbatch").display().to_string(),
    ])?;
    let merge = sbatch(&[
        "--parsable".into(),
        format!("--dependency=afterok:{array}"),
        scripts.join("merge.sbatch").display().to_string(),
    ])?;
    println!("submitted the shards as job {array} and the merge as job {merge} (after every shard succeeds)");
    println!("merged outputs will be in {}", out_abs.display());
    Ok(())
}

fn quote_path(p: &Path) -> String {
    quote(&p.display().to_string())
}

/// The study's arguments without `--out DIR` / `--out=DIR` (the tasks give their own).
fn without_out(args: &[String]) -> Vec<String> {
    let mut v = Vec::new();
    let mut skip = false;
    for a in args {
        if skip {
            skip = false;
        } else if a == "--out" {
            skip = true;
        } else if !a.starts_with("--out=") {
            v.push(a.clone());
        }
    }
    v
}

/// Runs `sbatch` and returns the job id it prints (`--parsable`: `id[;cluster]`).
fn sbatch(args: &[String]) -> Result<String> {
    let o = std::process::Command::new("sbatch")
        .args(args)
        .output()
        .map_err(|e| {
            anyhow::anyhow!(
                "cannot run sbatch ({e}): the scripts are written; submit them where Slurm is installed"
            )
        })?;
    anyhow::ensure!(
        o.status.success(),
        "sbatch {} failed: {}",
        args.join(" "),
        String::from_utf8_lossy(&o.stderr).trim()
    );
    let text = String::from_utf8_lossy(&o.stdout);
    let id = text.trim().split(';').next().unwrap_or("").to_string();
    anyhow::ensure!(!id.is_empty(), "sbatch printed no job id");
    Ok(id)
}
