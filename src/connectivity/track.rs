//! Particle tracking: larvae released in a cell drift with the current (4th-order Runge–Kutta
//! in projected metres) and spread by a random walk (eddy diffusion), and settle in the cells
//! where they are during their settlement window.
//!
//! # Method
//! - Advection: the classical RK4 step (Runge 1895, Kutta 1901; e.g. Press et al., Numerical
//!   Recipes, §17.1): k₁ = u(x), k₂ = u(x + dt·k₁/2), k₃ = u(x + dt·k₂/2), k₄ = u(x + dt·k₃),
//!   x ← x + dt·(k₁ + 2k₂ + 2k₃ + k₄)/6, with u the bilinear field of [`CurrentField`].
//! - Diffusion: after each step every axis moves by √(2·K·dt)·ξ, ξ of mean 0 and variance 1
//!   (the random-walk form of Fickian diffusion: the variance grows by 2·K·dt per axis and
//!   step, so 2·K·t in all; e.g. Berg, Random Walks in Biology, ch. 1). ξ is uniform on
//!   [−√3, √3] rather than normal (see `unit_pair`: a uniform draw per axis, no logarithm).
//! - Time step: at most `max_step_hours`, and short enough that a particle moves at most half
//!   a cell per step by current (CFL-like) and by diffusion (one standard deviation), so it
//!   cannot jump across a one-cell headland unnoticed. That bound is then shortened to a whole
//!   fraction of a day, 1/n day, so every larval duration in whole days is a whole number of
//!   the same steps and species with equal diffusivity can share their tracks (see
//!   [`crate::connectivity::disperse_species`]); a duration that is no such multiple is split
//!   into equal steps of at most the bound instead.
//! - Random numbers: each particle has a stream of its own (ChaCha8 keyed by the seed and
//!   the source cell, stream number = the particle's index), so a particle's path depends on
//!   the seed, its cell and its index alone — not on the thread that runs it, nor on how long
//!   the particles before it drifted.
//! - Loss: a particle whose position at the end of a step lies on no sea cell is lost for
//!   good — beached on land (a lattice square with no cell) or carried beyond the grid. Real
//!   larvae may survive a brush with the shore; counting beaching as loss is the
//!   conservative choice and keeps every row of the matrix a probability (≤ 1). A point on
//!   the land part of a coastal cell counts as that cell (the coast is resolved at cell size).
//! - Settlement: the window's step ends (times t = k·dt inside [from, to] days) are the
//!   settlement chances; a particle alive at one of them puts 1/(n particles · n chances) into
//!   the cell it is in (counted as whole visits, then divided once). With the default window
//!   (the last day only) that is simply the cell where it is at the end of its larval duration.

use super::field::{CurrentField, FieldLattice};
use super::lanes::{Advect, OFF_GRID};
use crate::grid::NO_CELL;
use crate::plan::connectivity::Larvae;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// Seconds per day.
const DAY_S: f64 = 86_400.0;

/// What one source cell's larvae did: `(cell, probability)` settled, sorted by cell; then the
/// counts of beached and of lost-beyond-the-grid particles.
pub type SourceRow = (Vec<(u32, f64)>, u32, u32);

/// Particles tracked side by side in [`Tracker::rows`].
pub use super::lanes::LANES;

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

/// The time steps of one species: how long, how many, when it may settle.
#[derive(Debug, Clone, PartialEq)]
pub struct Stepping {
    /// Step length. Units: s.
    pub dt_s: f64,
    /// Number of steps (dt × steps = larval duration).
    pub steps: usize,
    /// Random-walk standard deviation per axis and step, √(2·K·dt). Units: m.
    pub sigma_m: f64,
    /// Steps (1-based) at whose end larvae may settle.
    pub settle_steps: std::ops::RangeInclusive<usize>,
}

