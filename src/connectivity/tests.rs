use super::*;
use crate::grid::{Crs, Grid, NO_CELL};
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

const DAY: f64 = 86_400.0;

fn rect(cols: u32, rows: u32, cell_m: f64) -> Grid {
    Grid::full_rectangle(Crs::auto_laea(10.0, 50.0), cell_m, [0.0, 0.0], cols, rows).unwrap()
}

/// The same rectangle with every column from `land_col` eastward turned to land: a straight
/// north–south coast.
fn with_coast(cols: u32, rows: u32, cell_m: f64, land_col: u32) -> Grid {
    let mut g = rect(cols, rows, cell_m);
    g.cells.retain(|c| c.col < land_col);
    g.lattice = vec![NO_CELL; (cols * rows) as usize];
    for (id, c) in g.cells.iter().enumerate() {
        g.lattice[(c.row * cols + c.col) as usize] = id as u32;
    }
    g.neighbours = vec![Vec::new(); g.cells.len()];
    g
}

fn larvae(days: f64, k: f64) -> Larvae {
    Larvae {
        larval_days: days,
        diffusivity_m2_s: k,
        settle_window_days: (days, days),
    }
}

fn end_of(t: &Tracker<'_>, start: [f64; 2], seed: u64) -> ([f64; 2], Fate, usize) {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut last = start;
    let (fate, step) = t.follow(start, &mut rng, |_, x, _| last = x);
    (last, fate, step)
}

#[test]
fn uniform_current_moves_larvae_u_times_the_larval_duration() {
    // RK4 integrates a constant velocity exactly (every stage sees the same u), so the
    // displacement is U·PLD to rounding (Butcher, Numerical Methods for ODEs, §2: RK4 is exact
    // for polynomial solutions of degree ≤ 4, here degree 1).
    let g = rect(60, 20, 10_000.0);
    let (u, v) = (vec![0.1; g.len()], vec![-0.02; g.len()]);
    let t = Tracker::new(CurrentField::new(&g, &u, &v), &larvae(20.0, 0.0), 6.0);
    let start = [55_000.0, 150_000.0];
    let (end, fate, _) = end_of(&t, start, 1);
    assert_eq!(fate, Fate::Afloat);
    // U·PLD: 0.1 m/s × 20 d = 172.8 km east, 0.02 m/s × 20 d = 34.56 km south.
    assert!((end[0] - (start[0] + 172_800.0)).abs() < 1e-6, "{end:?}");
    assert!((end[1] - (start[1] - 34_560.0)).abs() < 1e-6, "{end:?}");
}

#[test]
fn solid_body_rotation_returns_larvae_after_one_period() {
    // u = −Ω(y − y₀), v = Ω(x − x₀) is linear, so the bilinear field is exact inside the
    // grid. For x' = Ax, one RK4 step multiplies by R(hA), R(z) = 1 + z + z²/2 + z³/6 + z⁴/24
    // (the RK4 stability function; Hairer, Nørsett & Wanner, Solving ODEs I, §II.2); with
    // z = iθ, θ = Ωh, |R(iθ) − e^{iθ}| ≤ θ⁵/120 + θ⁶/720 (Taylor remainders of sin and cos),
    // and |R| ≤ 1, so after n steps the error is at most n·(θ⁵/120 + θ⁶/720)·r.
    let cell = 10_000.0;
    let g = rect(30, 30, cell);
    let c0 = [150_000.0, 150_000.0];
    let period_days = 10.0;
    let omega = std::f64::consts::TAU / (period_days * DAY);
    let u: Vec<f64> = g
        .cells
        .iter()
        .map(|c| -omega * (c.centre[1] - c0[1]))
        .collect();
    let v: Vec<f64> = g
        .cells
        .iter()
        .map(|c| omega * (c.centre[0] - c0[0]))
        .collect();
    let t = Tracker::new(
        CurrentField::new(&g, &u, &v),
        &larvae(period_days, 0.0),
        1.0,
    );
    let r = 50_000.0;
    let start = [c0[0] + r, c0[1]];
    let (end, fate, _) = end_of(&t, start, 1);
    assert_eq!(fate, Fate::Afloat);
    let theta = omega * t.dt_s;
    let bound = t.steps as f64 * (theta.powi(5) / 120.0 + theta.powi(6) / 720.0) * r;
    let err = (end[0] - start[0]).hypot(end[1] - start[1]);
    assert!(err <= bound + 1e-6, "error {err} m, bound {bound} m");
    // Half a period later it is on the far side: the field really turns it.
    let half = Tracker::new(
        CurrentField::new(&g, &u, &v),
        &larvae(period_days / 2.0, 0.0),
        1.0,
    );
    let (mid, _, _) = end_of(&half, start, 1);
    assert!((mid[0] - (c0[0] - r)).abs() < 1.0 && (mid[1] - c0[1]).abs() < 1.0);
}

