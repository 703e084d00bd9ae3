//! Particle tracking: larvae released in a cell drift with the current (4th-order Runge–Kutta
//! in projected metres) and spread by a random walk (eddy diffusion), and settle in the cells
//! where they are during their settlement window.
//!
//! # Method
//! - Advection: the classical RK4 step (Runge 1895, Kutta 1901; e.g. Press et al., Numerical
//!   Recipes, §17.1): k₁ = u(x), k₂ = u(x + dt·k₁/2), k₃ = u(x + dt·k₂/2), k₄ = u(x + dt·k₃),
//!   x ← x + dt·(k₁ + 2k₂ + 2k₃ + k₄)/6, with u the bilinear field of [`CurrentField`].
//! - Diffusion: after each step every axis moves by √(2·K·dt)·ξ, ξ standard normal (the
//!   random-walk form of Fickian diffusion: the variance grows by 2·K·dt per axis and step,
//!   so 2·K·t in all; e.g. Berg, Random Walks in Biology, ch. 1).
//! - Time step: at most `max_step_hours`, and short enough that a particle moves at most half
//!   a cell per step by current (CFL-like) and by diffusion (one standard deviation), so it
//!   cannot jump across a one-cell headland unnoticed.
//! - Loss: a particle whose position at the end of a step lies on no sea cell is lost for
//!   good — beached on land (a lattice square with no cell) or carried beyond the grid. Real
//!   larvae may survive a brush with the shore; counting beaching as loss is the
//!   conservative choice and keeps every row of the matrix a probability (≤ 1). A point on
//!   the land part of a coastal cell counts as that cell (the coast is resolved at cell size).
//! - Settlement: the window's step ends (times t = k·dt inside [from, to] days) are the
//!   settlement chances; a particle alive at one of them puts 1/(n particles · n chances) into
//!   the cell it is in. With the default window (the last day only) that is simply the cell
//!   where it is at the end of its larval duration.

use super::field::CurrentField;
use crate::plan::connectivity::Larvae;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// Seconds per day.
const DAY_S: f64 = 86_400.0;

/// How a particle's journey ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Fate {
    /// Alive at the end of the larval duration.
    Afloat,
    /// Ended a step on a lattice square with no cell (land).
    Beached,
    /// Ended a step outside the grid's lattice.
    LeftGrid,
}

/// The time stepping for one species on one current field.
#[derive(Debug, Clone)]
pub struct Tracker<'a> {
    field: CurrentField<'a>,
    /// Step length. Units: s.
    pub dt_s: f64,
    /// Number of steps (dt × steps = larval duration).
    pub steps: usize,
    /// Random-walk standard deviation per axis and step, √(2·K·dt). Units: m.
    pub sigma_m: f64,
    /// Steps (1-based) at whose end larvae may settle.
    pub settle_steps: std::ops::RangeInclusive<usize>,
}

impl<'a> Tracker<'a> {
    /// Chooses the step for `larvae` on `field` (see the module doc).
    pub fn new(field: CurrentField<'a>, larvae: &Larvae, max_step_hours: f64) -> Self {
        let total_s = larvae.larval_days * DAY_S;
        let half_cell = 0.5 * field.grid().cell_size_m;
        let mut dt = max_step_hours * 3600.0;
        let speed = field.max_speed();
        if speed > 0.0 {
            dt = dt.min(half_cell / speed);
        }
        let k = larvae.diffusivity_m2_s;
        if k > 0.0 {
            dt = dt.min(half_cell * half_cell / (2.0 * k));
        }
        let steps = ((total_s / dt).ceil() as usize).max(1);
        let dt_s = total_s / steps as f64;
        let (from, to) = larvae.settle_window_days;
        // Step ends inside the window; a window shorter than a step gets the step end at or
        // after its start.
        let tol = 1e-9 * dt_s;
        let first = (((from * DAY_S - tol) / dt_s).ceil().max(1.0) as usize).min(steps);
        let last = (((to * DAY_S + tol) / dt_s).floor() as usize).clamp(first, steps);
        Tracker {
            field,
            dt_s,
            steps,
            sigma_m: (2.0 * k * dt_s).sqrt(),
            settle_steps: first..=last,
        }
    }

