//! `[[zones]]` through `solve` on a coarse copy of the demo: the outputs are checked against
//! each other from first principles (cells.csv's per-cell amounts, costs and zones), not
//! against the code that wrote them.

mod common;
use common::{os, plan_with, run_quiet};
use std::collections::HashMap;

fn rows(path: &std::path::Path) -> (Vec<String>, Vec<csv::StringRecord>) {
    let mut r = csv::Reader::from_path(path).unwrap();
    let h = r.headers().unwrap().iter().map(String::from).collect();
    (h, r.records().map(|x| x.unwrap()).collect())
}

#[test]
fn zoned_solve_meets_zone_targets_and_counts_partial_credit() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let zoned = zoned_plan(d);
    let out = d.join("out");
    let r = run_quiet(&[os("solve"), zoned.as_os_str(), os("--out"), out.as_os_str()]);
    assert!(r.status.success(), "{}", String::from_utf8_lossy(&r.stderr));

    let (h, cells) = rows(&out.join("cells.csv"));
    let col = |name: &str| h.iter().position(|c| c == name).unwrap();
    let (zone, cost, selected) = (col("zone"), col("cost"), col("selected"));
    // Hand rules of the plan: no-take pays the full cost and counts all habitat, partial use
    // pays 40 % and counts half; outside pays and counts nothing.
    let share = |z: &str| match z {
        "1" => (1.0, 1.0),
        "2" => (0.4, 0.5),
        _ => (0.0, 0.0),
    };
    let mut total_cost = 0.0;
    for c in &cells {
        let (s, _) = share(&c[zone]);
        total_cost += s * c[cost].parse::<f64>().unwrap();
        assert_eq!(
            &c[selected] == "true" || &c[selected] == "1",
            &c[zone] != "0"
        );
    }
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    let reported = summary["cost"].as_f64().unwrap();
    assert!(
        (reported - total_cost).abs() < 1e-6 * total_cost.max(1.0),
        "{reported} vs {total_cost}"
    );

    // Per feature: protected = Σ credit × amount (coverage.csv), reached ⇔ ≥ target, and the
    // no-take zone target: at least 10 % of the total in no-take cells.
    let (_, coverage) = rows(&out.join("coverage.csv"));
    let mut checked = 0;
    for f in &coverage {
        let name = format!("{}_km2", f[0].replace(['/', '-', '.'], "_"));
        let Some(k) = h.iter().position(|c| *c == name) else {
            continue;
        };
        let (mut credited, mut no_take, mut total) = (0.0, 0.0, 0.0);
        for c in &cells {
            let a: f64 = c[k].parse().unwrap_or(0.0);
            total += a;
            credited += share(&c[zone]).1 * a;
            if &c[zone] == "1" {
                no_take += a;
            }
        }
        let protected: f64 = f[6].parse().unwrap();
        assert!(
            (protected - credited).abs() < 1e-6 * total.max(1.0),
            "{}: {protected} vs {credited}",
            &f[0]
        );
        assert!(
            no_take >= 0.1 * total - 1e-6 * total,
            "{}: no-take {no_take} of {total}",
            &f[0]
        );
        assert_eq!(&f[9], "true", "{}", &f[0]);
        checked += 1;
    }
    assert!(
        checked >= 12,
        "only {checked} features matched a cells.csv column"
    );

    // summary.json's zones: the network's cells per zone, as cells.csv counts them.
    for z in summary["zones"].as_array().unwrap() {
        let code = z["code"].as_u64().unwrap().to_string();
        assert_eq!(
            z["cells"].as_u64().unwrap() as usize,
            cells.iter().filter(|c| c[zone] == *code).count()
        );
    }
    assert_eq!(summary["zones"].as_array().unwrap().len(), 2);

    // zones.csv: the network rows add up to cells.csv's zone counts.
    let (_, z) = rows(&out.join("zones.csv"));
    let mut counts: HashMap<String, usize> = HashMap::new();
    for c in &cells {
        *counts.entry(c[zone].to_string()).or_default() += 1;
    }
    for r in z.iter().filter(|r| &r[2] == "all") {
        assert_eq!(
            counts.get(&r[0]).copied().unwrap_or(0),
            r[3].parse::<usize>().unwrap()
        );
    }
}

