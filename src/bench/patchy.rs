//! The benchmark's patchy habitat shape: the smooth suitability bands multiplied by a smooth,
//! seeded random field, and costs that vary from cell to cell. Real ranges are patchier than
//! bands, and a solver that does well on bands alone may not do well on them.
//!
//! # Field (random Fourier sum; common practice for smooth synthetic fields, no single source)
//! g(x) = Σₘ aₘ·cos(kₘ·x + φₘ) over M modes with wave vectors of random direction and
//! wavelengths drawn between a least and a greatest length, phases uniform in [0, 2π) and
//! amplitudes uniform in [½, 1]; the field is f = clamp(½ + g/(2·Σ|aₘ|)·stretch, 0, 1), so
//! f ∈ [0, 1], and with `stretch` > 1 part of each band falls to 0 (gaps in the range) while the
//! rest stays smooth. Everything comes from a ChaCha8 stream seeded by the caller, so a seed
//! always gives the same field on every machine and thread count.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// The habitat shape of a benchmark run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Habitat {
    /// Smooth suitability bands that move poleward with warming, costs smooth in space.
    #[default]
    Smooth,
    /// The same bands times a smooth random field per species, and costs with a random
    /// factor per cell.
    Patchy,
}

impl std::str::FromStr for Habitat {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        match s {
            "smooth" => Ok(Habitat::Smooth),
            "patchy" => Ok(Habitat::Patchy),
            other => Err(format!(
                "habitat shape must be `smooth` or `patchy`, e.g. `--habitat patchy`; got `{other}`"
            )),
        }
    }
}

impl Habitat {
    /// The word used on the command line and in notes.
    pub fn as_str(self) -> &'static str {
        match self {
            Habitat::Smooth => "smooth",
            Habitat::Patchy => "patchy",
        }
    }
}

/// One cosine mode of a [`SmoothField`].
#[derive(Debug, Clone, Copy, PartialEq)]
struct Mode {
    k: [f64; 2],
    phase: f64,
    amplitude: f64,
}

/// A smooth random field on the plane (module doc), in whatever units the caller's
/// coordinates have (the benchmark uses degrees).
#[derive(Debug, Clone, PartialEq)]
pub struct SmoothField {
    modes: Vec<Mode>,
    /// Σ|aₘ|: the largest |g| can be.
    scale: f64,
    stretch: f64,
}

impl SmoothField {
    /// `modes` cosines with wavelengths in `[min_wavelength, max_wavelength]` (coordinate
    /// units), contrast `stretch` ≥ 1, from the ChaCha8 stream of `seed`.
    pub fn new(
        seed: u64,
        modes: usize,
        min_wavelength: f64,
        max_wavelength: f64,
        stretch: f64,
    ) -> Self {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let tau = std::f64::consts::TAU;
        let modes: Vec<Mode> = (0..modes)
            .map(|_| {
                let wavelength = rng.gen_range(min_wavelength..=max_wavelength);
                let direction = rng.gen_range(0.0..tau);
                let k = tau / wavelength;
                Mode {
                    k: [k * direction.cos(), k * direction.sin()],
                    phase: rng.gen_range(0.0..tau),
                    amplitude: rng.gen_range(0.5..=1.0),
                }
            })
            .collect();
        let scale = modes.iter().map(|m| m.amplitude).sum::<f64>().max(1e-300);
        SmoothField {
            modes,
            scale,
            stretch,
        }
    }

    /// The raw sum g(x, y) = Σₘ aₘ·cos(kₘ·(x, y) + φₘ).
    pub fn raw(&self, x: f64, y: f64) -> f64 {
        self.modes
            .iter()
            .map(|m| m.amplitude * (m.k[0] * x + m.k[1] * y + m.phase).cos())
            .sum()
    }

    /// f(x, y) ∈ [0, 1] (module doc).
    pub fn value(&self, x: f64, y: f64) -> f64 {
        (0.5 + 0.5 * self.stretch * self.raw(x, y) / self.scale).clamp(0.0, 1.0)
    }

