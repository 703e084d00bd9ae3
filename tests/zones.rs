//! Management zones: the integer program against exhaustive enumeration of every zone
//! assignment (solve::brute scores each with model::evaluate_zoned, which shares no
//! formulation with the integer program), plus a case worked by hand.

use driftplan::model::{
    evaluate_zoned, Budget, CellStatus, EdgePenalty, ModelFeature, Objective, Problem, Robustness,
    Scenario, ZoneTarget, Zoning,
};
use driftplan::solve::brute::BruteForce;
use driftplan::solve::ilp::Highs;
use driftplan::solve::{SolveOptions, Solver};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// A 2 × 4 grid of unit cells (cell = row·4 + col), rook pairs of 1 km, 4 km of edge each alone.
fn unit_penalty(weight: f64) -> EdgePenalty {
    let mut pairs = Vec::new();
    for r in 0..2u32 {
        for c in 0..4u32 {
            let i = r * 4 + c;
            if c < 3 {
                pairs.push((i, i + 1, 1.0));
            }
            if r == 0 {
                pairs.push((i, i + 4, 1.0));
            }
        }
    }
    EdgePenalty {
        weight,
        pairs,
        exposed_if_alone_km: vec![4.0; 8],
    }
}

fn instance(seed: u64, objective: Objective) -> Problem {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let n = 8;
    let features: Vec<ModelFeature> = (0..3)
        .map(|k| {
            let mut amounts: Vec<(u32, f64)> = Vec::new();
            for c in 0..n as u32 {
                if rng.gen_bool(0.6) {
                    amounts.push((c, rng.gen_range(1..=5) as f64));
                }
            }
            let total: f64 = amounts.iter().map(|a| a.1).sum();
            ModelFeature {
                name: format!("f{k}"),
                scenario: None,
                amounts,
                target: (0.35 * total).max(1.0),
                weight: 1.0,
            }
        })
        .collect();
    let mut allowed = vec![vec![true; n], vec![true; n]];
    allowed[1][rng.gen_range(0..n)] = false; // one cell may not be partial-use
    let mut status = vec![CellStatus::Free; n];
    status[rng.gen_range(0..n)] = CellStatus::Required;
    let first = &features[0];
    let zoning = Zoning {
        names: vec!["no-take".into(), "partial-use".into()],
        cost_share: vec![1.0, 0.4],
        credit: vec![vec![1.0; 3], vec![0.5, 0.3, 0.6]],
        allowed,
        // At least 20 % of f0 in no-take.
        targets: vec![ZoneTarget {
            zone: 0,
            feature: 0,
            amount: 0.2 * first.amounts.iter().map(|a| a.1).sum::<f64>(),
        }],
    };
    let cost = (0..n).map(|_| rng.gen_range(1..=9) as f64).collect();
    Problem {
        status,
        budget: Budget {
            max_cost: (objective == Objective::MaxBenefit).then_some(12.0),
            max_area_km2: None,
        },
        edge_penalty: Some(unit_penalty(0.5)),
        link_reward: None,
        zoning: Some(zoning),
        ..Problem::plain(
            cost,
            vec![1.0; n],
            vec![Scenario {
                name: "s".into(),
                weight: 1.0,
            }],
            features,
            objective,
            Robustness::EveryScenario,
        )
    }
}

fn opts() -> SolveOptions {
    SolveOptions {
        threads: Some(1),
        ..SolveOptions::default()
    }
}

