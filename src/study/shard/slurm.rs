//! Slurm job scripts for a sharded study: a job array with one task per shard, a merge job
//! that runs once every task has succeeded (`--dependency=afterok`), and a two-line submit
//! script. Pure text; the command line writes the files and runs `sbatch`.
//!
//! Resources come from a size estimate of the plan ([`Resources::estimate`]), stated here so a
//! user can check it against their cluster's accounting (`sacct -o MaxRSS`) and change the
//! `#SBATCH` lines:
//! * **CPUs per task** = the shard's jobs, ⌈jobs ÷ shards⌉, at most 8: a shard solves its jobs
//!   in parallel with one solver thread each (`RAYON_NUM_THREADS` is set to the allocation).
//!   When the job count is unknown before solving (replacement cost: the optimum's reserves),
//!   the plan's `[solver] threads`, or 4.
//! * **Memory** = 512 MiB + the inputs + one problem per CPU, rounded up to 256 MiB, at least
//!   1 GiB. Inputs: cells × (rows × 12 B + 2 KiB) — a feature amount is a 12-byte (cell id,
//!   amount) pair and every row is counted at full density, an upper bound; 2 KiB a cell for
//!   the grid, neighbours and layers. A solve: cells × (rows × 36 B + 1 KiB) — the problem's
//!   copy of the amounts and the solver's column and row copies of the same matrix
//!   (common practice for a sparse LP matrix, no source; see docs/architecture.md for a
//!   measurement on the demo).
//! * **Time** = 1.5 × the plan's time limit (the whole shard's solves share it) + 10 minutes
//!   for reading inputs and writing outputs, in whole minutes.
//! * **The merge** solves nothing: one task's memory with one CPU (it pre-processes the plan
//!   once for the maps and the report), 2 CPUs, 30 minutes.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

/// CPUs and memory for one task.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Resources {
    /// `--cpus-per-task`.
    pub cpus: usize,
    /// `--mem`. Units: MiB.
    pub mem_mib: u64,
    /// `--time`. Units: minutes.
    pub minutes: u64,
}

impl Resources {
    /// The module doc's rule for a plan of `cells` cells and `rows` feature rows, a shard of
    /// `jobs_per_shard` jobs (`None`: unknown, then `threads` CPUs) and a time limit of
    /// `time_limit_s`.
    pub fn estimate(
        cells: usize,
        rows: usize,
        jobs_per_shard: Option<usize>,
        threads: Option<u32>,
        time_limit_s: f64,
    ) -> Resources {
        let cpus = match jobs_per_shard {
            Some(j) => j.clamp(1, 8),
            None => threads.map(|t| t as usize).unwrap_or(4).clamp(1, 8),
        };
        let (cells, rows) = (cells as u64, rows as u64);
        let inputs = cells * (rows * 12 + 2048);
        let solve = cells * (rows * 36 + 1024);
        let mib = 512 + (inputs + cpus as u64 * solve).div_ceil(1 << 20);
        let mem_mib = mib.div_ceil(256).max(4) * 256;
        let minutes = (1.5 * time_limit_s / 60.0).ceil() as u64 + 10;
        Resources {
            cpus,
            mem_mib,
            minutes,
        }
    }
}

impl Resources {
    /// The merge job's resources (module doc).
    pub fn merge(cells: usize, rows: usize) -> Resources {
        Resources {
            cpus: 2,
            minutes: 30,
            ..Resources::estimate(cells, rows, Some(1), None, 0.0)
        }
    }
}

