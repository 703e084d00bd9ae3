//! One time limit for a whole command. `[solver] time_limit_s` (or `--time-limit`) bounds all
//! the solves a command makes together, not each solve: a [`TimeBudget`] starts when solving
//! starts and hands each stage a share of what is left.
//!
//! # How the limit is shared
//! * `solve`: the main solve may use half of the limit when a stress test follows (all of it
//!   with `--no-stress` or one scenario); the stress test gets whatever the main solve left.
//! * least-regret: the main solve's share is split again, one equal part for each scenario's
//!   best benefit Bₛ* and the rest for the robust solve ([`super::with_scenario_best`]).
//! * `sweep`: the budget solves may use their share of the limit, budgets ÷ (budgets +
//!   scenarios), the stress test the rest.
//! * Solves that run side by side (stress test, sweep) share a stage in rounds: with n solves
//!   on w workers each solve gets the stage's time ÷ ⌈n / w⌉ ([`parallel_rounds`]).
//!
//! Every solve of a study gets at least [`MIN_SOLVE_S`], so a study can overrun its limit by a
//! few seconds when the limit is spent. Reading the inputs and deriving the features is not
//! counted; building the model is: the clock starts before the integer program is built, and
//! HiGHS gets what is left of a solve's limit after its model is built (at least
//! [`MIN_HIGHS_S`]). What cannot be interrupted: building the integer program (one pass over the
//! features and edges, seconds at 100 000 cells) and HiGHS's presolve; a solve whose limit is
//! spent before the build returns its warm start (the greedy network) with no bound.

use std::time::Instant;

use super::SolveOptions;

/// The least time any one solve is given, so a late solve still returns a network. Units: s.
pub const MIN_SOLVE_S: f64 = 1.0;

/// The least time HiGHS itself is given once its model is built: enough to load the warm start
/// as its incumbent. A solve whose own limit is spent before this returns the warm start
/// (`solve::ilp`). Units: s.
pub const MIN_HIGHS_S: f64 = 0.05;

/// The time left for a command's solves.
#[derive(Debug, Clone, Copy)]
pub struct TimeBudget {
    total_s: f64,
    started: Instant,
}

impl TimeBudget {
    /// Starts the clock on `total_s` seconds. Units: s.
    pub fn start(total_s: f64) -> TimeBudget {
        TimeBudget {
            total_s,
            started: Instant::now(),
        }
    }

    /// The whole limit. Units: s.
    pub fn total_s(&self) -> f64 {
        self.total_s
    }

    /// Seconds left (never below 0).
    pub fn remaining_s(&self) -> f64 {
        (self.total_s - self.started.elapsed().as_secs_f64()).max(0.0)
    }

    /// `base` with a time limit of `share` (0–1) of the time left, split over `rounds` solves
    /// one after another (see [`share_limit`]).
    pub fn options(&self, base: &SolveOptions, share: f64, rounds: usize) -> SolveOptions {
        SolveOptions {
            time_limit_s: Some(share_limit(self.remaining_s(), share, rounds)),
            ..base.clone()
        }
    }
}

/// Each of `rounds` consecutive solves' limit in `share` of `seconds`, at least
/// [`MIN_SOLVE_S`]. Units: s.
pub fn share_limit(seconds: f64, share: f64, rounds: usize) -> f64 {
    (seconds * share.clamp(0.0, 1.0) / rounds.max(1) as f64).max(MIN_SOLVE_S)
}

/// Parallel workers the studies' solves run on (rayon's pool, one solver thread each).
pub fn workers() -> usize {
    rayon::current_num_threads()
}

/// How many rounds `n` solves take on `workers` parallel workers: ⌈n / workers⌉.
pub fn parallel_rounds(n: usize, workers: usize) -> usize {
    n.div_ceil(workers.max(1))
}

/// The share of the limit the main solve of `solve` may use: ½ when `stress_solves` follow,
/// else all of it (module doc).
pub fn main_solve_share(stress_solves: usize) -> f64 {
    if stress_solves > 0 {
        0.5
    } else {
        1.0
    }
}

/// The share of the limit the budget solves of `sweep` may use: budgets ÷ (budgets + the
/// stress test's solves) (module doc).
pub fn sweep_share(budgets: usize, stress_solves: usize) -> f64 {
    budgets as f64 / (budgets + stress_solves).max(1) as f64
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shares_follow_the_documented_rule() {
        // Hand computation: 300 s, half for the main solve → 150 s in one round.
        assert_eq!(share_limit(300.0, main_solve_share(3), 1), 150.0);
        assert_eq!(main_solve_share(0), 1.0);
        // 3 stress solves on 2 workers take ⌈3/2⌉ = 2 rounds: 150 s → 75 s each.
        assert_eq!(parallel_rounds(3, 2), 2);
        assert_eq!(share_limit(150.0, 1.0, parallel_rounds(3, 2)), 75.0);
        assert_eq!(parallel_rounds(0, 2), 0);
        // 8 budgets and 3 stress solves: the budgets get 8/11 of the limit.
        assert!((sweep_share(8, 3) - 8.0 / 11.0).abs() < 1e-15);
        // A spent limit still leaves each solve MIN_SOLVE_S.
        assert_eq!(share_limit(0.0, 0.5, 4), MIN_SOLVE_S);
    }
}
