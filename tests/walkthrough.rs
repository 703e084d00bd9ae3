//! `docs/your-own-region.md` works as written: its plan, verbatim, on a region polygon, a land
//! mask and two CSV layers of the shape the page describes (a lattice with land points left out,
//! one habitat file per scenario and year, a cost per km²), through `check` and `solve` to a
//! report.

mod common;

use std::path::Path;

/// The page's plan: its only `toml` block.
fn plan_from_page() -> String {
    let page = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/your-own-region.md"),
    )
    .unwrap();
    let start = page.find("```toml\n").expect("a toml block") + "```toml\n".len();
    let end = start + page[start..].find("```").unwrap();
    page[start..end].to_string()
}

/// A lattice over lon 13.9–15.1, lat −34.1 to −32.9, step 0.05°, leaving out a "land" corner
/// (lon < 14.2 and lat > −33.3), as ocean products leave out land points.
fn lattice() -> Vec<(f64, f64)> {
    let mut pts = Vec::new();
    for i in 0..=24 {
        for j in 0..=24 {
            let (lon, lat) = (13.9 + 0.05 * i as f64, -34.1 + 0.05 * j as f64);
            if !(lon < 14.2 && lat > -33.3) {
                pts.push((lon, lat));
            }
        }
    }
    pts
}

/// The page's files under `dir`: region, land, cost and habitat with `first` as the first
/// species' column name.
fn write_data(dir: &Path, first: &str) {
    std::fs::create_dir_all(dir.join("habitat")).unwrap();
    std::fs::write(
        dir.join("region.geojson"),
        r#"{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},"geometry":{"type":"Polygon","coordinates":[[[14,-34],[15,-34],[15,-33],[14,-33],[14,-34]]]}}]}"#,
    )
    .unwrap();
    // The land the lattice leaves out, as the page's optional land mask.
    std::fs::write(
        dir.join("land.geojson"),
        r#"{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},"geometry":{"type":"Polygon","coordinates":[[[13.5,-33.3],[14.2,-33.3],[14.2,-32.5],[13.5,-32.5],[13.5,-33.3]]]}}]}"#,
    )
    .unwrap();
    let mut cost = String::from("lon,lat,fishing_value\n");
    for (lon, lat) in lattice() {
        cost.push_str(&format!(
            "{lon:.2},{lat:.2},{:.3}\n",
            10.0 + 5.0 * (lon - 14.0)
        ));
    }
    std::fs::write(dir.join("cost.csv"), cost).unwrap();
    for (s, scenario) in ["ssp2-4.5", "ssp5-8.5"].iter().enumerate() {
        for (y, year) in [2030, 2050].iter().enumerate() {
            // Kelp shifts south (poleward here) with time and warming; seagrass stays inshore.
            let shift = 0.1 * (s + y) as f64;
            let mut t = format!("lon,lat,{first},seagrass\n");
            for (lon, lat) in lattice() {
                let kelp = (1.0 - ((lat + 33.4 + shift) / 0.4).powi(2)).clamp(0.0, 1.0);
                let grass = (1.0 - (lon - 14.0) / 0.6).clamp(0.0, 1.0);
                t.push_str(&format!("{lon:.2},{lat:.2},{kelp:.3},{grass:.3}\n"));
            }
            std::fs::write(dir.join(format!("habitat/{scenario}_{year}.csv")), t).unwrap();
        }
    }
}

#[test]
fn the_walkthrough_plan_runs_to_a_report() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("my-plan");
    write_data(&dir, "kelp");
    let plan = dir.join("plan.toml");
    std::fs::write(&plan, plan_from_page()).unwrap();
    let check = common::run_quiet(&[common::os("check"), plan.as_os_str()]);
    assert!(
        check.status.success(),
        "{}",
        String::from_utf8_lossy(&check.stderr)
    );
    let out = tmp.path().join("out/mine");
    let solve = common::run_quiet(&[
        common::os("solve"),
        plan.as_os_str(),
        common::os("--out"),
        out.as_os_str(),
    ]);
    assert!(
        solve.status.success(),
        "{}",
        String::from_utf8_lossy(&solve.stderr)
    );
    for f in [
        "report.html",
        "network.geojson",
        "driftplan.gpkg",
        "coverage.csv",
        "run.json",
    ] {
        assert!(out.join(f).is_file(), "{f} missing");
    }
    // Every target of both species in both scenarios and years is reached (2 × 2 × 2 = 8).
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    assert_eq!(summary["targets_reached"], 8, "{summary}");
}

/// A Latin binomial with a space is a species name like any other: the CSV column is found
/// by it as written, output columns get the safe form, and tables keep the name.
#[test]
fn a_species_named_with_a_space_keeps_its_name_and_gets_safe_columns() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("my-plan");
    write_data(&dir, "Sebastes fasciatus");
    let plan = dir.join("plan.toml");
    std::fs::write(
        &plan,
        plan_from_page().replace("name = \"kelp\"", "name = \"Sebastes fasciatus\""),
    )
    .unwrap();
    let out = tmp.path().join("features");
    let run = common::run_quiet(&[
        common::os("features"),
        plan.as_os_str(),
        common::os("--out"),
        out.as_os_str(),
    ]);
    assert!(
        run.status.success(),
        "{}",
        String::from_utf8_lossy(&run.stderr)
    );
    let cells = std::fs::read_to_string(out.join("cells.csv")).unwrap();
    let header = cells.lines().next().unwrap();
    assert!(
        header.contains(",habitat_sebastes_fasciatus_ssp2_4_5_2030_km2,"),
        "{header}"
    );
    let features = std::fs::read_to_string(out.join("features.csv")).unwrap();
    assert!(
        features.contains("habitat/Sebastes fasciatus/ssp2-4.5/2030,habitat,Sebastes fasciatus,"),
        "{features}"
    );
}
