//! Solver defaults and plans that cannot be reached, through the command line on a coarse copy of
//! the demo: the defaults are printed, `check` names the budget key the required cells break,
//! an over-tight budget writes `diagnosis.csv` and exits with its own code, and least-regret
//! never reports a negative regret.

mod common;

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use common::{os, run_quiet as driftplan};

fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).into_owned()
}

fn ok(out: Output) -> String {
    assert!(out.status.success(), "failed:\n{}", text(&out.stderr));
    text(&out.stdout)
}

fn read_json(path: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// `plan` without its `[solver]` table, written beside it.
fn without_solver(plan: &Path) -> PathBuf {
    let t = std::fs::read_to_string(plan).unwrap();
    let mut kept = String::new();
    let mut skip = false;
    for line in t.lines() {
        if line.starts_with('[') {
            skip = line == "[solver]";
        }
        if !skip {
            kept.push_str(line);
            kept.push('\n');
        }
    }
    let path = plan.with_file_name("no-solver.toml");
    std::fs::write(&path, kept).unwrap();
    path
}

#[test]
fn solver_defaults_are_printed_by_check_and_solve() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let stated = common::plan_with(d, "max_share = 0.5", "objective = \"min-cost\"");
    let plan = without_solver(&stated);
    // The defaults (plan::DEFAULT_GAP, plan::DEFAULT_TIME_LIMIT_S; issue 10: 0.5 % and 300 s).
    let line = "gap 0.5% (default), time limit 300 s for all solves (default)";
    let checked = ok(driftplan(&[os("check"), plan.as_os_str()]));
    assert!(checked.contains(line), "{checked}");
    let out = d.join("out");
    let solved = ok(driftplan(&[
        os("solve"),
        plan.as_os_str(),
        os("--no-stress"),
        os("--out"),
        out.as_os_str(),
    ]));
    assert!(solved.contains(line), "{solved}");
    let s = read_json(&out.join("summary.json"));
    assert!(s["gap"].as_f64().unwrap() <= 0.005 + 1e-9);
    assert_eq!(s["warnings"], serde_json::json!([]));
    assert!(std::fs::read_to_string(out.join("report.html"))
        .unwrap()
        .contains(line));
    // Stated values are shown as stated, and the command line overrides them.
    let checked = ok(driftplan(&[os("check"), stated.as_os_str()]));
    assert!(
        checked.contains("gap 0%, time limit 60 s for all solves") && !checked.contains("default"),
        "{checked}"
    );
    let solved = ok(driftplan(&[
        os("solve"),
        stated.as_os_str(),
        os("--no-stress"),
        os("--time-limit"),
        os("45"),
        os("--out"),
        out.as_os_str(),
    ]));
    assert!(
        solved.contains("gap 0%, time limit 45 s for all solves"),
        "{solved}"
    );
}

#[test]
fn check_names_the_budget_key_the_required_cells_break() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    for (budget, key) in [
        (
            "max_cost = 1",
            "`budget.max_cost` = 1 is below the cost of the required cells",
        ),
        ("max_share = 0.0001", "`budget.max_share` = 0.0001"),
    ] {
        let plan = common::plan_with(d, budget, "objective = \"min-cost\"");
        for cmd in ["check", "solve"] {
            let o = d.join("o");
            let mut args = vec![os(cmd), plan.as_os_str()];
            if cmd == "solve" {
                args.extend([os("--out"), o.as_os_str()]);
            }
            let out = driftplan(&args);
            let err = text(&out.stderr);
            // A bad plan: exit code 1, not 3 ("cannot be reached" is for plans that are valid).
            assert_eq!(out.status.code(), Some(1), "{cmd} {budget}: {err}");
            assert!(err.contains(key), "{cmd} {budget}: {err}");
            assert!(err.contains(&plan.display().to_string()), "{err}");
            assert!(err.contains("protected.geojson"), "{err}");
        }
    }
}

