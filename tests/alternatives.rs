//! Portfolios, replacement cost and the priority ranking against exhaustive enumeration: every
//! one of the 2¹² networks of a 12-cell instance is scored by `model::evaluate` (which shares no
//! formulation with the integer program), and the Hamming distances, exclusions and nesting are
//! recomputed here from first principles.

use driftplan::model::{
    evaluate, CellStatus, ModelFeature, Objective, Problem, Robustness, Scenario,
};
use driftplan::solve::SolveOptions;
use driftplan::study::{portfolio, rank, replacement_costs, SweepBudget};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

const N: usize = 12;

/// 12 cells, 2 scenarios × 2 features and one scenario-free feature, seeded; min-cost over
/// every scenario.
fn instance(seed: u64) -> Problem {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut features = Vec::new();
    for s in 0..=2 {
        for k in 0..if s == 2 { 1 } else { 2 } {
            let mut amounts: Vec<(u32, f64)> = Vec::new();
            for c in 0..N as u32 {
                if rng.gen_bool(0.5) {
                    amounts.push((c, rng.gen_range(1..=6) as f64));
                }
            }
            let total: f64 = amounts.iter().map(|a| a.1).sum();
            features.push(ModelFeature {
                name: format!("f{s}.{k}"),
                scenario: (s < 2).then_some(s),
                amounts,
                target: (0.4 * total).max(1.0),
                weight: rng.gen_range(1..=3) as f64,
            });
        }
    }
    Problem::plain(
        (0..N).map(|_| rng.gen_range(1..=9) as f64).collect(),
        (0..N).map(|_| rng.gen_range(5..=15) as f64).collect(),
        ["s1", "s2"]
            .iter()
            .map(|s| Scenario {
                name: s.to_string(),
                weight: 1.0,
            })
            .collect(),
        features,
        Objective::MinCost,
        Robustness::EveryScenario,
    )
}

fn opts(threads: u32) -> SolveOptions {
    SolveOptions {
        threads: Some(threads),
        ..SolveOptions::default()
    }
}

/// Every network as flags.
fn all_networks() -> impl Iterator<Item = Vec<bool>> {
    (0u32..1 << N).map(|m| (0..N).map(|i| m >> i & 1 == 1).collect())
}

fn hamming(a: &[bool], b: &[bool]) -> usize {
    a.iter().zip(b).filter(|(x, y)| x != y).count()
}

/// The least objective of a feasible network of `p` (None: none is feasible).
fn brute_min(p: &Problem) -> Option<f64> {
    all_networks()
        .map(|s| evaluate(p, &s))
        .filter(|e| e.feasible)
        .map(|e| e.objective)
        .min_by(f64::total_cmp)
}

#[test]
fn portfolio_members_are_the_most_distant_networks_within_the_share() {
    for seed in 0..3 {
        let p = instance(seed);
        let within = 0.15;
        let d = 2;
        let pf = portfolio(&p, 4, within, d, &opts(1), &|_| {}).unwrap();
        let optimum = brute_min(&p).unwrap();
        assert!((pf.optimum - optimum).abs() < 1e-6, "seed {seed}");
        let limit = optimum * (1.0 + within);
        for (k, m) in pf.members.iter().enumerate() {
            let e = evaluate(&p, &m.solution.selected);
            assert!(e.feasible, "seed {seed} member {k} meets every target");
            assert!(
                e.objective <= limit + 1e-6,
                "seed {seed} member {k} within 15%"
            );
            // Member k is the network within the share, at least d cells from each earlier
            // member, with the largest total distance to them (brute force over 4096).
            let earlier: Vec<&Vec<bool>> = pf.members[..k]
                .iter()
                .map(|m| &m.solution.selected)
                .collect();
            for s in &earlier {
                assert!(hamming(s, &m.solution.selected) >= d);
            }
            if k > 0 {
                let best = all_networks()
                    .filter(|s| {
                        let e = evaluate(&p, s);
                        e.feasible
                            && e.objective <= limit + 1e-6
                            && earlier.iter().all(|x| hamming(x, s) >= d)
                    })
                    .map(|s| earlier.iter().map(|x| hamming(x, &s)).sum::<usize>())
                    .max()
                    .unwrap();
                let got: usize = earlier
                    .iter()
                    .map(|x| hamming(x, &m.solution.selected))
                    .sum();
                assert_eq!(got, best, "seed {seed} member {k}");
            }
        }
        // Ended early only when brute force finds no further network.
        if pf.members.len() < 4 {
            let all: Vec<&Vec<bool>> = pf.members.iter().map(|m| &m.solution.selected).collect();
            assert!(!all_networks().any(|s| {
                let e = evaluate(&p, &s);
                e.feasible && e.objective <= limit + 1e-6 && all.iter().all(|x| hamming(x, &s) >= d)
            }));
        }
        let a: Vec<_> = pf.members.iter().map(|m| &m.solution.selected).collect();
        // Mean pairwise Jaccard distance recomputed by hand.
        let mut sum = 0.0;
        let mut pairs = 0;
        for i in 0..a.len() {
            for j in i + 1..a.len() {
                let both = (0..N).filter(|&c| a[i][c] && a[j][c]).count() as f64;
                let either = (0..N).filter(|&c| a[i][c] || a[j][c]).count() as f64;
                sum += 1.0 - both / either;
                pairs += 1;
            }
        }
        if pairs > 0 {
            assert!((pf.mean_jaccard() - sum / pairs as f64).abs() < 1e-12);
        }
    }
}

