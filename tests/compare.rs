//! Compare stage from outside: networks read from files, assessed and set side by side, with
//! the outputs re-read by independent parsers (the `csv` crate, serde_json).
//!
//! The fixture is the tiny reserve-selection instance of docs CHECK-VALUES ("computed by
//! enumeration"): a 2 × 3 grid, ids 0–5 row-major, costs [3, 2, 4, 2, 3, 1], features
//! A = [1,0,1,0,1,0] (target 2), B = [0,1,1,0,0,1] (target 1), C = [0,0,0,1,1,0] (target 1).
//! Its minimum-set optimum costs 7, tied between {2, 4} and {0, 4, 5}. With two more
//! scenarios (s2: A = [0,1,1,0,1,1]; s3: A = [0,0,1,0,1,1], B = [0,1,0,0,0,1],
//! C = [0,0,0,1,1,1]) only {0, 4, 5} meets every target; {2, 4} fails in s3.

use driftplan::assess::network_input::read_network;
use driftplan::assess::{assess, Assessment};
use driftplan::compare::{
    compare, compare_csv, compare_json, compare_table, differences, Better, Comparison,
    DifferenceOf, COMPARE_COLUMNS,
};
use driftplan::features::{Feature, FeatureKind, FeatureTable, Target};
use driftplan::grid::{Crs, Grid};
use std::path::Path;

const COST: [f64; 6] = [3.0, 2.0, 4.0, 2.0, 3.0, 1.0];

/// 3 columns × 2 rows of 1 km cells (1 km² each), ids row-major from the south-west.
fn grid() -> Grid {
    Grid::full_rectangle(Crs::auto_laea(10.0, 55.0), 1000.0, [0.0, 0.0], 3, 2).unwrap()
}

fn feature(
    name: &str,
    kind: FeatureKind,
    scenario: usize,
    presence: [u8; 6],
    target: f64,
) -> Feature {
    let amounts: Vec<(u32, f64)> = presence
        .iter()
        .enumerate()
        .filter(|(_, &p)| p > 0)
        .map(|(c, &p)| (c as u32, f64::from(p)))
        .collect();
    Feature {
        name: format!("{name}/s{}", scenario + 1),
        kind,
        species: None,
        scenario: Some(scenario),
        year: Some(2050),
        unit: "cells".into(),
        total: amounts.iter().map(|a| a.1).sum(),
        amounts,
        target: Target::Amount(target),
        weight: 1.0,
    }
}

/// The three-scenario instance: A and B as habitat, C as refugium (the kind only labels it).
fn table() -> FeatureTable {
    use FeatureKind::{Habitat, Refugium};
    FeatureTable {
        scenarios: vec!["s1".into(), "s2".into(), "s3".into()],
        years: vec![2050],
        features: vec![
            feature("A", Habitat, 0, [1, 0, 1, 0, 1, 0], 2.0),
            feature("B", Habitat, 0, [0, 1, 1, 0, 0, 1], 1.0),
            feature("C", Refugium, 0, [0, 0, 0, 1, 1, 0], 1.0),
            feature("A", Habitat, 1, [0, 1, 1, 0, 1, 1], 2.0),
            feature("B", Habitat, 1, [0, 1, 1, 0, 0, 1], 1.0),
            feature("C", Refugium, 1, [0, 0, 0, 1, 1, 0], 1.0),
            feature("A", Habitat, 2, [0, 0, 1, 0, 1, 1], 2.0),
            feature("B", Habitat, 2, [0, 1, 0, 0, 0, 1], 1.0),
            feature("C", Refugium, 2, [0, 0, 0, 1, 1, 1], 1.0),
        ],
    }
}

fn assessed(sel: &[bool]) -> Assessment {
    assess(&grid(), &table(), &COST, sel)
}

fn pick(ids: &[u32]) -> Vec<bool> {
    (0..6).map(|i| ids.contains(&i)).collect()
}

