//! Plan file validation: every problem reported at once, each with its key.

use driftplan::plan::{CostPlan, Plan};
use std::path::Path;

fn demo_plan_text() -> String {
    std::fs::read_to_string("scenarios/demo.toml").expect("the committed demo plan")
}

fn load_text(text: &str) -> Result<Plan, driftplan::plan::PlanError> {
    Plan::from_toml(
        text,
        Path::new("scenarios/test.toml"),
        Path::new("scenarios"),
        "0".into(),
    )
}

#[test]
fn committed_demo_plan_is_valid() {
    let plan = Plan::load(Path::new("scenarios/demo.toml")).unwrap();
    assert_eq!(plan.scenarios, ["ssp1-2.6", "ssp2-4.5", "ssp5-8.5"]);
    assert_eq!(plan.years, [2030, 2050, 2070, 2090]);
    assert_eq!(plan.species.len(), 12);
    assert_eq!(plan.default_target, 0.3);
    assert!(matches!(plan.cost, CostPlan::Layer { per_km2: true, .. }));
    // The plan hash is the SHA-256 of the file: 64 hex digits.
    assert_eq!(plan.hash.len(), 64);
}

#[test]
fn unknown_key_is_named() {
    let text = demo_plan_text().replace("[grid]\n", "[grid]\ncell_sise_km = 4\n");
    let err = load_text(&text).unwrap_err();
    assert!(
        err.issues
            .iter()
            .any(|i| i.key == "grid.cell_sise_km" && i.message.contains("unknown key")),
        "{err}"
    );
}

#[test]
fn target_above_100_percent_is_named() {
    let text = demo_plan_text().replace("default = 0.3", "default = 1.3");
    let err = load_text(&text).unwrap_err();
    assert!(
        err.issues
            .iter()
            .any(|i| i.key == "targets.default" && i.message.contains("between")),
        "{err}"
    );
}

#[test]
fn every_problem_is_reported_at_once() {
    let text = demo_plan_text()
        .replace("default = 0.3", "default = 1.3")
        .replace("cell_size_km = 5", "cell_size_km = -5")
        .replace(
            "../demo-data/land.geojson",
            "../demo-data/no-such-land.geojson",
        )
        .replace("objective = \"min-cost\"", "objective = \"cheapest\"");
    let err = load_text(&text).unwrap_err();
    let keys: Vec<&str> = err.issues.iter().map(|i| i.key.as_str()).collect();
    for k in [
        "targets.default",
        "grid.cell_size_km",
        "land",
        "optimise.objective",
    ] {
        assert!(keys.contains(&k), "missing {k} in {err}");
    }
    let shown = err.to_string();
    assert!(
        shown.contains("scenarios/test.toml"),
        "the message names the file: {shown}"
    );
    assert!(shown.contains("no-such-land.geojson"));
}

#[test]
fn missing_habitat_file_names_the_species_key() {
    let text = demo_plan_text().replacen(
        "{scenario}_{year}.csv\", column = \"{species}\"",
        "{scenario}_{year}_x.csv\", column = \"{species}\"",
        1,
    );
    let err = load_text(&text).unwrap_err();
    assert!(
        err.issues
            .iter()
            .any(|i| i.key == "species[0].habitat.path" && i.message.contains("not found")),
        "{err}"
    );
}

#[test]
fn toml_syntax_error_gives_line() {
    let err = load_text("name = \"x\"\n[grid\ncell_size_km = 5\n").unwrap_err();
    assert!(err.issues[0].key.starts_with("line 2"), "{err}");
}

#[test]
fn missing_plan_file_is_a_clear_error() {
    let err = Plan::load(Path::new("scenarios/does-not-exist.toml")).unwrap_err();
    assert!(err.to_string().contains("does-not-exist.toml"));
    assert!(err.to_string().contains("cannot read"));
}

#[test]
fn habitat_polygons_default_to_no_habitat_outside_them_and_lattices_to_errors() {
    // Outside a habitat polygon is "no habitat" (missing = zero); a point grid that misses
    // cells is still an error unless the plan says otherwise.
    use driftplan::layers::Missing;
    let text = demo_plan_text().replacen(
        "habitat = { path = \"../demo-data/ocean/{scenario}_{year}.csv\", column = \"{species}\" }",
        "habitat = { path = \"../demo-data/protected.geojson\" }",
        1,
    );
    let plan = load_text(&text).unwrap();
    assert_eq!(plan.species[0].habitat.missing, Missing::Zero);
    assert_eq!(plan.species[1].habitat.missing, Missing::Error);
}

#[test]
fn a_species_list_equals_the_same_species_one_table_each() {
    // The demo's twelve [[species]] tables share one habitat source; the same plan written
    // with one [species_list] gives the same species, in the same order.
    let text = demo_plan_text();
    let tables = load_text(&text).unwrap();
    let names: Vec<String> = tables
        .species
        .iter()
        .map(|s| format!("\"{}\"", s.name))
        .collect();
    let head = &text[..text.find("[[species]]").unwrap()];
    let listed = format!(
        "{head}[species_list]\nnames = [{}]\nhabitat = {{ path = \"../demo-data/ocean/{{scenario}}_{{year}}.csv\", column = \"{{species}}\" }}\n",
        names.join(", ")
    );
    let list = load_text(&listed).unwrap();
    assert_eq!(list.species, tables.species);
    // A shared key's problem is reported once, not once per species; a name twice is named.
    let broken = listed
        .replace(
            "column = \"{species}\"",
            "column = \"{species}\", sampling = \"odd\"",
        )
        .replace(
            "names = [\"amber-wrasse\"",
            "names = [\"amber-wrasse\", \"amber-wrasse\"",
        );
    let e = load_text(&broken).unwrap_err().to_string();
    assert_eq!(e.matches("unknown sampling `odd`").count(), 1, "{e}");
    assert!(
        e.contains("`species_list.names[1]`: species `amber-wrasse` is listed twice"),
        "{e}"
    );
}

#[test]
fn solver_method_is_read_and_a_wrong_word_is_named() {
    // The three words of `[solver] method` (docs/plan-reference.md); anything else is named
    // with its key. Common practice, no source.
    use driftplan::solve::decompose::Method;
    let with =
        |m: &str| demo_plan_text().replace("[solver]\n", &format!("[solver]\nmethod = \"{m}\"\n"));
    assert_eq!(
        load_text(&with("decompose")).unwrap().solver.method,
        Method::Decompose
    );
    assert_eq!(
        load_text(&with("direct")).unwrap().solver.method,
        Method::Direct
    );
    assert_eq!(
        load_text(&demo_plan_text()).unwrap().solver.method,
        Method::Auto
    );
    let err = load_text(&with("fast")).unwrap_err();
    assert!(
        err.issues
            .iter()
            .any(|i| i.key == "solver.method" && i.message.contains("`fast`")),
        "{err}"
    );
}