#[test]
fn an_over_tight_budget_writes_a_diagnosis_and_exits_3() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    // The least cost meeting every target, from a solve without a binding budget (gap 0).
    let free = common::plan_with(d, "max_share = 1", "objective = \"min-cost\"");
    let out = d.join("free");
    ok(driftplan(&[
        os("solve"),
        free.as_os_str(),
        os("--no-stress"),
        os("--out"),
        out.as_os_str(),
    ]));
    let s = read_json(&out.join("summary.json"));
    let least = s["cost"].as_f64().unwrap();
    let least_share = s["share_of_region"].as_f64().unwrap();
    // Half that cost cannot meet every target.
    let budget = format!("max_cost = {:.0}", least / 2.0);
    let plan = common::plan_with(d, &budget, "objective = \"min-cost\"");
    let out = d.join("tight");
    let run = driftplan(&[os("solve"), plan.as_os_str(), os("--out"), out.as_os_str()]);
    let err = text(&run.stderr);
    assert_eq!(run.status.code(), Some(3), "{err}");
    assert!(err.contains("`budget.max_cost`"), "{err}");
    // The message gives the least cost found above (both solves exact), with its share.
    let expect = format!(
        "the cheapest network that meets every target costs {least:.1} ({:.1}% of the region)",
        100.0 * least_share
    );
    assert!(err.contains(&expect), "{err}\nexpected: {expect}");
    // No more than ten shortfalls are listed; the rest are counted.
    let listed = err
        .lines()
        .filter(|l| l.starts_with("  ") && l.contains('%'))
        .count();
    assert!(listed <= 10, "{err}");
    let rows: Vec<csv::StringRecord> = csv::Reader::from_path(out.join("diagnosis.csv"))
        .unwrap()
        .records()
        .map(|r| r.unwrap())
        .collect();
    // One row per feature with a target: 3 species × 3 scenarios × 4 years.
    assert_eq!(rows.len(), 36);
    let num = |r: &csv::StringRecord, i: usize| r[i].parse::<f64>().unwrap();
    let mut short = 0;
    for r in &rows {
        let (total, target, best, share, gap) =
            (num(r, 1), num(r, 2), num(r, 3), num(r, 4), num(r, 6));
        assert!(best <= total + 1e-9 && best >= 0.0, "{r:?}");
        assert!((share - best / total).abs() < 1e-6, "{r:?}");
        // shortfall = max(target − best, 0) (its definition).
        assert!(
            (gap - (target - best).max(0.0)).abs() < 1e-6 * target.max(1.0),
            "{r:?}"
        );
        short += (gap > 0.0) as usize;
    }
    assert!(short > 0);
    if short > 10 {
        assert!(err.contains(&format!("and {} more", short - 10)), "{err}");
    } else {
        assert_eq!(listed, short, "{err}");
    }
    // Nothing else is written for a plan that cannot be reached.
    assert!(!out.join("summary.json").exists());
}

#[test]
fn least_regret_regret_is_never_negative() {
    // A loose gap (20 %) leaves each scenario's best benefit Bₛ* short of its optimum, the
    // case in which a robust network could "beat" it; regret is ≥ 0 by definition
    // (min-max regret, Kouvelis & Yu 1997, from memory) in summary.json and stress.csv.
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let plan = common::plan_with_gap(
        d,
        "max_share = 0.03",
        "objective = \"max-benefit\"\nrobustness = \"least-regret\"",
        0.2,
    );
    let out = d.join("out");
    ok(driftplan(&[
        os("solve"),
        plan.as_os_str(),
        os("--out"),
        out.as_os_str(),
    ]));
    let s = read_json(&out.join("summary.json"));
    assert!(s["objective"].as_f64().unwrap() >= 0.0);
    for x in s["scenarios"].as_array().unwrap() {
        let regret = x["regret"].as_f64().unwrap();
        assert!(regret >= 0.0, "{x}");
        assert!(
            x["best"].as_f64().unwrap() >= x["benefit"].as_f64().unwrap(),
            "{x}"
        );
    }
    let mut seen = 0;
    for r in csv::Reader::from_path(out.join("stress.csv"))
        .unwrap()
        .records()
    {
        let r = r.unwrap();
        if let Ok(regret) = r[7].parse::<f64>() {
            assert!(regret >= 0.0, "{r:?}");
            seen += 1;
        }
    }
    // Every network (3 scenario designs + the robust one) in every scenario has a regret.
    assert_eq!(seen, 12);
}