    /// A bound on |∇f|: ½·stretch·Σₘ aₘ|kₘ| / Σ|aₘ| (each cosine's slope is at most |kₘ|, and
    /// clamping never steepens), so |f(p) − f(q)| ≤ this × |p − q|.
    pub fn slope_bound(&self) -> f64 {
        0.5 * self.stretch
            * self
                .modes
                .iter()
                .map(|m| m.amplitude * m.k[0].hypot(m.k[1]))
                .sum::<f64>()
            / self.scale
    }
}

/// Cell-to-cell cost factors: one value per cell, log-uniform in [½, 2] (so the median factor
/// is 1 and the mean about 1.08), from the ChaCha8 stream of `seed`, in cell order.
pub fn cost_factors(seed: u64, cells: usize) -> Vec<f64> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let ln2 = std::f64::consts::LN_2;
    (0..cells)
        .map(|_| rng.gen_range(-ln2..=ln2).exp())
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn field_is_bounded_seeded_and_smooth() {
        let f = SmoothField::new(7, 12, 0.5, 3.0, 2.0);
        let g = SmoothField::new(7, 12, 0.5, 3.0, 2.0);
        let h = SmoothField::new(8, 12, 0.5, 3.0, 2.0);
        assert_eq!(f, g, "same seed, same field");
        assert_ne!(f, h, "another seed, another field");
        let bound = f.slope_bound();
        let (mut zeros, mut n) = (0, 0);
        for i in 0..200 {
            for j in 0..200 {
                let (x, y) = (i as f64 * 0.05, j as f64 * 0.05);
                let v = f.value(x, y);
                assert!((0.0..=1.0).contains(&v));
                zeros += usize::from(v == 0.0);
                n += 1;
                // Mean value theorem (calculus): |f(p) − f(q)| ≤ sup|∇f|·|p − q|.
                let w = f.value(x + 0.01, y - 0.02);
                assert!((v - w).abs() <= bound * 0.01f64.hypot(0.02) + 1e-12);
            }
        }
        // stretch 2 sends part of the plane to 0 (gaps) but not all of it.
        assert!(zeros > 0 && zeros < n, "{zeros} of {n}");
    }

    #[test]
    fn raw_sum_of_one_mode_is_a_cosine() {
        // One mode: g(x, y) = a·cos(k·x + φ) exactly (the definition), and |g| ≤ a.
        let f = SmoothField::new(3, 1, 2.0, 2.0, 1.0);
        let m = f.modes[0];
        assert!((m.k[0].hypot(m.k[1]) - std::f64::consts::PI).abs() < 1e-12); // 2π / 2
        for (x, y) in [(0.0, 0.0), (0.3, -1.2), (5.0, 2.5)] {
            let want = m.amplitude * (m.k[0] * x + m.k[1] * y + m.phase).cos();
            assert!((f.raw(x, y) - want).abs() < 1e-12);
            // value = ½ + ½·g/a with stretch 1.
            assert!((f.value(x, y) - (0.5 + 0.5 * want / m.amplitude)).abs() < 1e-12);
        }
    }

    #[test]
    fn cost_factors_are_log_uniform_between_half_and_two() {
        let c = cost_factors(1, 100_000);
        assert_eq!(c, cost_factors(1, 100_000));
        assert!(c.iter().all(|&v| (0.5..=2.0).contains(&v)));
        // Mean of e^U, U uniform on [−ln 2, ln 2]: (2 − ½)/(2 ln 2) = 1.0820 (closed form);
        // standard error of 10⁵ draws is about 0.0013.
        let mean = c.iter().sum::<f64>() / c.len() as f64;
        assert!(
            (mean - 1.5 / (2.0 * std::f64::consts::LN_2)).abs() < 0.006,
            "{mean}"
        );
        // Median e⁰ = 1.
        let below = c.iter().filter(|&&v| v < 1.0).count() as f64 / c.len() as f64;
        assert!((below - 0.5).abs() < 0.01, "{below}");
    }
}
