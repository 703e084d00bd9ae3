//! Stress test and budget sweep against brute-force enumeration (solve::brute, scored by
//! model::evaluate, sharing no formulation with the integer program).

use driftplan::model::{
    evaluate, Budget, CellStatus, ModelFeature, Objective, Problem, Robustness, Scenario,
};
use driftplan::solve::brute::BruteForce;
use driftplan::solve::{SolveOptions, Solver};
use driftplan::study::{selection_frequency, single_scenario_problem, stress_test, sweep};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// 12 cells, 3 scenarios × 3 features each (scenario-specific habitat that moves with the
/// scenario), one scenario-free feature; costs and areas random but seeded.
fn instance(seed: u64) -> Problem {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let n = 12;
    let mut features = Vec::new();
    for s in 0..=3 {
        for k in 0..if s == 3 { 1 } else { 3 } {
            let mut amounts: Vec<(u32, f64)> = Vec::new();
            for c in 0..n as u32 {
                if rng.gen_bool(0.45) {
                    amounts.push((c, rng.gen_range(1..=6) as f64));
                }
            }
            let total: f64 = amounts.iter().map(|a| a.1).sum();
            features.push(ModelFeature {
                name: format!("f{s}.{k}"),
                scenario: (s < 3).then_some(s),
                amounts,
                target: (0.4 * total).max(1.0),
                weight: rng.gen_range(1..=3) as f64,
            });
        }
    }
    Problem {
        cost: (0..n).map(|_| rng.gen_range(1..=9) as f64).collect(),
        area_km2: (0..n).map(|_| rng.gen_range(5..=15) as f64).collect(),
        status: vec![CellStatus::Free; n],
        scenarios: ["s1", "s2", "s3"]
            .iter()
            .map(|s| Scenario {
                name: s.to_string(),
                weight: 1.0,
            })
            .collect(),
        features,
        objective: Objective::MaxBenefit,
        robustness: Robustness::WorstCase,
        budget: Budget {
            max_cost: None,
            max_area_km2: Some(40.0),
        },
        edge_penalty: None,
        spacing: None,
        scenario_best: None,
        min_reserve: None,
    }
}

fn opts() -> SolveOptions {
    SolveOptions {
        threads: Some(1),
        ..SolveOptions::default()
    }
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-5 * a.abs().max(b.abs()).max(1.0)
}

#[test]
fn stress_diagonal_equals_single_scenario_optima() {
    for seed in 0..3 {
        let p = instance(seed);
        let robust = driftplan::solve::ilp::Highs::default()
            .solve(&p, &opts())
            .unwrap();
        let m = stress_test(
            &p,
            &[("robust".into(), robust.selected.clone())],
            &opts(),
            &|| {},
        )
        .unwrap();
        assert_eq!(m.rows.len(), 4);
        for s in 0..3 {
            // Brute force on scenario s alone: its optimum is the diagonal benefit.
            let alone = single_scenario_problem(&p, s);
            let b = BruteForce.solve(&alone, &opts()).unwrap();
            let diag = &m.rows[s].evaluated[s];
            assert!(
                close(diag.benefit, b.objective),
                "seed {seed} s{s}: {} vs {}",
                diag.benefit,
                b.objective
            );
            // No other design does better in scenario s than the one made for it.
            for row in &m.rows {
                assert!(row.evaluated[s].benefit <= diag.benefit + 1e-6);
            }
        }
        // The robust (worst-case) row is the given network evaluated under every scenario,
        // and its worst case is at least that of every single-scenario design.
        let r = m.rows.last().unwrap();
        assert_eq!(r.evaluated, evaluate(&p, &robust.selected).scenarios);
        for row in &m.rows[..3] {
            assert!(
                r.worst_benefit() >= row.worst_benefit() - 1e-6,
                "seed {seed}"
            );
        }
        assert!(close(r.worst_benefit(), robust.objective));
    }
}

#[test]
fn sweep_benefit_grows_with_budget_and_matches_enumeration() {
    let mut p = instance(7);
    p.robustness = Robustness::Expected;
    let total_area: f64 = p.area_km2.iter().sum();
    let shares = [0.1, 0.2, 0.3, 0.45, 0.6, 0.8, 1.0];
    let s = sweep(&p, &shares, total_area, &opts(), &|| {}).unwrap();
    let mut last = f64::NEG_INFINITY;
    for r in &s.runs {
        // Monotone up to the reported gap (0 here: every solve is optimal).
        let slack = r.solution.gap.max(0.0) * r.solution.objective.abs();
        assert!(r.solution.objective >= last - slack - 1e-9);
        last = r.solution.objective;
        assert!(r.area_km2 <= r.budget_km2 + 1e-9);
        // Brute force at the same budget.
        let mut q = p.clone();
        q.budget.max_area_km2 = Some(r.budget_km2);
        let b = BruteForce.solve(&q, &opts()).unwrap();
        assert!(
            close(b.objective, r.solution.objective),
            "share {}",
            r.share
        );
    }
    // First budget meeting each feature, recomputed from the runs.
    for (k, first) in s.first_met().iter().enumerate() {
        let want = s.runs.iter().find(|r| r.met[k]).map(|r| r.share);
        assert_eq!(*first, want);
    }
    // At the whole region every target is reachable, so every feature is met somewhere.
    assert!(s.first_met().iter().all(|m| m.is_some()));
    // Independent of the thread count.
    let one = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .unwrap();
    let two = rayon::ThreadPoolBuilder::new()
        .num_threads(2)
        .build()
        .unwrap();
    let a = one.install(|| sweep(&p, &shares, total_area, &opts(), &|| {}).unwrap());
    let b = two.install(|| sweep(&p, &shares, total_area, &opts(), &|| {}).unwrap());
    let nets = |s: &driftplan::study::Sweep| -> Vec<Vec<bool>> {
        s.runs.iter().map(|r| r.solution.selected.clone()).collect()
    };
    assert_eq!(nets(&a), nets(&b));
    // Selection frequency over the sweep, recounted by hand.
    let all = nets(&a);
    let refs: Vec<&[bool]> = all.iter().map(|v| v.as_slice()).collect();
    let f = selection_frequency(p.n_cells(), &refs);
    for c in 0..p.n_cells() {
        let count = all.iter().filter(|n| n[c]).count();
        assert_eq!(f.share[c], count as f64 / all.len() as f64);
    }
}