/// Everything the scripts need.
#[derive(Debug, Clone, PartialEq)]
pub struct SlurmJob {
    /// The study (`sweep`, `irreplaceability`), for job names.
    pub study: String,
    /// The driftplan binary as the compute nodes see it.
    pub driftplan: PathBuf,
    /// Working folder of every task (relative paths in the study's arguments are read from here).
    pub workdir: PathBuf,
    /// The study's output folder (absolute): shards go to `shards/K`, scripts and logs to
    /// `slurm/`, the merged outputs into the folder itself.
    pub out: PathBuf,
    /// The plan file as given in the study's arguments (the resume check's `verify --plan`).
    pub plan: PathBuf,
    /// The study's command line after `driftplan`, without `--out` (`sweep plan.toml
    /// --budgets 5%,10%`); the script adds `--shard K/N --out DIR/shards/K`.
    pub command: Vec<String>,
    /// Tasks in the array.
    pub shards: usize,
    /// Each shard task's resources.
    pub task: Resources,
    /// The merge job's resources.
    pub merge: Resources,
    /// `--partition`, when known.
    pub partition: Option<String>,
    /// `--account`, when known.
    pub account: Option<String>,
}

/// The scripts' folder inside the study folder.
pub const SCRIPTS_DIR: &str = "slurm";

/// `word` quoted for a POSIX shell (bare when it holds only safe characters).
pub fn quote(word: &str) -> String {
    let safe = |c: char| c.is_ascii_alphanumeric() || "_./:=%,+-@".contains(c);
    if !word.is_empty() && word.chars().all(safe) {
        word.to_string()
    } else {
        format!("'{}'", word.replace('\'', "'\\''"))
    }
}

fn path(p: &Path) -> String {
    quote(&p.display().to_string())
}

/// `HH:MM:SS` of whole minutes.
fn hms(minutes: u64) -> String {
    format!("{:02}:{:02}:00", minutes / 60, minutes % 60)
}

impl SlurmJob {
    fn header(&self, out: &mut String, name: &str, r: Resources, log: &str) {
        let _ = writeln!(out, "#SBATCH --job-name={}", quote(name));
        let _ = writeln!(out, "#SBATCH --cpus-per-task={}", r.cpus);
        let _ = writeln!(out, "#SBATCH --mem={}M", r.mem_mib);
        let _ = writeln!(out, "#SBATCH --time={}", hms(r.minutes));
        let _ = writeln!(out, "#SBATCH --chdir={}", path(&self.workdir));
        let _ = writeln!(
            out,
            "#SBATCH --output={}",
            path(&self.out.join(SCRIPTS_DIR).join(log))
        );
        match &self.partition {
            Some(p) => {
                let _ = writeln!(out, "#SBATCH --partition={}", quote(p));
            }
            None => {
                out.push_str("##SBATCH --partition=PARTITION   (remove one # and name yours)\n")
            }
        }
        match &self.account {
            Some(a) => {
                let _ = writeln!(out, "#SBATCH --account={}", quote(a));
            }
            None => {
                out.push_str("##SBATCH --account=ACCOUNT       (remove one # and name yours)\n")
            }
        }
    }

    fn preamble(&self, out: &mut String, what: &str) {
        out.push_str("#!/bin/bash\n");
        let _ = writeln!(
            out,
            "# {what}, written by `driftplan cluster slurm` (driftplan {}).",
            env!("CARGO_PKG_VERSION")
        );
        out.push_str(
            "# For your cluster change --partition and --account (or pass them to `driftplan cluster\n\
             # slurm`), --time if a shard needs longer, and DRIFTPLAN if the binary is elsewhere on\n\
             # the compute nodes. CPUs, memory and time follow the estimate in driftplan's docs\n\
             # (docs/architecture.md, \"Studies on a cluster\").\n",
        );
    }

