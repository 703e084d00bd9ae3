//! `docs/plan-reference.md` is written from the validator's own key table, so it lists every
//! key the validator accepts and nothing else; this test fails when the page is out of date.
//! `DRIFTPLAN_WRITE_REFERENCE=1 cargo test --test plan_reference` rewrites it.

use driftplan::plan::reference::{keys_of, markdown, KEYS};
use std::path::Path;

#[test]
fn the_plan_reference_page_is_the_validators_key_table() {
    let page = Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/plan-reference.md");
    let want = markdown();
    if std::env::var_os("DRIFTPLAN_WRITE_REFERENCE").is_some() {
        std::fs::write(&page, &want).unwrap();
    }
    let have = std::fs::read_to_string(&page).unwrap_or_default();
    assert!(
        have == want,
        "docs/plan-reference.md is out of date with src/plan/reference.rs; rewrite it with \
         DRIFTPLAN_WRITE_REFERENCE=1 cargo test --test plan_reference"
    );
    for d in KEYS {
        assert!(
            have.contains(&format!("| `{}` |", d.key)),
            "{} is not on the page",
            d.key
        );
    }
}

#[test]
fn every_key_of_the_reference_is_accepted_and_others_are_not() {
    // A plan that uses a key the reference lists for [optimise] gets no "unknown key" problem for
    // it; a key the reference does not list does.
    let dir = tempfile::tempdir().unwrap();
    let plan = |optimise_key: &str| {
        format!(
            "region = \"r.geojson\"\n[grid]\ncell_size_km = 5\n[scenarios]\nnames = [\"a\"]\nyears = [2030]\n\
             [optimise]\n{optimise_key} = 1\n[[species]]\nname = \"s\"\nhabitat = {{ path = \"h.csv\", column = \"s\" }}\n"
        )
    };
    let problems = |text: &str| match driftplan::plan::Plan::from_toml(
        text,
        &dir.path().join("p.toml"),
        dir.path(),
        String::new(),
    ) {
        Ok(_) => String::new(),
        Err(e) => e.to_string(),
    };
    for key in keys_of("optimise") {
        let p = problems(&plan(key));
        assert!(!p.contains("unknown key"), "{key}: {p}");
    }
    let p = problems(&plan("edge_weight"));
    assert!(p.contains("optimise.edge_weight"), "{p}");
}
