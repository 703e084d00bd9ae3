//! Shards: a many-solve study split into parts that run on their own (one cluster task each)
//! and a merge that joins them into the outputs of a one-machine run.
//!
//! A study has a **job list**, fixed by the plan and the study's arguments alone: the sweep's is
//! its budgets in ascending order, then (with two or more scenarios) its scenario designs in
//! plan order ([`sweep_jobs`]); replacement cost's is its units (reserves or cells of the
//! optimum) in order. Shard K of N ([`ShardSpec`]) takes jobs K−1, K−1+N, K−1+2N, … (every
//! N-th job, so shards of a sweep get small and large budgets alike) and writes their results
//! into `shard.json` ([`ShardPart`]) in its own output folder, with the usual run manifest.
//!
//! [`read_shards`] checks `DIR/shards/1` … `DIR/shards/N`: each present, one complete run
//! (its manifest verifies), from the same plan hash, the same driftplan version, the same
//! study arguments and the same N, holding exactly its jobs; then it returns every job's
//! result in job order. The study's outputs are made from that by the same code as a
//! one-machine run, so they are the same bytes; only timing fields (solve seconds, the
//! manifest's finishing time) differ. Results are exact through the file ([`record`]).
//!
//! Studies whose jobs depend on earlier jobs cannot be split this way: a portfolio's member k
//! must differ from members 1…k−1, and a rank step contains the previous step's network, so
//! each job needs the one before it; they run on one machine.

pub mod record;
pub mod slurm;

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

pub use record::{BudgetRecord, DesignRecord, Exact, SolutionRecord, UnitRecord};

/// The file a shard writes into its output folder.
pub const SHARD_FILE: &str = "shard.json";

/// The folder under a study's output folder that holds its shards (`shards/1`, `shards/2`, …).
pub const SHARDS_DIR: &str = "shards";

/// Version of the `shard.json` layout.
pub const FORMAT: u32 = 1;

/// Why sharding or merging failed. Messages name the shard folder and what was expected.
#[derive(Debug, thiserror::Error)]
pub enum ShardError {
    /// `--shard` is not `K/N` with 1 ≤ K ≤ N, or N exceeds the study's jobs.
    #[error("--shard `{given}`: {why}")]
    Spec {
        /// What was given.
        given: String,
        /// What is wrong and what is expected.
        why: String,
    },
    /// The shards cannot be merged; every problem found is listed.
    #[error("cannot merge the shards in {}:\n  {}", .dir.display(), .problems.join("\n  "))]
    Merge {
        /// The study folder.
        dir: PathBuf,
        /// One line per problem, each naming its shard folder.
        problems: Vec<String>,
    },
}

/// Which part of a study a run solves: shard `k` of `n` (1-based).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ShardSpec {
    /// This shard, 1 ≤ k ≤ n.
    pub k: usize,
    /// How many shards the study is split into.
    pub n: usize,
}

impl ShardSpec {
    /// Parses `K/N`, e.g. `2/4`.
    pub fn parse(text: &str) -> Result<ShardSpec, ShardError> {
        let err = |why: &str| ShardError::Spec {
            given: text.to_string(),
            why: why.to_string(),
        };
        let (k, n) = text
            .split_once('/')
            .ok_or_else(|| err("expected K/N, e.g. `2/4` for the second of four shards"))?;
        let parse = |t: &str| t.trim().parse::<usize>().ok();
        let (Some(k), Some(n)) = (parse(k), parse(n)) else {
            return Err(err("K and N must be whole numbers, e.g. `2/4`"));
        };
        if n == 0 || k == 0 || k > n {
            return Err(err("expected 1 ≤ K ≤ N, e.g. `1/4` … `4/4`"));
        }
        Ok(ShardSpec { k, n })
    }

    /// Whether job `job` (0-based, in the study's job order) belongs to this shard.
    pub fn picks(&self, job: usize) -> bool {
        job % self.n == self.k - 1
    }

    /// This shard's jobs among `total`, ascending.
    pub fn jobs(&self, total: usize) -> Vec<usize> {
        (self.k - 1..total).step_by(self.n).collect()
    }

    /// Refuses more shards than jobs (a shard would have nothing to do); `what` describes the
    /// job list for the message.
    pub fn check(&self, total: usize, what: &str) -> Result<(), ShardError> {
        if self.n > total {
            return Err(ShardError::Spec {
                given: format!("{}/{}", self.k, self.n),
                why: format!(
                    "the study has only {total} job{} ({what}); use at most {total} shard{}",
                    if total == 1 { "" } else { "s" },
                    if total == 1 { "" } else { "s" }
                ),
            });
        }
        Ok(())
    }
}

