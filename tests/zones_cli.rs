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
