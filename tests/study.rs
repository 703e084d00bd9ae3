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
        link_reward: None,
        spacing: None,
        scenario_best: None,
        min_reserve: None,
        min_neighbours: None,
        keep_objective: None,
        alternative: None,
        zoning: None,
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
            &[(
                "robust".into(),
                driftplan::model::zones::first_zone(&robust.selected),
            )],
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
    for (k, first) in s.first_reached().iter().enumerate() {
        let want = s.runs.iter().find(|r| r.reached[k]).map(|r| r.share);
        assert_eq!(*first, want);
    }
    // At the whole region every target is reachable, so every feature is reached somewhere.
    assert!(s.first_reached().iter().all(|m| m.is_some()));
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

/// Brute-force sweep answer at an area budget (networks scored by `model::evaluate`): when a
/// network within the budget meets every target, the least cost of those that do; otherwise
/// the lexicographic optimum, the best objective, then the least cost among the networks
/// within 1e-9 of it. Returns (objective, cost).
fn lexicographic_by_enumeration(p: &Problem, budget_km2: f64) -> (f64, f64) {
    let mut q = p.clone();
    q.budget.max_area_km2 = Some(budget_km2);
    enumerate_sweep_answer(&q)
}

/// As [`lexicographic_by_enumeration`] with the problem's own budget.
fn enumerate_sweep_answer(q: &Problem) -> (f64, f64) {
    let mut q = q.clone();
    q.objective = Objective::MaxBenefit;
    let n = q.n_cells();
    let all: Vec<(f64, f64, bool)> = (0u32..1 << n)
        .filter_map(|m| {
            let sel: Vec<bool> = (0..n).map(|i| m >> i & 1 == 1).collect();
            let e = evaluate(&q, &sel);
            let every = e.targets_reached == e.reached.len();
            e.feasible.then_some((e.objective, e.cost, every))
        })
        .collect();
    let best = all.iter().map(|a| a.0).fold(f64::NEG_INFINITY, f64::max);
    if all.iter().any(|a| a.2) {
        let cost = all
            .iter()
            .filter(|a| a.2)
            .map(|a| a.1)
            .fold(f64::INFINITY, f64::min);
        return (best, cost);
    }
    let cost = all
        .iter()
        .filter(|a| a.0 >= best - 1e-9 * best.abs().max(1.0))
        .map(|a| a.1)
        .fold(f64::INFINITY, f64::min);
    (best, cost)
}

/// CHECK-VALUES tiny instance (2 × 3 unit cells, costs [3,2,4,2,3,1], A = [1,0,1,0,1,0]
/// target 2, B = [0,1,1,0,0,1] target 1, C = [0,0,0,1,1,0] target 1) as max-benefit.
fn tiny() -> Problem {
    let f = |name: &str, v: [f64; 6], t: f64| ModelFeature {
        name: name.into(),
        scenario: None,
        amounts: v
            .iter()
            .enumerate()
            .filter(|(_, a)| **a > 0.0)
            .map(|(i, a)| (i as u32, *a))
            .collect(),
        target: t,
        weight: 1.0,
    };
    Problem {
        cost: vec![3.0, 2.0, 4.0, 2.0, 3.0, 1.0],
        area_km2: vec![1.0; 6],
        status: vec![CellStatus::Free; 6],
        scenarios: vec![Scenario {
            name: "s1".into(),
            weight: 1.0,
        }],
        features: vec![
            f("A", [1.0, 0.0, 1.0, 0.0, 1.0, 0.0], 2.0),
            f("B", [0.0, 1.0, 1.0, 0.0, 0.0, 1.0], 1.0),
            f("C", [0.0, 0.0, 0.0, 1.0, 1.0, 0.0], 1.0),
        ],
        objective: Objective::MaxBenefit,
        robustness: Robustness::EveryScenario,
        budget: Budget::default(),
        edge_penalty: None,
        link_reward: None,
        spacing: None,
        scenario_best: None,
        min_reserve: None,
        min_neighbours: None,
        keep_objective: None,
        alternative: None,
        zoning: None,
    }
}

