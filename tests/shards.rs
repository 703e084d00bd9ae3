//! A sweep split into shards and merged equals a one-machine sweep, byte for byte apart from
//! timing fields; a merge refuses a missing, incomplete, other-plan or other-argument shard.
//! (The reference is the one-machine run of the same command: the merge must reproduce it.)

mod common;

use common::{os, plan_with_gap, run_quiet};
use std::path::{Path, PathBuf};

const BUDGETS: &str = "2%,4%,...,12%";

fn sweep(plan: &Path, out: &Path, extra: &[&str]) {
    let mut args = vec![
        os("sweep"),
        plan.as_os_str(),
        os("--budgets"),
        os(BUDGETS),
        os("--out"),
        out.as_os_str(),
    ];
    args.extend(extra.iter().map(|s| os(s)));
    let o = run_quiet(&args);
    assert!(
        o.status.success(),
        "sweep {extra:?}: {}",
        String::from_utf8_lossy(&o.stderr)
    );
}

fn merge(dir: &Path) -> std::process::Output {
    run_quiet(&[os("merge"), dir.as_os_str()])
}

/// Files a manifest lists as outputs, sorted.
fn outputs(dir: &Path) -> Vec<String> {
    let m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("run.json")).unwrap()).unwrap();
    m["files"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["path"].as_str().unwrap().to_string())
        .collect()
}

/// The report with its one timing field (the shown network's solve time) blanked.
fn without_timing(report: &str) -> String {
    let key = "solve time";
    let at = report.find(key).expect("the report shows the solve time");
    let end = at
        + report[at..]
            .find(" s<")
            .expect("solve time ends with ` s<`");
    format!("{}{key}…{}", &report[..at], &report[end..])
}

fn copy_dir(from: &Path, to: &Path) {
    let ok = std::process::Command::new("cp")
        .arg("-a")
        .arg(from)
        .arg(to)
        .status()
        .unwrap()
        .success();
    assert!(ok);
}

fn stderr(o: &std::process::Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

#[test]
fn merged_shards_equal_the_one_machine_sweep() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let plan = plan_with_gap(d, "max_share = 0.5", "objective = \"min-cost\"", 0.0);
    let plain = d.join("plain");
    sweep(&plan, &plain, &[]);
    // 6 budgets and 3 scenario designs: 9 jobs in 4 shards (3, 2, 2, 2 jobs).
    let study = d.join("study");
    let shard_dir = |k: usize| study.join("shards").join(k.to_string());
    for k in 1..=4 {
        sweep(&plan, &shard_dir(k), &["--shard", &format!("{k}/4")]);
    }
    let o = merge(&study);
    assert!(o.status.success(), "{}", stderr(&o));

    let files = outputs(&plain);
    assert_eq!(files, outputs(&study), "the same files");
    assert!(files.contains(&"networks/budget-12pct.geojson".to_string()));
    assert!(files.contains(&"sweep.csv".to_string()));
    for f in &files {
        let a = std::fs::read(plain.join(f)).unwrap();
        let b = std::fs::read(study.join(f)).unwrap();
        if f == "report.html" {
            assert_eq!(
                without_timing(&String::from_utf8(a).unwrap()),
                without_timing(&String::from_utf8(b).unwrap()),
                "report.html differs beyond its solve time"
            );
        } else {
            assert!(a == b, "{f} differs between the plain and the merged run");
        }
    }
    // The merged folder verifies, its shards stay (each its own run), and the manifest is the
    // plain run's apart from the finishing time and report.html's hash.
    let v = run_quiet(&[os("verify"), study.as_os_str()]);
    assert!(v.status.success(), "{}", stderr(&v));
    let manifest = |dir: &Path| -> serde_json::Value {
        let mut m: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(dir.join("run.json")).unwrap()).unwrap();
        m["finished_utc"] = serde_json::Value::Null;
        for f in m["files"].as_array_mut().unwrap() {
            if f["path"] == "report.html" {
                f["sha256"] = serde_json::Value::Null;
                f["bytes"] = serde_json::Value::Null;
            }
        }
        m
    };
    assert_eq!(manifest(&plain), manifest(&study));

    // A missing shard is named.
    let missing = d.join("missing");
    copy_dir(&study, &missing);
    std::fs::remove_dir_all(missing.join("shards/3")).unwrap();
    let o = merge(&missing);
    assert!(!o.status.success());
    let e = stderr(&o);
    assert!(
        e.contains("shards/3") && e.contains("shard 3 of 4 is missing"),
        "{e}"
    );

    // An incomplete shard (a file changed after its run) is named, with the reason.
    let broken = d.join("broken");
    copy_dir(&study, &broken);
    std::fs::write(broken.join("shards/2/shard.json"), "{}").unwrap();
    let o = merge(&broken);
    assert!(!o.status.success());
    let e = stderr(&o);
    assert!(
        e.contains("shards/2") && e.contains("not one complete run"),
        "{e}"
    );

    // A shard of another version of the plan.
    let other_plan = d.join("other-plan");
    copy_dir(&study, &other_plan);
    let changed: PathBuf = plan.with_file_name("changed.toml");
    let mut text = std::fs::read_to_string(&plan).unwrap();
    text.push_str("\n# a comment changes the plan's hash\n");
    std::fs::write(&changed, text).unwrap();
    sweep(&changed, &other_plan.join("shards/4"), &["--shard", "4/4"]);
    let o = merge(&other_plan);
    assert!(!o.status.success());
    let e = stderr(&o);
    assert!(e.contains("shards/4") && e.contains("plan hash"), "{e}");

    // A shard run with other study arguments.
    let other_args = d.join("other-args");
    copy_dir(&study, &other_args);
    sweep(
        &plan,
        &other_args.join("shards/2"),
        &["--shard", "2/4", "--time-limit", "50"],
    );
    let o = merge(&other_args);
    assert!(!o.status.success());
    let e = stderr(&o);
    assert!(
        e.contains("shards/2") && e.contains("study arguments differ") && e.contains("time_limit"),
        "{e}"
    );

    // More shards than jobs is refused before any work.
    let o = run_quiet(&[
        os("sweep"),
        plan.as_os_str(),
        os("--budgets"),
        os(BUDGETS),
        os("--shard"),
        os("1/10"),
        os("--out"),
        d.join("too-many").as_os_str(),
    ]);
    assert!(!o.status.success());
    assert!(stderr(&o).contains("only 9 jobs"), "{}", stderr(&o));
}

