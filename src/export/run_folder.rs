//! One run per output folder, whole or marked as not whole.
//!
//! Each file is already written atomically ([`super::write_atomic`]); this module makes the
//! *set* atomic enough to trust. A run writes every output into a staging folder inside
//! `--out` (`.driftplan-staging-<pid>`). Only when all of them are written does
//! [`RunFolder::finish`] take the earlier run's manifest away, remove the earlier run's outputs
//! that this run did not write, move the new files into place and write the manifest
//! `run.json` last: every file with its size and SHA-256, the plan's hash, the driftplan
//! version and the outcome. So at every moment the folder either holds one complete run (its
//! `run.json` matches every file) or has no `run.json` and [`verify`] says it is incomplete.
//!
//! A run that fails, or is stopped by SIGINT/SIGTERM ([`abandon_all`]), removes its staging
//! folder and leaves the earlier run untouched. A staging folder or temp file left by a
//! SIGKILL is removed by the next run into the folder. Files in the folder that no run wrote
//! (the user's own, a plan's inputs) are never touched and are listed by [`verify`] as not part
//! of the run. Uninterruptible: the final moves (renames in one folder, milliseconds); a signal
//! then waits for them, so the folder ends whole.

use super::{write_atomic, ExportError};
use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};
use std::path::{Path, PathBuf};
use std::sync::Mutex;

/// The manifest's file name.
pub const MANIFEST: &str = "run.json";

/// Prefix of a run's staging folder inside `--out`.
const STAGING_PREFIX: &str = ".driftplan-staging-";

/// Outputs a driftplan run may write: removed from a folder without a manifest (written by a
/// driftplan before manifests, or by an interrupted run) when the new run does not write them,
/// so they cannot pass for this run's.
const KNOWN_OUTPUTS: &[&str] = &[
    "network.geojson",
    "cells.geojson",
    "cells.csv",
    "coverage.csv",
    "reserves.csv",
    "driftplan.gpkg",
    "summary.json",
    "diagnosis.csv",
    "features.csv",
    "edge-shifts.csv",
    "stress.csv",
    "report.html",
    "assessment.json",
    "compare.csv",
    "compare.json",
    "portfolio.csv",
    "selection-share.geojson",
    "rank.csv",
    "rank-curve.csv",
    "rank.geojson",
    "zones.csv",
    "irreplaceability.csv",
    "sweep.csv",
    "first-reached.csv",
    "selection-frequency.csv",
    "selection-frequency.geojson",
    "grid.geojson",
    "grid.csv",
    "shard.json",
    "inputs.bin",
];

/// Staging folders of runs in progress in this process, for [`abandon_all`]. Also held by
/// [`RunFolder::finish`] while it moves files, so a signal waits for a whole folder.
static ACTIVE: Mutex<Vec<Active>> = Mutex::new(Vec::new());

#[derive(Debug, Clone)]
struct Active {
    staging: PathBuf,
    out: PathBuf,
    created_out: bool,
}

/// What a file of a run is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Role {
    /// Written by the run; replaced or removed by the next run into the folder.
    Output,
    /// Read by the run and kept in the folder (the demo's data and plan); never removed.
    Input,
}

/// One file of a run.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct ManifestFile {
    /// Path relative to the output folder, `/`-separated.
    pub path: String,
    /// Size. Units: bytes.
    pub bytes: u64,
    /// SHA-256 of the contents, lowercase hex.
    pub sha256: String,
    /// Output or input.
    pub role: Role,
}

/// The contents of `run.json`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Manifest {
    /// driftplan's version.
    pub driftplan_version: String,
    /// The command that wrote the folder (`solve`, `sweep`, ...).
    pub command: String,
    /// The plan file as given on the command line.
    pub plan: String,
    /// SHA-256 of the plan file (as in summary.json).
    pub plan_sha256: String,
    /// Always true: the manifest is written only once every file is in place.
    pub completed: bool,
    /// How the run ended (`done`, or `targets cannot be reached`).
    pub outcome: String,
    /// When the manifest was written, UTC, ISO 8601 (a timing field: differs between runs).
    pub finished_utc: String,
    /// Every file of the run, sorted by path.
    pub files: Vec<ManifestFile>,
}

