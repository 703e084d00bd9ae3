//! The invented demo region generator (deterministic).