/// A tiny invented plan: a 0.36° × 0.2° box near 40°S on a 10 km grid (12 cells), two species
/// and a cost from one CSV lattice, targets 50 %, a cost budget of `max_cost`, solved exactly.
fn tiny_plan(dir: &Path, max_cost: f64) -> PathBuf {
    std::fs::create_dir_all(dir.join("data")).unwrap();
    std::fs::write(
        dir.join("data/region.geojson"),
        r#"{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},"geometry":{"type":"Polygon","coordinates":[[[150.0,-40.2],[150.36,-40.2],[150.36,-40.0],[150.0,-40.0],[150.0,-40.2]]]}}]}"#,
    )
    .unwrap();
    let mut csv = String::from("lon,lat,kelp,sponge,cost\n");
    for i in -2i32..12 {
        for j in -2i32..10 {
            csv.push_str(&format!(
                "{:.3},{:.3},{},{},{}\n",
                150.0 + 0.04 * i as f64,
                -40.2 + 0.03 * j as f64,
                ((i * 7 + j * 3).rem_euclid(5)) as f64 / 4.0,
                ((i * 2 + j * 5).rem_euclid(3)) as f64 / 2.0,
                1 + (i * 3 + j * 5).rem_euclid(7)
            ));
        }
    }
    std::fs::write(dir.join("data/layers.csv"), csv).unwrap();
    let plan = dir.join("tiny.toml");
    std::fs::write(
        &plan,
        format!(
            r#"name = "tiny"
region = "data/region.geojson"
[grid]
cell_size_km = 10
crs = "auto"
[scenarios]
names = ["now"]
years = [2030]
[targets]
default = 0.5
[cost]
path = "data/layers.csv"
column = "cost"
[budget]
max_cost = {max_cost}
[optimise]
objective = "min-cost"
robustness = "every-scenario"
[solver]
gap = 0
[[species]]
name = "kelp"
habitat = {{ path = "data/layers.csv", column = "kelp" }}
[[species]]
name = "sponge"
habitat = {{ path = "data/layers.csv", column = "sponge" }}
"#
        ),
    )
    .unwrap();
    plan
}

