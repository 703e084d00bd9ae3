//! Absent features through the command line: a species that leaves the region in some
//! scenario and year is reported as absent, never counted as reached; one with no habitat
//! anywhere is a plan error naming its layer unless the plan allows it.

mod common;

use std::path::Path;

use common::{os, run_quiet as driftplan};

/// Sets the `amber-wrasse` column (the first species of the demo) to 0 in the given demo
/// habitat files: the species has no habitat there.
fn remove_amber_wrasse(dir: &Path, files: &[&str]) {
    for f in files {
        let path = dir.join("demo-data/ocean").join(f);
        let text = std::fs::read_to_string(&path).unwrap();
        let mut lines = text.lines();
        let header = lines.next().unwrap();
        let col = header.split(',').position(|h| h == "amber-wrasse").unwrap();
        let mut out = format!("{header}\n");
        for line in lines {
            let mut fields: Vec<&str> = line.split(',').collect();
            fields[col] = "0";
            out.push_str(&fields.join(","));
            out.push('\n');
        }
        std::fs::write(&path, out).unwrap();
    }
}

#[test]
fn a_species_gone_in_some_years_is_absent_and_never_reached() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let plan = common::plan_with(d, "max_share = 0.5", "objective = \"min-cost\"");
    remove_amber_wrasse(d, &["ssp5-8.5_2070.csv", "ssp5-8.5_2090.csv"]);

    let check = driftplan(&[os("check"), plan.as_os_str()]);
    assert!(
        check.status.success(),
        "{}",
        String::from_utf8_lossy(&check.stderr)
    );
    let text = String::from_utf8_lossy(&check.stdout);
    assert!(
        text.contains(
            "species amber-wrasse has no habitat in the region in ssp5-8.5 in 2070 and 2090"
        ),
        "{text}"
    );

    let out = d.join("out");
    let run = driftplan(&[os("solve"), plan.as_os_str(), os("--out"), out.as_os_str()]);
    assert!(
        run.status.success(),
        "{}",
        String::from_utf8_lossy(&run.stderr)
    );
    let text = String::from_utf8_lossy(&run.stdout);
    assert!(
        text.contains("absent: species amber-wrasse has no habitat in the region in ssp5-8.5 in 2070 and 2090"),
        "{text}"
    );

    // coverage.csv: the two habitat rows are absent and not reached; every zero-total row is
    // absent and none is reached; nothing prints as "-0".
    let csv_text = std::fs::read_to_string(out.join("coverage.csv")).unwrap();
    assert!(
        !csv_text.contains(",-0,") && !csv_text.contains(",-0\n"),
        "-0 in coverage.csv"
    );
    let mut r = csv::Reader::from_reader(csv_text.as_bytes());
    let h = r.headers().unwrap().clone();
    let col = |n: &str| h.iter().position(|x| x == n).unwrap();
    let rows: Vec<csv::StringRecord> = r.records().map(|r| r.unwrap()).collect();
    let mut absent = 0;
    let mut reached = 0;
    for row in &rows {
        let total: f64 = row[col("total")].parse().unwrap();
        let is_absent = &row[col("absent")] == "true";
        assert_eq!(is_absent, total == 0.0, "{row:?}");
        if is_absent {
            absent += 1;
            assert_eq!(
                &row[col("reached")],
                "false",
                "absent counted as reached: {row:?}"
            );
        }
        reached += usize::from(&row[col("reached")] == "true");
    }
    for year in ["2070", "2090"] {
        let name = format!("habitat/amber-wrasse/ssp5-8.5/{year}");
        let row = rows.iter().find(|r| r[col("feature")] == name).unwrap();
        assert_eq!(
            (&row[col("absent")], &row[col("reached")]),
            ("true", "false")
        );
    }
    // summary.json counts them apart, and targets reached agrees with the rows.
    let s: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    assert_eq!(s["targets_absent"], absent);
    assert!(absent >= 2);
    assert_eq!(s["targets_reached"], reached);
    assert_eq!(s["targets_total"], rows.len());
    assert!(reached + absent <= rows.len());
    let report = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(report.contains("absent: no amount in the region, never counted as reached"));
}

#[test]
fn a_species_with_no_habitat_anywhere_is_a_plan_error_unless_allowed() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let plan = common::plan_with(d, "max_share = 0.5", "objective = \"min-cost\"");
    let all: Vec<String> = std::fs::read_dir(d.join("demo-data/ocean"))
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".csv"))
        .collect();
    let all: Vec<&str> = all.iter().map(String::as_str).collect();
    remove_amber_wrasse(d, &all);
    let check = driftplan(&[os("check"), plan.as_os_str()]);
    assert!(!check.status.success());
    let err = String::from_utf8_lossy(&check.stderr);
    assert!(!err.contains("panicked"), "{err}");
    assert!(
        err.contains("species[0] `amber-wrasse`")
            && err.contains("ocean/{scenario}_{year}.csv")
            && err.contains("may_be_absent = true"),
        "{err}"
    );
    // Allowed by the plan: check passes and lists it as absent.
    let text = std::fs::read_to_string(&plan).unwrap().replacen(
        "name = \"amber-wrasse\"",
        "name = \"amber-wrasse\"\nmay_be_absent = true",
        1,
    );
    std::fs::write(&plan, text).unwrap();
    let check = driftplan(&[os("check"), plan.as_os_str()]);
    assert!(
        check.status.success(),
        "{}",
        String::from_utf8_lossy(&check.stderr)
    );
    let out = String::from_utf8_lossy(&check.stdout);
    assert!(
        out.contains("species amber-wrasse has no habitat in the region in ssp1-2.6 in 2030, 2050, 2070 and 2090"),
        "{out}"
    );
}