/// An output folder being written by one run.
#[derive(Debug)]
pub struct RunFolder {
    out: PathBuf,
    staging: PathBuf,
    created_out: bool,
    command: String,
    plan: String,
    plan_hash: String,
    inputs: Vec<String>,
    finished: bool,
}

fn io(path: &Path) -> impl Fn(std::io::Error) -> ExportError + '_ {
    move |source| ExportError::Io {
        path: path.to_path_buf(),
        source,
    }
}

fn invalid(path: &Path, why: String) -> ExportError {
    ExportError::Io {
        path: path.to_path_buf(),
        source: std::io::Error::new(std::io::ErrorKind::InvalidInput, why),
    }
}

/// Checks that `out` can be an output folder before any work: not an existing file, not under
/// a file, and writable. Errors name the path.
pub fn check_out(out: &Path) -> Result<(), ExportError> {
    if out.as_os_str().is_empty() {
        return Err(invalid(out, "`--out` is empty; give a folder".into()));
    }
    if let Ok(m) = std::fs::metadata(out) {
        if !m.is_dir() {
            return Err(invalid(
                out,
                "`--out` is an existing file, expected a folder (choose another path or remove the file)"
                    .into(),
            ));
        }
    }
    let mut p = out.parent();
    while let Some(dir) = p {
        if dir.as_os_str().is_empty() {
            break;
        }
        if let Ok(m) = std::fs::metadata(dir) {
            if !m.is_dir() {
                return Err(invalid(
                    out,
                    format!(
                        "`--out` lies under `{}`, which is a file, not a folder",
                        dir.display()
                    ),
                ));
            }
            break;
        }
        p = dir.parent();
    }
    Ok(())
}

/// Whether a process with this id is running (Linux `/proc`; elsewhere every process counts as
/// gone, so a stale staging folder is always cleaned).
fn alive(pid: u32) -> bool {
    pid == std::process::id() || Path::new(&format!("/proc/{pid}")).exists()
}

/// Removes staging folders and temp files left in `out` by runs that are no longer running
/// (a SIGKILL). Fails if another run is writing into `out` now.
fn clean_stale(out: &Path) -> Result<(), ExportError> {
    let Ok(entries) = std::fs::read_dir(out) else {
        return Ok(());
    };
    for e in entries.flatten() {
        let name = e.file_name().to_string_lossy().into_owned();
        let pid = if let Some(rest) = name.strip_prefix(STAGING_PREFIX) {
            rest.parse::<u32>().ok()
        } else if name.starts_with('.') && name.contains(".tmp-") {
            // write_atomic's `.NAME.tmp-PID-N`.
            name.rsplit(".tmp-")
                .next()
                .and_then(|r| r.split('-').next())
                .and_then(|p| p.parse::<u32>().ok())
        } else {
            continue;
        };
        let Some(pid) = pid else { continue };
        if pid != std::process::id() && alive(pid) {
            if name.starts_with(STAGING_PREFIX) {
                return Err(invalid(
                    out,
                    format!("another driftplan run (process {pid}) is writing into this folder; wait for it or choose another `--out`"),
                ));
            }
            continue;
        }
        let path = e.path();
        let result = if path.is_dir() {
            std::fs::remove_dir_all(&path)
        } else {
            std::fs::remove_file(&path)
        };
        result.map_err(io(&path))?;
    }
    Ok(())
}

impl RunFolder {
    /// Starts a run into `out`: checks the path ([`check_out`]), creates the folder if needed,
    /// removes what a killed run left behind and creates this run's staging folder.
    pub fn begin(out: &Path, command: &str) -> Result<RunFolder, ExportError> {
        check_out(out)?;
        let created_out = !out.exists();
        std::fs::create_dir_all(out).map_err(io(out))?;
        let staging = out.join(format!("{STAGING_PREFIX}{}", std::process::id()));
        let started = (|| {
            clean_stale(out)?;
            if staging.exists() {
                std::fs::remove_dir_all(&staging).map_err(io(&staging))?;
            }
            std::fs::create_dir(&staging).map_err(io(&staging))
        })();
        if let Err(e) = started {
            if created_out {
                let _ = std::fs::remove_dir(out);
            }
            return Err(e);
        }
        lock_active().push(Active {
            staging: staging.clone(),
            out: out.to_path_buf(),
            created_out,
        });
        Ok(RunFolder {
            out: out.to_path_buf(),
            staging,
            created_out,
            command: command.to_string(),
            plan: String::new(),
            plan_hash: String::new(),
            inputs: Vec::new(),
            finished: false,
        })
    }

