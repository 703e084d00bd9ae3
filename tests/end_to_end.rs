//! End to end through the command line: the demo run, its outputs and clear errors on bad input.

use std::path::{Path, PathBuf};
use std::process::Command;

fn driftplan() -> Command {
    Command::new(env!("CARGO_BIN_EXE_driftplan"))
}

fn read_json(path: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// Runs the demo into a fresh temp dir; returns the dir.
fn run_demo() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    let out = driftplan()
        .args(["demo", "--quiet", "--out"])
        .arg(dir.path())
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "demo failed:\n{}\n{}",
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    );
    dir
}

#[test]
fn demo_run_meets_every_target_respects_rules_and_is_deterministic() {
    let a = run_demo();
    let b = run_demo();

    // Deterministic: two runs give byte-identical networks and coverage.
    for f in ["network.geojson", "coverage.csv"] {
        assert_eq!(
            std::fs::read(a.path().join(f)).unwrap(),
            std::fs::read(b.path().join(f)).unwrap(),
            "{f} differs between runs"
        );
    }

    // The demo generator writes the same files as the committed copies.
    for rel in [
        "demo-data/region.geojson",
        "demo-data/ocean/ssp5-8.5_2090.csv",
        "scenarios/demo.toml",
    ] {
        assert_eq!(
            std::fs::read(a.path().join(rel)).unwrap(),
            std::fs::read(rel).unwrap(),
            "{rel} differs from the committed copy"
        );
    }

    // Every target reached in every scenario and year (coverage.csv recomputed here from the columns).
    let mut rdr = csv::Reader::from_path(a.path().join("coverage.csv")).unwrap();
    let headers = rdr.headers().unwrap().clone();
    let col = |name: &str| {
        headers
            .iter()
            .position(|h| h == name)
            .unwrap_or_else(|| panic!("no column {name}"))
    };
    let (protected, target, scen, year) = (
        col("protected"),
        col("target"),
        col("scenario"),
        col("year"),
    );
    let mut n = 0;
    let mut scenarios = std::collections::BTreeSet::new();
    for rec in rdr.records() {
        let rec = rec.unwrap();
        let h: f64 = rec[protected].parse().unwrap();
        let t: f64 = rec[target].parse().unwrap();
        assert!(h >= t * (1.0 - 1e-6), "target not reached: {:?}", rec);
        scenarios.insert((rec[scen].to_string(), rec[year].to_string()));
        n += 1;
    }
    assert_eq!(n, 12 * 3 * 4, "one row per species × scenario × year");
    assert_eq!(scenarios.len(), 12);

    // Required and excluded cells, and the budget (half the region's sea area).
    let summary = read_json(&a.path().join("summary.json"));
    let share = summary["share_of_region"].as_f64().unwrap();
    assert!(share > 0.0 && share <= 0.5 + 1e-9, "share {share}");
    let cells = read_json(&a.path().join("cells.geojson"));
    let mut required = 0;
    for f in cells["features"].as_array().unwrap() {
        let p = &f["properties"];
        let selected = p["selected"].as_bool().unwrap();
        if p["required_share"].as_f64().unwrap_or(0.0) >= 0.5 {
            assert!(selected, "required cell not selected: {p}");
            required += 1;
        }
        if p["excluded_share"].as_f64().unwrap_or(0.0) >= 0.01 {
            assert!(!selected, "excluded cell selected: {p}");
        }
        // Cells join to reserves: a selected cell names its reserve, others carry null.
        assert_eq!(p["reserve"].is_u64(), selected, "{p}");
    }
    assert!(required > 0, "the demo has required cells");
    // The grid's CRS is recorded: the demo's auto LAEA, a custom CRS without an EPSG code.
    let crs = &summary["grid_crs"];
    assert!(
        crs["proj"].as_str().unwrap().contains("+proj=laea"),
        "{crs}"
    );
    assert!(crs["epsg"].is_null(), "{crs}");
    // Every point-lattice layer's sampling is counted, each cell once.
    let sampling = summary["sampling"].as_array().unwrap();
    assert!(!sampling.is_empty());
    for r in sampling {
        let total: u64 = ["bilinear", "coastal", "nearest", "missing", "pixel_mean"]
            .iter()
            .map(|k| r[k].as_u64().unwrap())
            .sum();
        assert_eq!(
            total as usize,
            cells["features"].as_array().unwrap().len(),
            "{r}"
        );
    }
    let status = summary["status"].as_str().unwrap();
    assert!(
        ["optimal", "gap-limit"].contains(&status),
        "status {status}"
    );
}

/// Copies the committed demo into a temp dir so a test can break one input.
fn demo_copy() -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let out = driftplan()
        .args(["demo", "--quiet", "--data-only", "--out"])
        .arg(dir.path())
        .output()
        .unwrap();
    assert!(out.status.success());
    let plan = dir.path().join("scenarios/demo.toml");
    (dir, plan)
}

fn check_fails_with(plan: &Path, needles: &[&str]) {
    let out = driftplan().arg("check").arg(plan).output().unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(!out.status.success(), "check should fail");
    assert!(!err.contains("panicked"), "no panic: {err}");
    for n in needles {
        assert!(err.contains(n), "error should mention `{n}`:\n{err}");
    }
}

