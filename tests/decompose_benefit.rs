//! The decomposition solver (`solve::decompose`) on max-benefit problems, for every robustness
//! rule, with and without the edge penalty, against outside references: brute-force
//! enumeration of every network (scored by `model::evaluate`), weak Lagrangian duality (Fisher
//! 1981, Management Science 27:1, "The Lagrangian relaxation method for solving integer
//! programming problems": every L(λ) bounds the optimum), and the direct integer program in
//! HiGHS as a second solver on models of a few thousand cells.

use driftplan::model::compact::unit_grid_penalty;
use driftplan::model::robust::is_minimisation;
use driftplan::model::{
    evaluate, Budget, CellStatus, ModelFeature, Objective, Problem, Robustness, Scenario,
};
use driftplan::solve::brute::BruteForce;
use driftplan::solve::decompose::lagrange::Relaxation;
use driftplan::solve::decompose::{fixing, unsupported, Decompose, Method};
use driftplan::solve::ilp::Highs;
use driftplan::solve::{with_scenario_best, Solution, SolveOptions, Solver};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::time::{Duration, Instant};

const RULES: [Robustness; 4] = [
    Robustness::EveryScenario,
    Robustness::WorstCase,
    Robustness::Expected,
    Robustness::LeastRegret,
];

/// A random max-benefit problem on a rows × cols unit grid: features in bands with noise over
/// three scenarios (one in four scenario-free, one in five weight-only), weights 0.5–2,
/// targets at 20–50 % of each feature's total, a cost budget of `share` of the total cost (and
/// an area budget on every third seed), optional edge penalty and required/excluded cells.
fn instance(
    rng: &mut ChaCha8Rng,
    (rows, cols): (usize, usize),
    n_features: usize,
    rule: Robustness,
    edge: Option<f64>,
    statuses: bool,
    share: f64,
) -> Problem {
    let n = rows * cols;
    let cost: Vec<f64> = (0..n).map(|_| rng.gen_range(0.5..2.0)).collect();
    let area: Vec<f64> = (0..n).map(|_| rng.gen_range(0.8..1.2)).collect();
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
            let weight_only = k % 5 == 4;
            ModelFeature {
                name: format!("f{k}"),
                scenario: if k % 4 == 3 { None } else { Some(k % 3) },
                amounts,
                target: if weight_only {
                    0.0
                } else {
                    total * rng.gen_range(0.2..0.5)
                },
                weight: rng.gen_range(0.5..2.0),
            }
        })
        .collect();
    let scenarios = (0..3)
        .map(|s| Scenario {
            name: format!("s{s}"),
            weight: [1.0, 2.0, 0.5][s],
        })
        .collect();
    let mut p = Problem::plain(cost, area, scenarios, features, Objective::MaxBenefit, rule);
    p.edge_penalty = edge.map(|w| unit_grid_penalty(rows, cols, w));
    if statuses {
        for s in p.status.iter_mut() {
            *s = match rng.gen_range(0..12) {
                0 => CellStatus::Required,
                1 => CellStatus::Excluded,
                _ => CellStatus::Free,
            };
        }
    }
    let required_cost: f64 = (0..n)
        .filter(|&i| p.status[i] == CellStatus::Required)
        .map(|i| p.cost[i])
        .sum();
    p.budget = Budget {
        max_cost: Some(required_cost + share * p.cost.iter().sum::<f64>()),
        max_area_km2: None,
    };
    p
}

fn quiet() -> SolveOptions {
    SolveOptions {
        threads: Some(1),
        time_limit_s: Some(120.0),
        method: Method::Decompose,
        ..SolveOptions::default()
    }
}

/// Small instances (≤ 16 free cells) of one rule: with and without the edge penalty (two
/// weights), with and without fixed cells and an area budget, budgets of 20–45 %.
fn small_instances(rule: Robustness, seed: u64) -> Vec<Problem> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    (0..8)
        .map(|case| {
            let (rows, cols) = [(4, 4), (3, 5), (3, 4), (2, 7)][case % 4];
            let edge = [None, Some(0.05), Some(0.2), None][case % 4];
            let share = [0.2, 0.3, 0.45][case % 3];
            let mut p = instance(&mut rng, (rows, cols), 7, rule, edge, case % 2 == 1, share);
            if case % 3 == 2 {
                p.budget.max_area_km2 = Some(0.35 * p.area_km2.iter().sum::<f64>());
            }
            // Least-regret needs each scenario's best benefit; enumeration gives it exactly.
            with_scenario_best(&p, &BruteForce, &SolveOptions::default()).unwrap()
        })
        .collect()
}