#[test]
fn zoned_optimum_equals_enumeration_of_every_assignment() {
    let mut solved = 0;
    let mut used_partial = 0;
    for objective in [Objective::MinCost, Objective::MaxBenefit] {
        for seed in 0..6 {
            let p = instance(seed, objective);
            let brute = BruteForce.solve(&p, &opts());
            let highs = Highs::default().solve(&p, &opts());
            match (brute, highs) {
                (Ok(b), Ok(h)) => {
                    let zones = h.zones.clone().expect("a zoned solve returns zones");
                    let e = evaluate_zoned(&p, &zones);
                    assert!(e.feasible, "{objective:?} seed {seed}");
                    assert!(
                        (e.objective - b.objective).abs() < 1e-6,
                        "{objective:?} seed {seed}: HiGHS {} vs enumeration {}",
                        e.objective,
                        b.objective
                    );
                    assert!((h.objective - b.objective).abs() < 1e-6);
                    solved += 1;
                    used_partial += usize::from(zones.contains(&2));
                    // Selected flags agree with the zones.
                    for (s, z) in h.selected.iter().zip(&zones) {
                        assert_eq!(*s, *z > 0);
                    }
                }
                (Err(_), Err(_)) => {}
                (b, h) => panic!(
                    "{objective:?} seed {seed}: enumeration {:?} vs HiGHS {:?}",
                    b.map(|s| s.objective),
                    h.map(|s| s.objective)
                ),
            }
        }
    }
    // The instances exercise the zones: most solve, and partial use is chosen in some.
    assert!(
        solved >= 8 && used_partial >= 2,
        "{solved} solved, {used_partial} with partial use"
    );
}

#[test]
fn partial_use_is_chosen_where_its_credit_suffices_by_hand() {
    // Two cells, one feature of 10 in each, target 10, cost 10 each; partial use pays 40 % and
    // counts half. Hand: both cells partial-use hold 5 + 5 = 10 for 4 + 4 = 8, cheaper than one
    // no-take cell (10); a no-take zone target of 5 rules that out, and one no-take cell alone
    // (10, holding 10) is then cheapest: no-take + partial use costs 14, two no-take cells 20.
    let mut p = Problem {
        zoning: Some(Zoning {
            names: vec!["no-take".into(), "partial-use".into()],
            cost_share: vec![1.0, 0.4],
            credit: vec![vec![1.0], vec![0.5]],
            allowed: vec![vec![true; 2], vec![true; 2]],
            targets: vec![],
        }),
        ..Problem::plain(
            vec![10.0, 10.0],
            vec![1.0, 1.0],
            vec![Scenario {
                name: "s".into(),
                weight: 1.0,
            }],
            vec![ModelFeature {
                name: "f".into(),
                scenario: None,
                amounts: vec![(0, 10.0), (1, 10.0)],
                target: 10.0,
                weight: 1.0,
            }],
            Objective::MinCost,
            Robustness::EveryScenario,
        )
    };
    let s = Highs::default().solve(&p, &opts()).unwrap();
    assert!((s.objective - 8.0).abs() < 1e-6);
    assert_eq!(s.zones.as_deref(), Some(&[2u8, 2][..]));
    p.zoning.as_mut().unwrap().targets.push(ZoneTarget {
        zone: 0,
        feature: 0,
        amount: 5.0,
    });
    let s = Highs::default().solve(&p, &opts()).unwrap();
    assert!((s.objective - 10.0).abs() < 1e-6);
    let mut z = s.zones.unwrap();
    z.sort();
    assert_eq!(z, vec![0, 1]);
}

#[test]
fn a_boundary_between_zones_is_edge_too() {
    // Hand, on the 2 × 4 unit grid: cells 0 and 1 chosen in different zones expose 4 + 4 − 1
    // (their shared edge counts once, where the zones meet) = 7 km, against 6 km in one zone.
    let pen = unit_penalty(1.0);
    let mut a = vec![0u8; 8];
    a[0] = 1;
    a[1] = 2;
    assert_eq!(
        driftplan::model::compact::exposed_edge_zoned_km(&pen, &a),
        7.0
    );
    a[1] = 1;
    assert_eq!(
        driftplan::model::compact::exposed_edge_zoned_km(&pen, &a),
        6.0
    );
    // One zone: the same as the unzoned cut form (Beyer et al. 2016 in model::compact).
    let sel: Vec<bool> = a.iter().map(|v| *v > 0).collect();
    assert_eq!(driftplan::model::compact::exposed_edge_km(&pen, &sel), 6.0);
}