    /// The job array: task K runs shard K of N unless its folder already holds one complete
    /// run of the plan (resumable).
    pub fn array_script(&self) -> String {
        let mut s = String::new();
        self.preamble(&mut s, &format!("Shards of a driftplan {}", self.study));
        self.header(
            &mut s,
            &format!("driftplan-{}", self.study),
            self.task,
            "shard-%a.log",
        );
        let _ = writeln!(s, "#SBATCH --array=1-{}", self.shards);
        s.push_str("set -euo pipefail\n");
        let _ = writeln!(s, "DRIFTPLAN={}", path(&self.driftplan));
        s.push_str("K=${SLURM_ARRAY_TASK_ID:?submit this script with sbatch: it is a job array}\n");
        let _ = writeln!(s, "SHARD={}/$K", path(&self.out.join(super::SHARDS_DIR)));
        s.push_str("export RAYON_NUM_THREADS=${SLURM_CPUS_PER_TASK:-1}\n");
        s.push_str("# Resumable: a shard whose folder already holds one complete run of this plan is kept.\n");
        let _ = writeln!(
            s,
            "if [ -f \"$SHARD/{}\" ] && \"$DRIFTPLAN\" verify \"$SHARD\" --plan {} >/dev/null 2>&1; then",
            super::SHARD_FILE,
            path(&self.plan)
        );
        let _ = writeln!(
            s,
            "  echo \"shard $K of {} is complete already: kept\"\n  exit 0\nfi",
            self.shards
        );
        let _ = writeln!(s, "{}", self.shard_command("$K"));
        s
    }

    /// The command task `k` runs (`k` may be a shell variable).
    pub fn shard_command(&self, k: &str) -> String {
        let args: Vec<String> = self.command.iter().map(|a| quote(a)).collect();
        format!(
            "\"$DRIFTPLAN\" {} --shard \"{k}/{}\" --out \"$SHARD\"",
            args.join(" "),
            self.shards
        )
    }

    /// The merge job (submitted to wait for the whole array).
    pub fn merge_script(&self) -> String {
        let mut s = String::new();
        self.preamble(&mut s, &format!("Merge of a driftplan {}", self.study));
        self.header(
            &mut s,
            &format!("driftplan-{}-merge", self.study),
            self.merge,
            "merge.log",
        );
        s.push_str("set -euo pipefail\n");
        let _ = writeln!(s, "DRIFTPLAN={}", path(&self.driftplan));
        let _ = writeln!(s, "exec \"$DRIFTPLAN\" merge {}", path(&self.out));
        s
    }