fn value(c: &Comparison, measure: &str, network: usize) -> f64 {
    c.measure(measure).unwrap().values[network]
}

#[test]
fn the_two_optima_read_from_files() {
    let g = grid();
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/compare");
    // pair_a.csv lists cells 2 and 4; pair_b.csv is in cells.csv form selecting 0, 4, 5.
    let a_sel = read_network(&dir.join("pair_a.csv"), &g, 0.5).unwrap();
    let b_sel = read_network(&dir.join("pair_b.csv"), &g, 0.5).unwrap();
    assert_eq!(a_sel, pick(&[2, 4]));
    assert_eq!(b_sel, pick(&[0, 4, 5]));
    let (a, b) = (assessed(&a_sel), assessed(&b_sel));
    let c = compare(&[("pair_a".into(), &a), ("pair_b".into(), &b)]).unwrap();
    // CHECK-VALUES (enumeration): both cost 7.
    assert_eq!(value(&c, "cost", 0), 7.0);
    assert_eq!(value(&c, "cost", 1), 7.0);
    // CHECK-VALUES: {0, 4, 5} meets all 9 targets, {2, 4} fails in s3 (B/s3 holds 0 of 1).
    assert_eq!(value(&c, "targets_reached", 0), 8.0);
    assert_eq!(value(&c, "targets_reached", 1), 9.0);
    assert_eq!(c.measure("targets_reached").unwrap().best, vec![1]);
    // Ranking rule (target coverage first): {2, 4} misses a target, so it is not best on cost
    // although it ties at 7, nor on total edge although it is shorter (8 km against 10 km,
    // hand count below); it is still best on nothing else either.
    assert_eq!(c.ranked, vec![1]);
    assert_eq!(c.measure("cost").unwrap().best, vec![1]);
    assert_eq!(c.measure("total_edge_km").unwrap().best, vec![1]);
    for m in &c.measures {
        assert!(
            !m.best.contains(&0),
            "{} best on a network missing targets",
            m.name
        );
    }
    let t = compare_table(&c);
    assert!(
        t.contains("Ranking: target coverage first")
            && t.contains("(9 of 9)")
            && t.contains("Not ranked, misses targets: pair_a."),
        "{t}"
    );
    // Hand computation: {2, 4} holds shares 1 on 8 features and 0 on B/s3 → mean 8/9.
    assert!((value(&c, "mean_protected_share", 0) - 8.0 / 9.0).abs() < 1e-12);
    assert_eq!(value(&c, "min_protected_share", 0), 0.0);
    assert_eq!(value(&c, "targets_reached_habitat", 0), 5.0);
    assert_eq!(value(&c, "targets_reached_refugium", 0), 3.0);
    // Hand computation on 1 km cells: {2, 4} exposes cell 2's west and north sides and
    // cell 4's south, west and east sides = 5 km; {0, 4, 5} exposes 0: east, north;
    // 4: south, west; 5: south = 5 km. Both are two reserves (diagonal cells do not join).
    assert!((value(&c, "exposed_edge_km", 0) - 5.0).abs() < 1e-9);
    assert!((value(&c, "exposed_edge_km", 1) - 5.0).abs() < 1e-9);
    assert_eq!(value(&c, "reserves", 0), 2.0);
    // Plus coast/boundary edge (hand count): {2, 4}: cell 2 south + east, cell 4 north = 3 km
    // → 8 km; {0, 4, 5}: 0 south + west, 4 north, 5 north + east = 5 km → 10 km.
    assert!((value(&c, "total_edge_km", 0) - 8.0).abs() < 1e-9);
    assert!((value(&c, "total_edge_km", 1) - 10.0).abs() < 1e-9);
    // They differ only in size and shape, in s3's B and C protected, and in what follows from
    // those (the largest gap too: centroids of one LAEA row differ slightly in latitude).
    let d = differences(&c, 0, 1).unwrap();
    let names: Vec<&str> = d.iter().map(|d| d.name.as_str()).collect();
    assert_eq!(
        names,
        vec![
            "area_km2",
            "share_of_region",
            "cells_selected",
            "total_edge_km",
            "compactness_ratio",
            "largest_gap_km",
            "targets_reached",
            "mean_protected_share",
            "min_protected_share",
            "targets_reached_habitat",
            "B/s3",
            "C/s3",
        ]
    );
    let area = &d[0];
    assert_eq!((area.of, area.better), (DifferenceOf::Measure, Some(0)));
    let b3 = &d[10];
    assert_eq!(
        (b3.of, b3.a, b3.b, b3.better),
        (DifferenceOf::Feature, 0.0, 1.0, Some(1))
    );
    let t = compare_table(&c);
    assert!(t.contains("B/s3") && t.contains("pair_b"), "{t}");
}