#[test]
fn bad_inputs_give_clear_errors() {
    let (dir, plan) = demo_copy();
    let text = std::fs::read_to_string(&plan).unwrap();

    // Unknown key and a target above 100%, both named in one report.
    std::fs::write(
        &plan,
        text.replace("[grid]\n", "[grid]\ncolour = \"blue\"\n")
            .replace("default = 0.3", "default = 1.5"),
    )
    .unwrap();
    check_fails_with(&plan, &["demo.toml", "grid.colour", "targets.default"]);

    // A missing input file.
    std::fs::write(
        &plan,
        text.replace("shipping-lane.geojson", "lane-gone.geojson"),
    )
    .unwrap();
    check_fails_with(&plan, &["excluded.path", "lane-gone.geojson"]);

    // A malformed GeoJSON.
    std::fs::write(&plan, &text).unwrap();
    std::fs::write(
        dir.path().join("demo-data/protected.geojson"),
        "{\"type\": \"FeatureCollection\", \"features\": [",
    )
    .unwrap();
    check_fails_with(&plan, &["protected.geojson"]);

    // A CSV with NaN: the file and the line are named.
    let (dir2, plan2) = demo_copy();
    let csv = dir2.path().join("demo-data/static.csv");
    let mut lines: Vec<String> = std::fs::read_to_string(&csv)
        .unwrap()
        .lines()
        .map(String::from)
        .collect();
    lines[5] = lines[5]
        .rsplit_once(',')
        .map(|(a, _)| format!("{a},NaN"))
        .unwrap();
    std::fs::write(&csv, lines.join("\n") + "\n").unwrap();
    check_fails_with(&plan2, &["static.csv", "6"]);
}

#[test]
fn climate_demo_holds_leading_edge_and_refugium_targets_in_every_scenario() {
    let dir = tempfile::tempdir().unwrap();
    let out = driftplan()
        .args(["solve", "--quiet", "scenarios/demo-climate.toml", "--out"])
        .arg(dir.path())
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let mut rdr = csv::Reader::from_path(dir.path().join("coverage.csv")).unwrap();
    let headers = rdr.headers().unwrap().clone();
    let col = |name: &str| headers.iter().position(|h| h == name).unwrap();
    let (kind, scen, protected, target) = (
        col("kind"),
        col("scenario"),
        col("protected"),
        col("target"),
    );
    let mut seen = std::collections::BTreeSet::new();
    for rec in rdr.records() {
        let rec = rec.unwrap();
        if ["leading-edge", "refugium"].contains(&&rec[kind]) {
            let (h, t): (f64, f64) = (
                rec[protected].parse().unwrap(),
                rec[target].parse().unwrap(),
            );
            assert!(t > 0.0 && h >= t * (1.0 - 1e-6), "not protected: {rec:?}");
            seen.insert((rec[kind].to_string(), rec[scen].to_string()));
        }
    }
    // Both kinds in all three scenarios.
    assert_eq!(seen.len(), 6, "{seen:?}");
    // The report maps every derived feature in every scenario, first and last year where it
    // has years: the leading edge in all three scenarios in 2030 and 2090, the refugium (one
    // per scenario, no year) in all three, each with its unit on the ramp.
    let report = std::fs::read_to_string(dir.path().join("report.html")).unwrap();
    for sc in ["ssp1-2.6", "ssp2-4.5", "ssp5-8.5"] {
        let mut names = vec![format!("refugium (km²) · {sc}")];
        for year in [2030, 2090] {
            names.push(format!("leading-edge (km²) · {sc} · {year}"));
        }
        for name in names {
            assert!(
                report.contains(&format!("aria-label=\"Map of {name}\"")),
                "{name}"
            );
        }
    }
    // Leading edges shift poleward (positive) in every scenario of the demo.
    let shifts = std::fs::read_to_string(dir.path().join("edge-shifts.csv")).unwrap();
    let mut rdr = csv::Reader::from_reader(shifts.as_bytes());
    let mut mean = std::collections::BTreeMap::<String, (f64, usize)>::new();
    for rec in rdr.records() {
        let rec = rec.unwrap();
        if let Ok(v) = rec[2].parse::<f64>() {
            let e = mean.entry(rec[1].to_string()).or_default();
            e.0 += v;
            e.1 += 1;
        }
    }
    for (scenario, (sum, n)) in &mean {
        assert!(
            sum / *n as f64 > 0.0,
            "{scenario}: mean leading-edge shift {}",
            sum / *n as f64
        );
    }
}

#[test]
fn check_reports_how_lattices_with_land_left_out_were_sampled() {
    // The demo's lattices leave out land points, as ocean products do. `check` must pass, say
    // per group of layers how many cells were bilinear / coastal fallback / nearest /
    // missing, and keep almost every cell bilinear (only cells next to the coast lose a
    // corner).
    let (dir, plan) = demo_copy();
    let text = std::fs::read_to_string(dir.path().join("demo-data/static.csv")).unwrap();
    let rows = text.lines().count() - 1;
    // The full lattice is 46 × 56 points at 0.1° (121.5–117°W, 39.5–34°S).
    assert!(rows < 46 * 56, "land points are left out ({rows} rows)");
    let out = driftplan().arg("check").arg(&plan).output().unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(
        out.status.success(),
        "{stdout}\n{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let line = stdout
        .lines()
        .find(|l| l.contains("sampled habitat ("))
        .unwrap_or_else(|| panic!("no habitat sampling line in:\n{stdout}"));
    let count = |what: &str| -> usize {
        let at = line.find(&format!(" {what}")).unwrap();
        line[..at].rsplit(' ').next().unwrap().parse().unwrap()
    };
    let (bilinear, coastal, nearest) = (
        count("bilinear,"),
        count("coastal fallback"),
        count("nearest,"),
    );
    assert!(coastal > 0, "{line}");
    assert!(bilinear > 10 * (coastal + nearest), "{line}");
    assert!(stdout.contains("sampled sst_c ("), "{stdout}");
}