    /// Where this run writes its outputs until [`RunFolder::finish`].
    pub fn dir(&self) -> &Path {
        &self.staging
    }

    /// The output folder the run ends in (for messages).
    pub fn out(&self) -> &Path {
        &self.out
    }

    /// Records the plan the run is of (its file and hash go into the manifest).
    pub fn set_plan(&mut self, file: &Path, hash: &str) {
        self.plan = file.display().to_string();
        self.plan_hash = hash.to_string();
    }

    /// Lists files already in the output folder (paths relative to it) as the run's inputs:
    /// hashed into the manifest, never removed by a later run.
    pub fn add_inputs(&mut self, relative: impl IntoIterator<Item = String>) {
        self.inputs.extend(relative);
    }

    /// Ends the run: moves every staged file into the output folder in place of the earlier
    /// run's, then writes `run.json`. Returns the manifest written.
    pub fn finish(mut self, outcome: &str) -> Result<Manifest, ExportError> {
        let mut active = lock_active();
        let result = self.commit(outcome);
        active.retain(|a| a.staging != self.staging);
        drop(active);
        self.finished = true;
        let _ = std::fs::remove_dir_all(&self.staging);
        result
    }

    fn commit(&self, outcome: &str) -> Result<Manifest, ExportError> {
        let mut staged = Vec::new();
        walk(&self.staging, &self.staging, &mut staged)?;
        let mut files = Vec::new();
        for rel in &staged {
            let path = self.staging.join(rel);
            let (bytes, sha256) = hash_file(&path)?;
            files.push(ManifestFile {
                path: rel.clone(),
                bytes,
                sha256,
                role: Role::Output,
            });
        }
        for rel in &self.inputs {
            let path = self.out.join(rel);
            let (bytes, sha256) = hash_file(&path)?;
            files.push(ManifestFile {
                path: rel.clone(),
                bytes,
                sha256,
                role: Role::Input,
            });
        }
        files.sort_by(|a, b| a.path.cmp(&b.path));
        // What the earlier run wrote: its manifest's outputs, or (no manifest) any known name.
        let manifest_path = self.out.join(MANIFEST);
        let earlier: Vec<String> = match read_manifest(&manifest_path) {
            Ok(m) => m
                .files
                .into_iter()
                .filter(|f| f.role == Role::Output)
                .map(|f| f.path)
                .collect(),
            Err(_) => legacy_outputs(&self.out),
        };
        if manifest_path.exists() {
            std::fs::remove_file(&manifest_path).map_err(io(&manifest_path))?;
        }
        let new: std::collections::HashSet<&str> = staged.iter().map(String::as_str).collect();
        for rel in earlier.iter().filter(|r| !new.contains(r.as_str())) {
            let path = self.out.join(rel);
            if path.is_file() {
                std::fs::remove_file(&path).map_err(io(&path))?;
                remove_empty_parents(&self.out, &path);
            }
        }
        for rel in &staged {
            let from = self.staging.join(rel);
            let to = self.out.join(rel);
            if let Some(parent) = to.parent() {
                std::fs::create_dir_all(parent).map_err(io(parent))?;
            }
            std::fs::rename(&from, &to).map_err(io(&to))?;
        }
        let manifest = Manifest {
            driftplan_version: env!("CARGO_PKG_VERSION").to_string(),
            command: self.command.clone(),
            plan: self.plan.clone(),
            plan_sha256: self.plan_hash.clone(),
            completed: true,
            outcome: outcome.to_string(),
            finished_utc: utc_now(),
            files,
        };
        let text = serde_json::to_string_pretty(&manifest)
            .map_err(|e| invalid(&manifest_path, format!("cannot encode the manifest: {e}")))?
            + "\n";
        write_atomic(&manifest_path, text.as_bytes())?;
        Ok(manifest)
    }
}