impl Stepping {
    /// Chooses the step for `larvae` on `field` (see the module doc).
    pub fn new(field: &CurrentField<'_>, larvae: &Larvae, max_step_hours: f64) -> Self {
        let days = larvae.larval_days;
        let total_s = days * DAY_S;
        let half_cell = 0.5 * field.grid().cell_size_m;
        let mut bound = max_step_hours * 3600.0;
        let speed = field.max_speed();
        if speed > 0.0 {
            bound = bound.min(half_cell / speed);
        }
        let k = larvae.diffusivity_m2_s;
        if k > 0.0 {
            bound = bound.min(half_cell * half_cell / (2.0 * k));
        }
        // Steps per day (1e-9: a bound that is a day's fraction up to rounding keeps it).
        let per_day = (DAY_S / bound * (1.0 - 1e-9)).ceil().max(1.0);
        let whole = days * per_day;
        let (steps, dt_s) = if (whole - whole.round()).abs() < 1e-9 && whole.round() >= 1.0 {
            (whole.round() as usize, DAY_S / per_day)
        } else {
            let steps = ((total_s / bound).ceil() as usize).max(1);
            (steps, total_s / steps as f64)
        };
        let (from, to) = larvae.settle_window_days;
        // Step ends inside the window; a window shorter than a step gets the step end at or
        // after its start.
        let tol = 1e-9 * dt_s;
        let first = (((from * DAY_S - tol) / dt_s).ceil().max(1.0) as usize).min(steps);
        let last = (((to * DAY_S + tol) / dt_s).floor() as usize).clamp(first, steps);
        Stepping {
            dt_s,
            steps,
            sigma_m: (2.0 * k * dt_s).sqrt(),
            settle_steps: first..=last,
        }
    }

    /// Settlement chances per particle.
    pub fn chances(&self) -> usize {
        self.settle_steps.end() + 1 - self.settle_steps.start()
    }
}