/// Two scenarios over 8 cells: two habitat features per scenario and one scenario-free one,
/// no-take and partial use (40 % of the cost, credits below 1), a no-take zone target on a
/// feature of the second scenario. Costs are random reals, so optima are unique in cost.
fn two_scenarios(seed: u64, objective: Objective) -> Problem {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let n = 8;
    let mut features = Vec::new();
    for (k, scenario) in [Some(0), Some(0), Some(1), Some(1), None]
        .into_iter()
        .enumerate()
    {
        let mut amounts: Vec<(u32, f64)> = Vec::new();
        for c in 0..n as u32 {
            if rng.gen_bool(0.5) {
                amounts.push((c, rng.gen_range(1..=5) as f64));
            }
        }
        let total: f64 = amounts.iter().map(|a| a.1).sum();
        features.push(ModelFeature {
            name: format!("f{k}"),
            scenario,
            amounts,
            target: (0.4 * total).max(1.0),
            weight: rng.gen_range(1..=3) as f64,
        });
    }
    let total2: f64 = features[2].amounts.iter().map(|a| a.1).sum();
    let zoning = Zoning {
        names: vec!["no-take".into(), "partial-use".into()],
        cost_share: vec![1.0, 0.4],
        credit: vec![vec![1.0; 5], vec![0.6, 0.5, 0.7, 0.6, 0.5]],
        allowed: vec![vec![true; n], vec![true; n]],
        targets: vec![ZoneTarget {
            zone: 0,
            feature: 2,
            amount: 0.15 * total2,
        }],
    };
    let cost: Vec<f64> = (0..n).map(|_| rng.gen_range(1.0..9.0)).collect();
    Problem {
        budget: Budget {
            max_cost: (objective == Objective::MaxBenefit).then_some(9.0),
            max_area_km2: None,
        },
        zoning: Some(zoning),
        ..Problem::plain(
            cost,
            vec![1.0; n],
            ["s1", "s2"]
                .iter()
                .map(|s| Scenario {
                    name: s.to_string(),
                    weight: 1.0,
                })
                .collect(),
            features,
            objective,
            match objective {
                Objective::MinCost => Robustness::EveryScenario,
                Objective::MaxBenefit => Robustness::WorstCase,
            },
        )
    }
}

/// Hand scoring of a zoned network in scenario `s` (the benefit definition of model::robust,
/// written out again here): Σ wₖ·min(Σ credit(zone of c, k)·aₖc / Tₖ, 1) over the scenario's
/// features and the scenario-free ones, and the count of targets reached.
fn hand_score(p: &Problem, zones: &[u8], s: usize) -> (f64, usize) {
    let z = p.zoning.as_ref().unwrap();
    let (mut benefit, mut reached) = (0.0, 0);
    for (k, f) in p.features.iter().enumerate() {
        if f.scenario.is_some_and(|fs| fs != s) {
            continue;
        }
        let protected: f64 = f
            .amounts
            .iter()
            .filter(|(c, _)| zones[*c as usize] > 0)
            .map(|&(c, a)| z.credit[zones[c as usize] as usize - 1][k] * a)
            .sum();
        benefit += f.weight * (protected / f.target).min(1.0);
        reached += usize::from(protected >= f.target - 1e-9);
    }
    (benefit, reached)
}

/// Hand cost of a zoned network: Σ cost share of the cell's zone × its cost.
fn hand_cost(p: &Problem, zones: &[u8]) -> f64 {
    let z = p.zoning.as_ref().unwrap();
    zones
        .iter()
        .zip(&p.cost)
        .filter(|(v, _)| **v > 0)
        .map(|(&v, c)| z.cost_share[v as usize - 1] * c)
        .sum()
}

