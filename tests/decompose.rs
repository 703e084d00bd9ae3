//! The decomposition solver (`solve::decompose`) against outside references: brute-force
//! enumeration of every network, HiGHS's LP relaxation written out here independently of
//! `solve::ilp`, and the direct integer program in HiGHS on models of a few thousand cells.

use driftplan::model::compact::{own_edge_km, unit_grid_penalty};
use driftplan::model::{
    evaluate, Budget, CellStatus, ModelFeature, Objective, Problem, Robustness, Scenario,
};
use driftplan::solve::brute::BruteForce;
use driftplan::solve::decompose::lagrange::Relaxation;
use driftplan::solve::decompose::{fixing, Decompose, Method};
use driftplan::solve::ilp::Highs;
use driftplan::solve::{SolveOptions, Solver};
use good_lp::{constraint, variable, Expression, ProblemVariables, SolverModel};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::time::{Duration, Instant};

/// A random min-cost problem on a rows × cols unit grid: features in bands with noise, three
/// scenarios, targets at 20–40 % of each feature's total, optional edge penalty, budget and
/// required/excluded cells.
fn instance(
    rng: &mut ChaCha8Rng,
    rows: usize,
    cols: usize,
    n_features: usize,
    edge: Option<f64>,
    statuses: bool,
) -> Problem {
    let n = rows * cols;
    let cost: Vec<f64> = (0..n).map(|_| rng.gen_range(0.5..2.0)).collect();
    let features: Vec<ModelFeature> = (0..n_features)
        .map(|k| {
            let centre = rng.gen_range(0.0..rows as f64);
            let mut amounts = Vec::new();
            for i in 0..n {
                let r = (i / cols) as f64;
                let a = (1.0 - ((r - centre).abs() / (rows as f64 * 0.4))).max(0.0)
                    * rng.gen_range(0.5..1.5);
                if a > 0.05 {
                    amounts.push((i as u32, a));
                }
            }
            let total: f64 = amounts.iter().map(|(_, a)| a).sum();
            ModelFeature {
                name: format!("f{k}"),
                scenario: Some(k % 3),
                amounts,
                target: total * rng.gen_range(0.2..0.4),
                weight: 1.0,
            }
        })
        .collect();
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
    p.edge_penalty = edge.map(|w| unit_grid_penalty(rows, cols, w));
    if statuses {
        for s in p.status.iter_mut() {
            *s = match rng.gen_range(0..10) {
                0 => CellStatus::Required,
                1 => CellStatus::Excluded,
                _ => CellStatus::Free,
            };
        }
    }
    p
}

/// LP relaxation of the min-cost model with the edge penalty in cut form (model::compact),
/// solved by HiGHS through good_lp; written here, not taken from `solve::ilp`.
fn lp_bound(p: &Problem) -> f64 {
    let n = p.n_cells();
    let mut vars = ProblemVariables::new();
    let x: Vec<_> = (0..n)
        .map(|i| {
            let (lo, hi) = match p.status[i] {
                CellStatus::Free => (0.0, 1.0),
                CellStatus::Required => (1.0, 1.0),
                CellStatus::Excluded => (0.0, 0.0),
            };
            vars.add(variable().min(lo).max(hi))
        })
        .collect();
    let mut obj = Expression::from(0.0);
    let mut rows = Vec::new();
    for (c, &xi) in p.cost.iter().zip(&x) {
        obj.add_mul(*c, xi);
    }
    if let Some(pen) = &p.edge_penalty {
        for (i, b) in own_edge_km(pen).iter().enumerate() {
            obj.add_mul(pen.weight * b, x[i]);
        }
        for &(i, j, l) in &pen.pairs {
            let e = vars.add(variable().min(0.0).max(1.0));
            obj.add_mul(pen.weight * l, e);
            rows.push(constraint::leq(x[i as usize] - x[j as usize] - e, 0.0));
            rows.push(constraint::leq(x[j as usize] - x[i as usize] - e, 0.0));
        }
    }
    for f in &p.features {
        let mut e = Expression::from(0.0);
        for &(c, a) in &f.amounts {
            e.add_mul(a, x[c as usize]);
        }
        rows.push(constraint::geq(e, f.target));
    }
    if let Some(b) = p.budget.max_cost {
        let mut e = Expression::from(0.0);
        for (c, &xi) in p.cost.iter().zip(&x) {
            e.add_mul(*c, xi);
        }
        rows.push(constraint::leq(e, b));
    }
    let mut m = vars
        .minimise(obj.clone())
        .using(good_lp::solvers::highs::highs);
    for r in rows {
        m.add_constraint(r);
    }
    let sol = m.solve().expect("LP solves");
    obj.eval_with(&sol)
}