#[test]
fn merged_replacement_cost_shards_equal_the_one_machine_run() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let plan = common::plan_with(
        d,
        "",
        "objective = \"min-cost\"\nrobustness = \"every-scenario\"",
    );
    let irr = |out: &Path, extra: &[&str]| {
        let mut args = vec![
            os("irreplaceability"),
            plan.as_os_str(),
            os("--out"),
            out.as_os_str(),
        ];
        args.extend(extra.iter().map(|s| os(s)));
        let o = run_quiet(&args);
        assert!(o.status.success(), "{extra:?}: {}", stderr(&o));
    };
    let plain = d.join("plain");
    irr(&plain, &[]);
    let units = std::fs::read_to_string(plain.join("irreplaceability.csv"))
        .unwrap()
        .lines()
        .count()
        - 1;
    assert!(units >= 2, "the coarse demo's optimum has {units} reserves");
    let study = d.join("study");
    for k in 1..=2 {
        irr(
            &study.join("shards").join(k.to_string()),
            &["--shard", &format!("{k}/2")],
        );
    }
    let o = merge(&study);
    assert!(o.status.success(), "{}", stderr(&o));
    let files = outputs(&plain);
    assert_eq!(files, outputs(&study));
    for f in &files {
        let a = String::from_utf8(std::fs::read(plain.join(f)).unwrap()).unwrap();
        let b = String::from_utf8(std::fs::read(study.join(f)).unwrap()).unwrap();
        if f == "report.html" {
            assert_eq!(without_timing(&a), without_timing(&b));
        } else {
            assert!(a == b, "{f} differs between the plain and the merged run");
        }
    }
    // Shards of a sweep and of replacement cost do not mix.
    let mixed = d.join("mixed");
    copy_dir(&study, &mixed);
    std::fs::remove_dir_all(mixed.join("shards/2")).unwrap();
    let o = run_quiet(&[
        os("sweep"),
        plan.as_os_str(),
        os("--budgets"),
        os("10%,20%"),
        os("--shard"),
        os("2/2"),
        os("--out"),
        mixed.join("shards/2").as_os_str(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let o = merge(&mixed);
    assert!(!o.status.success());
    let e = stderr(&o);
    assert!(
        e.contains("shards/2") && e.contains("is a shard of `sweep`"),
        "{e}"
    );
}