/// The result of one job.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "kebab-case")]
pub enum Outcome {
    /// One budget of a sweep.
    Budget(BudgetRecord),
    /// One scenario design (a scenario solved alone).
    Design(DesignRecord),
    /// One replacement-cost re-solve.
    Unit(UnitRecord),
}

/// One job's index in the study's job list and its result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct JobResult {
    /// Index in the study's job list (0-based).
    pub job: usize,
    /// What the job found.
    pub outcome: Outcome,
}

/// The contents of `shard.json`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ShardPart {
    /// [`FORMAT`].
    pub format: u32,
    /// The study (`sweep`, `irreplaceability`).
    pub study: String,
    /// The arguments that decide the study's results, as text (compared by the merge and
    /// used by it to make the outputs).
    pub arguments: BTreeMap<String, String>,
    /// The plan file, absolute, so the merge can run from any folder.
    pub plan: String,
    /// SHA-256 of the plan file.
    pub plan_sha256: String,
    /// This shard (1-based).
    pub shard: usize,
    /// How many shards the study is split into.
    pub shards: usize,
    /// Jobs in the whole study.
    pub jobs: usize,
    /// Cells of the grid (networks are stored as cell ids).
    pub cells: usize,
    /// A result every shard computes before its jobs and the merge checks they agree on:
    /// replacement cost's optimum, whose reserves or cells are the job list.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub base: Option<SolutionRecord>,
    /// This shard's jobs, in job order.
    pub results: Vec<JobResult>,
}

impl ShardPart {
    /// `shard.json`'s text.
    pub fn to_json(&self) -> String {
        // Plain data with string keys: encoding cannot fail.
        serde_json::to_string_pretty(self).unwrap_or_default() + "\n"
    }
}

/// Every shard of a study, joined.
#[derive(Debug, Clone, PartialEq)]
pub struct Merged {
    /// The study.
    pub study: String,
    /// Its arguments (the same in every shard).
    pub arguments: BTreeMap<String, String>,
    /// The plan file as the shards recorded it.
    pub plan: String,
    /// SHA-256 of the plan file (the same in every shard).
    pub plan_sha256: String,
    /// How many shards there were.
    pub shards: usize,
    /// Cells of the grid.
    pub cells: usize,
    /// The result every shard computed first (shard 1's; all agree but for timing).
    pub base: Option<SolutionRecord>,
    /// Every job's result, in job order.
    pub outcomes: Vec<Outcome>,
}

