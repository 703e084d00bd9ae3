//! One run per output folder (`export::run_folder`) through the command line: the manifest
//! against coreutils' `sha256sum`, re-runs that write fewer files, `--out` refused up front,
//! and SIGTERM / SIGKILL in the middle of a run.

mod common;

use common::{os, plan_with, run_quiet};
use std::path::Path;
use std::process::Command;
use std::time::{Duration, Instant};

fn manifest(dir: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(dir.join("run.json")).unwrap()).unwrap()
}

fn listed(dir: &Path) -> Vec<String> {
    manifest(dir)["files"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["path"].as_str().unwrap().to_string())
        .collect()
}

fn staging_folders(dir: &Path) -> Vec<String> {
    std::fs::read_dir(dir)
        .map(|r| {
            r.flatten()
                .map(|e| e.file_name().to_string_lossy().into_owned())
                .filter(|n| n.starts_with(".driftplan-staging-"))
                .collect()
        })
        .unwrap_or_default()
}

fn verify(dir: &Path) -> std::process::Output {
    run_quiet(&[os("verify"), dir.as_os_str()])
}

#[test]
fn the_manifest_matches_sha256sum_and_a_rerun_removes_what_it_did_not_write() {
    let tmp = tempfile::tempdir().unwrap();
    let plan = plan_with(tmp.path(), "max_share = 0.4", "objective = \"min-cost\"");
    let out = tmp.path().join("out");
    let o = run_quiet(&[os("solve"), plan.as_os_str(), os("--out"), out.as_os_str()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let files = listed(&out);
    assert!(files.contains(&"stress.csv".to_string()));
    assert!(files.contains(&"network.geojson".to_string()));
    assert_eq!(staging_folders(&out), Vec::<String>::new());
    // Every listed file's SHA-256 as GNU coreutils' sha256sum computes it.
    let m = manifest(&out);
    for f in m["files"].as_array().unwrap() {
        let path = out.join(f["path"].as_str().unwrap());
        let sum = Command::new("sha256sum").arg(&path).output().unwrap();
        let text = String::from_utf8_lossy(&sum.stdout);
        assert_eq!(
            text.split_whitespace().next().unwrap(),
            f["sha256"].as_str().unwrap(),
            "{}",
            path.display()
        );
        assert_eq!(
            std::fs::metadata(&path).unwrap().len(),
            f["bytes"].as_u64().unwrap()
        );
    }
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    assert_eq!(m["plan_sha256"], summary["plan_sha256"]);
    assert!(m["plan_sha256"].as_str().unwrap().len() == 64);
    assert_eq!(m["command"], "solve");
    let v = verify(&out);
    assert!(v.status.success(), "{}", String::from_utf8_lossy(&v.stderr));
    assert!(String::from_utf8_lossy(&v.stdout).contains("one complete run"));
    let with_plan = run_quiet(&[
        os("verify"),
        out.as_os_str(),
        os("--plan"),
        plan.as_os_str(),
    ]);
    assert!(with_plan.status.success());

    // A re-run without the stress test: the first run's stress.csv must not stay behind.
    let o = run_quiet(&[
        os("solve"),
        plan.as_os_str(),
        os("--out"),
        out.as_os_str(),
        os("--no-stress"),
    ]);
    assert!(o.status.success());
    assert!(!out.join("stress.csv").exists());
    assert!(!listed(&out).contains(&"stress.csv".to_string()));
    assert!(verify(&out).status.success());

    // An edit to the plan: verify --plan says the folder is of another version of it.
    let mut text = std::fs::read_to_string(&plan).unwrap();
    text.push_str("\n# edited\n");
    std::fs::write(&plan, text).unwrap();
    let v = run_quiet(&[
        os("verify"),
        out.as_os_str(),
        os("--plan"),
        plan.as_os_str(),
    ]);
    assert_eq!(v.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&v.stderr).contains("another version of the plan"));

    // A hand-edited output is found.
    std::fs::write(out.join("coverage.csv"), "edited\n").unwrap();
    let v = verify(&out);
    assert_eq!(v.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&v.stderr).contains("coverage.csv"));
}

#[test]
fn a_bad_out_fails_before_any_work_and_names_the_path() {
    let tmp = tempfile::tempdir().unwrap();
    let plan = plan_with(tmp.path(), "max_share = 0.4", "objective = \"min-cost\"");
    let file = tmp.path().join("taken.txt");
    std::fs::write(&file, "mine").unwrap();
    for (out, says) in [
        (file.clone(), "existing file"),
        (file.join("below"), "which is a file"),
    ] {
        for cmd in ["solve", "grid", "sweep"] {
            let mut args = vec![os(cmd), plan.as_os_str(), os("--out"), out.as_os_str()];
            if cmd == "sweep" {
                args.extend([os("--budgets"), os("10%,20%")]);
            }
            let o = run_quiet(&args);
            let err = String::from_utf8_lossy(&o.stderr);
            assert_eq!(o.status.code(), Some(1), "{cmd}: {err}");
            assert!(err.contains(&out.display().to_string()), "{cmd}: {err}");
            assert!(err.contains(says), "{cmd}: {err}");
        }
    }
    assert_eq!(std::fs::read_to_string(&file).unwrap(), "mine");
}