fn one_thread() -> SolveOptions {
    SolveOptions {
        threads: Some(1),
        time_limit_s: Some(60.0),
        method: Method::Decompose,
        ..SolveOptions::default()
    }
}

/// Random small instances (≤ 16 cells) with and without edge penalty, budget and fixed cells.
fn small_instances() -> Vec<Problem> {
    let mut rng = ChaCha8Rng::seed_from_u64(11);
    let mut out = Vec::new();
    for case in 0..24 {
        let (rows, cols) = [(4, 4), (3, 5), (3, 4), (2, 7)][case % 4];
        let edge = [None, Some(0.3), Some(1.0)][case % 3];
        let mut p = instance(&mut rng, rows, cols, 6, edge, case % 2 == 1);
        if case % 5 == 4 {
            // A budget a little above what the brute-force optimum needs (set below).
            p.budget = Budget {
                max_cost: Some(p.cost.iter().sum::<f64>() * 0.8),
                max_area_km2: None,
            };
        }
        if BruteForce.solve(&p, &SolveOptions::default()).is_ok() {
            out.push(p);
        }
    }
    assert!(out.len() >= 15, "enough feasible instances ({})", out.len());
    out
}

#[test]
fn lagrangian_bound_lies_between_lp_bound_and_optimum() {
    // References: brute-force enumeration (every L(λ) ≤ the optimum, weak duality) and
    // HiGHS's LP relaxation (the Lagrangian dual of a cut subproblem equals the LP bound,
    // Geoffrion 1974; the volume ascent approaches it, so 0.5 % of slack once converged).
    for (case, p) in small_instances().iter().enumerate() {
        let opt = BruteForce.solve(p, &SolveOptions::default()).unwrap();
        let relax = Relaxation::new(p);
        let zero = vec![0.0; relax.n_multipliers()];
        let far = Instant::now() + Duration::from_secs(30);
        let a = relax.ascend(&zero, opt.objective, far, 20_000);
        assert!(
            a.bound <= opt.objective + 1e-7,
            "case {case}: L {} above the optimum {}",
            a.bound,
            opt.objective
        );
        let lp = lp_bound(p);
        assert!(
            a.bound >= lp - 0.005 * lp.abs() - 1e-7,
            "case {case}: L {} short of the LP bound {lp} after {} steps",
            a.bound,
            a.iterations
        );
    }
}

#[test]
fn decomposition_finds_the_brute_force_optimum_within_its_gap() {
    // Reference: brute-force enumeration of every network, scored by model::evaluate.
    for (case, p) in small_instances().iter().enumerate() {
        let opt = BruteForce.solve(p, &SolveOptions::default()).unwrap();
        let (d, _) = Decompose.solve_traced(p, &one_thread()).unwrap();
        assert_eq!(d.solver, "decompose", "case {case}");
        let e = evaluate(p, &d.selected);
        assert!(e.feasible, "case {case}: network breaks a rule");
        assert!((e.objective - d.objective).abs() < 1e-7, "case {case}");
        assert!(
            d.bound <= opt.objective + 1e-6,
            "case {case}: bound above optimum"
        );
        assert!(
            d.objective <= opt.objective + d.gap * d.objective.abs() + 1e-6,
            "case {case}: {} vs optimum {} with gap {}",
            d.objective,
            opt.objective,
            d.gap
        );
        assert!(
            d.gap <= 1e-6,
            "case {case}: small problems close (gap {})",
            d.gap
        );
    }
}

