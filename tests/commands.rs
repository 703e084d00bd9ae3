//! `assess`, `compare` and `sweep` through the command line on a coarse copy of the demo.

mod common;

use std::path::Path;
use std::process::Command;

fn run(args: &[&std::ffi::OsStr]) -> String {
    let out = Command::new(env!("CARGO_BIN_EXE_driftplan"))
        .args(args)
        .arg("--quiet")
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{:?} failed:\n{}",
        args,
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8_lossy(&out.stdout).into_owned()
}

fn os(s: &str) -> &std::ffi::OsStr {
    std::ffi::OsStr::new(s)
}

fn read_csv(path: &Path) -> Vec<csv::StringRecord> {
    csv::Reader::from_path(path)
        .unwrap()
        .records()
        .map(|r| r.unwrap())
        .collect()
}

#[test]
fn assess_compare_and_sweep_agree_with_solve() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let plan = common::plan_with_gap(d, "max_share = 0.5", "objective = \"min-cost\"", 0.0);
    let solved = d.join("solved");
    run(&[
        os("solve"),
        plan.as_os_str(),
        os("--out"),
        solved.as_os_str(),
    ]);

    // assess of the network solve wrote reproduces solve's own coverage exactly.
    let assessed = d.join("assessed");
    run(&[
        os("assess"),
        plan.as_os_str(),
        solved.join("network.geojson").as_os_str(),
        os("--out"),
        assessed.as_os_str(),
    ]);
    assert_eq!(
        std::fs::read_to_string(solved.join("coverage.csv")).unwrap(),
        std::fs::read_to_string(assessed.join("coverage.csv")).unwrap()
    );
    // The stress matrix of solve has a row per scenario and the robust row, each scored in
    // the three scenarios; the robust (every-scenario) network meets every target in each.
    let stress = read_csv(&solved.join("stress.csv"));
    assert_eq!(stress.len(), 4 * 3);
    for r in stress.iter().filter(|r| r[0].starts_with("robust")) {
        assert_eq!(&r[3], &r[4], "robust network misses targets in {}", &r[2]);
    }
    assert!(std::fs::read_to_string(solved.join("report.html"))
        .unwrap()
        .contains("<svg"));

    // compare: a network with itself shows no split targets and ties everywhere; a strict
    // superset (every cell of the network plus the first unchosen cell) is better or equal
    // on every coverage measure.
    let cells = read_csv(&solved.join("cells.csv"));
    let hdr = csv::Reader::from_path(solved.join("cells.csv"))
        .unwrap()
        .headers()
        .unwrap()
        .clone();
    let sel_col = hdr.iter().position(|h| h == "selected").unwrap();
    let id_col = hdr.iter().position(|h| h == "cell").unwrap();
    let mut ids: Vec<String> = cells
        .iter()
        .filter(|r| &r[sel_col] == "true" || &r[sel_col] == "1")
        .map(|r| r[id_col].to_string())
        .collect();
    let extra = cells
        .iter()
        .find(|r| !(&r[sel_col] == "true" || &r[sel_col] == "1"))
        .unwrap()[id_col]
        .to_string();
    ids.push(extra);
    let superset = d.join("superset.csv");
    std::fs::write(&superset, format!("cell\n{}\n", ids.join("\n"))).unwrap();
    let cmp = d.join("cmp");
    let table = run(&[
        os("compare"),
        plan.as_os_str(),
        solved.join("network.geojson").as_os_str(),
        solved.join("network.geojson").as_os_str(),
        superset.as_os_str(),
        os("--names"),
        os("a,b,bigger"),
        os("--no-stress"),
        os("--out"),
        cmp.as_os_str(),
    ]);
    assert!(
        table.contains("3 networks compared: a, b, bigger"),
        "{table}"
    );
    assert!(table.contains("Ranking: target coverage first"), "{table}");
    let page = std::fs::read_to_string(cmp.join("report.html")).unwrap();
    assert_eq!(page.matches("class=\"map panel\"").count(), 3);
    assert!(page.contains("<h2>Measures</h2>") && page.contains("<h2>Features</h2>"));
    // One network is refused, pointing at assess.
    let one = Command::new(env!("CARGO_BIN_EXE_driftplan"))
        .arg("compare")
        .arg(&plan)
        .arg(solved.join("network.geojson"))
        .arg("--out")
        .arg(d.join("one"))
        .output()
        .unwrap();
    assert!(!one.status.success());
    let err = String::from_utf8_lossy(&one.stderr);
    assert!(
        err.contains("two or more networks") && err.contains("driftplan assess"),
        "{err}"
    );
    assert!(!d.join("one").exists());
    // Ranking rule through the CLI: a network of half the chosen cells is cheaper but misses
    // targets (the min-cost optimum has no cheaper network meeting them all), so it is listed
    // as not ranked and is never best on cost.
    let half = d.join("half.csv");
    let chosen = &ids[..ids.len() - 1];
    std::fs::write(
        &half,
        format!("cell\n{}\n", chosen[..chosen.len() / 2].join("\n")),
    )
    .unwrap();
    let cmp_half = d.join("cmp-half");
    let table_half = run(&[
        os("compare"),
        plan.as_os_str(),
        solved.join("network.geojson").as_os_str(),
        half.as_os_str(),
        os("--names"),
        os("optimum,half"),
        os("--no-stress"),
        os("--out"),
        cmp_half.as_os_str(),
    ]);
    assert!(
        table_half.contains("Not ranked, misses targets: half."),
        "{table_half}"
    );
    let jh: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(cmp_half.join("compare.json")).unwrap())
            .unwrap();
    assert_eq!(jh["ranked"], serde_json::json!(["optimum"]));
    let cost = jh["measures"]
        .as_array()
        .unwrap()
        .iter()
        .find(|m| m["measure"] == "cost")
        .unwrap();
    assert!(cost["values"][1].as_f64().unwrap() < cost["values"][0].as_f64().unwrap());
    assert_eq!(cost["best"], serde_json::json!(["optimum"]));
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(cmp.join("compare.json")).unwrap()).unwrap();
    for m in json["measures"].as_array().unwrap() {
        let v: Vec<f64> = m["values"]
            .as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_f64().unwrap_or(f64::NAN))
            .collect();
        let name = m["measure"].as_str().unwrap();
        assert!(
            v[0] == v[1] || (v[0].is_nan() && v[1].is_nan()),
            "{name}: {v:?}"
        );
        if name.starts_with("targets_reached") || name.ends_with("protected_share") {
            assert!(v[2] >= v[0] - 1e-12, "{name}: superset worse {v:?}");
        }
        if ["cost", "area_km2", "cells_selected"].contains(&name) {
            assert!(v[2] > v[0], "{name}: superset must be larger {v:?}");
        }
    }

    // sweep: benefit never decreases with the budget (up to the reported gap), and the
    // first budget that meets each target is one whose row meets it.
    let sw = d.join("sweep");
    run(&[
        os("sweep"),
        plan.as_os_str(),
        os("--budgets"),
        os("2%,4%,...,12%"),
        os("--out"),
        sw.as_os_str(),
    ]);
    let rows = read_csv(&sw.join("sweep.csv"));
    assert_eq!(rows.len(), 6);
    // One benefit column per scenario of the plan (three in the demo), not a packed string.
    let header = csv::Reader::from_path(sw.join("sweep.csv"))
        .unwrap()
        .headers()
        .unwrap()
        .clone();
    let col = |name: &str| header.iter().position(|h| h == name).unwrap();
    let benefit_cols: Vec<usize> = (0..header.len())
        .filter(|&i| header[i].starts_with("benefit_"))
        .collect();
    assert_eq!(benefit_cols.len(), 3, "{header:?}");
    assert!(header.iter().any(|h| h == "benefit_ssp2-4.5"), "{header:?}");
    for r in &rows {
        for &i in &benefit_cols {
            let b: f64 = r[i].parse().unwrap();
            assert!(b >= 0.0 && !r[i].starts_with('-'), "{r:?}");
        }
    }
    // One network per budget in networks/, its reserves' costs adding up to the row's cost.
    for r in &rows {
        let share: f64 = r[0].parse().unwrap();
        let file = sw.join("networks").join(format!(
            "{}.geojson",
            driftplan::study::sweep::budget_stem(share)
        ));
        let gj: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(&file).unwrap()).unwrap();
        let cost: f64 = gj["features"]
            .as_array()
            .unwrap()
            .iter()
            .map(|f| f["properties"]["cost"].as_f64().unwrap())
            .sum();
        let want: f64 = r[col("cost")].parse().unwrap();
        assert!((cost - want).abs() <= 1e-3 * want.max(1.0), "{file:?}");
    }
    assert!(sw.join("networks/budget-2pct.geojson").exists());
    let report = std::fs::read_to_string(sw.join("report.html")).unwrap();
    assert!(report.contains("Network at each budget"));
    assert_eq!(report.matches("class=\"map panel\"").count(), 6);
    let mut last = f64::NEG_INFINITY;
    for r in &rows {
        let objective: f64 = r[col("objective")].parse().unwrap();
        let gap: f64 = r[col("gap")].parse().unwrap();
        assert!(objective >= last - gap * objective.abs() - 1e-9, "{r:?}");
        last = objective;
    }
    // Budgets measured in cost: cost and benefit both never fall (study::sweep module doc;
    // checked against enumeration in tests/study.rs).
    let swc = d.join("sweep-cost");
    run(&[
        os("sweep"),
        plan.as_os_str(),
        os("--budgets"),
        os("4%,6%,...,12%"),
        os("--budget-of"),
        os("cost"),
        os("--out"),
        swc.as_os_str(),
    ]);
    let crows = read_csv(&swc.join("sweep.csv"));
    for w in crows.windows(2) {
        let (a, b) = (&w[0], &w[1]);
        let num = |r: &csv::StringRecord, c: &str| -> f64 { r[col(c)].parse().unwrap() };
        assert!(num(b, "cost") >= num(a, "cost") - 1e-6, "{a:?} → {b:?}");
        assert!(
            num(b, "objective") >= num(a, "objective") - 1e-6,
            "{a:?} → {b:?}"
        );
        assert!(num(a, "cost") <= num(a, "budget_cost") + 1e-6);
    }
    let freq = read_csv(&sw.join("selection-frequency.csv"));
    assert_eq!(freq.len(), cells.len());
    assert!(freq.iter().all(|r| {
        let s: f64 = r[1].parse().unwrap();
        (0.0..=1.0).contains(&s)
    }));
    let gj: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(sw.join("selection-frequency.geojson")).unwrap(),
    )
    .unwrap();
    assert_eq!(gj["features"].as_array().unwrap().len(), cells.len());
    // Each cell carries its class, the same word as in selection-frequency.csv.
    for (f, r) in gj["features"].as_array().unwrap().iter().zip(&freq) {
        assert_eq!(f["properties"]["class"].as_str().unwrap(), &r[2]);
    }
    assert!(freq
        .iter()
        .all(|r| ["core", "frequent", "occasional", "never"].contains(&&r[2])));
}

#[test]
fn a_missing_network_file_is_named_once() {
    let tmp = tempfile::tempdir().unwrap();
    let plan = common::plan_with_gap(
        tmp.path(),
        "max_share = 0.5",
        "objective = \"min-cost\"",
        0.0,
    );
    let out = Command::new(env!("CARGO_BIN_EXE_driftplan"))
        .arg("assess")
        .arg(&plan)
        .arg(tmp.path().join("nothere.geojson"))
        .arg("--out")
        .arg(tmp.path().join("o"))
        .output()
        .unwrap();
    assert!(!out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(!err.contains("panicked"), "{err}");
    assert_eq!(err.matches("nothere.geojson").count(), 1, "{err}");
    assert!(!tmp.path().join("o").exists(), "no half-written output");
}