#[test]
fn a_failed_run_leaves_the_earlier_run_whole_and_a_first_failed_run_leaves_nothing() {
    let tmp = tempfile::tempdir().unwrap();
    let plan = plan_with(tmp.path(), "max_share = 0.4", "objective = \"min-cost\"");
    let out = tmp.path().join("out");
    assert!(
        run_quiet(&[os("grid"), plan.as_os_str(), os("--out"), out.as_os_str()])
            .status
            .success()
    );
    let before = std::fs::read(out.join("run.json")).unwrap();
    let missing = tmp.path().join("missing.geojson");
    let o = run_quiet(&[
        os("assess"),
        plan.as_os_str(),
        missing.as_os_str(),
        os("--out"),
        out.as_os_str(),
    ]);
    assert_eq!(o.status.code(), Some(1));
    assert_eq!(std::fs::read(out.join("run.json")).unwrap(), before);
    assert!(verify(&out).status.success());
    assert_eq!(staging_folders(&out), Vec::<String>::new());

    let fresh = tmp.path().join("fresh/out");
    let o = run_quiet(&[
        os("assess"),
        plan.as_os_str(),
        missing.as_os_str(),
        os("--out"),
        fresh.as_os_str(),
    ]);
    assert_eq!(o.status.code(), Some(1));
    assert!(!fresh.exists(), "a failed first run leaves no folder");
}

/// Starts a long `solve` of the full-resolution demo into `out` and waits until its staging
/// folder exists and it has worked a little.
fn start_long_solve(tmp: &Path, out: &Path) -> std::process::Child {
    let plan = tmp.join("scenarios/demo.toml");
    let child = Command::new(env!("CARGO_BIN_EXE_driftplan"))
        .args(["solve", "--quiet", "--time-limit", "600"])
        .arg(&plan)
        .arg("--out")
        .arg(out)
        .spawn()
        .unwrap();
    let start = Instant::now();
    while staging_folders(out).is_empty() {
        assert!(
            start.elapsed() < Duration::from_secs(60),
            "no staging folder"
        );
        std::thread::sleep(Duration::from_millis(50));
    }
    std::thread::sleep(Duration::from_millis(1500));
    child
}

fn wait(mut child: std::process::Child) -> std::process::ExitStatus {
    // A hang guard, not a timing check: stopping takes well under a second.
    let start = Instant::now();
    loop {
        if let Some(s) = child.try_wait().unwrap() {
            return s;
        }
        if start.elapsed() > Duration::from_secs(120) {
            let _ = child.kill();
            panic!("driftplan did not stop after the signal");
        }
        std::thread::sleep(Duration::from_millis(50));
    }
}

#[test]
fn sigterm_and_sigint_remove_the_staging_folder_and_exit_with_the_conventional_code() {
    use std::os::unix::process::ExitStatusExt;
    let tmp = tempfile::tempdir().unwrap();
    let plan = plan_with(tmp.path(), "max_share = 0.4", "objective = \"min-cost\"");
    let out = tmp.path().join("out");
    assert!(
        run_quiet(&[os("grid"), plan.as_os_str(), os("--out"), out.as_os_str()])
            .status
            .success()
    );
    let before = std::fs::read(out.join("grid.csv")).unwrap();
    // 128 + signal number: the shell convention (POSIX `kill -l`: TERM 15, INT 2).
    for (signal, code) in [("TERM", 143), ("INT", 130)] {
        let child = start_long_solve(tmp.path(), &out);
        let pid = child.id().to_string();
        assert!(Command::new("kill")
            .args([&format!("-{signal}"), &pid])
            .status()
            .unwrap()
            .success());
        let status = wait(child);
        assert_eq!(
            status.code(),
            Some(code),
            "{signal}: {status:?} {:?}",
            status.signal()
        );
        assert_eq!(staging_folders(&out), Vec::<String>::new(), "{signal}");
        assert_eq!(std::fs::read(out.join("grid.csv")).unwrap(), before);
        assert!(verify(&out).status.success(), "{signal}");
    }
}

#[test]
fn a_sigkill_leaves_a_staging_folder_that_the_next_run_removes() {
    let tmp = tempfile::tempdir().unwrap();
    let plan = plan_with(tmp.path(), "max_share = 0.4", "objective = \"min-cost\"");
    let out = tmp.path().join("out");
    let mut child = start_long_solve(tmp.path(), &out);
    child.kill().unwrap();
    child.wait().unwrap();
    assert_eq!(staging_folders(&out).len(), 1);
    let v = verify(&out);
    assert_eq!(v.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&v.stderr).contains("no run.json"));
    assert!(
        run_quiet(&[os("grid"), plan.as_os_str(), os("--out"), out.as_os_str()])
            .status
            .success()
    );
    assert_eq!(staging_folders(&out), Vec::<String>::new());
    assert!(verify(&out).status.success());
}
