//! `driftplan verify`: whether an output folder holds one complete run.

use super::load;
use anyhow::Result;
use driftplan::export::run_folder;
use std::path::PathBuf;

/// Arguments of `driftplan verify`.
#[derive(clap::Args, Debug)]
pub(crate) struct Args {
    /// The output folder to check (a `--out` of an earlier command).
    dir: PathBuf,
    /// Also check that the run is of this plan file as it is now (same SHA-256).
    #[arg(long)]
    plan: Option<PathBuf>,
}

/// A folder that is not one complete run (exit code 1, as any failure).
#[derive(Debug)]
pub(crate) struct Incomplete(pub String);

impl std::fmt::Display for Incomplete {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for Incomplete {}

pub(crate) fn run(args: Args) -> Result<()> {
    let hash = match &args.plan {
        Some(p) => Some(load(p)?.hash),
        None => None,
    };
    let v = run_folder::verify(&args.dir, hash.as_deref())?;
    for o in v.others.iter().take(20) {
        println!("  not part of the run: {o}");
    }
    if v.others.len() > 20 {
        println!(
            "  … and {} more files not part of the run",
            v.others.len() - 20
        );
    }
    if v.complete() {
        let m = v.manifest.as_ref().expect("complete implies a manifest");
        let outputs = m
            .files
            .iter()
            .filter(|f| f.role == run_folder::Role::Output)
            .count();
        println!(
            "{}: one complete run — `driftplan {}` of {} (plan hash {}), driftplan {}, finished {}, outcome: {}; {} file{} whole ({} output{})",
            args.dir.display(),
            m.command,
            if m.plan.is_empty() { "no plan" } else { &m.plan },
            &m.plan_sha256[..m.plan_sha256.len().min(12)],
            m.driftplan_version,
            m.finished_utc,
            m.outcome,
            m.files.len(),
            if m.files.len() == 1 { "" } else { "s" },
            outputs,
            if outputs == 1 { "" } else { "s" },
        );
        return Ok(());
    }
    Err(Incomplete(format!(
        "{} is not one complete run:\n  {}",
        args.dir.display(),
        v.problems.join("\n  ")
    ))
    .into())
}