/// The objective in the minimised sense (negated for a maximisation).
fn minimised(p: &Problem, v: f64) -> f64 {
    if is_minimisation(p) {
        v
    } else {
        -v
    }
}

#[test]
fn every_max_benefit_rule_is_decomposed() {
    // The scope claim of `unsupported` (module doc): no max-benefit rule falls back any more.
    let mut rng = ChaCha8Rng::seed_from_u64(1);
    for rule in RULES {
        let p = instance(&mut rng, (3, 3), 4, rule, Some(0.1), false, 0.3);
        assert_eq!(unsupported(&p), None, "{rule:?}");
    }
}

#[test]
fn lagrangian_bound_lies_beyond_the_enumerated_optimum() {
    // Reference: enumeration of every network. Weak Lagrangian duality (Fisher 1981, §2):
    // every L(λ) with λ ≥ 0 is an upper bound on a maximum (a lower bound on least-regret's
    // minimum), here in the minimised sense L(λ) ≤ minimised optimum.
    for (r, rule) in RULES.into_iter().enumerate() {
        for (case, p) in small_instances(rule, 20 + r as u64).iter().enumerate() {
            let opt = BruteForce.solve(p, &SolveOptions::default()).unwrap();
            let target = minimised(p, opt.objective);
            let relax = Relaxation::new(p);
            let zero = vec![0.0; relax.n_multipliers()];
            assert!(
                relax.evaluate(&zero).bound <= target + 1e-7,
                "{rule:?} {case}"
            );
            let far = Instant::now() + Duration::from_secs(30);
            let a = relax.ascend(&zero, target, far, 5_000);
            assert!(
                a.bound <= target + 1e-7,
                "{rule:?} case {case}: L {} beyond the optimum {target}",
                a.bound
            );
            // The ascent must make the bound informative: at most the largest benefit any
            // scenario can reach away (common practice, no source: a loose but failing check
            // of a bound stuck at its start).
            assert!(
                a.bound > relax.evaluate(&zero).bound - 1e-9,
                "{rule:?} {case}"
            );
        }
    }
}

/// Checks one decomposition answer against the enumerated optimum `opt`.
fn check_against(p: &Problem, d: &Solution, opt: &Solution, what: &str) {
    let e = evaluate(p, &d.selected);
    assert!(
        e.feasible && e.within_budget,
        "{what}: network breaks a rule"
    );
    assert!((e.objective - d.objective).abs() < 1e-7, "{what}");
    let (o, b, best) = (
        minimised(p, d.objective),
        minimised(p, d.bound),
        minimised(p, opt.objective),
    );
    assert!(b <= best + 1e-6, "{what}: bound {} beyond optimum", d.bound);
    assert!(
        o <= best + d.gap * d.objective.abs() + 1e-6,
        "{what}: {} vs optimum {} with gap {}",
        d.objective,
        opt.objective,
        d.gap
    );
}

#[test]
fn decomposition_finds_the_enumerated_optimum_within_its_gap() {
    // Reference: brute-force enumeration of every network, scored by model::evaluate.
    for (r, rule) in RULES.into_iter().enumerate() {
        for (case, p) in small_instances(rule, 20 + r as u64).iter().enumerate() {
            let what = format!("{rule:?} case {case}");
            let opt = BruteForce.solve(p, &SolveOptions::default()).unwrap();
            let (d, _) = Decompose.solve_traced(p, &quiet()).unwrap();
            assert_eq!(d.solver, "decompose", "{what}");
            check_against(p, &d, &opt, &what);
            assert!(
                d.gap <= 1e-6,
                "{what}: small problems close (gap {})",
                d.gap
            );
        }
    }
}

#[test]
fn least_regret_finds_its_own_scenario_best() {
    // Reference: enumeration. Without Bₛ* given, the decomposition computes each scenario's
    // best benefit itself (with the decomposition) and must land on the enumerated optimum.
    let mut rng = ChaCha8Rng::seed_from_u64(7);
    for case in 0..3 {
        let p = instance(
            &mut rng,
            (3, 5),
            7,
            Robustness::LeastRegret,
            [None, Some(0.1), Some(0.3)][case],
            case == 1,
            0.3,
        );
        let opt = BruteForce.solve(&p, &SolveOptions::default()).unwrap();
        let d = Decompose.solve(&p, &quiet()).unwrap();
        let known = Problem {
            scenario_best: d.scenario_best.clone(),
            ..p.clone()
        };
        check_against(&known, &d, &opt, &format!("case {case}"));
        for (a, b) in d
            .scenario_best
            .as_ref()
            .unwrap()
            .iter()
            .zip(opt.scenario_best.as_ref().unwrap())
        {
            assert!((a - b).abs() < 1e-6, "case {case}: Bₛ* {a} vs {b}");
        }
    }
}

