//! `driftplan bench` on a tiny region: the patchy habitat shape, the edge-term and run-peak rows,
//! and a clear error for an unknown shape. Figures are printed, never asserted on time.

mod common;

use common::{os, run_quiet};

fn bench(habitat: &str) -> std::process::Output {
    run_quiet(&[
        os("bench"),
        os("--cells"),
        os("400"),
        os("--species"),
        os("2"),
        os("--edge-penalty"),
        os("2"),
        os("--no-exact"),
        os("--time-limit"),
        os("1"),
        os("--habitat"),
        os(habitat),
    ])
}

/// The note of the row named `stage` (the text after the peak-memory column).
fn note(stdout: &str, stage: &str) -> String {
    stdout
        .lines()
        .find(|l| l.split_whitespace().nth(1) == Some(stage.split(' ').next().unwrap()))
        .and_then(|l| l.split_once(stage))
        .map(|(_, rest)| {
            rest.split_whitespace()
                .skip(2)
                .collect::<Vec<_>>()
                .join(" ")
        })
        .unwrap_or_else(|| panic!("no `{stage}` row in:\n{stdout}"))
}

#[test]
fn patchy_bench_is_deterministic_and_states_the_edge_share() {
    let first = bench("patchy");
    assert!(
        first.status.success(),
        "{}",
        String::from_utf8_lossy(&first.stderr)
    );
    let out = String::from_utf8_lossy(&first.stdout).into_owned();
    // The greedy network is a function of the seeded data alone: the same on a second run.
    let again = String::from_utf8_lossy(&bench("patchy").stdout).into_owned();
    assert_eq!(note(&out, "greedy"), note(&again, "greedy"));
    // Patchy and smooth differ (the field and the cost factors change the data).
    let smooth = String::from_utf8_lossy(&bench("smooth").stdout).into_owned();
    assert_ne!(note(&out, "greedy"), note(&smooth, "greedy"));
    // "W = 2, exposed E km, W × exposed = T = S % of objective O": T = W·E and S = 100·T/O
    // (the definitions), to the printed precision.
    let edge = note(&out, "edge term");
    let nums: Vec<f64> = edge
        .split(|c: char| !(c.is_ascii_digit() || c == '.'))
        .filter_map(|t| t.parse().ok())
        .collect();
    let (w, exposed, term, share, objective) = (nums[0], nums[1], nums[2], nums[3], nums[4]);
    assert_eq!(w, 2.0, "{edge}");
    assert!((term - w * exposed).abs() <= w * 0.5 + 0.05, "{edge}");
    assert!((share - 100.0 * term / objective).abs() < 0.06, "{edge}");
    assert!(out.contains("run peak"), "{out}");
}

#[test]
fn an_unknown_habitat_shape_is_refused_with_the_expected_words() {
    let out = bench("wavy");
    assert!(!out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("`smooth` or `patchy`") && err.contains("wavy"),
        "{err}"
    );
}