impl Drop for RunFolder {
    /// A run dropped without [`RunFolder::finish`] (an error) leaves no trace: its staging
    /// folder goes, and so does the output folder if the run created it and it is empty.
    fn drop(&mut self) {
        if self.finished {
            return;
        }
        let mut active = lock_active();
        active.retain(|a| a.staging != self.staging);
        discard(&Active {
            staging: self.staging.clone(),
            out: self.out.clone(),
            created_out: self.created_out,
        });
    }
}

fn lock_active() -> std::sync::MutexGuard<'static, Vec<Active>> {
    ACTIVE.lock().unwrap_or_else(|e| e.into_inner())
}

fn discard(a: &Active) {
    let _ = std::fs::remove_dir_all(&a.staging);
    if a.created_out {
        // Fails (harmlessly) unless the folder is empty.
        let _ = std::fs::remove_dir(&a.out);
    }
}

/// Removes the staging folder of every run in progress in this process (for SIGINT/SIGTERM).
/// Waits for a [`RunFolder::finish`] in progress, so the folder it writes ends whole.
pub fn abandon_all() {
    let mut active = lock_active();
    for a in active.drain(..) {
        discard(&a);
    }
}

/// Removes empty folders from `path`'s parent up to (not including) `root`.
fn remove_empty_parents(root: &Path, path: &Path) {
    let mut p = path.parent();
    while let Some(dir) = p {
        if dir == root || std::fs::remove_dir(dir).is_err() {
            break;
        }
        p = dir.parent();
    }
}

/// The known output names present in a folder without a manifest, plus `networks/*.geojson`.
fn legacy_outputs(out: &Path) -> Vec<String> {
    let mut v: Vec<String> = KNOWN_OUTPUTS
        .iter()
        .filter(|n| out.join(n).is_file())
        .map(|n| n.to_string())
        .collect();
    if let Ok(entries) = std::fs::read_dir(out.join("networks")) {
        for e in entries.flatten() {
            let name = e.file_name().to_string_lossy().into_owned();
            if name.ends_with(".geojson") {
                v.push(format!("networks/{name}"));
            }
        }
    }
    v
}

/// Every file under `dir`, relative to `root`, `/`-separated, sorted.
fn walk(root: &Path, dir: &Path, out: &mut Vec<String>) -> Result<(), ExportError> {
    let mut entries: Vec<_> = std::fs::read_dir(dir)
        .map_err(io(dir))?
        .collect::<Result<_, _>>()
        .map_err(io(dir))?;
    entries.sort_by_key(|e| e.file_name());
    for e in entries {
        let path = e.path();
        if path.is_dir() {
            walk(root, &path, out)?;
        } else {
            out.push(relative(root, &path));
        }
    }
    Ok(())
}

fn relative(root: &Path, path: &Path) -> String {
    path.strip_prefix(root)
        .unwrap_or(path)
        .components()
        .map(|c| c.as_os_str().to_string_lossy().into_owned())
        .collect::<Vec<_>>()
        .join("/")
}

/// Size and SHA-256 (lowercase hex) of a file, read in blocks.
pub fn hash_file(path: &Path) -> Result<(u64, String), ExportError> {
    use std::io::Read;
    let mut f = std::fs::File::open(path).map_err(io(path))?;
    let mut h = Sha256::new();
    let mut buf = vec![0u8; 1 << 16];
    let mut n = 0u64;
    loop {
        let k = f.read(&mut buf).map_err(io(path))?;
        if k == 0 {
            break;
        }
        h.update(&buf[..k]);
        n += k as u64;
    }
    let hex = h.finalize().iter().map(|b| format!("{b:02x}")).collect();
    Ok((n, hex))
}

/// Reads a `run.json`.
pub fn read_manifest(path: &Path) -> Result<Manifest, ExportError> {
    let text = std::fs::read_to_string(path).map_err(io(path))?;
    serde_json::from_str(&text).map_err(|e| invalid(path, format!("not a driftplan manifest: {e}")))
}

