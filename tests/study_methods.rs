//! Studies follow `[solver] method`: the same study run with `method = decompose` and with
//! `method = direct` on a model of a couple of thousand cells finds networks that agree within
//! the solves' gaps. The outside reference is the direct integer program in HiGHS (a second,
//! independent solver of the same model); every network is re-scored by `model::evaluate`.

use driftplan::model::compact::unit_grid_penalty;
use driftplan::model::{evaluate, ModelFeature, Objective, Problem, Robustness, Scenario};
use driftplan::solve::decompose::{solve_exact, Method};
use driftplan::solve::SolveOptions;
use driftplan::study::replacement::replacement_costs;
use driftplan::study::sweep::{solve_at_budget, SweepBudget};
use driftplan::study::{single_scenario_problem, stress_test};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// A min-cost model on a rows × cols unit grid: three scenarios with four features each, in
/// bands that move down the grid from scenario to scenario, targets at 20–35 % of each
/// feature's total, random costs and an edge penalty.
fn model(rows: usize, cols: usize, seed: u64) -> Problem {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let n = rows * cols;
    let cost: Vec<f64> = (0..n).map(|_| rng.gen_range(0.5..2.0)).collect();
    let mut features = Vec::new();
    for s in 0..3 {
        for k in 0..4 {
            let centre = rows as f64 * (0.15 + 0.2 * k as f64) + 3.0 * s as f64;
            let mut amounts = Vec::new();
            for i in 0..n {
                let r = (i / cols) as f64;
                let a = (1.0 - (r - centre).abs() / (rows as f64 * 0.3)).max(0.0)
                    * rng.gen_range(0.5..1.5);
                if a > 0.05 {
                    amounts.push((i as u32, a));
                }
            }
            let total: f64 = amounts.iter().map(|(_, a)| a).sum();
            features.push(ModelFeature {
                name: format!("f{k}-s{s}"),
                scenario: Some(s),
                amounts,
                target: total * rng.gen_range(0.2..0.35),
                weight: 1.0,
            });
        }
    }
    let scenarios = (0..3)
        .map(|s| Scenario {
            name: format!("s{s}"),
            weight: 1.0,
        })
        .collect();
    let mut p = Problem::plain(
        cost,
        vec![1.0; n],
        scenarios,
        features,
        Objective::MinCost,
        Robustness::EveryScenario,
    );
    p.edge_penalty = Some(unit_grid_penalty(rows, cols, 0.5));
    p
}

const GAP: f64 = 0.02;

fn options(method: Method) -> SolveOptions {
    SolveOptions {
        threads: Some(1),
        time_limit_s: Some(20.0),
        rel_gap: GAP,
        method,
        ..SolveOptions::default()
    }
}

/// Two minimised objectives, each within its gap of the same optimum: z₁ ≥ OPT ≥ z₂(1 − g₂)
/// and the other way round.
fn agree(z1: f64, g1: f64, z2: f64, g2: f64) -> bool {
    let tol = 1e-6 * z1.abs().max(z2.abs());
    z1 >= z2 * (1.0 - g2) - tol && z2 >= z1 * (1.0 - g1) - tol
}

#[test]
fn the_stress_test_decomposes_each_scenario_and_agrees_with_direct_highs() {
    let p = model(36, 40, 3);
    let dec = stress_test(&p, &[], &options(Method::Decompose), &|| {}).unwrap();
    let dir = stress_test(&p, &[], &options(Method::Direct), &|| {}).unwrap();
    for (s, (a, b)) in dec.rows.iter().zip(&dir.rows).enumerate() {
        assert_eq!(a.solver, "decompose", "scenario {s}");
        assert_eq!(b.solver, "highs", "scenario {s}");
        let sub = single_scenario_problem(&p, s);
        let (ea, eb) = (evaluate(&sub, &a.selected), evaluate(&sub, &b.selected));
        assert!(
            ea.reached.iter().all(|r| *r),
            "scenario {s}: decomposition misses a target"
        );
        assert!(
            eb.reached.iter().all(|r| *r),
            "scenario {s}: HiGHS misses a target"
        );
        assert!(
            agree(ea.objective, a.gap, eb.objective, b.gap),
            "scenario {s}: {} (gap {}) vs {} (gap {})",
            ea.objective,
            a.gap,
            eb.objective,
            b.gap
        );
        assert!(a.gap.is_finite(), "scenario {s}: no bound");
    }
    assert!(driftplan::study::stress::stress_table(&dec)
        .contains("exact method: the decomposition for 3 solves"));
}