/// Each run is the lexicographic optimum found by enumeration: best benefit, then least cost.
fn assert_lexicographic(p: &Problem, shares: &[f64], what: &str) -> driftplan::study::Sweep {
    let total: f64 = p.area_km2.iter().sum();
    let s = sweep(p, shares, total, &opts(), &|| {}).unwrap();
    for r in &s.runs {
        let (benefit, cost) = lexicographic_by_enumeration(p, r.budget_km2);
        assert!(
            close(r.solution.objective, benefit),
            "{what} share {}: benefit {} vs enumeration {benefit}",
            r.share,
            r.solution.objective
        );
        assert!(
            close(r.cost, cost),
            "{what} share {}: cost {} vs enumeration {cost}",
            r.share,
            r.cost
        );
        assert_eq!(r.cost, evaluate(p, &r.solution.selected).cost);
    }
    s
}

fn assert_monotone(s: &driftplan::study::Sweep, what: &str) {
    for w in s.runs.windows(2) {
        let (a, b) = (&w[0], &w[1]);
        assert!(
            b.solution.objective >= a.solution.objective - 1e-6,
            "{what}: benefit falls from {} to {} ({} → {})",
            a.solution.objective,
            b.solution.objective,
            a.share,
            b.share
        );
        assert!(
            b.cost >= a.cost - 1e-9,
            "{what}: cost falls from {} to {} ({} → {})",
            a.cost,
            b.cost,
            a.share,
            b.share
        );
    }
    assert!(s.cost_falls().is_empty(), "{what}");
}

#[test]
fn sweep_is_lexicographic_and_monotone_against_enumeration() {
    // Tiny instance, one budget per cell count. By hand: one cell holds at most benefit 1.5
    // ({4}: A 1 of 2 and C; {2}: A 1 of 2 and B, but costs 4 against 3), so 1 cell → 1.5 at
    // cost 3; two cells {2, 4} already hold every target at the CHECK-VALUES optimum cost 7.
    let shares: Vec<f64> = (1..=6).map(|k| k as f64 / 6.0).collect();
    let s = assert_lexicographic(&tiny(), &shares, "tiny");
    assert_eq!(s.runs[0].cost, 3.0);
    assert!(close(s.runs[0].solution.objective, 1.5));
    assert!(s.runs[1..].iter().all(|r| r.cost == 7.0));
    assert_monotone(&s, "tiny");
    // With a useless expensive cell added (it holds nothing), no budget may buy it: a plain
    // max-benefit solve is free to, the cost stage is not.
    let mut p = tiny();
    p.cost.push(50.0);
    p.area_km2.push(1.0);
    p.status.push(CellStatus::Free);
    let s = assert_lexicographic(&p, &[1.0 / 7.0, 2.0 / 7.0, 1.0], "tiny + useless cell");
    assert!(s.runs.iter().all(|r| !r.solution.selected[6]));
    assert_monotone(&s, "tiny + useless cell");

    // The seeded 12-cell, 3-scenario instance under every rule. Its costs are not its areas,
    // so only benefit is monotone in general; with cost = area both are (module doc of
    // study::sweep), and cost_falls reports nothing.
    let shares = [0.1, 0.2, 0.3, 0.45, 0.6, 0.8, 1.0];
    for rule in [
        Robustness::EveryScenario,
        Robustness::WorstCase,
        Robustness::Expected,
    ] {
        let mut p = instance(7);
        p.robustness = rule;
        let s = assert_lexicographic(&p, &shares, rule.as_str());
        for w in s.runs.windows(2) {
            assert!(w[1].solution.objective >= w[0].solution.objective - 1e-6);
        }
        p.cost = p.area_km2.clone();
        let s = assert_lexicographic(&p, &shares, &format!("{} cost = area", rule.as_str()));
        assert_monotone(&s, rule.as_str());
    }
}