/// Reads and checks `dir/shards/1` … `dir/shards/N` (module doc) and joins their results.
/// Every problem found is reported at once, each naming its shard folder.
pub fn read_shards(dir: &Path) -> Result<Merged, ShardError> {
    let root = dir.join(SHARDS_DIR);
    let fail = |problems: Vec<String>| ShardError::Merge {
        dir: dir.to_path_buf(),
        problems,
    };
    let entries = std::fs::read_dir(&root).map_err(|e| {
        fail(vec![format!(
            "{}: {e}; expected one folder per shard there (`--shard K/N --out {}/K`)",
            root.display(),
            root.display()
        )])
    })?;
    let mut found: BTreeMap<usize, PathBuf> = BTreeMap::new();
    let mut problems = Vec::new();
    for e in entries.flatten() {
        let name = e.file_name().to_string_lossy().into_owned();
        match name.parse::<usize>() {
            Ok(k) if k > 0 && e.path().is_dir() => {
                found.insert(k, e.path());
            }
            _ if name.starts_with('.') => {}
            _ => problems.push(format!(
                "{}: not a shard folder (expected folders named 1 … N)",
                e.path().display()
            )),
        }
    }
    if found.is_empty() {
        problems.push(format!(
            "{}: no shard folders (expected 1 … N, each written by `--shard K/N`)",
            root.display()
        ));
        return Err(fail(problems));
    }
    // Each folder: one complete run whose shard.json says it is this shard.
    let mut parts: BTreeMap<usize, (PathBuf, ShardPart, String)> = BTreeMap::new();
    for (&k, path) in &found {
        match read_part(path) {
            Ok((part, version)) => {
                if part.shard != k {
                    problems.push(format!(
                        "{}: holds shard {} of {}, not shard {k} (folders are named by their shard number)",
                        path.display(),
                        part.shard,
                        part.shards
                    ));
                    continue;
                }
                parts.insert(k, (path.clone(), part, version));
            }
            Err(why) => problems.push(format!("{}: {why}", path.display())),
        }
    }
    // Compare with the first readable shard; then every shard 1..N must be there.
    let Some((first_path, first, first_version)) = parts.values().next().cloned() else {
        return Err(fail(problems));
    };
    let n = first.shards;
    for k in 1..=n {
        if !found.contains_key(&k) {
            problems.push(format!(
                "{}: shard {k} of {n} is missing (run it with `--shard {k}/{n} --out {}`)",
                root.join(k.to_string()).display(),
                root.join(k.to_string()).display()
            ));
        }
    }
    for (path, part, version) in parts.values() {
        let here = path.display();
        let there = first_path.display();
        if part.shard > n || part.shards != n {
            problems.push(format!(
                "{here}: is shard {} of {}, but {there} is one of {n}",
                part.shard, part.shards
            ));
        }
        if part.plan_sha256 != first.plan_sha256 {
            problems.push(format!(
                "{here}: plan hash {} differs from {there}'s {}: the shards are of different plans or versions of the plan",
                short(&part.plan_sha256),
                short(&first.plan_sha256)
            ));
        }
        if version != &first_version {
            problems.push(format!(
                "{here}: written by driftplan {version}, {there} by {first_version}; run every shard with one version"
            ));
        }
        if part.study != first.study {
            problems.push(format!(
                "{here}: is a shard of `{}`, {there} of `{}`",
                part.study, first.study
            ));
        } else if part.arguments != first.arguments {
            problems.push(format!(
                "{here}: study arguments differ from {there}'s: {}",
                differences(&part.arguments, &first.arguments)
            ));
        }
        if part.jobs != first.jobs || part.cells != first.cells {
            problems.push(format!(
                "{here}: {} jobs on {} cells, {there} {} jobs on {} cells",
                part.jobs, part.cells, first.jobs, first.cells
            ));
        }
        let agree = match (&part.base, &first.base) {
            (None, None) => true,
            (Some(a), Some(b)) => a.same_but_timing(b),
            _ => false,
        };
        if !agree {
            problems.push(format!(
                "{here}: its optimum differs from {there}'s (another network or objective), so their jobs differ; \
                 solve to a proven optimum (`--gap 0`) with a time limit that is not reached, or with `--threads 1`"
            ));
        }
        let want = ShardSpec {
            k: part.shard.clamp(1, part.shards.max(1)),
            n: part.shards.max(1),
        }
        .jobs(part.jobs);
        let has: Vec<usize> = part.results.iter().map(|r| r.job).collect();
        if has != want {
            problems.push(format!(
                "{here}: holds the results of jobs {} but shard {} of {} should hold {}",
                list(&has),
                part.shard,
                part.shards,
                list(&want)
            ));
        }
    }
    if !problems.is_empty() {
        return Err(fail(problems));
    }
    let mut outcomes: Vec<Option<Outcome>> = vec![None; first.jobs];
    for (_, part, _) in parts.into_values() {
        for r in part.results {
            outcomes[r.job] = Some(r.outcome);
        }
    }
    Ok(Merged {
        study: first.study,
        arguments: first.arguments,
        plan: first.plan,
        plan_sha256: first.plan_sha256,
        shards: n,
        cells: first.cells,
        base: first.base,
        // Every job was checked to be in exactly one shard above.
        outcomes: outcomes.into_iter().flatten().collect(),
    })
}

/// Reads one shard folder: it must verify as one complete run and hold a readable
/// `shard.json` of the same plan as its manifest. Returns the part and the driftplan version.
fn read_part(path: &Path) -> Result<(ShardPart, String), String> {
    let v = crate::export::run_folder::verify(path, None).map_err(|e| e.to_string())?;
    if !v.complete() {
        return Err(format!(
            "not one complete run ({}); run the shard again",
            v.problems.join("; ")
        ));
    }
    let manifest = v.manifest.expect("complete implies a manifest");
    let file = path.join(SHARD_FILE);
    let text = std::fs::read_to_string(&file).map_err(|e| {
        format!(
            "{SHARD_FILE}: {e} (the folder holds a `driftplan {}` run, not a shard)",
            manifest.command
        )
    })?;
    let part: ShardPart = serde_json::from_str(&text)
        .map_err(|e| format!("{SHARD_FILE} is not a driftplan shard: {e}"))?;
    if part.format != FORMAT {
        return Err(format!(
            "{SHARD_FILE} has format {}, this driftplan reads format {FORMAT}",
            part.format
        ));
    }
    if part.plan_sha256 != manifest.plan_sha256 {
        return Err(format!(
            "{SHARD_FILE} and run.json name different plan hashes ({} and {})",
            short(&part.plan_sha256),
            short(&manifest.plan_sha256)
        ));
    }
    Ok((part, manifest.driftplan_version))
}

fn short(hash: &str) -> &str {
    &hash[..hash.len().min(12)]
}

/// Job indices as `0, 4, 8` (at most ten shown).
fn list(jobs: &[usize]) -> String {
    if jobs.is_empty() {
        return "none".into();
    }
    let mut s: Vec<String> = jobs.iter().take(10).map(|j| j.to_string()).collect();
    if jobs.len() > 10 {
        s.push(format!("… ({} in all)", jobs.len()));
    }
    s.join(", ")
}