    /// The shell commands that submit both: the array, then the merge after every task of it
    /// succeeded.
    pub fn submit_script(&self) -> String {
        let scripts = self.out.join(SCRIPTS_DIR);
        format!(
            "#!/bin/bash\n\
             # Submits the shards as one job array, then the merge to run once every shard has\n\
             # succeeded. Submitting again runs only the shards that are missing or incomplete.\n\
             set -euo pipefail\n\
             array=$(sbatch --parsable {})\n\
             array=${{array%%;*}}\n\
             merge=$(sbatch --parsable --dependency=afterok:$array {})\n\
             echo \"submitted shards as job $array and the merge as job ${{merge%%;*}}\"\n",
            path(&scripts.join("shards.sbatch")),
            path(&scripts.join("merge.sbatch")),
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn job() -> SlurmJob {
        SlurmJob {
            study: "sweep".into(),
            driftplan: "/opt/driftplan/bin/driftplan".into(),
            workdir: "/home/p/work".into(),
            out: "/home/p/work/study one".into(),
            plan: "plans/coast.toml".into(),
            command: vec![
                "sweep".into(),
                "plans/coast.toml".into(),
                "--budgets".into(),
                "5%,10%,...,40%".into(),
            ],
            shards: 4,
            task: Resources {
                cpus: 3,
                mem_mib: 2048,
                minutes: 85,
            },
            merge: Resources {
                cpus: 2,
                mem_mib: 1024,
                minutes: 20,
            },
            partition: Some("short".into()),
            account: None,
        }
    }

    #[test]
    fn the_array_script_runs_one_shard_per_task_and_skips_complete_ones() {
        let s = job().array_script();
        let lines: Vec<&str> = s.lines().collect();
        assert_eq!(lines[0], "#!/bin/bash");
        for want in [
            "#SBATCH --array=1-4",
            "#SBATCH --cpus-per-task=3",
            "#SBATCH --mem=2048M",
            "#SBATCH --time=01:25:00",
            "#SBATCH --chdir=/home/p/work",
            "#SBATCH --output='/home/p/work/study one/slurm/shard-%a.log'",
            "#SBATCH --partition=short",
            "DRIFTPLAN=/opt/driftplan/bin/driftplan",
            "SHARD='/home/p/work/study one/shards'/$K",
            "export RAYON_NUM_THREADS=${SLURM_CPUS_PER_TASK:-1}",
            "if [ -f \"$SHARD/shard.json\" ] && \"$DRIFTPLAN\" verify \"$SHARD\" --plan plans/coast.toml >/dev/null 2>&1; then",
            "\"$DRIFTPLAN\" sweep plans/coast.toml --budgets 5%,10%,...,40% --shard \"$K/4\" --out \"$SHARD\"",
        ] {
            assert!(lines.contains(&want), "missing `{want}` in\n{s}");
        }
        // No account given: a commented line to fill in, which sbatch ignores (`##`).
        assert!(s.contains("##SBATCH --account=ACCOUNT"), "{s}");
        // Every #SBATCH line comes before the first command (sbatch stops reading there).
        let first_cmd = lines.iter().position(|l| l.starts_with("set ")).unwrap();
        assert!(lines[first_cmd..].iter().all(|l| !l.starts_with("#SBATCH")));
    }

    #[test]
    fn the_merge_waits_for_every_shard() {
        let j = job();
        let m = j.merge_script();
        assert!(
            m.lines()
                .any(|l| l == "exec \"$DRIFTPLAN\" merge '/home/p/work/study one'"),
            "{m}"
        );
        assert!(
            m.contains("#SBATCH --mem=1024M") && m.contains("merge.log"),
            "{m}"
        );
        let s = j.submit_script();
        let lines: Vec<&str> = s.lines().collect();
        assert!(
            lines.contains(
                &"array=$(sbatch --parsable '/home/p/work/study one/slurm/shards.sbatch')"
            ),
            "{s}"
        );
        assert!(lines.contains(&"merge=$(sbatch --parsable --dependency=afterok:$array '/home/p/work/study one/slurm/merge.sbatch')"), "{s}");
    }

    #[test]
    fn words_are_quoted_for_the_shell() {
        assert_eq!(quote("5%,10%"), "5%,10%");
        assert_eq!(quote("a b"), "'a b'");
        assert_eq!(quote("it's"), "'it'\\''s'");
        assert_eq!(quote(""), "''");
        assert_eq!(quote("$HOME"), "'$HOME'");
    }

    #[test]
    fn resources_follow_the_stated_rule() {
        // By hand: 100 000 cells, 500 rows, 11 jobs in 4 shards → 3 per shard → 3 CPUs.
        // inputs = 1e5 × (6000 + 2048) = 804 800 000 B; a solve = 1e5 × (18 000 + 1024)
        // = 1 902 400 000 B; 512 MiB + ⌈(804.8e6 + 3 × 1902.4e6) / 2^20⌉ = 512 + 6211 = 6723 MiB
        // → 6912 MiB in 256 MiB steps. Time limit 3600 s → 1.5 h + 10 min = 100 min.
        let r = Resources::estimate(100_000, 500, Some(3), None, 3600.0);
        assert_eq!(
            r,
            Resources {
                cpus: 3,
                mem_mib: 6912,
                minutes: 100
            }
        );
        // A tiny plan gets the 1 GiB floor; unknown job counts take the plan's threads.
        let r = Resources::estimate(500, 36, None, Some(2), 60.0);
        assert_eq!((r.cpus, r.mem_mib, r.minutes), (2, 1024, 12));
        assert_eq!(Resources::estimate(10, 1, Some(40), None, 1.0).cpus, 8);
    }
}