#[test]
fn zoned_stress_test_equals_enumeration_and_scores_zone_credits() {
    use driftplan::study::{single_scenario_problem, stress_test};
    let (mut rows_checked, mut partial_rows, mut first_zone_differs) = (0, 0, 0);
    for objective in [Objective::MinCost, Objective::MaxBenefit] {
        for seed in 0..4 {
            let p = two_scenarios(seed, objective);
            let Ok(robust) = Highs::default().solve(&p, &opts()) else {
                continue;
            };
            let robust_zones = robust.zones.clone().unwrap();
            let m = stress_test(
                &p,
                &[("robust".into(), robust_zones.clone())],
                &opts(),
                &|| {},
            )
            .unwrap();
            assert_eq!(m.rows.len(), 3);
            for s in 0..2 {
                // Each scenario alone, enumerated over every zone assignment (solve::brute).
                let alone = single_scenario_problem(&p, s);
                let row = &m.rows[s];
                match BruteForce.solve(&alone, &opts()) {
                    Ok(b) => {
                        let zones = row.zones.as_ref().expect("a zoned row carries its zones");
                        let own = match objective {
                            Objective::MinCost => hand_cost(&p, zones),
                            Objective::MaxBenefit => hand_score(&p, zones, s).0,
                        };
                        assert!(
                            (own - b.objective).abs() < 1e-6,
                            "{objective:?} seed {seed} s{s}: stress row {own} vs enumeration {}",
                            b.objective
                        );
                    }
                    Err(_) => {
                        assert!(row.evaluated.is_empty(), "{objective:?} seed {seed} s{s}");
                        continue;
                    }
                }
            }
            // Every row with a network, scored by hand in every scenario with its zones.
            for row in m.rows.iter().filter(|r| !r.evaluated.is_empty()) {
                let zones = row.zones.as_ref().unwrap();
                partial_rows += usize::from(zones.contains(&2));
                for (s, e) in row.evaluated.iter().enumerate() {
                    let (benefit, reached) = hand_score(&p, zones, s);
                    assert!(
                        (e.benefit - benefit).abs() < 1e-9,
                        "{objective:?} seed {seed} `{}` in s{s}: {} vs hand {benefit}",
                        row.designed_for,
                        e.benefit
                    );
                    assert_eq!(e.targets_reached, reached);
                    // Scoring the same cells as all no-take would give another benefit
                    // wherever partial use holds some of the scenario's habitat.
                    let all_first: Vec<u8> = zones.iter().map(|&v| u8::from(v > 0)).collect();
                    first_zone_differs +=
                        usize::from((hand_score(&p, &all_first, s).0 - benefit).abs() > 1e-9);
                }
                rows_checked += 1;
            }
            assert_eq!(m.rows[2].zones.as_deref(), Some(&robust_zones[..]));
        }
    }
    assert!(
        rows_checked >= 12 && partial_rows >= 3 && first_zone_differs >= 3,
        "{rows_checked} rows, {partial_rows} with partial use, {first_zone_differs} where zones change the score"
    );
}

