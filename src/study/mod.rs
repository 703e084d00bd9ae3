//! Studies: the pipeline's model and solve stages run many times over — one solve per
//! scenario (the stress test), one per budget (the sweep) — and what the runs share (how often
//! each cell is chosen). They sit after `solve` and before `assess`/`export` in the pipeline.

pub mod frequency;
pub mod stress;
pub mod sweep;

pub use frequency::{selection_frequency, SelectionFrequency};
pub use stress::{single_scenario_problem, stress_test, StressMatrix, StressRow};
pub use sweep::{parse_budgets, sweep, sweep_of, Sweep, SweepBudget, SweepRun};