/// The time stepping for one species on one current field.
#[derive(Debug, Clone)]
pub struct Tracker<'a> {
    field: CurrentField<'a>,
    lattice: FieldLattice,
    advect: Advect,
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
        Self::with_stepping(field, Stepping::new(&field, larvae, max_step_hours))
    }

    /// A tracker with the given steps.
    pub fn with_stepping(field: CurrentField<'a>, s: Stepping) -> Self {
        let lattice = FieldLattice::new(&field);
        Tracker {
            advect: Advect::detect_for(lattice.nodes().max(field.grid().lattice.len())),
            lattice,
            field,
            dt_s: s.dt_s,
            steps: s.steps,
            sigma_m: s.sigma_m,
            settle_steps: s.settle_steps,
        }
    }

    /// One RK4 step of pure advection from `x`.
    #[inline]
    pub fn rk4(&self, x: [f64; 2]) -> [f64; 2] {
        let h = self.dt_s;
        let f = |p: [f64; 2]| self.lattice.velocity(p[0], p[1]);
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
    #[inline]
    pub fn follow(
        &self,
        start: [f64; 2],
        rng: &mut ChaCha8Rng,
        mut visit: impl FnMut(usize, [f64; 2], u32),
    ) -> (Fate, usize) {
        let grid = self.field.grid();
        let (cols, rows) = (grid.n_cols as f64, grid.n_rows as f64);
        let mut x = start;
        for step in 1..=self.steps {
            x = self.rk4(x);
            if self.sigma_m > 0.0 {
                let (a, b) = unit_pair(rng);
                x[0] += self.sigma_m * a;
                x[1] += self.sigma_m * b;
            }
            // `Grid::locate`'s arithmetic, with truncation for the floor (both ≥ 0 here).
            let c = (x[0] - grid.origin[0]) / grid.cell_size_m;
            let r = (x[1] - grid.origin[1]) / grid.cell_size_m;
            if !(c >= 0.0 && r >= 0.0 && c < cols && r < rows) {
                return (Fate::LeftGrid, step);
            }
            match grid.lattice[r as usize * grid.n_cols as usize + c as usize] {
                NO_CELL => return (Fate::Beached, step),
                cell => visit(step, x, cell),
            }
        }
        (Fate::Afloat, self.steps)
    }

    /// The settlement rows of one source cell for several species that share this tracker's
    /// step and diffusion (`species[s]` the steps of each, none longer than this tracker's):
    /// `particles` released uniformly over the cell's lattice square, particle p drawing from
    /// stream p of a generator keyed by `seed` and the cell alone, and followed once for all
    /// of them. Each species' row is what [`Tracker::row`] gives for it alone with the same
    /// seed: `(cell, probability)` sorted by cell, and the counts of beached and
    /// lost-beyond-the-grid particles within its larval duration.
    ///
    pub fn rows(
        &self,
        cell: u32,
        particles: u32,
        seed: u64,
        species: &[Stepping],
    ) -> Vec<SourceRow> {
        self.rows_of(&[cell], particles, seed, species)
            .pop()
            .expect("one cell in, one set of rows out")
    }

    /// [`Tracker::rows`] for several source cells, in their order, from one stream of
    /// particles: [`LANES`] larvae move at once, one RK4 step for all of them
    /// ([`super::lanes`], in vector registers where the processor allows), and a lane whose
    /// larva is lost or reaches the end takes the next one, from the same cell or the next
    /// — so the lanes stay full. Each lane does exactly what [`Tracker::follow`] does for its
    /// larva, whatever lane it runs in and whatever ran there before; the rows are the same
    /// as cell by cell.
    pub fn rows_of(
        &self,
        cells: &[u32],
        particles: u32,
        seed: u64,
        species: &[Stepping],
    ) -> Vec<Vec<SourceRow>> {
        debug_assert!(species.iter().all(|s| s.steps <= self.steps));
        const EMPTY: usize = usize::MAX;
        let grid = self.field.grid();
        let n_sp = species.len();
        // The last step any species needs, and who may settle at the end of each step.
        let horizon = species.iter().map(|s| s.steps).max().unwrap_or(0);
        let settle: Vec<Vec<usize>> = (1..=horizon)
            .map(|step| {
                (0..n_sp)
                    .filter(|&si| species[si].settle_steps.contains(&step))
                    .collect()
            })
            .collect();
        // Visits as (cell, count) runs per source and species: a larva lingers in a cell for
        // several step ends, so each lane keeps its current run per species and files it
        // when the cell changes or the larva's journey ends.
        let mut visits: Vec<Vec<Vec<(u32, u32)>>> = vec![vec![Vec::new(); n_sp]; cells.len()];
        let mut lost = vec![vec![(0u32, 0u32); n_sp]; cells.len()];
        let mut runs = vec![(NO_CELL, 0u32); LANES * n_sp];
        // Lane state: position (NaN when empty), steps taken, source (index into `cells`).
        let mut xs = [f64::NAN; LANES];
        let mut ys = [f64::NAN; LANES];
        let mut age = [0usize; LANES];
        let mut source = [EMPTY; LANES];
        let mut rng: Vec<ChaCha8Rng> = vec![ChaCha8Rng::seed_from_u64(0); LANES];
        let mut at = [NO_CELL; LANES];
        // The next larva to release: source index and particle number.
        let (mut next_source, mut next_particle) = (0usize, 0u32);
        let mut keyed = None;
        let mut busy = 0;
        let h = self.dt_s;
        loop {
            if horizon > 0 {
                for l in 0..LANES {
                    if source[l] != EMPTY {
                        continue;
                    }
                    while next_source < cells.len() && next_particle == particles {
                        (next_source, next_particle, keyed) = (next_source + 1, 0, None);
                    }
                    if next_source == cells.len() {
                        break;
                    }
                    let cell = cells[next_source];
                    let keyed = keyed.get_or_insert_with(|| {
                        let sq = grid.cell_square(cell);
                        (
                            ChaCha8Rng::seed_from_u64(mix(seed, cell as u64)),
                            sq.min(),
                            sq.max(),
                        )
                    });
                    let (lo, hi) = (keyed.1, keyed.2);
                    let mut r = keyed.0.clone();
                    r.set_stream(next_particle as u64);
                    r.set_word_pos(0);
                    xs[l] = r.gen_range(lo.x..hi.x);
                    ys[l] = r.gen_range(lo.y..hi.y);
                    rng[l] = r;
                    (age[l], source[l]) = (0, next_source);
                    next_particle += 1;
                    busy += 1;
                }
            }
            if busy == 0 {
                break;
            }
            // Empty lanes are stepped too (the look-up is total and returns at once for their
            // NaN position): no branches on occupancy.
            self.advect.step(&self.lattice, h, &mut xs, &mut ys);
            if self.sigma_m > 0.0 {
                for l in (0..LANES).filter(|&l| source[l] != EMPTY) {
                    let (a, b) = unit_pair(&mut rng[l]);
                    xs[l] += self.sigma_m * a;
                    ys[l] += self.sigma_m * b;
                }
            }
            self.advect.locate(grid, &xs, &ys, &mut at);
            for l in 0..LANES {
                if source[l] == EMPTY {
                    continue;
                }
                age[l] += 1;
                let (step, src) = (age[l], source[l]);
                let fate = match at[l] {
                    OFF_GRID => Fate::LeftGrid,
                    NO_CELL => Fate::Beached,
                    here => {
                        for &si in &settle[step - 1] {
                            let run = &mut runs[l * n_sp + si];
                            if run.0 != here {
                                if run.1 > 0 {
                                    visits[src][si].push(*run);
                                }
                                *run = (here, 0);
                            }
                            run.1 += 1;
                        }
                        Fate::Afloat
                    }
                };
                if fate != Fate::Afloat {
                    for (s, lo) in species.iter().zip(lost[src].iter_mut()) {
                        if step <= s.steps {
                            match fate {
                                Fate::Beached => lo.0 += 1,
                                _ => lo.1 += 1,
                            }
                        }
                    }
                }
                if fate != Fate::Afloat || step == horizon {
                    // The journey is over: file the lane's runs and free it.
                    for (si, run) in runs[l * n_sp..(l + 1) * n_sp].iter_mut().enumerate() {
                        if run.1 > 0 {
                            visits[src][si].push(*run);
                        }
                        *run = (NO_CELL, 0);
                    }
                    [xs[l], ys[l]] = [f64::NAN; 2];
                    source[l] = EMPTY;
                    busy -= 1;
                }
            }
        }
        visits
            .into_iter()
            .zip(lost)
            .map(|(by_species, lost)| {
                species
                    .iter()
                    .zip(by_species)
                    .zip(lost)
                    .map(|((s, v), (beached, left))| {
                        (settled_row(v, particles, s.chances()), beached, left)
                    })
                    .collect()
            })
            .collect()
    }

    /// The settlement row of one source cell for this tracker's own species (see
    /// [`Tracker::rows`]): `(cell, probability)` sorted by cell, and the counts of beached and
    /// lost-beyond-the-grid particles.
    pub fn row(&self, cell: u32, particles: u32, seed: u64) -> SourceRow {
        let own = Stepping {
            dt_s: self.dt_s,
            steps: self.steps,
            sigma_m: self.sigma_m,
            settle_steps: self.settle_steps.clone(),
        };
        self.rows(cell, particles, seed, &[own]).remove(0)
    }
}