#[test]
fn random_walk_spreads_with_variance_two_k_t_per_axis() {
    // Fickian diffusion as a random walk: variance 2·K·t per axis (Berg, Random Walks in
    // Biology, eq. 1.7; standard textbook result). The sample variance of N normal values has
    // relative standard error √(2/(N−1)); 4000 particles → 2.2 %, checked within 4 of them.
    // The end points here are sums of 20 uniform steps (excess kurtosis −1.2/20 < 0), whose
    // sample variance scatters slightly less than that (standard sampling theory).
    let g = rect(80, 80, 10_000.0);
    let zero = vec![0.0; g.len()];
    let (k, days) = (50.0, 5.0);
    let t = Tracker::new(CurrentField::new(&g, &zero, &zero), &larvae(days, k), 6.0);
    let start = [400_000.0, 400_000.0];
    let n = 4000;
    let mut rng = ChaCha8Rng::seed_from_u64(11);
    let mut ends = Vec::with_capacity(n);
    for _ in 0..n {
        let mut last = start;
        let (fate, _) = t.follow(start, &mut rng, |_, x, _| last = x);
        assert_eq!(fate, Fate::Afloat);
        ends.push(last);
    }
    let expected = 2.0 * k * days * DAY; // 4.32e7 m²
    for axis in 0..2 {
        let mean = ends.iter().map(|e| e[axis] - start[axis]).sum::<f64>() / n as f64;
        let var = ends
            .iter()
            .map(|e| (e[axis] - start[axis] - mean).powi(2))
            .sum::<f64>()
            / (n - 1) as f64;
        let rel_se = (2.0 / (n as f64 - 1.0)).sqrt();
        assert!(
            (var / expected - 1.0).abs() < 4.0 * rel_se,
            "axis {axis}: variance {var}, expected {expected}"
        );
        assert!(mean.abs() < 4.0 * (expected / n as f64).sqrt());
    }
}

#[test]
fn an_onshore_current_beaches_every_larva_by_the_computed_time() {
    // Coast at x = 12 cells × 5 km = 60 km; u = 0.25 m/s eastward. The farthest release point
    // (x = 0) reaches the coast after 60 000 / 0.25 = 240 000 s (distance ÷ speed), so every
    // particle is lost by the first step end at or after that time.
    let cell = 5_000.0;
    let g = with_coast(15, 6, cell, 12);
    let (u, v) = (vec![0.25; g.len()], vec![0.0; g.len()]);
    let l = larvae(10.0, 0.0);
    let t = Tracker::new(CurrentField::new(&g, &u, &v), &l, 6.0);
    let (m, origin) = disperse(CurrentField::new(&g, &u, &v), &l, 20, 3, 6.0);
    assert_eq!(m.links(), 0, "nothing settles");
    match origin {
        Origin::Particles {
            released,
            beached,
            left_grid,
            ..
        } => assert_eq!((beached, left_grid), (released, 0)),
        Origin::Supplied(_) => unreachable!(),
    }
    let last_step = (240_000.0 / t.dt_s).ceil() as usize;
    for row in 0..6 {
        for x in [1.0, 20_000.0, 59_000.0] {
            let y = (row as f64 + 0.5) * cell;
            let (_, fate, step) = end_of(&t, [x, y], 1);
            assert_eq!(fate, Fate::Beached);
            // Reaching x = 60 km takes (60 000 − x)/0.25 s.
            let due = ((60_000.0 - x) / 0.25 / t.dt_s).ceil() as usize;
            assert!(
                step <= due.max(1) && step <= last_step,
                "{x}: {step} > {due}"
            );
        }
    }
}