#[test]
fn fixing_never_removes_an_optimal_max_benefit_network() {
    // Reference: enumeration of every network; each one at the optimum must agree with every
    // fixed cell when fixing uses the optimum itself as the incumbent (in the minimised sense).
    for (r, rule) in RULES.into_iter().enumerate() {
        for (case, p) in small_instances(rule, 40 + r as u64).iter().enumerate() {
            let opt = minimised(
                p,
                BruteForce
                    .solve(p, &SolveOptions::default())
                    .unwrap()
                    .objective,
            );
            let relax = Relaxation::new(p);
            let zero = vec![0.0; relax.n_multipliers()];
            let far = Instant::now() + Duration::from_secs(30);
            let a = relax.ascend(&zero, opt, far, 5_000);
            let fixed = fixing::fix(p, &relax.evaluate(&a.lambda), opt);
            let n = p.n_cells();
            let mut optimal = 0;
            let mut sel = vec![false; n];
            for mask in 0u32..(1 << n) {
                for (b, s) in sel.iter_mut().enumerate() {
                    *s = mask >> b & 1 == 1;
                }
                let e = evaluate(p, &sel);
                if e.feasible && minimised(p, e.objective) <= opt + 1e-9 {
                    optimal += 1;
                    for (i, f) in fixed.iter().enumerate() {
                        if let Some(v) = f {
                            assert_eq!(sel[i], *v, "{rule:?} case {case}: cell {i} fixed wrongly");
                        }
                    }
                }
            }
            assert!(optimal >= 1, "{rule:?} case {case}");
        }
    }
}

#[test]
fn decomposition_and_direct_highs_agree_on_thousands_of_cells() {
    // Reference: the direct integer program in HiGHS (a second solver). Each proves an
    // interval between its objective and its bound that holds the optimum, so the two must
    // overlap; every network must meet the budget and score what it claims (model::evaluate).
    let mut rng = ChaCha8Rng::seed_from_u64(5);
    for (r, rule) in RULES.into_iter().enumerate() {
        // Fixed cells only without the edge penalty: scattered required cells make the edge
        // term dominate the objective and the solves slow (not what this test is about).
        let (rows, cols, edge) = [
            (40, 60, Some(0.01)),
            (50, 50, None),
            // Expected with the edge penalty (0.01) took both solvers past 120 s in a debug
            // build (direct gap 17 %, decomposition 4 %): too slow for a test.
            (45, 50, None),
            (40, 55, None),
        ][r];
        let p = instance(&mut rng, (rows, cols), 24, rule, edge, edge.is_none(), 0.2);
        let o = SolveOptions {
            rel_gap: 0.005,
            ..quiet()
        };
        // Least-regret: both solvers measure regret against the same Bₛ* (the direct model's).
        let p = with_scenario_best(&p, &Highs::default(), &o).unwrap();
        let started = Instant::now();
        let d = Decompose.solve(&p, &o).unwrap();
        let d_s = started.elapsed().as_secs_f64();
        let h = Highs::default()
            .solve(
                &p,
                &SolveOptions {
                    method: Method::Direct,
                    ..o.clone()
                },
            )
            .unwrap();
        eprintln!(
            "{rule:?}: decompose {} [{}] gap {} in {d_s:.1} s; direct {} [{}] gap {}",
            d.objective, d.bound, d.gap, h.objective, h.bound, h.gap
        );
        assert_eq!(d.solver, "decompose");
        for s in [&d, &h] {
            let e = evaluate(&p, &s.selected);
            assert!(e.feasible && e.within_budget, "{rule:?} {}", s.solver);
            assert!(
                (e.objective - s.objective).abs() < 1e-6 * s.objective.abs().max(1.0),
                "{rule:?} {}",
                s.solver
            );
            // The bound lies on the far side of the objective.
            assert!(
                minimised(&p, s.bound) <= minimised(&p, s.objective) + 1e-6,
                "{rule:?} {}",
                s.solver
            );
        }
        let tol = 1e-6 * h.objective.abs().max(1.0);
        assert!(
            minimised(&p, d.bound) <= minimised(&p, h.objective) + tol,
            "{rule:?}: decomposition bound {} beyond direct objective {}",
            d.bound,
            h.objective
        );
        assert!(
            minimised(&p, h.bound) <= minimised(&p, d.objective) + tol,
            "{rule:?}: direct bound {} beyond decomposition objective {}",
            h.bound,
            d.objective
        );
        assert!(
            d.gap <= 0.005 + 1e-9,
            "{rule:?}: decomposition gap {}",
            d.gap
        );
    }
}

