//! `portfolio`, `rank` and `irreplaceability` through the command line on a coarse copy of the
//! demo. Their numbers are checked against brute-force enumeration in tests/alternatives.rs;
//! here: outputs are complete, consistent with each other, and the same at 1 and 2 threads.

mod common;
use common::{os, plan_with, run_quiet};

fn read_rows(path: &std::path::Path) -> Vec<csv::StringRecord> {
    csv::Reader::from_path(path)
        .unwrap()
        .records()
        .map(|r| r.unwrap())
        .collect()
}

#[test]
fn portfolio_is_the_same_at_one_and_two_threads_and_stays_within_its_share() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let plan = plan_with(
        d,
        "",
        "objective = \"min-cost\"\nrobustness = \"every-scenario\"",
    );
    let mut outs = Vec::new();
    for threads in ["1", "2"] {
        let out = d.join(format!("pf-{threads}"));
        let r = run_quiet(&[
            os("portfolio"),
            plan.as_os_str(),
            os("--count"),
            os("3"),
            os("--within"),
            os("10%"),
            os("--min-difference"),
            os("2"),
            os("--threads"),
            os(threads),
            os("--out"),
            out.as_os_str(),
        ]);
        assert!(r.status.success(), "{}", String::from_utf8_lossy(&r.stderr));
        outs.push(out);
    }
    let a = std::fs::read_to_string(outs[0].join("portfolio.csv")).unwrap();
    let b = std::fs::read_to_string(outs[1].join("portfolio.csv")).unwrap();
    assert_eq!(a, b, "portfolio.csv differs between 1 and 2 threads");
    let rows = read_rows(&outs[0].join("portfolio.csv"));
    assert!(!rows.is_empty());
    for r in &rows {
        // Every member within 10 % of the optimum (share_from_optimum column), and every
        // target reached (min-cost holds them all; the targets count equals member 1's).
        let share: f64 = r[2].parse().unwrap();
        assert!(share <= 0.10 + 1e-6, "{r:?}");
        assert_eq!(&r[7], &rows[0][7]);
    }
    for r in &rows[1..] {
        let d: usize = r[6].parse().unwrap();
        assert!(d >= 2, "{r:?}");
    }
    for k in 1..=rows.len() {
        let f = outs[0].join(format!("networks/member-{k}.geojson"));
        let g = outs[1].join(format!("networks/member-{k}.geojson"));
        assert_eq!(std::fs::read(&f).unwrap(), std::fs::read(&g).unwrap());
    }
    assert!(outs[0].join("selection-share.geojson").exists());
    assert!(outs[0].join("report.html").exists());
}

#[test]
fn rank_steps_nest_and_count_every_ranked_cell() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let plan = plan_with(
        d,
        "",
        "objective = \"min-cost\"\nrobustness = \"every-scenario\"",
    );
    let out = d.join("rank");
    let r = run_quiet(&[
        os("rank"),
        plan.as_os_str(),
        os("--steps"),
        os("3"),
        os("--out"),
        out.as_os_str(),
    ]);
    assert!(r.status.success(), "{}", String::from_utf8_lossy(&r.stderr));
    let curve = read_rows(&out.join("rank-curve.csv"));
    assert_eq!(curve.len(), 3);
    let ranks = read_rows(&out.join("rank.csv"));
    // Each step adds exactly the cells ranked with its number; cost never falls along the
    // nested steps (each network contains the last).
    for (k, step) in curve.iter().enumerate() {
        let added: usize = step[9].parse().unwrap();
        let with_rank = ranks.iter().filter(|r| r[1] == (k + 1).to_string()).count();
        assert_eq!(added, with_rank, "step {}", k + 1);
    }
    let costs: Vec<f64> = curve.iter().map(|s| s[4].parse().unwrap()).collect();
    assert!(costs.windows(2).all(|w| w[1] >= w[0] - 1e-9), "{costs:?}");
    // The last step reaches every target (its budget is where the least-cost network does,
    // or more), as the nested steps' purpose is to get there.
    let last = &curve[2];
    assert!(last[7].parse::<usize>().unwrap() <= last[8].parse::<usize>().unwrap());
}

#[test]
fn irreplaceability_rows_bracket_their_estimates() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let plan = plan_with(
        d,
        "",
        "objective = \"min-cost\"\nrobustness = \"every-scenario\"",
    );
    let out = d.join("irr");
    let r = run_quiet(&[
        os("irreplaceability"),
        plan.as_os_str(),
        os("--out"),
        out.as_os_str(),
    ]);
    assert!(r.status.success(), "{}", String::from_utf8_lossy(&r.stderr));
    let rows = read_rows(&out.join("irreplaceability.csv"));
    assert!(!rows.is_empty());
    for r in &rows {
        if &r[7] == "irreplaceable" {
            assert_eq!(&r[4], "inf");
            continue;
        }
        let (c, lo, hi): (f64, f64, f64) = (
            r[4].parse().unwrap(),
            r[5].parse().unwrap(),
            r[6].parse().unwrap(),
        );
        // Forbidding cells can only make a min-cost optimum worse (up to the solve gap).
        assert!(lo >= 0.0 && lo <= c + 1e-6 && c <= hi + 1e-6, "{r:?}");
    }
    assert!(out.join("report.html").exists() && out.join("network.geojson").exists());
}
