//! Live progress of an exact solve: elapsed time, the best network's objective, the proven
//! bound and the gap, as the solver reports them while it works (HiGHS callbacks in
//! [`super::ilp`]). The library only hands snapshots to a sink the caller supplies; the CLI
//! shows them.

use std::fmt;
use std::sync::Arc;

/// One snapshot of a running solve, in the objective's own sense.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolveProgress {
    /// Time since the solver started. Units: s.
    pub elapsed_s: f64,
    /// Objective of the best network found so far (not finite: none found yet).
    pub objective: f64,
    /// Best proven bound on the objective (not finite: no bound proven yet).
    pub bound: f64,
    /// Relative gap between the two (not finite: unknown).
    pub gap: f64,
}

impl SolveProgress {
    /// A plain line such as `12.3 s, best 104.200, bound 103.900, gap 0.29%`; never an
    /// infinite bound or gap: `no network yet` and `no bound yet` instead.
    pub fn describe(&self) -> String {
        let best = if self.objective.is_finite() {
            format!("best {:.3}", self.objective)
        } else {
            "no network yet".to_string()
        };
        let bound = if self.bound.is_finite() {
            format!("bound {:.3}", self.bound)
        } else {
            "no bound yet".to_string()
        };
        let mut s = format!("{:.1} s, {best}, {bound}", self.elapsed_s);
        if self.objective.is_finite() && self.bound.is_finite() && self.gap.is_finite() {
            s.push_str(&format!(", gap {}", gap_percent(self.gap)));
        }
        s
    }
}

/// A gap as a percentage for people (`0.29%`), or `unknown (no bound)` when it is not finite
/// (a heuristic, or a solve stopped before proving any bound).
pub fn gap_percent(gap: f64) -> String {
    if gap.is_finite() {
        format!("{:.2}%", 100.0 * gap)
    } else {
        "unknown (no bound)".to_string()
    }
}

/// Where snapshots go. Called from the solver's thread, at most a few times a second.
#[derive(Clone)]
pub struct ProgressSink(pub Arc<dyn Fn(&SolveProgress) + Send + Sync>);

impl ProgressSink {
    /// Wraps a closure.
    pub fn new(f: impl Fn(&SolveProgress) + Send + Sync + 'static) -> ProgressSink {
        ProgressSink(Arc::new(f))
    }

    /// Hands one snapshot to the sink.
    pub fn report(&self, p: &SolveProgress) {
        (self.0)(p)
    }
}

impl fmt::Debug for ProgressSink {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str("ProgressSink")
    }
}

impl PartialEq for ProgressSink {
    /// The same sink (the same closure), not an equal one.
    fn eq(&self, other: &Self) -> bool {
        Arc::ptr_eq(&self.0, &other.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lines_never_show_infinite_bounds() {
        // What HiGHS reports before any bound is proven: bound −inf, gap inf.
        let p = SolveProgress {
            elapsed_s: 2.04,
            objective: f64::INFINITY,
            bound: f64::NEG_INFINITY,
            gap: f64::INFINITY,
        };
        assert_eq!(p.describe(), "2.0 s, no network yet, no bound yet");
        let p = SolveProgress {
            objective: 104.2,
            ..p
        };
        assert_eq!(p.describe(), "2.0 s, best 104.200, no bound yet");
        // Hand computation: |104.2 − 103.9| / 104.2 = 0.2879 % → "0.29%".
        let p = SolveProgress {
            bound: 103.9,
            gap: (104.2f64 - 103.9) / 104.2,
            ..p
        };
        assert_eq!(
            p.describe(),
            "2.0 s, best 104.200, bound 103.900, gap 0.29%"
        );
        assert!(!p.describe().contains("inf"));
        assert_eq!(gap_percent(f64::NAN), "unknown (no bound)");
    }
}
