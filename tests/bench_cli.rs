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
        .filter(|l| l.split_whitespace().nth(1) == Some(stage.split(' ').next().unwrap()))
        .find_map(|l| l.split_once(stage))
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

/// The numbers of a note, in order (signs kept).
fn numbers(note: &str) -> Vec<f64> {
    note.split(|c: char| !(c.is_ascii_digit() || c == '.' || c == '-' || c == '+'))
        .filter_map(|t| t.trim_start_matches('+').parse().ok())
        .collect()
}

fn exact_bench(extra: &[&str]) -> String {
    let mut args = vec![
        "bench",
        "--cells",
        "400",
        "--species",
        "2",
        "--edge-penalty",
        "2",
        "--time-limit",
        "2",
        "--baselines",
    ];
    args.extend_from_slice(extra);
    let args: Vec<&std::ffi::OsStr> = args.into_iter().map(os).collect();
    let out = run_quiet(&args);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8_lossy(&out.stdout).into_owned()
}

#[test]
fn annealing_is_also_given_the_decompositions_time() {
    let out = exact_bench(&["--lp-bound"]);
    // Both exact rows and the first annealing row stay.
    for stage in ["solve", "decompose", "greedy", "anneal (same time)"] {
        note(&out, stage);
    }
    // "objective A (+P% vs decomposition D), given T s, …": P = 100·(A − D)/|D| by definition,
    // to the printed precision; T is the decomposition row's own time (to 0.1 s).
    let row = note(&out, "anneal (decomp. time)");
    let n = numbers(&row);
    let (a, p, d, given) = (n[0], n[1], n[2], n[3]);
    assert!((p - 100.0 * (a - d) / d.abs()).abs() < 0.01, "{row}");
    let decompose = note(&out, "decompose");
    let decompose_line = out
        .lines()
        .find(|l| l.split_whitespace().nth(1) == Some("decompose"))
        .unwrap();
    let seconds: f64 = decompose_line
        .split_whitespace()
        .nth(2)
        .unwrap()
        .parse()
        .unwrap();
    assert!((given - seconds).abs() <= 0.06, "{row} / {decompose_line}");
    // The LP relaxation's optimum is at most the objective of any network meeting every
    // rule (a relaxation only widens the feasible set; common practice, no source): below the
    // direct HiGHS objective and the decomposition's.
    let lp = numbers(&note(&out, "LP relaxation"))[0];
    let highs = numbers(note(&out, "solve").split("objective").nth(1).unwrap())[0];
    let decomposed = numbers(decompose.split("objective").nth(1).unwrap())[0];
    assert!(
        lp <= highs * (1.0 + 1e-6) && lp <= decomposed * (1.0 + 1e-6),
        "{out}"
    );
    assert!(
        note(&out, "bound vs LP").contains("within 1% of the LP bound at"),
        "{out}"
    );
    // Every L(λ) lies at or below the LP bound: the cut subproblem has integral LP optima, so
    // the Lagrangian dual equals the LP bound (Geoffrion 1974, Math. Programming Study 2:82).
    // The row prints each ascent's distance from the LP as "(±x.xxx% vs LP)".
    let ascent = note(&out, "ascent vs LP");
    let shares: Vec<f64> = ascent
        .split("% vs LP")
        .filter_map(|part| {
            part.rsplit('(')
                .next()?
                .trim_start_matches('+')
                .parse()
                .ok()
        })
        .collect();
    assert_eq!(shares.len(), 4, "{ascent}");
    assert!(shares.iter().all(|s| *s <= 0.001), "{ascent}");
}

#[test]
fn no_direct_runs_the_decomposition_alone() {
    let out = exact_bench(&["--no-direct"]);
    assert!(
        !out.lines()
            .any(|l| l.split_whitespace().nth(1) == Some("solve")),
        "{out}"
    );
    note(&out, "decompose");
    note(&out, "anneal (decomp. time)");
    // The edge term is stated for the decomposition's network.
    note(&out, "edge term");
}
