//! driftplan: plan networks of marine protected areas that keep protecting species as their
//! ranges shift poleward under several warming scenarios.
//!
//! The library is one pipeline; each stage is a module that takes the previous stage's value
//! and returns its own:
//!
//! `plan` → `grid` → `layers` → `climate`/`features` → `model` → `solve` → `assess` → `export`.
//!
//! Results are decision support built on projections with large uncertainty; siting decisions
//! rest with the planning authority, local law and consultation with those who use the sea.
#![deny(missing_docs)]

pub mod assess;
pub mod bench;
pub mod climate;
pub mod compare;
pub mod connectivity;
pub mod demo;
pub mod export;
pub mod features;
pub mod grid;
pub mod layers;
pub mod model;
pub mod pipeline;
pub mod plan;
pub mod report;
pub mod solve;
pub mod study;