#[test]
fn cost_budgets_never_let_cost_fall() {
    // The seeded instance's costs are not its areas; measured in cost, the sweep's cost is
    // monotone under every rule (module doc of study::sweep), and each run is the enumerated
    // answer at that cost budget.
    let shares = [0.1, 0.2, 0.3, 0.45, 0.6, 0.8, 1.0];
    for rule in [
        Robustness::EveryScenario,
        Robustness::WorstCase,
        Robustness::Expected,
    ] {
        let mut p = instance(7);
        p.robustness = rule;
        p.budget.max_area_km2 = None;
        let total: f64 = p.cost.iter().sum();
        let s = driftplan::study::sweep_of(
            &p,
            &shares,
            driftplan::study::SweepBudget::Cost(total),
            &opts(),
            &|| {},
        )
        .unwrap();
        for r in &s.runs {
            assert!(r.budget_km2.is_nan() && close(r.budget_cost, r.share * total));
            assert!(r.cost <= r.budget_cost + 1e-9);
            let mut q = p.clone();
            q.budget.max_cost = Some(r.budget_cost);
            let (benefit, cost) = enumerate_sweep_answer(&q);
            assert!(
                close(r.solution.objective, benefit),
                "{} {}",
                rule.as_str(),
                r.share
            );
            assert!(
                close(r.cost, cost),
                "{} {}: {} vs {cost}",
                rule.as_str(),
                r.share,
                r.cost
            );
        }
        assert_monotone(&s, rule.as_str());
    }
    // A required cell costing more than the smallest budget: the error names the budget and
    // where to start. Hand: tiny() costs 15 in all; cell 2 costs 4 = 26.7% of it.
    let mut p = tiny();
    p.status[2] = CellStatus::Required;
    let e = driftplan::study::sweep_of(
        &p,
        &[0.2, 0.5],
        driftplan::study::SweepBudget::Cost(15.0),
        &opts(),
        &|| {},
    )
    .unwrap_err()
    .to_string();
    assert!(
        e.contains("budget 20.0% (3.0)")
            && e.contains("(4.0, 26.7% of the cost)")
            && e.contains("at least 26.7%"),
        "{e}"
    );
}

#[test]
fn kept_objective_solves_match_brute_force_and_heuristics_refuse_them() {
    // For every max-benefit rule: the best objective by enumeration, then the least cost that
    // keeps it, by HiGHS and by enumeration (which shares only model::evaluate with HiGHS).
    for rule in [
        Robustness::EveryScenario,
        Robustness::WorstCase,
        Robustness::Expected,
        Robustness::LeastRegret,
    ] {
        let mut p = instance(3);
        p.robustness = rule;
        let first = BruteForce.solve(&p, &opts()).unwrap();
        let q = Problem {
            keep_objective: Some(first.objective),
            scenario_best: first.scenario_best.clone(),
            ..p.clone()
        };
        let h = driftplan::solve::ilp::Highs::default()
            .solve(&q, &opts())
            .unwrap();
        let b = BruteForce.solve(&q, &opts()).unwrap();
        assert!(
            close(h.objective, b.objective),
            "{}: {} vs {}",
            rule.as_str(),
            h.objective,
            b.objective
        );
        // The objective of a kept solve is the cost; the kept objective holds within slack.
        let scored = evaluate(
            &Problem {
                scenario_best: first.scenario_best.clone(),
                ..p.clone()
            },
            &h.selected,
        );
        assert!(close(h.objective, scored.cost), "{}", rule.as_str());
        assert!(
            close(scored.objective, first.objective),
            "{}",
            rule.as_str()
        );
        // A kept objective never costs more than the first network.
        assert!(h.objective <= evaluate(&p, &first.selected).cost + 1e-9);
        let e = driftplan::solve::greedy::Greedy
            .solve(&q, &opts())
            .unwrap_err();
        assert!(e.to_string().contains("kept objective"), "{e}");
    }
}