#[test]
fn zoned_replacement_cost_equals_enumeration() {
    use driftplan::study::replacement_costs;
    // Replacement cost (Cabeza & Moilanen 2006, from memory) of each chosen cell of the zoned
    // optimum: the enumerated optimum with the cell forbidden, minus the enumerated optimum
    // (for max-benefit, the other way round); no network without it → irreplaceable.
    let (mut units, mut irreplaceable) = (0, 0);
    for objective in [Objective::MinCost, Objective::MaxBenefit] {
        for seed in 0..8 {
            let p = instance(seed, objective);
            let Ok(base) = Highs::default().solve(&p, &opts()) else {
                continue;
            };
            let optimum = BruteForce.solve(&p, &opts()).unwrap().objective;
            let cells: Vec<(String, Vec<u32>)> = (0..p.n_cells() as u32)
                .filter(|&c| base.selected[c as usize] && p.status[c as usize] == CellStatus::Free)
                .map(|c| (format!("cell {c}"), vec![c]))
                .collect();
            let rows = replacement_costs(&p, &base, &cells, &opts(), &|| {}).unwrap();
            for (r, (_, c)) in rows.iter().zip(&cells) {
                let mut q = p.clone();
                q.status[c[0] as usize] = CellStatus::Excluded;
                match BruteForce.solve(&q, &opts()) {
                    Ok(b) => {
                        let want = match objective {
                            Objective::MinCost => b.objective - optimum,
                            Objective::MaxBenefit => optimum - b.objective,
                        };
                        assert!(
                            (r.cost - want).abs() < 1e-6,
                            "{objective:?} seed {seed} {}: {} vs enumeration {want}",
                            r.label,
                            r.cost
                        );
                        // The re-solve's own zones are a feasible assignment without the cell.
                        let z = r.without.as_ref().unwrap().zones.clone().unwrap();
                        assert_eq!(z[c[0] as usize], 0);
                        assert!(evaluate_zoned(&q, &z).feasible);
                    }
                    Err(_) => {
                        assert!(r.irreplaceable(), "{objective:?} seed {seed} {}", r.label);
                        irreplaceable += 1;
                    }
                }
                units += 1;
            }
        }
    }
    assert!(
        units >= 20,
        "{units} cells re-solved, {irreplaceable} irreplaceable"
    );
}

#[test]
fn zoned_portfolio_members_against_enumeration() {
    use driftplan::model::Alternative;
    use driftplan::study::portfolio;
    // Each member stays within 25 % of the enumerated zoned optimum, differs from every
    // earlier member in at least 2 cells, and has the least overlap with them that enumeration
    // finds under the same limit and cuts (no-good cuts: Balas & Jeroslow 1972).
    let mut members = 0;
    for objective in [Objective::MinCost, Objective::MaxBenefit] {
        for seed in 0..4 {
            let p = instance(seed, objective);
            let Ok(best) = BruteForce.solve(&p, &opts()) else {
                continue;
            };
            let pf = portfolio(&p, 3, 0.25, 2, &opts(), &|_| {}).unwrap();
            assert!((pf.optimum - best.objective).abs() < 1e-6);
            for (k, m) in pf.members.iter().enumerate() {
                let zones = m.solution.zones.clone().expect("members carry zones");
                let e = evaluate_zoned(&p, &zones);
                assert!(e.feasible, "{objective:?} seed {seed} member {k}");
                assert!((e.objective - m.objective).abs() < 1e-9);
                let within = match objective {
                    Objective::MinCost => e.objective <= pf.limit + 1e-6,
                    Objective::MaxBenefit => e.objective >= pf.limit - 1e-6,
                };
                assert!(
                    within,
                    "{objective:?} seed {seed} member {k}: {}",
                    e.objective
                );
                if k == 0 {
                    continue;
                }
                let earlier: Vec<Vec<bool>> = pf.members[..k]
                    .iter()
                    .map(|x| x.solution.selected.clone())
                    .collect();
                let alt = Alternative {
                    avoid: earlier,
                    min_difference: 2,
                };
                assert!(alt.distances(&m.solution.selected).iter().all(|&d| d >= 2));
                let q = Problem {
                    keep_objective: Some(pf.limit),
                    alternative: Some(alt.clone()),
                    ..p.clone()
                };
                let b = BruteForce.solve(&q, &opts()).unwrap();
                assert!(
                    (alt.overlap(&m.solution.selected) - b.objective).abs() < 1e-6,
                    "{objective:?} seed {seed} member {k}: overlap {} vs enumeration {}",
                    alt.overlap(&m.solution.selected),
                    b.objective
                );
                members += 1;
            }
        }
    }
    assert!(members >= 6, "{members} later members checked");
}