#[test]
fn replacement_costs_agree_between_the_methods() {
    let p = model(30, 40, 7);
    let mut found = Vec::new();
    for method in [Method::Decompose, Method::Direct] {
        let o = options(method);
        let base = solve_exact(&p, &o).unwrap();
        // Two units: the first and the last ten chosen cells of the base network.
        let chosen: Vec<u32> = (0..p.n_cells() as u32)
            .filter(|&i| base.selected[i as usize])
            .collect();
        let units = vec![
            ("first".to_string(), chosen[..10].to_vec()),
            ("last".to_string(), chosen[chosen.len() - 10..].to_vec()),
        ];
        let rows = replacement_costs(&p, &base, &units, &o, &|| {}).unwrap();
        for (r, (_, cells)) in rows.iter().zip(&units) {
            let s = r
                .without
                .as_ref()
                .expect("a network exists without the unit");
            let e = evaluate(&p, &s.selected);
            assert!(e.feasible, "{method:?} {}: network breaks a rule", r.label);
            assert!(cells.iter().all(|&c| !s.selected[c as usize]));
            let expected = if method == Method::Decompose {
                "decompose"
            } else {
                "highs"
            };
            assert_eq!(s.solver, expected);
        }
        found.push((base, rows));
    }
    // The two methods' optima agree within their gaps, so the true base values lie in both
    // [b, z] intervals; each unit's re-solve value lies in both of its intervals too.
    let ((bd, rd), (bh, _)) = (&found[0], &found[1]);
    assert!(agree(bd.objective, bd.gap, bh.objective, bh.gap));
    for (a, b) in rd.iter().zip(&found[1].1) {
        let (sa, sb) = (a.without.as_ref().unwrap(), b.without.as_ref().unwrap());
        assert!(
            agree(sa.objective, sa.gap, sb.objective, sb.gap),
            "{}: {} vs {}",
            a.label,
            sa.objective,
            sb.objective
        );
    }
}

#[test]
fn a_sweep_budget_that_buys_every_target_is_decomposed() {
    // Without the edge penalty the benefit stage (weighted targets reached) buys every target
    // when the budget allows; with it, the last share of a target can be worth less than the
    // edge it costs, and the sweep then stays lexicographic (the direct model's kept row).
    let mut p = model(30, 40, 11);
    p.edge_penalty = None;
    let total: f64 = p.cost.iter().sum();
    let at = |method| solve_at_budget(&p, 0.8, SweepBudget::Cost(total), &options(method)).unwrap();
    let (dec, dir) = (at(Method::Decompose), at(Method::Direct));
    // The every-target stage is min-cost: the decomposition takes it; the benefit stage
    // (max-benefit) falls back to HiGHS on its own.
    assert_eq!(dec.solution.solver, "decompose");
    assert_eq!(dir.solution.solver, "highs");
    for r in [&dec, &dir] {
        assert_eq!(r.targets_reached, r.reached.len());
        let e = evaluate(&p, &r.solution.selected);
        assert!(e.feasible && e.cost <= 0.8 * total + 1e-9);
    }
    // The least-cost networks holding every target: their objectives (cost plus edge) agree
    // within the cost stage's gaps.
    let z = |r: &driftplan::study::SweepRun| evaluate(&p, &r.solution.selected).objective;
    assert!(
        agree(z(&dec), dec.cost_gap, z(&dir), dir.cost_gap),
        "{} vs {}",
        z(&dec),
        z(&dir)
    );
}