    /// One RK4 step of pure advection from `x`.
    pub fn rk4(&self, x: [f64; 2]) -> [f64; 2] {
        let h = self.dt_s;
        let f = |p: [f64; 2]| self.field.velocity(p);
        let k1 = f(x);
        let k2 = f([x[0] + 0.5 * h * k1[0], x[1] + 0.5 * h * k1[1]]);
        let k3 = f([x[0] + 0.5 * h * k2[0], x[1] + 0.5 * h * k2[1]]);
        let k4 = f([x[0] + h * k3[0], x[1] + h * k3[1]]);
        [
            x[0] + h / 6.0 * (k1[0] + 2.0 * k2[0] + 2.0 * k3[0] + k4[0]),
            x[1] + h / 6.0 * (k1[1] + 2.0 * k2[1] + 2.0 * k3[1] + k4[1]),
        ]
    }

    /// Follows one particle from `start`; `visit(step, position, cell)` hears every step end
    /// while it is at sea. Returns its fate and the step it was lost at (or `steps`).
    pub fn follow(
        &self,
        start: [f64; 2],
        rng: &mut ChaCha8Rng,
        mut visit: impl FnMut(usize, [f64; 2], u32),
    ) -> (Fate, usize) {
        let grid = self.field.grid();
        let mut x = start;
        for step in 1..=self.steps {
            x = self.rk4(x);
            if self.sigma_m > 0.0 {
                x[0] += self.sigma_m * normal(rng);
                x[1] += self.sigma_m * normal(rng);
            }
            match grid.lattice_position(x) {
                None => return (Fate::LeftGrid, step),
                Some((c, r)) => match grid.cell_at(c, r) {
                    None => return (Fate::Beached, step),
                    Some(cell) => visit(step, x, cell),
                },
            }
        }
        (Fate::Afloat, self.steps)
    }

    /// The settlement row of one source cell: `particles` released uniformly over its lattice
    /// square with a generator seeded from `seed` and the cell id alone (so the row does not
    /// depend on which thread runs it). Returns `(cell, probability)` sorted by cell, and the
    /// counts of beached and lost-beyond-the-grid particles.
    pub fn row(&self, cell: u32, particles: u32, seed: u64) -> (Vec<(u32, f64)>, u32, u32) {
        let grid = self.field.grid();
        let sq = grid.cell_square(cell);
        let (lo, hi) = (sq.min(), sq.max());
        let mut rng = ChaCha8Rng::seed_from_u64(mix(seed, cell as u64));
        let chances = (self.settle_steps.end() + 1 - self.settle_steps.start()) as f64;
        let share = 1.0 / (particles as f64 * chances);
        let mut settled: std::collections::BTreeMap<u32, f64> = Default::default();
        let (mut beached, mut left) = (0, 0);
        for _ in 0..particles {
            let start = [rng.gen_range(lo.x..hi.x), rng.gen_range(lo.y..hi.y)];
            let (fate, _) = self.follow(start, &mut rng, |step, _, c| {
                if self.settle_steps.contains(&step) {
                    *settled.entry(c).or_insert(0.0) += share;
                }
            });
            match fate {
                Fate::Beached => beached += 1,
                Fate::LeftGrid => left += 1,
                Fate::Afloat => {}
            }
        }
        (settled.into_iter().collect(), beached, left)
    }
}

/// A standard normal deviate (Box–Muller, from two uniforms; Box & Muller 1958, Ann. Math.
/// Statist. 29:610).
fn normal(rng: &mut ChaCha8Rng) -> f64 {
    let u1: f64 = 1.0 - rng.gen::<f64>(); // (0, 1]
    let u2: f64 = rng.gen::<f64>();
    (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
}

/// Mixes a seed and a stream number into one generator seed (SplitMix64's finaliser,
/// Steele, Lea & Flood 2014), so neighbouring cells get unrelated streams.
pub(crate) fn mix(seed: u64, stream: u64) -> u64 {
    let mut z = seed
        .wrapping_mul(0x9E37_79B9_7F4A_7C15)
        .wrapping_add(stream)
        .wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}
