//! The readers never panic: random mutations (byte changes, deletions, duplications,
//! insertions, truncations) of the coarse demo's plan, CSV lattice, GeoJSON layers and a
//! network file go through the same path as a run (`Plan::load`, `pipeline::prepare`,
//! `assess::network_input::read_network`), and every one ends in a result or in an error whose
//! message names the mutated file. The longer, open-ended search is `scripts/fuzz.sh` (cargo
//! fuzz); this is its short, deterministic check in CI.

mod common;

use driftplan::pipeline;
use driftplan::plan::Plan;
use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};
use std::path::{Path, PathBuf};

/// One mutation of a file's bytes.
#[derive(Debug, Clone)]
enum Mutation {
    /// Replace the byte at (share of the length) with this one.
    Set(f64, u8),
    /// Delete `len` bytes from the position.
    Delete(f64, usize),
    /// Copy `len` bytes from the position to just after them.
    Duplicate(f64, usize),
    /// Insert these bytes at the position.
    Insert(f64, Vec<u8>),
    /// Keep only the first share of the file.
    Truncate(f64),
}

fn mutation() -> impl Strategy<Value = Mutation> {
    // Bytes that matter to the formats most often: separators, quotes, brackets, digits,
    // signs, newlines, a UTF-8 lead byte, NUL.
    let special = prop::sample::select(vec![
        b',', b'"', b'\n', b'\r', b'[', b']', b'{', b'}', b'=', b'-', b'.', b'e', b'0', b'9', b' ',
        0xC3, 0x00, b':', b'#', b'N',
    ]);
    let byte = prop_oneof![special, any::<u8>()];
    let at = 0.0..1.0f64;
    prop_oneof![
        (at.clone(), byte.clone()).prop_map(|(p, b)| Mutation::Set(p, b)),
        (at.clone(), 1..64usize).prop_map(|(p, n)| Mutation::Delete(p, n)),
        (at.clone(), 1..64usize).prop_map(|(p, n)| Mutation::Duplicate(p, n)),
        (at.clone(), prop::collection::vec(byte, 1..8)).prop_map(|(p, v)| Mutation::Insert(p, v)),
        at.prop_map(Mutation::Truncate),
    ]
}

fn apply(bytes: &[u8], m: &Mutation) -> Vec<u8> {
    let pos = |share: f64| ((share * bytes.len() as f64) as usize).min(bytes.len());
    let mut v = bytes.to_vec();
    match m {
        Mutation::Set(p, b) => {
            let i = pos(*p).min(v.len().saturating_sub(1));
            if !v.is_empty() {
                v[i] = *b;
            }
        }
        Mutation::Delete(p, n) => {
            let i = pos(*p);
            v.drain(i..(i + n).min(v.len()));
        }
        Mutation::Duplicate(p, n) => {
            let i = pos(*p);
            let piece = v[i..(i + n).min(v.len())].to_vec();
            let j = (i + piece.len()).min(v.len());
            v.splice(j..j, piece);
        }
        Mutation::Insert(p, ins) => {
            let i = pos(*p);
            v.splice(i..i, ins.iter().copied());
        }
        Mutation::Truncate(p) => v.truncate(pos(*p)),
    }
    v
}

/// The coarse demo and a network file of its own grid (one reserve of a few cells).
struct Fixture {
    _tmp: tempfile::TempDir,
    plan: PathBuf,
    network: PathBuf,
}

fn fixture() -> Fixture {
    let tmp = tempfile::tempdir().unwrap();
    let plan = common::plan_with(tmp.path(), "max_share = 0.4", "objective = \"min-cost\"");
    let net_geojson = tmp.path().join("network.geojson");
    std::fs::write(
        &net_geojson,
        r#"{"type":"FeatureCollection","features":[{"type":"Feature","properties":{"name":"a"},"geometry":{"type":"Polygon","coordinates":[[[-119.5,-37.5],[-118.5,-37.5],[-118.5,-36.5],[-119.5,-36.5],[-119.5,-37.5]]]}}]}"#,
    )
    .unwrap();
    Fixture {
        _tmp: tmp,
        plan,
        network: net_geojson,
    }
}

/// The result of reading everything a run reads with `path` holding `bytes`: `Ok` or the
/// error message. Restores the file afterwards.
fn read_with(fx: &Fixture, path: &Path, bytes: &[u8]) -> Result<(), String> {
    let original = std::fs::read(path).unwrap();
    std::fs::write(path, bytes).unwrap();
    let result = (|| -> Result<(), String> {
        let plan = Plan::load(&fx.plan).map_err(|e| e.to_string())?;
        let inputs = pipeline::prepare(&plan, &|_| {}).map_err(|e| format!("{e:#}"))?;
        driftplan::assess::network_input::read_network(&fx.network, &inputs.grid, 0.5)
            .map_err(|e| e.to_string())?;
        Ok(())
    })();
    std::fs::write(path, original).unwrap();
    result
}

fn check_file(fx: &Fixture, rel: &Path, cases: u32, seed_name: &str) {
    let path = fx.plan.parent().unwrap().parent().unwrap().join(rel);
    let path = if rel.is_absolute() {
        rel.to_path_buf()
    } else {
        path
    };
    let original = std::fs::read(&path).unwrap();
    assert!(
        read_with(fx, &path, &original).is_ok(),
        "the unmutated inputs must read"
    );
    let name = path.file_name().unwrap().to_string_lossy().into_owned();
    // A fixed seed per file: the same mutations on every run (deterministic CI).
    let mut seed = [0u8; 32];
    for (i, b) in seed_name.bytes().enumerate() {
        seed[i % 32] ^= b;
    }
    // DRIFTPLAN_MUTATION_CASES=N runs N cases per file instead (a longer local search).
    let cases = std::env::var("DRIFTPLAN_MUTATION_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(cases);
    let config = Config {
        cases,
        failure_persistence: None,
        ..Config::default()
    };
    let mut runner =
        TestRunner::new_with_rng(config, TestRng::from_seed(RngAlgorithm::ChaCha, &seed));
    let result = runner.run(&mutation(), |m| {
        let mutated = apply(&original, &m);
        match read_with(fx, &path, &mutated) {
            Ok(()) => {}
            Err(msg) => {
                prop_assert!(
                    msg.contains(&name),
                    "mutation {m:?} of {name}: the error does not name the file: {msg}"
                );
            }
        }
        Ok(())
    });
    if let Err(e) = result {
        panic!("{e}");
    }
}

#[test]
fn mutated_plan_files_never_panic_and_errors_name_the_plan() {
    let fx = fixture();
    let rel = fx.plan.strip_prefix(fx._tmp.path()).unwrap().to_path_buf();
    check_file(&fx, &rel, 64, "plan");
}

#[test]
fn mutated_csv_lattices_never_panic_and_errors_name_the_file() {
    let fx = fixture();
    check_file(&fx, Path::new("demo-data/static.csv"), 48, "static");
    check_file(
        &fx,
        Path::new("demo-data/ocean/ssp2-4.5_2050.csv"),
        48,
        "ocean",
    );
}

#[test]
fn mutated_geojson_layers_never_panic_and_errors_name_the_file() {
    let fx = fixture();
    for (rel, seed) in [
        ("demo-data/region.geojson", "region"),
        ("demo-data/land.geojson", "land"),
        ("demo-data/protected.geojson", "protected"),
    ] {
        check_file(&fx, Path::new(rel), 40, seed);
    }
}

#[test]
fn mutated_network_files_never_panic_and_errors_name_the_file() {
    let fx = fixture();
    let net = fx.network.clone();
    check_file(&fx, &net, 64, "network");
}
