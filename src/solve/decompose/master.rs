//! The box-step master LP of the Lagrangian ascent ([`super::lagrange`]): max θ subject to
//! θ ≤ aⱼ + gⱼ·λ for every cut j kept and max(0, c − w) ≤ λ ≤ c + w around the centre c.
//!
//! One HiGHS model lives through the whole ascent: a step adds one row and moves the box's
//! column bounds, so HiGHS's dual simplex restarts from the last basis instead of solving a
//! fresh LP of a few hundred dense rows every time (on a 9-cell-block copy of a 100k-cell
//! model the fresh solves took half of the ascent's time). When more than [`MAX_CUTS`] cuts
//! pile up, the least recently tight quarter is dropped and the model is built again.

use std::num::NonZeroU32;

use highs::{Col, HighsModelStatus, Model, RowProblem, Sense};

/// Cuts kept at most in the master LP.
pub const MAX_CUTS: usize = 400;

/// One cut: L(λ) ≤ `a` + `g`·λ, and the step at which it was last tight.
pub struct Cutting {
    a: f64,
    g: Vec<f64>,
    tight_at: usize,
}

/// The master LP and its cuts.
pub struct Master {
    m: usize,
    threads: Option<u32>,
    cuts: Vec<Cutting>,
    /// `None` until the first solve and after cuts are dropped: built from `cuts` then.
    model: Option<Model>,
    /// θ's column once built.
    theta: Option<Col>,
    lambda: Vec<Col>,
}

/// What a master solve gave.
pub struct Step {
    /// The maximiser λ (clamped to ≥ 0).
    pub lambda: Vec<f64>,
    /// θ: the model's value there, an upper estimate of L.
    pub model: f64,
}

impl Master {
    /// An empty master over `m` multipliers; HiGHS runs with `threads`.
    pub fn new(m: usize, threads: Option<u32>) -> Master {
        Master {
            m,
            threads,
            cuts: Vec::new(),
            model: None,
            theta: None,
            lambda: Vec::new(),
        }
    }

    /// Number of cuts held.
    pub fn len(&self) -> usize {
        self.cuts.len()
    }

    /// Whether no cut is held.
    pub fn is_empty(&self) -> bool {
        self.cuts.is_empty()
    }

    /// Adds the cut of an evaluation at `at`: L(λ) ≤ `bound` + `slack`·(λ − `at`).
    pub fn add(&mut self, bound: f64, slack: &[f64], at: &[f64], step: usize) {
        debug_assert_eq!(slack.len(), self.m);
        let a = bound - slack.iter().zip(at).map(|(g, x)| g * x).sum::<f64>();
        if self.cuts.len() >= MAX_CUTS {
            self.cuts.sort_by_key(|c| std::cmp::Reverse(c.tight_at));
            self.cuts.truncate(MAX_CUTS * 3 / 4);
            self.model = None;
        }
        if let (Some(model), Some(theta)) = (self.model.as_mut(), self.theta) {
            add_row(model, theta, &self.lambda, a, slack);
        }
        self.cuts.push(Cutting {
            a,
            g: slack.to_vec(),
            tight_at: step,
        });
    }

    /// Solves the master in the box of half-width `width` around `centre`; cuts tight at the
    /// optimum are marked with `step`. `None` when HiGHS fails.
    pub fn solve(&mut self, centre: &[f64], width: f64, step: usize) -> Option<Step> {
        let mut model = match self.model.take() {
            Some(m) => m,
            None => self.build(),
        };
        for (k, &c) in centre.iter().enumerate() {
            model.change_column_bounds(self.lambda[k], (c - width).max(0.0)..=c + width);
        }
        let solved = model.try_solve().ok()?;
        if solved.status() != HighsModelStatus::Optimal {
            return None;
        }
        let columns = solved.get_solution().columns().to_vec();
        self.model = Some(solved.into());
        let lambda: Vec<f64> = self
            .lambda
            .iter()
            .map(|c| columns[c.index()].max(0.0))
            .collect();
        let t = columns[self.theta?.index()];
        for cut in &mut self.cuts {
            let v = cut.a + cut.g.iter().zip(&lambda).map(|(x, y)| x * y).sum::<f64>();
            if v - t <= 1e-7 * t.abs().max(1.0) {
                cut.tight_at = step;
            }
        }
        Some(Step { lambda, model: t })
    }

    fn build(&mut self) -> Model {
        let mut model = RowProblem::default().optimise(Sense::Maximise);
        model.make_quiet();
        if let Some(t) = self.threads.and_then(NonZeroU32::new) {
            model.set_threads(t);
        }
        let theta = model.add_col::<f64, _>(1.0, .., std::iter::empty());
        self.theta = Some(theta);
        self.lambda = (0..self.m)
            .map(|_| model.add_col(0.0, 0.0..=0.0, std::iter::empty()))
            .collect();
        for cut in &self.cuts {
            add_row(&mut model, theta, &self.lambda, cut.a, &cut.g);
        }
        model
    }
}

/// θ − g·λ ≤ a.
fn add_row(model: &mut Model, theta: Col, lambda: &[Col], a: f64, g: &[f64]) {
    let factors = std::iter::once((theta, 1.0)).chain(
        g.iter()
            .zip(lambda)
            .filter(|(gk, _)| **gk != 0.0)
            .map(|(gk, &c)| (c, -gk)),
    );
    model.add_row(..=a, factors);
}