#[test]
fn fixing_never_removes_an_optimal_network() {
    // Reference: enumeration of every network; each one at the optimum must agree with every
    // fixed cell when fixing uses the optimum itself as the incumbent's objective.
    for (case, p) in small_instances().iter().enumerate() {
        let opt = BruteForce
            .solve(p, &SolveOptions::default())
            .unwrap()
            .objective;
        let relax = Relaxation::new(p);
        let zero = vec![0.0; relax.n_multipliers()];
        let far = Instant::now() + Duration::from_secs(30);
        let a = relax.ascend(&zero, opt, far, 20_000);
        let fixed = fixing::fix(p, &relax.evaluate(&a.lambda), opt);
        let n = p.n_cells();
        let mut optimal = 0;
        let mut sel = vec![false; n];
        for mask in 0u32..(1 << n) {
            for (b, s) in sel.iter_mut().enumerate() {
                *s = mask >> b & 1 == 1;
            }
            let e = evaluate(p, &sel);
            if e.feasible && e.objective <= opt + 1e-9 {
                optimal += 1;
                for i in 0..n {
                    if let Some(v) = fixed[i] {
                        assert_eq!(sel[i], v, "case {case}: cell {i} fixed against an optimum");
                    }
                }
            }
        }
        assert!(optimal >= 1, "case {case}");
    }
}

#[test]
fn decomposition_and_direct_highs_agree_on_thousands_of_cells() {
    // Reference: the direct integer program in HiGHS. Each solver proves an interval
    // [bound, objective] that holds the optimum, so the two intervals must overlap; every
    // network must meet what it claims (model::evaluate).
    let mut rng = ChaCha8Rng::seed_from_u64(5);
    for (rows, cols, edge, budget) in [(50, 50, Some(0.5), false), (40, 60, None, true)] {
        let mut p = instance(&mut rng, rows, cols, 24, edge, true);
        if budget {
            p.budget.max_cost = Some(p.cost.iter().sum::<f64>() * 0.7);
        }
        let o = SolveOptions {
            rel_gap: 0.005,
            ..one_thread()
        };
        let d = Decompose.solve(&p, &o).unwrap();
        let h = Highs::default()
            .solve(
                &p,
                &SolveOptions {
                    method: Method::Direct,
                    ..o.clone()
                },
            )
            .unwrap();
        for s in [&d, &h] {
            let e = evaluate(&p, &s.selected);
            assert!(e.feasible, "{}: infeasible network", s.solver);
            assert!(
                (e.objective - s.objective).abs() < 1e-6 * s.objective,
                "{}",
                s.solver
            );
            assert!(s.bound <= s.objective + 1e-6 * s.objective, "{}", s.solver);
        }
        let tol = 1e-6 * h.objective;
        assert!(
            d.bound <= h.objective + tol,
            "{} > {}",
            d.bound,
            h.objective
        );
        assert!(
            h.bound <= d.objective + tol,
            "{} > {}",
            h.bound,
            d.objective
        );
        assert!(d.gap <= 0.005 + 1e-9, "decomposition gap {}", d.gap);
    }
}

#[test]
fn same_network_at_one_and_two_threads() {
    // Common practice, no source: the decomposition itself is sequential and HiGHS's branch
    // and bound is deterministic, so a network that reached its gap must not change with
    // `threads`.
    let mut rng = ChaCha8Rng::seed_from_u64(9);
    let p = instance(&mut rng, 20, 20, 12, Some(0.5), true);
    // HiGHS keeps one scheduler per OS thread with the thread count it started with, so each
    // run gets a fresh thread.
    let at = |t: u32| {
        let p = p.clone();
        std::thread::spawn(move || {
            Decompose
                .solve(
                    &p,
                    &SolveOptions {
                        threads: Some(t),
                        rel_gap: 1e-4,
                        ..one_thread()
                    },
                )
                .unwrap()
        })
        .join()
        .unwrap()
    };
    let (a, b) = (at(1), at(2));
    assert!(a.gap <= 1e-4, "solved to the gap (gap {})", a.gap);
    assert_eq!(a.selected, b.selected);
    assert_eq!(a.objective, b.objective);
}