#[test]
fn replacement_cost_equals_brute_force_re_solves() {
    for seed in 0..3 {
        let mut p = instance(seed);
        p.status[0] = CellStatus::Required;
        let base =
            driftplan::solve::Solver::solve(&driftplan::solve::ilp::Highs::default(), &p, &opts(1))
                .unwrap();
        let units: Vec<(String, Vec<u32>)> = (0..N as u32)
            .filter(|&c| base.selected[c as usize])
            .map(|c| (format!("cell {c}"), vec![c]))
            .collect();
        let rows = replacement_costs(&p, &base, &units, &opts(1), &|| {}).unwrap();
        let optimum = brute_min(&p).unwrap();
        for (r, (_, cells)) in rows.iter().zip(&units) {
            let c = cells[0] as usize;
            if c == 0 {
                // Plan-required: not forbidden, costs nothing to keep.
                assert!(r.forbidden.is_empty() && r.cost == 0.0);
                continue;
            }
            let mut q = p.clone();
            q.status[c] = CellStatus::Excluded;
            match brute_min(&q) {
                None => assert!(r.irreplaceable(), "seed {seed} cell {c}"),
                Some(v) => {
                    assert!(!r.irreplaceable());
                    assert!(
                        (r.cost - (v - optimum)).abs() < 1e-6,
                        "seed {seed} cell {c}: {} vs {}",
                        r.cost,
                        v - optimum
                    );
                    assert!(r.at_least <= r.cost + 1e-9 && r.cost <= r.at_most + 1e-9);
                }
            }
        }
    }
}

#[test]
fn ranking_is_nested_and_each_step_is_the_best_containing_the_last() {
    for seed in 0..3 {
        let mut p = instance(seed);
        p.objective = Objective::MaxBenefit;
        p.robustness = Robustness::WorstCase;
        let total: f64 = p.area_km2.iter().sum();
        let shares = [0.15, 0.3, 0.45];
        let r = rank(&p, &shares, SweepBudget::Area(total), &opts(1), &|_| {}).unwrap();
        let mut previous = vec![false; N];
        for (k, step) in r.steps.iter().enumerate() {
            let sel = &step.run.solution.selected;
            // Nested: every cell of the last step is kept.
            assert!(
                (0..N).all(|i| !previous[i] || sel[i]),
                "seed {seed} step {k}"
            );
            // Brute force of the sweep's rule (study::sweep): when some network within the
            // budget that contains the last step's reaches every target, the least-cost such
            // network; otherwise the best worst-case benefit, then the least cost at it.
            let mut q = p.clone();
            q.budget.max_area_km2 = Some(shares[k] * total);
            let scored: Vec<_> = all_networks()
                .filter(|s| (0..N).all(|i| !previous[i] || s[i]))
                .map(|s| evaluate(&q, &s))
                .filter(|e| e.feasible)
                .collect();
            let every: Vec<(f64, f64)> = scored
                .iter()
                .filter(|e| e.targets_reached == e.reached.len())
                .map(|e| (e.objective, e.cost))
                .collect();
            let feasible: Vec<(f64, f64)> = if every.is_empty() {
                scored.iter().map(|e| (e.objective, e.cost)).collect()
            } else {
                every
            };
            let best = feasible.iter().map(|x| x.0).fold(f64::MIN, f64::max);
            let cheapest = feasible
                .iter()
                .filter(|x| x.0 >= best - 1e-6 * best.abs().max(1.0))
                .map(|x| x.1)
                .fold(f64::MAX, f64::min);
            let e = evaluate(&q, sel);
            assert!(
                (e.objective - best).abs() < 1e-5 * best.abs().max(1.0),
                "seed {seed} step {k}: {} vs {best}",
                e.objective
            );
            assert!(
                (e.cost - cheapest).abs() < 1e-6,
                "seed {seed} step {k}: cost {} vs {cheapest}, benefit {} vs {best}, status {:?}",
                e.cost,
                e.objective,
                step.run.solution.status
            );
            // Ranks: cells first chosen at this step carry k + 1.
            for i in 0..N {
                if sel[i] && !previous[i] {
                    assert_eq!(r.rank[i], Some(k as u32 + 1));
                }
            }
            previous = sel.clone();
        }
        for (chosen, rank) in previous.iter().zip(&r.rank) {
            if !chosen {
                assert_eq!(*rank, None);
            }
        }
    }
}
