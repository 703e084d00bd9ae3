//! The `[climate]` section of a plan: which derived climate-adaptation features to build.

use super::{Checker, Extra};
use serde::Deserialize;

/// What the climate section is validated against.
pub(crate) struct Context<'a> {
    /// Scenario names.
    pub scenarios: &'a [String],
    /// Years.
    pub years: &'a [i32],
    /// Species names.
    pub species: &'a [&'a str],
    /// Whether the plan has a `[temperature]` layer.
    pub has_temperature: bool,
}

/// `[climate]` as written.
#[derive(Deserialize)]
pub(crate) struct RawClimate {
    #[serde(flatten)]
    extra: Extra,
}

/// Validated climate settings.
#[derive(Debug, Clone, PartialEq)]
pub struct ClimatePlan {}

/// Validates `[climate]`, pushing every problem to `ck`.
pub(crate) fn validate(raw: &RawClimate, ck: &mut Checker, _ctx: &Context<'_>) -> Option<ClimatePlan> {
    ck.unknown("climate", &raw.extra, &[]);
    Some(ClimatePlan {})
}