#[test]
fn zoned_ranking_is_nested_and_each_step_equals_enumeration() {
    use driftplan::study::rank;
    use driftplan::study::sweep::SweepBudget;
    // Each step, by the sweep's rule (study::sweep): when some zone assignment within the
    // area budget that keeps the last step's cells reaches every target, the least-cost such
    // one; otherwise the best benefit, then the least cost at it. Enumerated over all 3⁸
    // assignments and scored with model::evaluate_zoned.
    let (mut steps, mut partial) = (0, 0);
    for seed in 0..4 {
        let mut p = instance(seed, Objective::MaxBenefit);
        p.budget = Budget::default();
        p.edge_penalty = None;
        let total: f64 = p.area_km2.iter().sum();
        let shares = [0.25, 0.5, 0.75];
        let r = rank(&p, &shares, SweepBudget::Area(total), &opts(), &|_| {}).unwrap();
        let mut previous = vec![false; 8];
        for (k, step) in r.steps.iter().enumerate() {
            let sol = &step.run.solution;
            let zones = sol.zones.clone().expect("a zoned step carries its zones");
            assert!(
                (0..8).all(|i| !previous[i] || sol.selected[i]),
                "seed {seed} step {k} not nested"
            );
            let mut q = p.clone();
            q.budget.max_area_km2 = Some(shares[k] * total);
            let mut scored = Vec::new();
            for code in 0..3u32.pow(8) {
                let asg: Vec<u8> = (0..8).map(|i| (code / 3u32.pow(i) % 3) as u8).collect();
                if (0..8).any(|i| previous[i] && asg[i] == 0) {
                    continue;
                }
                let e = evaluate_zoned(&q, &asg);
                if e.feasible {
                    scored.push(e);
                }
            }
            let every: Vec<(f64, f64)> = scored
                .iter()
                .filter(|e| e.targets_reached == e.reached.len())
                .map(|e| (e.objective, e.cost))
                .collect();
            let pool: Vec<(f64, f64)> = if every.is_empty() {
                scored.iter().map(|e| (e.objective, e.cost)).collect()
            } else {
                every
            };
            let best = pool.iter().map(|x| x.0).fold(f64::MIN, f64::max);
            let cheapest = pool
                .iter()
                .filter(|x| x.0 >= best - 1e-6 * best.abs().max(1.0))
                .map(|x| x.1)
                .fold(f64::MAX, f64::min);
            let e = evaluate_zoned(&q, &zones);
            assert!(
                (e.objective - best).abs() < 1e-5 * best.abs().max(1.0),
                "seed {seed} step {k}: benefit {} vs enumeration {best}",
                e.objective
            );
            assert!(
                (e.cost - cheapest).abs() < 1e-6,
                "seed {seed} step {k}: cost {} vs enumeration {cheapest}",
                e.cost
            );
            assert!((step.run.cost - e.cost).abs() < 1e-9);
            previous = sol.selected.clone();
            steps += 1;
            partial += usize::from(zones.contains(&2));
        }
    }
    assert_eq!(steps, 12);
    assert!(partial >= 2, "{partial} steps use partial use");
}

#[test]
fn zoned_least_regret_equals_enumeration() {
    // Least-regret needs each scenario's best benefit alone (Bₛ*), solved on the scenario's
    // own features: the zones' credits and zone targets must follow them
    // (model::robust::restrict_to_scenario). HiGHS against enumeration of every assignment.
    let mut solved = 0;
    for seed in 0..4 {
        let mut p = two_scenarios(seed, Objective::MaxBenefit);
        p.robustness = Robustness::LeastRegret;
        match (
            BruteForce.solve(&p, &opts()),
            Highs::default().solve(&p, &opts()),
        ) {
            (Ok(b), Ok(h)) => {
                assert!(
                    (h.objective - b.objective).abs() < 1e-6,
                    "seed {seed}: HiGHS {} vs enumeration {}",
                    h.objective,
                    b.objective
                );
                assert_eq!(h.scenario_best.as_ref().map(Vec::len), Some(2));
                solved += 1;
            }
            (Err(_), Err(_)) => {}
            (b, h) => panic!(
                "seed {seed}: enumeration {:?} vs HiGHS {:?}",
                b.map(|s| s.objective),
                h.map(|s| s.objective)
            ),
        }
    }
    assert!(solved >= 3, "{solved}");
}