#[test]
fn a_network_against_itself_has_no_differences() {
    let a = assessed(&pick(&[2, 4]));
    let c = compare(&[("one".into(), &a), ("same".into(), &a)]).unwrap();
    assert_eq!(differences(&c, 0, 1).unwrap(), vec![]);
    for m in &c.measures {
        if m.better == Better::Neither {
            assert!(m.best.is_empty(), "{}", m.name);
        } else {
            assert_eq!(m.best, vec![0, 1], "{}", m.name);
        }
    }
    assert!(c.features.iter().all(|f| f.best == vec![0, 1]));
    assert!(compare_table(&c).contains("Every network meets the same targets (9 features)"));
}

#[test]
fn a_superset_is_never_worse_on_coverage_nor_cheaper() {
    // Brute force over every network of the 6-cell grid and every strict superset of it
    // (3^6 − 2^6 = 665 pairs): adding cells can only add protected amounts, cost and area.
    let coverage = [
        "targets_reached",
        "mean_protected_share",
        "min_protected_share",
        "targets_reached_habitat",
        "targets_reached_refugium",
    ];
    let size = ["cost", "area_km2", "share_of_region", "cells_selected"];
    // Assess each of the 64 networks once (building a grid opens PROJ, which is slow).
    let (g, t) = (grid(), table());
    let all: Vec<Assessment> = (0u32..64)
        .map(|m| {
            let sel: Vec<bool> = (0..6).map(|i| m >> i & 1 == 1).collect();
            assess(&g, &t, &COST, &sel)
        })
        .collect();
    let mut pairs = 0;
    for small in 0u32..64 {
        for big in 0u32..64 {
            if big & small != small || big == small {
                continue;
            }
            pairs += 1;
            let (s, b) = (&all[small as usize], &all[big as usize]);
            let c = compare(&[("small".into(), s), ("big".into(), b)]).unwrap();
            for name in coverage {
                let m = c.measure(name).unwrap();
                assert_eq!(m.better, Better::Higher);
                assert!(m.values[1] >= m.values[0], "{name} {small:06b} ⊂ {big:06b}");
                assert!(m.best.contains(&1), "{name} {small:06b} ⊂ {big:06b}");
            }
            // Ranking rule: the smaller network is best on size only while it meets as many
            // targets as the larger one; otherwise only the larger one is ranked.
            let small_ranked = s.targets_reached == b.targets_reached;
            assert_eq!(c.ranked, if small_ranked { vec![0, 1] } else { vec![1] });
            for name in size {
                let m = c.measure(name).unwrap();
                assert_eq!(m.better, Better::Lower);
                assert!(m.values[1] >= m.values[0], "{name} {small:06b} ⊂ {big:06b}");
                if small_ranked {
                    assert!(m.best.contains(&0), "{name} {small:06b} ⊂ {big:06b}");
                } else {
                    assert_eq!(m.best, vec![1], "{name} {small:06b} ⊂ {big:06b}");
                }
            }
            // Every cell has a positive cost and area: a strict superset costs strictly more.
            assert!(value(&c, "cost", 1) > value(&c, "cost", 0));
            for f in &c.features {
                assert!(
                    f.protected[1] >= f.protected[0] && f.best.contains(&1),
                    "{}",
                    f.feature
                );
            }
        }
    }
    assert_eq!(pairs, 665);
}