fn swirl(g: &Grid) -> (Vec<f64>, Vec<f64>) {
    let u = g
        .cells
        .iter()
        .map(|c| 0.2 * (c.centre[1] / 40_000.0).sin())
        .collect();
    let v = g
        .cells
        .iter()
        .map(|c| 0.15 * (c.centre[0] / 30_000.0).cos())
        .collect();
    (u, v)
}

#[test]
fn the_matrix_is_the_same_on_one_and_two_threads_and_rows_are_probabilities() {
    // Determinism (project rule): each row's generator is seeded from the seed and the cell.
    let g = with_coast(14, 10, 8_000.0, 11);
    let (u, v) = swirl(&g);
    let l = Larvae {
        larval_days: 6.0,
        diffusivity_m2_s: 20.0,
        settle_window_days: (4.0, 6.0),
    };
    let run = |threads| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| disperse(CurrentField::new(&g, &u, &v), &l, 30, 9, 3.0))
    };
    let (one, o1) = run(1);
    let (two, o2) = run(2);
    assert_eq!(one, two);
    assert_eq!(o1, o2);
    assert!(one.links() > 0);
    for row in &one.rows {
        let s: f64 = row.iter().map(|e| e.1).sum();
        assert!(s <= 1.0 + 1e-12);
        assert!(row.windows(2).all(|w| w[0].0 < w[1].0));
    }
}

#[test]
fn settlement_window_spreads_each_larva_over_its_chances() {
    // Uniform 0.1 m/s east, 1 day steps over a window of days 3–5: three chances, each
    // worth 1/3 of a particle (hand computation from the module's definition).
    let g = rect(40, 3, 10_000.0);
    let (u, v) = (vec![0.1; g.len()], vec![0.0; g.len()]);
    let l = Larvae {
        larval_days: 5.0,
        diffusivity_m2_s: 0.0,
        settle_window_days: (3.0, 5.0),
    };
    let t = Tracker::new(CurrentField::new(&g, &u, &v), &l, 24.0);
    // The step divides the larval duration evenly.
    assert!((t.dt_s - 5.0 * DAY / t.steps as f64).abs() < 1e-9);
    let (row, beached, left) = t.row(g.cell_at(2, 1).unwrap(), 10, 5);
    assert_eq!((beached, left), (0, 0));
    let total: f64 = row.iter().map(|e| e.1).sum();
    assert!((total - 1.0).abs() < 1e-12);
    // Released at x ∈ [20, 30] km and carried 3–5 days × 8.64 km/day = 25.92–43.2 km east:
    // x ∈ [45.92, 73.2] km, columns 4 to 7, all in row 1 (hand computation).
    for (j, _) in row {
        let c = &g.cells[j as usize];
        assert!((4..=7).contains(&c.col) && c.row == 1, "column {}", c.col);
    }
}

#[test]
fn summary_by_hand() {
    // Three cells in a row, 10 km apart. P[0→0] = 0.5, P[0→2] = 0.25, P[1→2] = 0.25.
    // Weighted distances: 0 (0.5), 20 km (0.25), 10 km (0.25) → mean 7.5 km, median 0 (the
    // cumulative weight 0.5 of 1 is reached at d = 0), 90th percentile 20 km; every moving
    // link points east: bearing 90°. Settled share (0.75 + 0.25 + 0)/3, local share 0.5/3.
    let g = rect(3, 1, 10_000.0);
    let m = Dispersal {
        rows: vec![vec![(0, 0.5), (2, 0.25)], vec![(2, 0.25)], vec![]],
    };
    let s = summarise(&g, &m, None);
    assert!((s.mean_km - 7.5).abs() < 1e-9);
    assert_eq!(s.median_km, 0.0);
    assert!((s.p90_km - 20.0).abs() < 1e-9);
    assert!((s.mean_bearing_deg.unwrap() - 90.0).abs() < 1e-9);
    assert!((s.settled_share - 1.0 / 3.0).abs() < 1e-12);
    assert!((s.local_share - 0.5 / 3.0).abs() < 1e-12);
    // Network {0, 2}: from 0, 0.5 + 0.25 stay; from 2 nothing settles → 0.75 / 2.
    assert!((network_retention(&m, &[true, false, true]) - 0.375).abs() < 1e-12);
}