/// What [`verify`] found.
#[derive(Debug, Clone, PartialEq)]
pub struct Verification {
    /// The manifest, when one could be read.
    pub manifest: Option<Manifest>,
    /// Why the folder is not one complete run (empty: it is).
    pub problems: Vec<String>,
    /// Files in the folder that are not part of the run (not removed, not checked).
    pub others: Vec<String>,
}

impl Verification {
    /// True when the folder holds one complete run.
    pub fn complete(&self) -> bool {
        self.manifest.is_some() && self.problems.is_empty()
    }
}

/// Checks whether `dir` holds one complete run: a readable `run.json` and every file it lists
/// present with its size and SHA-256. With `plan_hash`, the run must also be of that plan.
/// Sub-folders holding their own `run.json` are separate runs and are not listed.
pub fn verify(dir: &Path, plan_hash: Option<&str>) -> Result<Verification, ExportError> {
    let meta = std::fs::metadata(dir).map_err(io(dir))?;
    if !meta.is_dir() {
        return Err(invalid(dir, "is a file, expected an output folder".into()));
    }
    let mut problems = Vec::new();
    let path = dir.join(MANIFEST);
    let manifest = if path.exists() {
        match read_manifest(&path) {
            Ok(m) => Some(m),
            Err(e) => {
                problems.push(e.to_string());
                None
            }
        }
    } else {
        problems.push(format!(
            "no {MANIFEST}: not one complete run (a run was interrupted or failed while replacing this folder, or it was written by hand or by a driftplan before 0.1 manifests)"
        ));
        None
    };
    let mut listed = std::collections::HashSet::new();
    if let Some(m) = &manifest {
        if !m.completed {
            problems.push(format!("{MANIFEST} says the run did not complete"));
        }
        if let Some(h) = plan_hash {
            if m.plan_sha256 != h {
                problems.push(format!(
                    "written for another version of the plan: plan hash {} in {MANIFEST}, {} now",
                    short(&m.plan_sha256),
                    short(h)
                ));
            }
        }
        for f in &m.files {
            listed.insert(f.path.clone());
            let p = dir.join(&f.path);
            match hash_file(&p) {
                Err(_) => problems.push(format!("{}: listed in {MANIFEST} but missing", f.path)),
                Ok((bytes, _)) if bytes != f.bytes => problems.push(format!(
                    "{}: {bytes} bytes, {MANIFEST} says {}",
                    f.path, f.bytes
                )),
                Ok((_, sha)) if sha != f.sha256 => problems.push(format!(
                    "{}: contents differ from {MANIFEST} (SHA-256 {}, expected {})",
                    f.path,
                    short(&sha),
                    short(&f.sha256)
                )),
                Ok(_) => {}
            }
        }
    }
    let mut others = Vec::new();
    other_files(dir, dir, &listed, &mut others)?;
    for o in &others {
        if o.starts_with(STAGING_PREFIX) {
            problems.push(format!(
                "{o}: a run's staging folder (a run is writing now, or one was killed)"
            ));
        }
    }
    others.retain(|o| !o.starts_with(STAGING_PREFIX));
    Ok(Verification {
        manifest,
        problems,
        others,
    })
}

fn short(hash: &str) -> &str {
    &hash[..hash.len().min(12)]
}

fn other_files(
    root: &Path,
    dir: &Path,
    listed: &std::collections::HashSet<String>,
    out: &mut Vec<String>,
) -> Result<(), ExportError> {
    let mut entries: Vec<_> = std::fs::read_dir(dir)
        .map_err(io(dir))?
        .collect::<Result<_, _>>()
        .map_err(io(dir))?;
    entries.sort_by_key(|e| e.file_name());
    for e in entries {
        let path = e.path();
        let rel = relative(root, &path);
        if path.is_dir() {
            if rel.starts_with(STAGING_PREFIX) {
                out.push(rel);
            } else if !path.join(MANIFEST).exists() {
                other_files(root, &path, listed, out)?;
            }
        } else if (dir != root || rel != MANIFEST) && !listed.contains(&rel) {
            out.push(rel);
        }
    }
    Ok(())
}