#[test]
fn same_network_at_one_and_two_threads() {
    // Common practice, no source: the decomposition is sequential and HiGHS's branch and bound
    // is deterministic, so a network that reached its gap must not change with `threads`.
    let mut rng = ChaCha8Rng::seed_from_u64(9);
    for rule in [Robustness::Expected, Robustness::WorstCase] {
        let p = instance(&mut rng, (20, 20), 12, rule, Some(0.05), true, 0.25);
        // HiGHS keeps one scheduler per OS thread with the thread count it started with, so
        // each run gets a fresh thread.
        let at = |t: u32| {
            let p = p.clone();
            std::thread::spawn(move || {
                Decompose
                    .solve(
                        &p,
                        &SolveOptions {
                            threads: Some(t),
                            rel_gap: 1e-4,
                            ..quiet()
                        },
                    )
                    .unwrap()
            })
            .join()
            .unwrap()
        };
        let (a, b) = (at(1), at(2));
        assert!(a.gap <= 1e-4, "{rule:?}: solved to the gap (gap {})", a.gap);
        assert_eq!(a.selected, b.selected, "{rule:?}");
        assert_eq!(a.objective, b.objective, "{rule:?}");
    }
}

/// LP relaxation of a max-benefit model in the minimised sense (negated benefit, or the
/// regret), edge penalty in cut form, solved by HiGHS through good_lp; written here from
/// model::robust's definitions, not taken from `solve::ilp`.
fn lp_bound(p: &Problem) -> f64 {
    use driftplan::model::compact::own_edge_km;
    use good_lp::{constraint, variable, Expression, ProblemVariables, SolverModel};
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
    let mut rows = Vec::new();
    // Bₛ = Σ_{k∈Fₛ} wₖ·yₖ/capₖ with yₖ ∈ [0, capₖ], yₖ ≤ Σᵢ aᵢₖxᵢ.
    let mut benefit: Vec<Expression> = vec![Expression::from(0.0); p.scenarios.len()];
    for f in &p.features {
        let Some(cap) = f.benefit_cap() else { continue };
        let y = vars.add(variable().min(0.0).max(cap));
        let mut held = Expression::from(0.0);
        for &(c, a) in &f.amounts {
            held.add_mul(a, x[c as usize]);
        }
        rows.push(constraint::leq(Expression::from(y) - held, 0.0));
        for (s, b) in benefit.iter_mut().enumerate() {
            if f.scenario.is_none_or(|fs| fs == s) {
                b.add_mul(f.weight / cap, y);
            }
        }
    }
    let mut penalty = Expression::from(0.0);
    if let Some(pen) = &p.edge_penalty {
        for (i, b) in own_edge_km(pen).iter().enumerate() {
            penalty.add_mul(pen.weight * b, x[i]);
        }
        for &(i, j, l) in &pen.pairs {
            let e = vars.add(variable().min(0.0).max(1.0));
            penalty.add_mul(pen.weight * l, e);
            rows.push(constraint::leq(x[i as usize] - x[j as usize] - e, 0.0));
            rows.push(constraint::leq(x[j as usize] - x[i as usize] - e, 0.0));
        }
    }
    let total_weight: f64 = p.scenarios.iter().map(|s| s.weight).sum();
    let objective = match p.robustness {
        Robustness::EveryScenario | Robustness::Expected => {
            let mut o = penalty;
            for (s, b) in benefit.into_iter().enumerate() {
                let share = if p.robustness == Robustness::Expected {
                    p.scenarios[s].weight / total_weight
                } else {
                    1.0
                };
                o -= share * b;
            }
            o
        }
        Robustness::WorstCase => {
            let t = vars.add(variable());
            for b in benefit {
                rows.push(constraint::leq(Expression::from(t) - b, 0.0));
            }
            penalty - t
        }
        Robustness::LeastRegret => {
            let r = vars.add(variable().min(0.0));
            let best = p.scenario_best.as_ref().unwrap();
            for (b, &bs) in benefit.into_iter().zip(best) {
                rows.push(constraint::geq(Expression::from(r) + b, bs));
            }
            penalty + r
        }
    };
    let mut cost = Expression::from(0.0);
    for (c, &xi) in p.cost.iter().zip(&x) {
        cost.add_mul(*c, xi);
    }
    rows.push(constraint::leq(cost, p.budget.max_cost.unwrap()));
    if let Some(b) = p.budget.max_area_km2 {
        let mut area = Expression::from(0.0);
        for (a, &xi) in p.area_km2.iter().zip(&x) {
            area.add_mul(*a, xi);
        }
        rows.push(constraint::leq(area, b));
    }
    let mut m = vars
        .minimise(objective.clone())
        .using(good_lp::solvers::highs::highs);
    for r in rows {
        m.add_constraint(r);
    }
    let sol = m.solve().expect("LP solves");
    objective.eval_with(&sol)
}