/// The arguments that differ, as `name a against b`.
fn differences(a: &BTreeMap<String, String>, b: &BTreeMap<String, String>) -> String {
    let none = String::from("(not given)");
    let mut keys: Vec<&String> = a.keys().chain(b.keys()).collect();
    keys.sort();
    keys.dedup();
    keys.into_iter()
        .filter(|k| a.get(*k) != b.get(*k))
        .map(|k| {
            format!(
                "{k} `{}` against `{}`",
                a.get(k).unwrap_or(&none),
                b.get(k).unwrap_or(&none)
            )
        })
        .collect::<Vec<_>>()
        .join("; ")
}

/// A replacement-cost study's parts, joined: one row per unit, in job order, without
/// intervals (`study::replacement::with_intervals` adds them).
pub fn replacement_outcomes(
    outcomes: &[Outcome],
    cells: usize,
) -> Result<Vec<crate::study::Replacement>, String> {
    outcomes
        .iter()
        .enumerate()
        .map(|(j, o)| match o {
            Outcome::Unit(u) => u.replacement(cells).map_err(|e| format!("job {j}: {e}")),
            _ => Err(format!(
                "job {j}: a sweep result in a replacement-cost study"
            )),
        })
        .collect()
}

/// One job of a budget sweep.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SweepJob {
    /// The budget at this index of the (ascending) budget list.
    Budget(usize),
    /// The design of this scenario (index in plan order).
    Design(usize),
}

/// The sweep's job list: every budget, then every scenario design when there are two or more
/// scenarios (with one, the sweep makes no designs).
pub fn sweep_jobs(budgets: usize, scenarios: usize) -> Vec<SweepJob> {
    let designs = if scenarios > 1 { scenarios } else { 0 };
    (0..budgets)
        .map(SweepJob::Budget)
        .chain((0..designs).map(SweepJob::Design))
        .collect()
}

/// A sweep's parts, joined: the budgets' runs and the designs' rows, each in job order.
/// Errors say which job's record cannot be read.
pub fn sweep_outcomes(
    outcomes: &[Outcome],
    cells: usize,
) -> Result<(Vec<crate::study::SweepRun>, Vec<crate::study::StressRow>), String> {
    let mut runs = Vec::new();
    let mut rows = Vec::new();
    for (j, o) in outcomes.iter().enumerate() {
        match o {
            Outcome::Budget(b) => runs.push(b.run(cells).map_err(|e| format!("job {j}: {e}"))?),
            Outcome::Design(d) => rows.push(d.row(cells).map_err(|e| format!("job {j}: {e}"))?),
            Outcome::Unit(_) => {
                return Err(format!("job {j}: a replacement-cost result in a sweep"));
            }
        }
    }
    Ok((runs, rows))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_job_is_in_exactly_one_shard() {
        // Enumeration: for 1..=12 jobs and every N ≤ jobs, the shards' job lists partition
        // 0..jobs and each shard takes every N-th job.
        for total in 1..=12 {
            for n in 1..=total {
                let mut seen = vec![0; total];
                for k in 1..=n {
                    let s = ShardSpec { k, n };
                    let jobs = s.jobs(total);
                    assert!(jobs.windows(2).all(|w| w[1] - w[0] == n));
                    for j in jobs {
                        assert!(s.picks(j));
                        seen[j] += 1;
                    }
                }
                assert!(seen.iter().all(|&c| c == 1), "{total} jobs, {n} shards");
            }
        }
        // Hand: 10 jobs in 4 shards → shard 2 has jobs 1, 5, 9.
        assert_eq!(ShardSpec { k: 2, n: 4 }.jobs(10), vec![1, 5, 9]);
    }

    #[test]
    fn shard_specs_parse_or_say_what_is_expected() {
        assert_eq!(ShardSpec::parse("2/4").unwrap(), ShardSpec { k: 2, n: 4 });
        for bad in ["0/4", "5/4", "2", "a/b", "1/0"] {
            let e = ShardSpec::parse(bad).unwrap_err().to_string();
            assert!(
                e.contains(bad) && e.contains("expected") || e.contains("whole"),
                "{e}"
            );
        }
        let e = ShardSpec { k: 1, n: 9 }
            .check(6, "4 budgets and 2 scenario designs")
            .unwrap_err()
            .to_string();
        assert!(e.contains("only 6 jobs") && e.contains("at most 6"), "{e}");
    }

    #[test]
    fn the_sweep_job_list_is_budgets_then_designs() {
        use SweepJob::*;
        assert_eq!(
            sweep_jobs(2, 3),
            vec![Budget(0), Budget(1), Design(0), Design(1), Design(2)]
        );
        assert_eq!(sweep_jobs(2, 1), vec![Budget(0), Budget(1)]);
    }
}