/// The current time, UTC, as `YYYY-MM-DDTHH:MM:SSZ`.
fn utc_now() -> String {
    let s = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs() as i64)
        .unwrap_or(0);
    utc_iso(s)
}

/// Seconds since 1970-01-01T00:00:00Z as ISO 8601 UTC, through the proleptic Gregorian
/// calendar (days-to-civil algorithm; Hinnant, "chrono-Compatible Low-Level Date Algorithms").
pub fn utc_iso(secs: i64) -> String {
    let days = secs.div_euclid(86_400);
    let rem = secs.rem_euclid(86_400);
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}Z",
        rem / 3600,
        rem % 3600 / 60,
        rem % 60
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    fn write(p: &Path, text: &str) {
        std::fs::create_dir_all(p.parent().unwrap()).unwrap();
        std::fs::write(p, text).unwrap();
    }

    fn names(dir: &Path) -> Vec<String> {
        let mut v = Vec::new();
        walk(dir, dir, &mut v).unwrap();
        v
    }

    #[test]
    fn utc_iso_matches_gnu_date() {
        // `date -u -d @951782400 +%FT%TZ` (GNU coreutils) prints 2000-02-29T00:00:00Z, and
        // `date -u -d @1790000000` 2026-09-21T14:13:20Z; the epoch itself is 1970-01-01.
        assert_eq!(utc_iso(0), "1970-01-01T00:00:00Z");
        assert_eq!(utc_iso(951_782_400), "2000-02-29T00:00:00Z");
        assert_eq!(utc_iso(1_790_000_000), "2026-09-21T14:13:20Z");
    }

    #[test]
    fn sha256_of_abc_is_the_fips_example() {
        // FIPS 180-2, appendix B.1: SHA-256("abc").
        let tmp = tempfile::tempdir().unwrap();
        let p = tmp.path().join("abc.txt");
        std::fs::write(&p, "abc").unwrap();
        let (n, h) = hash_file(&p).unwrap();
        assert_eq!(n, 3);
        assert_eq!(
            h,
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }

    #[test]
    fn a_second_run_replaces_the_first_and_removes_what_it_did_not_write() {
        let tmp = tempfile::tempdir().unwrap();
        let out = tmp.path().join("out");
        let mut r = RunFolder::begin(&out, "solve").unwrap();
        r.set_plan(Path::new("a.toml"), "aaaa");
        write(&r.dir().join("network.geojson"), "first");
        write(&r.dir().join("stress.csv"), "stress");
        write(&r.dir().join("networks/budget-10pct.geojson"), "b10");
        r.finish("done").unwrap();
        write(&out.join("notes.txt"), "the planner's own file");
        assert!(verify(&out, Some("aaaa")).unwrap().complete());

        let mut r = RunFolder::begin(&out, "solve").unwrap();
        r.set_plan(Path::new("a.toml"), "bbbb");
        write(&r.dir().join("network.geojson"), "second");
        let m = r.finish("done").unwrap();
        assert_eq!(
            names(&out),
            vec!["network.geojson", "notes.txt", "run.json"],
            "stress.csv and networks/ of the first run are gone; the user's file stays"
        );
        assert_eq!(m.files.len(), 1);
        assert_eq!(m.files[0].bytes, 6);
        let v = verify(&out, Some("bbbb")).unwrap();
        assert!(v.complete(), "{:?}", v.problems);
        assert_eq!(v.others, vec!["notes.txt"]);
        let old = verify(&out, Some("aaaa")).unwrap();
        assert!(!old.complete());
        assert!(old.problems[0].contains("another version of the plan"));
    }

    #[test]
    fn a_failed_run_leaves_the_earlier_run_whole_and_no_staging() {
        let tmp = tempfile::tempdir().unwrap();
        let out = tmp.path().join("out");
        let r = RunFolder::begin(&out, "solve").unwrap();
        write(&r.dir().join("network.geojson"), "first");
        r.finish("done").unwrap();
        let r = RunFolder::begin(&out, "solve").unwrap();
        write(&r.dir().join("network.geojson"), "half");
        drop(r);
        assert_eq!(names(&out), vec!["network.geojson", "run.json"]);
        assert_eq!(
            std::fs::read_to_string(out.join("network.geojson")).unwrap(),
            "first"
        );
        assert!(verify(&out, None).unwrap().complete());
    }

    #[test]
    fn a_failed_first_run_leaves_no_folder() {
        let tmp = tempfile::tempdir().unwrap();
        let out = tmp.path().join("new/out");
        let r = RunFolder::begin(&out, "solve").unwrap();
        assert!(out.exists());
        drop(r);
        assert!(!out.exists());
    }

    #[test]
    fn verify_finds_a_changed_a_missing_and_an_unlisted_file() {
        let tmp = tempfile::tempdir().unwrap();
        let out = tmp.path().join("out");
        let r = RunFolder::begin(&out, "solve").unwrap();
        write(&r.dir().join("a.csv"), "1,2\n");
        write(&r.dir().join("b.csv"), "3,4\n");
        r.finish("done").unwrap();
        std::fs::write(out.join("a.csv"), "1,3\n").unwrap();
        std::fs::remove_file(out.join("b.csv")).unwrap();
        let v = verify(&out, None).unwrap();
        assert!(!v.complete());
        assert_eq!(v.problems.len(), 2, "{:?}", v.problems);
        assert!(v.problems[0].starts_with("a.csv: contents differ"));
        assert!(v.problems[1].starts_with("b.csv: listed"));
        std::fs::remove_file(out.join(MANIFEST)).unwrap();
        assert!(!verify(&out, None).unwrap().complete());
    }

    #[test]
    fn a_killed_runs_leftovers_are_removed_by_the_next_run() {
        let tmp = tempfile::tempdir().unwrap();
        let out = tmp.path().to_path_buf();
        // Process ids above the kernel's pid_max (4 194 304 at most on Linux; from memory)
        // cannot be running.
        let dead = 4_194_400u32;
        write(
            &out.join(format!("{STAGING_PREFIX}{dead}/network.geojson")),
            "x",
        );
        write(&out.join(format!(".summary.json.tmp-{dead}-0")), "x");
        assert!(!verify(&out, None).unwrap().problems.is_empty());
        let r = RunFolder::begin(&out, "grid").unwrap();
        r.finish("done").unwrap();
        assert_eq!(names(&out), vec!["run.json"]);
    }

    #[test]
    fn a_legacy_folder_loses_known_outputs_the_run_does_not_write() {
        let tmp = tempfile::tempdir().unwrap();
        let out = tmp.path().to_path_buf();
        write(&out.join("stress.csv"), "old");
        write(&out.join("networks/member-2.geojson"), "old");
        write(&out.join("mine.csv"), "keep");
        let r = RunFolder::begin(&out, "solve").unwrap();
        write(&r.dir().join("summary.json"), "{}");
        r.finish("done").unwrap();
        assert_eq!(names(&out), vec!["mine.csv", "run.json", "summary.json"]);
    }

    #[test]
    fn inputs_are_listed_and_never_removed() {
        let tmp = tempfile::tempdir().unwrap();
        let out = tmp.path().to_path_buf();
        write(&out.join("scenarios/plan.toml"), "name = 'x'");
        let mut r = RunFolder::begin(&out, "demo").unwrap();
        r.add_inputs(["scenarios/plan.toml".to_string()]);
        write(&r.dir().join("summary.json"), "{}");
        r.finish("done").unwrap();
        let r = RunFolder::begin(&out, "solve").unwrap();
        write(&r.dir().join("summary.json"), "{}");
        r.finish("done").unwrap();
        assert!(out.join("scenarios/plan.toml").exists());
    }

    #[test]
    fn out_that_is_a_file_or_under_a_file_is_refused_up_front() {
        let tmp = tempfile::tempdir().unwrap();
        let f = tmp.path().join("f.txt");
        std::fs::write(&f, "x").unwrap();
        let e = RunFolder::begin(&f, "solve").unwrap_err().to_string();
        assert!(e.contains("f.txt") && e.contains("existing file"), "{e}");
        let e = RunFolder::begin(&f.join("sub/out"), "solve")
            .unwrap_err()
            .to_string();
        assert!(e.contains("which is a file"), "{e}");
    }
}