#[test]
fn lock_step_lanes_follow_each_particle_alone() {
    // `Tracker::rows` runs particles in lanes (`LANES` abreast, a freed lane taking the next
    // particle); each must go exactly as `follow` takes it alone from its own stream
    // (consistency with the one-particle reference above, whose paths the advection,
    // diffusion and beaching checks test). 37 particles: more than two lanes' worth, so lanes
    // are reused; a coast, so some lanes are freed early while others go on. Then several
    // cells tracked together (`rows_of`, lanes passing from one cell's particles to the
    // next's) must give the rows cell by cell.
    let g = with_coast(14, 10, 8_000.0, 11);
    let (u, v) = swirl(&g);
    let l = Larvae {
        larval_days: 6.0,
        diffusivity_m2_s: 20.0,
        settle_window_days: (4.0, 6.0),
    };
    let t = Tracker::new(CurrentField::new(&g, &u, &v), &l, 3.0);
    let (particles, seed) = (37u32, 5u64);
    assert!(particles as usize > 2 * track::LANES);
    let mut lost_any = false;
    let cells = [0u32, 17, 54, g.len() as u32 - 1];
    let mut one_by_one = Vec::new();
    for cell in cells {
        let sq = g.cell_square(cell);
        let mut counts = std::collections::BTreeMap::<u32, u64>::new();
        let (mut beached, mut left) = (0, 0);
        for p in 0..particles {
            let mut rng = ChaCha8Rng::seed_from_u64(track::mix(seed, cell as u64));
            rng.set_stream(p as u64);
            rng.set_word_pos(0);
            use rand::Rng;
            let start = [
                rng.gen_range(sq.min().x..sq.max().x),
                rng.gen_range(sq.min().y..sq.max().y),
            ];
            let (fate, _) = t.follow(start, &mut rng, |step, _, c| {
                if t.settle_steps.contains(&step) {
                    *counts.entry(c).or_default() += 1;
                }
            });
            match fate {
                Fate::Beached => beached += 1,
                Fate::LeftGrid => left += 1,
                Fate::Afloat => {}
            }
        }
        lost_any |= beached + left > 0;
        let per = particles as f64 * (t.settle_steps.end() + 1 - t.settle_steps.start()) as f64;
        let want: Vec<(u32, f64)> = counts
            .into_iter()
            .map(|(c, n)| (c, n as f64 / per))
            .collect();
        let row = t.row(cell, particles, seed);
        assert_eq!(row, (want, beached, left), "cell {cell}");
        one_by_one.push(vec![row]);
    }
    assert!(lost_any, "the check should see lanes lost mid-batch");
    let own = Stepping {
        dt_s: t.dt_s,
        steps: t.steps,
        sigma_m: t.sigma_m,
        settle_steps: t.settle_steps.clone(),
    };
    assert_eq!(t.rows_of(&cells, particles, seed, &[own]), one_by_one);
}

#[test]
fn species_tracked_together_get_the_matrices_they_get_alone() {
    // Sharing one tracking between species with equal diffusivity (and so equal step) must
    // give each the matrix a run of its own gives with the same seed (each particle has its
    // own random stream; the shorter larval duration reads the same path up to its end), and
    // a species' matrix must not depend on the others listed with it.
    let g = with_coast(14, 10, 8_000.0, 11);
    let (u, v) = swirl(&g);
    let f = CurrentField::new(&g, &u, &v);
    let sp = |days: f64, k: f64, from: f64| Larvae {
        larval_days: days,
        diffusivity_m2_s: k,
        settle_window_days: (from, days),
    };
    let all = [sp(6.0, 20.0, 4.0), sp(3.0, 5.0, 3.0), sp(4.0, 20.0, 4.0)];
    let (particles, plan_seed, max_h) = (13, 21, 3.0);
    // The first and last share a step, so they are tracked together.
    assert_eq!(
        Stepping::new(&f, &all[0], max_h).dt_s,
        Stepping::new(&f, &all[2], max_h).dt_s
    );
    let together = disperse_species(f, &all, particles, plan_seed, max_h);
    for (l, got) in all.iter().zip(&together) {
        let alone = disperse(f, l, particles, larvae_seed(plan_seed, l), max_h);
        assert_eq!(got, &alone);
        assert_eq!(
            &disperse_species(f, &[*l], particles, plan_seed, max_h)[0],
            got
        );
    }
    assert!(together.iter().all(|m| m.0.links() > 0));
    assert_ne!(together[0].0, together[2].0);
}