/// One species' settlement row from its visit runs: visits summed per cell, each worth
/// 1 / (particles × settlement chances); `(cell, probability)` sorted by cell.
fn settled_row(mut visits: Vec<(u32, u32)>, particles: u32, chances: usize) -> Vec<(u32, f64)> {
    let per = particles as f64 * chances as f64;
    visits.sort_unstable_by_key(|e| e.0);
    let mut row: Vec<(u32, f64)> = Vec::new();
    let mut k = 0;
    while k < visits.len() {
        let c = visits[k].0;
        let mut n = 0u64;
        while k < visits.len() && visits[k].0 == c {
            n += visits[k].1 as u64;
            k += 1;
        }
        row.push((c, n as f64 / per));
    }
    row
}

/// Two independent random-walk deviates of mean 0 and variance 1, each uniform on
/// [−√3, √3]. A random walk needs only the right mean and variance per step: over the tens to
/// hundreds of steps of a larval duration the sum is Gaussian by the central limit theorem,
/// and the spread 2·K·t is exact at every step. Replacing Gaussian steps by uniform ones of the
/// same variance is the usual economy in particle-tracking models (Visser 1997, Mar. Ecol.
/// Prog. Ser. 158:275, from memory); it saves a logarithm and a square root per step.
#[inline]
fn unit_pair(rng: &mut ChaCha8Rng) -> (f64, f64) {
    const SQRT3: f64 = 1.732_050_807_568_877_2;
    let a: f64 = rng.gen();
    let b: f64 = rng.gen();
    ((2.0 * a - 1.0) * SQRT3, (2.0 * b - 1.0) * SQRT3)
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