#[test]
fn diagnosis_rows_equal_brute_force_on_a_tiny_plan() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    // Per-cell cost and amounts as driftplan samples them (`features` writes cells.csv).
    let plan = tiny_plan(d, 1.0);
    ok(driftplan(&[
        os("features"),
        plan.as_os_str(),
        os("--out"),
        d.join("f").as_os_str(),
    ]));
    let mut rdr = csv::Reader::from_path(d.join("f/cells.csv")).unwrap();
    let head = rdr.headers().unwrap().clone();
    let col = |name: &str| head.iter().position(|h| h == name).unwrap();
    let c_cost = col("cost");
    let c_feat = [
        col("habitat_kelp_now_2030_km2"),
        col("habitat_sponge_now_2030_km2"),
    ];
    let cells: Vec<csv::StringRecord> = rdr.records().map(|r| r.unwrap()).collect();
    let n = cells.len();
    assert!((6..=16).contains(&n), "{n} cells");
    let v = |r: &csv::StringRecord, c: usize| r[c].parse::<f64>().unwrap();
    let cost: Vec<f64> = cells.iter().map(|r| v(r, c_cost)).collect();
    let amount: Vec<Vec<f64>> = c_feat
        .iter()
        .map(|&c| cells.iter().map(|r| v(r, c)).collect())
        .collect();
    // A budget of a quarter of the region's cost cannot buy half of both species here.
    let budget = (0.25 * cost.iter().sum::<f64>()).round();
    let plan = tiny_plan(d, budget);
    let out = d.join("out");
    let run = driftplan(&[os("solve"), plan.as_os_str(), os("--out"), out.as_os_str()]);
    let err = text(&run.stderr);
    assert_eq!(run.status.code(), Some(3), "{err}");
    let rows: Vec<csv::StringRecord> = csv::Reader::from_path(out.join("diagnosis.csv"))
        .unwrap()
        .records()
        .map(|r| r.unwrap())
        .collect();
    assert_eq!(rows.len(), 2);
    // Brute force over all 2ⁿ networks (independent of the solvers).
    let protected = |k: usize, mask: u32| -> f64 {
        (0..n)
            .filter(|i| mask & (1 << i) != 0)
            .map(|i| amount[k][i])
            .sum()
    };
    let spent = |mask: u32| -> f64 {
        (0..n)
            .filter(|i| mask & (1 << i) != 0)
            .map(|i| cost[i])
            .sum()
    };
    let targets: Vec<f64> = rows.iter().map(|r| r[2].parse().unwrap()).collect();
    for (k, r) in rows.iter().enumerate() {
        let total: f64 = amount[k].iter().sum();
        let best = (0u32..1 << n)
            .filter(|&m| spent(m) <= budget)
            .map(|m| protected(k, m))
            .fold(0.0, f64::max);
        let got: f64 = r[3].parse().unwrap();
        assert!(
            (got - best).abs() <= 1e-6 * best.max(1.0),
            "{r:?}: brute force {best}"
        );
        let share: f64 = r[4].parse().unwrap();
        assert!((share - best / total).abs() < 1e-6, "{r:?}");
        assert!((targets[k] - 0.5 * total).abs() < 1e-6 * total, "{r:?}");
    }
    // The cheapest network meeting both targets without the budget, by brute force.
    let cheapest = (0u32..1 << n)
        .filter(|&m| (0..2).all(|k| protected(k, m) >= targets[k] * (1.0 - 1e-9)))
        .map(spent)
        .fold(f64::INFINITY, f64::min);
    assert!(cheapest > budget);
    assert!(
        err.contains(&format!("meets every target costs {cheapest:.1} (")),
        "{err}\nbrute force: {cheapest}"
    );
}

#[test]
fn the_time_limit_is_shared_by_the_main_solve_and_the_stress_test() {
    // solve::time (and README): with a stress test to follow, the main solve may use half of
    // the limit; the 3 stress solves share what is left in ⌈3 / workers⌉ rounds — 3 rounds on
    // one worker. Hand computation for --time-limit 40: main 20 s; stress at most 40/3 = 13.3 s
    // each, and at least (40 − 10)/3 = 10 s since the coarse demo solves in far less than 10 s.
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let plan = common::plan_with(d, "max_share = 0.5", "objective = \"min-cost\"");
    let out = Command::new(env!("CARGO_BIN_EXE_driftplan"))
        .env("RAYON_NUM_THREADS", "1")
        .args([
            os("solve"),
            plan.as_os_str(),
            os("--time-limit"),
            os("40"),
            os("--out"),
        ])
        .arg(d.join("out"))
        .output()
        .unwrap();
    let err = text(&out.stderr);
    assert!(out.status.success(), "{err}");
    assert!(
        err.contains(
            "time limit 40 s for all solves; this solve at most 20 s, the stress test the rest"
        ),
        "{err}"
    );
    let each: f64 = err
        .split("scenarios alone (at most ")
        .nth(1)
        .and_then(|t| t.split(' ').next())
        .and_then(|t| t.parse().ok())
        .unwrap_or_else(|| panic!("no stress limit in:\n{err}"));
    assert!((10.0..=13.34).contains(&each), "{each} s each\n{err}");
}