/// The coarse demo plan with no-take (10 % of each feature's total) and partial use (40 % of
/// the cost, half the credit).
fn zoned_plan(d: &std::path::Path) -> std::path::PathBuf {
    let plan = plan_with(
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
    zoned
}

fn num(r: &csv::StringRecord, k: usize) -> f64 {
    r[k].parse().unwrap()
}

/// `protected` of each feature of a coverage.csv, by feature name.
fn protected(path: &std::path::Path) -> Vec<(String, f64, String)> {
    let (h, rows) = rows(path);
    let (p, m) = (
        h.iter().position(|c| c == "protected").unwrap(),
        h.iter().position(|c| c == "reached").unwrap(),
    );
    rows.iter()
        .map(|r| (r[0].to_string(), num(r, p), r[m].to_string()))
        .collect()
}

fn same_coverage(a: &std::path::Path, b: &std::path::Path) {
    let (x, y) = (protected(a), protected(b));
    assert_eq!(x.len(), y.len());
    for (u, v) in x.iter().zip(&y) {
        assert_eq!((&u.0, &u.2), (&v.0, &v.2));
        assert!(
            (u.1 - v.1).abs() <= 1e-6 * u.1.abs().max(1.0),
            "{}: {} vs {}",
            u.0,
            u.1,
            v.1
        );
    }
}

/// Σ of the `cost` column of a reserves.csv.
fn reserves_cost(path: &std::path::Path) -> f64 {
    let (h, rows) = rows(path);
    let c = h.iter().position(|c| c == "cost").unwrap();
    rows.iter().map(|r| num(r, c)).sum()
}

#[test]
fn zoned_outputs_carry_zones_and_assess_reads_them_back() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let zoned = zoned_plan(d);
    let out = d.join("out");
    let r = run_quiet(&[os("solve"), zoned.as_os_str(), os("--out"), out.as_os_str()]);
    assert!(r.status.success(), "{}", String::from_utf8_lossy(&r.stderr));
    let stdout = String::from_utf8_lossy(&r.stdout);

    // The stress test now runs on the zoned plan (one zoned solve per scenario).
    assert!(out.join("stress.csv").exists(), "{stdout}");
    assert!(stdout.contains("stress test"), "{stdout}");

    // reserves.csv: each reserve's cells per zone are cells.csv's count of (reserve, zone).
    let (h, cells) = rows(&out.join("cells.csv"));
    let col = |name: &str| h.iter().position(|c| c == name).unwrap();
    let (zone, reserve, cost) = (col("zone"), col("reserve"), col("cost"));
    let mut counts: HashMap<(String, String), usize> = HashMap::new();
    for c in &cells {
        if &c[zone] != "0" {
            *counts
                .entry((c[reserve].to_string(), c[zone].to_string()))
                .or_default() += 1;
        }
    }
    let (rh, res) = rows(&out.join("reserves.csv"));
    let rcol = |name: &str| rh.iter().position(|c| c == name).unwrap();
    let mut partial_cells = 0;
    for r in &res {
        for (code, name) in [("1", "no-take"), ("2", "partial-use")] {
            let want = counts
                .get(&(r[0].to_string(), code.to_string()))
                .copied()
                .unwrap_or(0);
            assert_eq!(
                r[rcol(&format!("cells_{name}"))].parse::<usize>().unwrap(),
                want,
                "reserve {} zone {name}",
                &r[0]
            );
            partial_cells += want * usize::from(code == "2");
        }
        let total: usize = r[rcol("cells")].parse().unwrap();
        let split: usize = ["no-take", "partial-use"]
            .iter()
            .map(|n| r[rcol(&format!("cells_{n}"))].parse::<usize>().unwrap())
            .sum();
        assert_eq!(total, split);
    }
    assert!(partial_cells > 0, "the solve uses partial use");

    // network.geojson: one feature per reserve and zone, whose cell counts are the same.
    let gj: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("network.geojson")).unwrap())
            .unwrap();
    let feats = gj["features"].as_array().unwrap();
    assert_eq!(feats.len(), counts.len());
    for f in feats {
        let p = &f["properties"];
        let key = (
            p["reserve"].as_u64().unwrap().to_string(),
            p["zone_code"].as_u64().unwrap().to_string(),
        );
        assert_eq!(p["cells"].as_u64().unwrap() as usize, counts[&key]);
        let name = p["zone"].as_str().unwrap();
        assert_eq!(p["zones"][name]["cells"], p["cells"]);
    }

    // Round trip: the solve's own network.geojson and cells.csv, assessed under the plan,
    // give the solve's coverage and cost (summary.json).
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    let solve_cost = summary["cost"].as_f64().unwrap();
    for (k, file) in ["network.geojson", "cells.csv"].iter().enumerate() {
        let a = d.join(format!("assess-{k}"));
        let r = run_quiet(&[
            os("assess"),
            zoned.as_os_str(),
            out.join(file).as_os_str(),
            os("--out"),
            a.as_os_str(),
            os("--no-stress"),
        ]);
        assert!(
            r.status.success(),
            "{file}: {}",
            String::from_utf8_lossy(&r.stderr)
        );
        same_coverage(&out.join("coverage.csv"), &a.join("coverage.csv"));
        let cost = reserves_cost(&a.join("reserves.csv"));
        assert!(
            (cost - solve_cost).abs() < 1e-6 * solve_cost,
            "{file}: {cost} vs {solve_cost}"
        );
        assert_eq!(
            std::fs::read_to_string(out.join("zones.csv")).unwrap(),
            std::fs::read_to_string(a.join("zones.csv")).unwrap(),
            "{file}"
        );
        let json: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(a.join("assessment.json")).unwrap())
                .unwrap();
        assert_eq!(json["zones"]["source"], "file");
        // The solve's own network keeps every zone rule.
        assert_eq!(
            json["zones"]["rules_broken"],
            serde_json::json!([]),
            "{file}"
        );
    }

    // A hand case: two cells, one in each zone. Cost = cost_a (no-take, full) + 0.4 × cost_b
    // (partial use); a feature's protected amount = amount_a + 0.5 × amount_b.
    // Two cells the solve chose (so they hold habitat).
    let chosen: Vec<&csv::StringRecord> = cells.iter().filter(|c| &c[zone] != "0").collect();
    let (a_row, b_row) = (chosen[0], chosen[1]);
    let hand = d.join("hand.csv");
    std::fs::write(
        &hand,
        format!(
            "cell,zone\n{},no-take\n{},partial-use\n",
            &a_row[0], &b_row[0]
        ),
    )
    .unwrap();
    let a = d.join("assess-hand");
    let r = run_quiet(&[
        os("assess"),
        zoned.as_os_str(),
        hand.as_os_str(),
        os("--out"),
        a.as_os_str(),
        os("--no-stress"),
    ]);
    assert!(r.status.success(), "{}", String::from_utf8_lossy(&r.stderr));
    let want = num(a_row, cost) + 0.4 * num(b_row, cost);
    let got = reserves_cost(&a.join("reserves.csv"));
    assert!((got - want).abs() < 1e-6 * want, "{got} vs {want}");
    let mut checked = 0;
    for (name, p, _) in protected(&a.join("coverage.csv")) {
        let column = format!("{}_km2", name.replace(['/', '-', '.'], "_"));
        let Some(k) = h.iter().position(|c| *c == column) else {
            continue;
        };
        let amount = |r: &csv::StringRecord| r[k].parse::<f64>().unwrap_or(0.0);
        let want = amount(a_row) + 0.5 * amount(b_row);
        assert!(
            (p - want).abs() < 1e-6 * want.max(1.0),
            "{name}: {p} vs {want}"
        );
        checked += 1;
    }
    assert!(checked >= 12, "{checked}");

    // The same cells without zones: the first zone is assumed, and said so.
    let plain = d.join("plain.csv");
    std::fs::write(&plain, format!("cell\n{}\n{}\n", &a_row[0], &b_row[0])).unwrap();
    let a = d.join("assess-plain");
    let r = run_quiet(&[
        os("assess"),
        zoned.as_os_str(),
        plain.as_os_str(),
        os("--out"),
        a.as_os_str(),
        os("--no-stress"),
    ]);
    assert!(r.status.success(), "{}", String::from_utf8_lossy(&r.stderr));
    let text = String::from_utf8_lossy(&r.stdout);
    assert!(
        text.contains("names no zones") && text.contains("`no-take` (the plan's first zone"),
        "{text}"
    );
    let got = reserves_cost(&a.join("reserves.csv"));
    let want = num(a_row, cost) + num(b_row, cost);
    assert!((got - want).abs() < 1e-6 * want, "{got} vs {want}");
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(a.join("assessment.json")).unwrap()).unwrap();
    assert_eq!(json["zones"]["assumed_zone"], "no-take");
    // Two cells cannot hold 10 % of every feature in no-take: the zone target is missed, and
    // said so (terminal and assessment.json).
    assert!(
        text.contains("warning: the zone target of `no-take` is missed"),
        "{text}"
    );
    assert_eq!(json["zones"]["rules_broken"].as_array().unwrap().len(), 1);
    assert!(std::fs::read_to_string(a.join("report.html"))
        .unwrap()
        .contains("names no zones"));
    // --zone picks the zone assumed: both cells partial use, 0.4 of the cost.
    let a = d.join("assess-partial");
    let r = run_quiet(&[
        os("assess"),
        zoned.as_os_str(),
        plain.as_os_str(),
        os("--out"),
        a.as_os_str(),
        os("--no-stress"),
        os("--zone"),
        os("partial-use"),
    ]);
    assert!(r.status.success(), "{}", String::from_utf8_lossy(&r.stderr));
    let got = reserves_cost(&a.join("reserves.csv"));
    assert!(
        (got - 0.4 * want).abs() < 1e-6 * want,
        "{got} vs {}",
        0.4 * want
    );

    // A zone the plan lacks: the error names the file, the line or feature and the zones.
    let bad = d.join("bad.csv");
    std::fs::write(
        &bad,
        format!(
            "cell,zone\n{},no-take\n{},no-fishing\n",
            &a_row[0], &b_row[0]
        ),
    )
    .unwrap();
    let r = run_quiet(&[
        os("assess"),
        zoned.as_os_str(),
        bad.as_os_str(),
        os("--out"),
        d.join("assess-bad").as_os_str(),
        os("--no-stress"),
    ]);
    assert!(!r.status.success());
    let err = String::from_utf8_lossy(&r.stderr);
    assert!(
        err.contains("bad.csv")
            && err.contains("line 3")
            && err.contains("`no-fishing`")
            && err.contains("`no-take`, `partial-use`"),
        "{err}"
    );
    let mut gj = gj.clone();
    gj["features"][0]["properties"]["zone"] = "reserve-core".into();
    let bad = d.join("bad.geojson");
    std::fs::write(&bad, gj.to_string()).unwrap();
    let r = run_quiet(&[
        os("assess"),
        zoned.as_os_str(),
        bad.as_os_str(),
        os("--out"),
        d.join("assess-bad-geojson").as_os_str(),
        os("--no-stress"),
    ]);
    assert!(!r.status.success());
    let err = String::from_utf8_lossy(&r.stderr);
    assert!(
        err.contains("bad.geojson")
            && err.contains("feature 0")
            && err.contains("`reserve-core`")
            && err.contains("`no-take`, `partial-use`"),
        "{err}"
    );
}

#[test]
fn zone_keys_are_checked() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let plan = plan_with(d, "", "objective = \"min-cost\"");
    let mut text = std::fs::read_to_string(&plan).unwrap();
    text.push_str("\n[[zones]]\nname = \"partial-use\"\ncredit_by_kind = { habitats = 0.5 }\ncost_shar = 0.4\n");
    let bad = d.join("scenarios/bad-zones.toml");
    std::fs::write(&bad, text).unwrap();
    let r = run_quiet(&[os("check"), bad.as_os_str()]);
    assert!(!r.status.success());
    let err = String::from_utf8_lossy(&r.stderr);
    assert!(
        err.contains("zones[0].cost_shar") && err.contains("unknown key"),
        "{err}"
    );
    assert!(
        err.contains("zones[0].credit_by_kind.habitats") && err.contains("leading-edge"),
        "{err}"
    );
}