#[test]
fn lagrangian_bound_reaches_the_lp_bound() {
    // Reference: HiGHS's LP relaxation written out above. The subproblem (a cut in x plus box
    // terms) has integral LP optima, so the Lagrangian dual equals the LP bound (Geoffrion
    // 1974, Math. Programming Study 2:82; Fisher 1981, §4): no L(λ) may pass it, and the
    // ascent must come within 0.1 % of it (on these instances it lands within 1e-6).
    for (r, rule) in RULES.into_iter().enumerate() {
        for (case, p) in small_instances(rule, 60 + r as u64).iter().enumerate() {
            let lp = lp_bound(p);
            let relax = Relaxation::new(p);
            let zero = vec![0.0; relax.n_multipliers()];
            let far = Instant::now() + Duration::from_secs(30);
            let a = relax.ascend(&zero, f64::INFINITY, far, 20_000);
            let scale = lp.abs().max(1.0);
            assert!(
                a.bound <= lp + 1e-6 * scale,
                "{rule:?} case {case}: L {} above the LP bound {lp}",
                a.bound
            );
            assert!(
                a.bound >= lp - 0.001 * scale,
                "{rule:?} case {case}: L {} short of the LP bound {lp} after {} steps",
                a.bound,
                a.iterations
            );
        }
    }
}

#[test]
fn a_link_reward_decomposes_to_the_enumerated_optimum_under_every_rule() {
    // Reference: brute-force enumeration (model::evaluate adds w·linked to a maximised
    // benefit and subtracts it from least-regret's minimised regret, as the direct model
    // does). The reward enters the cut as a directed term (maxflow module doc); the small
    // problems must close with a bound that never passes the optimum.
    let mut rng = ChaCha8Rng::seed_from_u64(77);
    let mut changed = 0;
    for (r, rule) in RULES.into_iter().enumerate() {
        for (case, plain) in small_instances(rule, 40 + r as u64).into_iter().enumerate() {
            let n = plain.n_cells() as u32;
            let mut pairs = Vec::new();
            for i in 0..n {
                for j in i + 1..n {
                    if rng.gen_bool(0.3) {
                        pairs.push((i, j, rng.gen_range(0.01..0.3)));
                    }
                }
            }
            let mut p = plain.clone();
            p.link_reward = Some(driftplan::model::LinkReward {
                weight: [0.5, 2.0][case % 2],
                pairs,
            });
            // Least-regret's Bₛ* with the reward counted.
            p.scenario_best = None;
            let p = with_scenario_best(&p, &BruteForce, &SolveOptions::default()).unwrap();
            assert_eq!(unsupported(&p), None);
            let what = format!("{rule:?} case {case}");
            let opt = BruteForce.solve(&p, &SolveOptions::default()).unwrap();
            let without = BruteForce.solve(&plain, &SolveOptions::default()).unwrap();
            changed += usize::from(opt.selected != without.selected);
            let (d, _) = Decompose.solve_traced(&p, &quiet()).unwrap();
            assert_eq!(d.solver, "decompose", "{what}");
            check_against(&p, &d, &opt, &what);
            assert!(
                d.gap <= 1e-6,
                "{what}: small problems close (gap {})",
                d.gap
            );
        }
    }
    assert!(
        changed >= 4,
        "the reward should change some optima ({changed})"
    );
}
