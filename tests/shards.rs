//! A sweep split into shards and merged equals a one-machine sweep, byte for byte apart from
//! timing fields; a merge refuses a missing, incomplete, other-plan or other-argument shard.
//! (The reference is the one-machine run of the same command: the merge must reproduce it.)

mod common;

use common::{os, plan_with_gap, run_quiet};
use std::path::{Path, PathBuf};

const BUDGETS: &str = "2%,4%,...,12%";

/// A time limit no solve reaches, even on a loaded machine: the merge equals the one-machine
/// run only while no solve stops at its limit (the two runs share the limit out differently).
const LIMIT: &str = "3000";

fn sweep(plan: &Path, out: &Path, extra: &[&str]) {
    let mut args = vec![
        os("sweep"),
        plan.as_os_str(),
        os("--budgets"),
        os(BUDGETS),
        os("--out"),
        out.as_os_str(),
    ];
    if !extra.contains(&"--time-limit") {
        args.extend([os("--time-limit"), os(LIMIT)]);
    }
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

/// The merged folder holds the one-machine run's files with the same bytes, but for
/// report.html's solve time.
fn assert_same_outputs(plain: &Path, merged: &Path) {
    let files = outputs(plain);
    assert_eq!(files, outputs(merged), "the same files");
    assert!(files.len() >= 3, "{files:?}");
    for f in &files {
        let a = std::fs::read(plain.join(f)).unwrap();
        let b = std::fs::read(merged.join(f)).unwrap();
        if f == "report.html" {
            assert_eq!(
                without_timing(&String::from_utf8(a).unwrap()),
                without_timing(&String::from_utf8(b).unwrap()),
                "report.html differs beyond its solve time"
            );
        } else {
            let (a, b) = (String::from_utf8_lossy(&a), String::from_utf8_lossy(&b));
            let first = a.lines().zip(b.lines()).find(|(x, y)| x != y);
            assert!(
                a == b,
                "{f} differs between the plain and the merged run, first at {first:?}"
            );
        }
    }
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

    assert_same_outputs(&plain, &study);
    assert!(outputs(&plain).contains(&"networks/budget-12pct.geojson".to_string()));
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

/// Replacement cost of `plan` on one machine and in two shards merged: the same outputs.
fn replacement_shards_equal_plain(d: &Path, plan: &Path) -> PathBuf {
    let irr = |out: &Path, extra: &[&str]| {
        let mut args = vec![
            os("irreplaceability"),
            plan.as_os_str(),
            os("--out"),
            out.as_os_str(),
            os("--time-limit"),
            os(LIMIT),
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
    assert_same_outputs(&plain, &study);
    study
}

#[test]
fn merged_replacement_cost_of_a_zoned_plan_equals_the_one_machine_run() {
    // The coarse demo with no-take and partial-use zones (as tests/zones_cli.rs): the optimum's
    // zones and each re-solve's zones cross the shard files too.
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let plan = common::plan_with(
        d,
        "",
        "objective = \"min-cost\"\nrobustness = \"every-scenario\"",
    );
    let mut text = std::fs::read_to_string(&plan).unwrap();
    text.push_str(
        "\n[[zones]]\nname = \"no-take\"\ntarget = 0.1\n\n[[zones]]\nname = \"partial-use\"\ncost_share = 0.4\ncredit = 0.5\n",
    );
    let zoned = d.join("scenarios/zoned.toml");
    std::fs::write(&zoned, text).unwrap();
    let study = replacement_shards_equal_plain(d, &zoned);
    let network = std::fs::read_to_string(study.join("network.geojson")).unwrap();
    assert!(
        network.contains("no-take"),
        "the merged network carries its zones"
    );
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
    let study = replacement_shards_equal_plain(d, &plan);
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

#[test]
fn the_generated_slurm_scripts_run_by_hand_give_the_plain_run() {
    // Slurm runs the array script once per task with SLURM_ARRAY_TASK_ID set, in --chdir;
    // bash does the same here (the #SBATCH lines are comments to it). The real scheduler is
    // exercised by scripts/slurm-test.sh (the next test).
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let plan = plan_with_gap(d, "max_share = 0.5", "objective = \"min-cost\"", 0.0);
    let rel = plan.strip_prefix(d).unwrap();
    let plain = d.join("plain");
    let mut args = vec![os("sweep"), plan.as_os_str(), os("--budgets"), os("4%,8%")];
    args.extend([
        os("--time-limit"),
        os(LIMIT),
        os("--out"),
        plain.as_os_str(),
    ]);
    assert!(run_quiet(&args).status.success());
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_driftplan"))
        .current_dir(d)
        .args([
            "cluster",
            "slurm",
            "--shards",
            "2",
            "--account",
            "sea-lab",
            "sweep",
        ])
        .arg(rel)
        .args([
            "--budgets",
            "4%,8%",
            "--time-limit",
            LIMIT,
            "--out",
            "study",
        ])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    let printed = String::from_utf8_lossy(&o.stdout);
    assert!(printed.contains("submit.sh"), "{printed}");
    let script = std::fs::read_to_string(d.join("study/slurm/shards.sbatch")).unwrap();
    assert!(script.contains("#SBATCH --array=1-2\n"), "{script}");
    assert!(script.contains("#SBATCH --account=sea-lab\n"), "{script}");
    let submit = std::fs::read_to_string(d.join("study/slurm/submit.sh")).unwrap();
    assert!(submit.contains("--dependency=afterok:$array"), "{submit}");
    let task = |k: &str| {
        let o = std::process::Command::new("bash")
            .arg(d.join("study/slurm/shards.sbatch"))
            .current_dir(d)
            .env("SLURM_ARRAY_TASK_ID", k)
            .env("SLURM_CPUS_PER_TASK", "1")
            .output()
            .unwrap();
        assert!(o.status.success(), "task {k}: {}", stderr(&o));
        String::from_utf8_lossy(&o.stdout).into_owned()
    };
    task("1");
    task("2");
    // Resumable: a task whose shard is complete keeps it.
    assert!(task("1").contains("shard 1 of 2 is complete already: kept"));
    let o = std::process::Command::new("bash")
        .arg(d.join("study/slurm/merge.sbatch"))
        .current_dir(d)
        .output()
        .unwrap();
    assert!(o.status.success(), "merge: {}", stderr(&o));
    assert_same_outputs(&plain, &d.join("study"));
    // Studies whose solves depend on each other are refused with the reason.
    let o = run_quiet(&[
        os("cluster"),
        os("slurm"),
        os("portfolio"),
        plan.as_os_str(),
        os("--out"),
        d.join("p").as_os_str(),
    ]);
    assert!(!o.status.success());
    assert!(
        stderr(&o).contains("needs the one before it"),
        "{}",
        stderr(&o)
    );
}

#[test]
fn a_real_slurm_cluster_runs_the_sharded_sweep() {
    // scripts/slurm-test.sh starts a one-node Slurm cluster (installing slurm-wlm and munge
    // when missing), so it runs only when asked: DRIFTPLAN_SLURM_TEST=1 runs it and accepts
    // the script's "skipped" (77, the cluster could not start; the reason is printed);
    // DRIFTPLAN_SLURM_TEST=require makes a skip a failure.
    let want = std::env::var("DRIFTPLAN_SLURM_TEST").unwrap_or_default();
    if want != "1" && want != "require" {
        eprintln!(
            "skipped: the real Slurm test runs with DRIFTPLAN_SLURM_TEST=1 (it installs and starts a one-node cluster)"
        );
        return;
    }
    let tmp = tempfile::tempdir().unwrap();
    let plan = plan_with_gap(
        tmp.path(),
        "max_share = 0.5",
        "objective = \"min-cost\"",
        0.0,
    );
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("scripts/slurm-test.sh");
    let o = std::process::Command::new("bash")
        .arg(script)
        .arg(env!("CARGO_BIN_EXE_driftplan"))
        .arg(&plan)
        .output()
        .unwrap();
    let text = format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
    eprintln!("{text}");
    match o.status.code() {
        Some(0) => assert!(text.contains("PASSED"), "{text}"),
        Some(77) if want != "require" => eprintln!("skipped by the script (reason above)"),
        other => panic!("scripts/slurm-test.sh ended with {other:?}:\n{text}"),
    }
}

/// A shard that reads the inputs cache `driftplan features` wrote gives the same outputs as one
/// that reads the plan's files; a cache of another plan, or a file that is no cache, is refused
/// naming the file.
#[test]
fn a_shard_reading_the_inputs_cache_equals_one_reading_the_files() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let plan = plan_with_gap(d, "max_share = 0.4", "objective = \"max-benefit\"", 0.0);
    let feats = d.join("features");
    let o = run_quiet(&[
        os("features"),
        plan.as_os_str(),
        os("--out"),
        feats.as_os_str(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let cache = feats.join("inputs.bin");
    assert!(cache.is_file());
    let (from_files, from_cache) = (d.join("files"), d.join("cache"));
    sweep(&plan, &from_files, &["--shard", "1/2"]);
    sweep(
        &plan,
        &from_cache,
        &["--shard", "1/2", "--inputs", cache.to_str().unwrap()],
    );
    // Shards hold their results in shard.json: the same but for each solve's seconds.
    fn without_seconds(v: &mut serde_json::Value) {
        match v {
            serde_json::Value::Object(m) => {
                m.remove("seconds");
                m.values_mut().for_each(without_seconds);
            }
            serde_json::Value::Array(a) => a.iter_mut().for_each(without_seconds),
            _ => {}
        }
    }
    let read = |dir: &Path| {
        let mut v: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(dir.join("shard.json")).unwrap())
                .unwrap();
        without_seconds(&mut v);
        v
    };
    let (a, b) = (read(&from_files), read(&from_cache));
    assert!(a.to_string().len() > 200, "{a}");
    assert_eq!(a, b, "the cache changed a shard's results");

    // The plan edited after the cache was made: its hash differs, the cache is refused.
    let text = std::fs::read_to_string(&plan).unwrap();
    std::fs::write(&plan, format!("{text}\n# edited\n")).unwrap();
    let o = run_quiet(&[
        os("sweep"),
        plan.as_os_str(),
        os("--budgets"),
        os("4%"),
        os("--inputs"),
        cache.as_os_str(),
        os("--out"),
        d.join("stale").as_os_str(),
    ]);
    assert_eq!(o.status.code(), Some(1));
    let e = stderr(&o);
    assert!(
        e.contains("inputs.bin") && e.contains("another version of the plan"),
        "{e}"
    );
    // A file that is no cache.
    let o = run_quiet(&[
        os("sweep"),
        plan.as_os_str(),
        os("--budgets"),
        os("4%"),
        os("--inputs"),
        plan.as_os_str(),
        os("--out"),
        d.join("bogus").as_os_str(),
    ]);
    let e = stderr(&o);
    assert!(e.contains("not an inputs cache"), "{e}");
}