#[test]
fn csv_and_json_read_back_with_independent_parsers() {
    let (a, b) = (assessed(&pick(&[2, 4])), assessed(&pick(&[0, 4, 5])));
    let c = compare(&[("a".into(), &a), ("b".into(), &b)]).unwrap();
    let text = compare_csv(&c);
    let mut r = csv::Reader::from_reader(text.as_bytes());
    let header: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
    assert_eq!(header, COMPARE_COLUMNS);
    let rows: Vec<csv::StringRecord> = r.records().map(|r| r.unwrap()).collect();
    // 10 base + 2 share measures + 2 kinds = 14 measures, 9 features; × 2 networks.
    assert_eq!(rows.len(), (14 + 9) * 2);
    let col = |name: &str| COMPARE_COLUMNS.iter().position(|c| *c == name).unwrap();
    let find = |row: &str, name: &str, net: &str| {
        rows.iter()
            .find(|r| &r[col("row")] == row && &r[col("name")] == name && &r[col("network")] == net)
            .unwrap()
            .clone()
    };
    let cost_b = find("measure", "cost", "b");
    assert_eq!(cost_b[col("value")].parse::<f64>().unwrap(), 7.0);
    assert_eq!(&cost_b[col("better")], "lower");
    assert_eq!(&cost_b[col("best")], "true");
    assert_eq!(&cost_b[col("ranked")], "true");
    // {2, 4} ties on cost 7 but misses a target: not ranked, so not best.
    let cost_a = find("measure", "cost", "a");
    assert_eq!(
        (&cost_a[col("best")], &cost_a[col("ranked")]),
        ("false", "false")
    );
    let b3 = find("feature", "B/s3", "a");
    assert_eq!(&b3[col("scenario")], "s3");
    assert_eq!(&b3[col("kind")], "habitat");
    assert_eq!(b3[col("protected")].parse::<f64>().unwrap(), 0.0);
    assert_eq!(b3[col("target")].parse::<f64>().unwrap(), 1.0);
    assert_eq!(&b3[col("reached")], "false");
    assert_eq!(&b3[col("best")], "false");
    // Hand value: C/s3 = [0,0,0,1,1,1] → {0, 4, 5} holds cells 4 and 5 = 2 of total 3.
    let c3 = find("feature", "C/s3", "b");
    assert_eq!(c3[col("protected")].parse::<f64>().unwrap(), 2.0);
    assert_eq!(c3[col("total")].parse::<f64>().unwrap(), 3.0);
    assert_eq!(
        c3[col("protected_share_of_target")].parse::<f64>().unwrap(),
        1.0
    );

    let v: serde_json::Value = serde_json::from_str(&compare_json(&c)).unwrap();
    for key in [
        "networks",
        "measures",
        "features",
        "caution",
        "driftplan_version",
    ] {
        assert!(v.get(key).is_some(), "missing {key}");
    }
    let measures = v["measures"].as_array().unwrap();
    assert_eq!(measures.len(), 14);
    let tm = measures
        .iter()
        .find(|m| m["measure"] == "targets_reached")
        .unwrap();
    assert_eq!(tm["values"], serde_json::json!([8.0, 9.0]));
    assert_eq!(tm["best"], serde_json::json!(["b"]));
    assert_eq!(v["ranked"], serde_json::json!(["b"]));
    assert!(v["ranking_rule"]
        .as_str()
        .unwrap()
        .starts_with("target coverage first"));
    assert_eq!(v["features"].as_array().unwrap().len(), 9);
    assert_eq!(v["features"][7]["feature"], "B/s3");
    assert_eq!(
        v["features"][7]["reached"],
        serde_json::json!([false, true])
    );
}