/// `p` with a connectivity reward of weight `w`: random links between its cells (each pair
/// with chance `density`, strengths in 0.01–0.3), in the form `connectivity::pairs` gives
/// (i < j, each pair once).
fn with_links(mut p: Problem, w: f64, density: f64, rng: &mut ChaCha8Rng) -> Problem {
    let n = p.n_cells() as u32;
    let mut pairs = Vec::new();
    for i in 0..n {
        for j in i + 1..n {
            if rng.gen_bool(density) {
                pairs.push((i, j, rng.gen_range(0.01..0.3)));
            }
        }
    }
    p.link_reward = Some(driftplan::model::LinkReward { weight: w, pairs });
    p
}

#[test]
fn a_link_reward_decomposes_to_the_brute_force_optimum() {
    // Reference: brute-force enumeration of every network (model::evaluate counts the reward
    // −w·Σ s over links with both ends chosen). The cut carries the reward as a directed
    // term, so the decomposition must close these small problems exactly, with a bound that
    // never passes the optimum.
    let mut rng = ChaCha8Rng::seed_from_u64(23);
    let mut changed = 0;
    for (case, plain) in small_instances().into_iter().enumerate() {
        let w = [2.0, 6.0][case % 2];
        let p = with_links(plain.clone(), w, 0.3, &mut rng);
        assert_eq!(driftplan::solve::decompose::unsupported(&p), None);
        let opt = BruteForce.solve(&p, &SolveOptions::default()).unwrap();
        let without = BruteForce.solve(&plain, &SolveOptions::default()).unwrap();
        changed += usize::from(opt.selected != without.selected);
        let (d, _) = Decompose.solve_traced(&p, &one_thread()).unwrap();
        assert_eq!(d.solver, "decompose", "case {case}");
        let e = evaluate(&p, &d.selected);
        assert!(e.feasible, "case {case}: network breaks a rule");
        assert!((e.objective - d.objective).abs() < 1e-7, "case {case}");
        assert!(
            d.bound <= opt.objective + 1e-6,
            "case {case}: bound {} above optimum {}",
            d.bound,
            opt.objective
        );
        assert!(
            (d.objective - opt.objective).abs() < 1e-6,
            "case {case}: {} vs optimum {}",
            d.objective,
            opt.objective
        );
    }
    assert!(
        changed >= 3,
        "the reward should change some optima ({changed})"
    );
}

#[test]
fn a_link_reward_agrees_with_direct_highs_on_thousands_of_cells() {
    // Reference: the direct integer program in HiGHS (the reward linearised there with
    // z ≤ xᵢ, z ≤ xⱼ). The two proven intervals [bound, objective] must overlap.
    let mut rng = ChaCha8Rng::seed_from_u64(31);
    let plain = instance(&mut rng, 40, 50, 18, Some(0.5), true);
    // Links between rook neighbours and a few cells further along, as larvae drift.
    let (rows, cols) = (40u32, 50u32);
    let mut pairs = Vec::new();
    for i in 0..rows * cols {
        for d in [1, cols, 2 * cols + 1] {
            let j = i + d;
            if j < rows * cols && (d != 1 || (i + 1) % cols != 0) && rng.gen_bool(0.7) {
                pairs.push((i, j, rng.gen_range(0.01..0.2)));
            }
        }
    }
    let mut p = plain;
    p.link_reward = Some(driftplan::model::LinkReward { weight: 3.0, pairs });
    let o = SolveOptions {
        rel_gap: 0.005,
        ..one_thread()
    };
    let d = Decompose.solve(&p, &o).unwrap();
    assert_eq!(d.solver, "decompose");
    let h = Highs::default()
        .solve(
            &p,
            &SolveOptions {
                method: Method::Direct,
                ..o.clone()
            },
        )
        .unwrap();
    for s in [&d, &h] {
        let e = evaluate(&p, &s.selected);
        assert!(e.feasible, "{}: infeasible network", s.solver);
        assert!(
            (e.objective - s.objective).abs() < 1e-6 * s.objective.abs(),
            "{}",
            s.solver
        );
        assert!(e.linked > 0.0, "{}: no links held", s.solver);
    }
    let tol = 1e-6 * h.objective.abs();
    assert!(
        d.bound <= h.objective + tol,
        "{} > {}",
        d.bound,
        h.objective
    );
    assert!(
        h.bound <= d.objective + tol,
        "{} > {}",
        h.bound,
        d.objective
    );
    assert!(d.gap <= 0.005 + 1e-9, "decomposition gap {}", d.gap);
}
