//! The `[connectivity]` section of a plan: ocean currents and each species' larval traits, from
//! which [`crate::connectivity`] derives a dispersal matrix per species and scenario; or a
//! matrix the user supplies. Every problem is reported with its dotted key.
//!
//! ```toml
//! [connectivity]
//! u = { path = "currents-{scenario}.csv", column = "u" }   # eastward current, m/s
//! v = { path = "currents-{scenario}.csv", column = "v" }   # northward current, m/s
//! particles_per_cell = 100
//! seed = 7
//! currents_year = 2030          # optional: the year a NetCDF file with a time axis is read for
//!                               # (default: the plan's first year)
//! step_hours = 3                # optional: largest RK4 step (default 6 h, shortened so a
//!                               # particle moves at most half a cell per step)
//! reachability_target = 0.3     # optional: a `reachability/<species>/<scenario>` feature
//! reachability_weight = 1       #   per species and scenario, with this target and weight
//!
//! [[connectivity.species]]
//! name = "cod"
//! larval_days = 30              # pelagic larval duration
//! diffusivity_m2_s = 10         # optional horizontal eddy diffusivity (default 0)
//! settle_from_day = 25          # optional settlement window (default: the last day only)
//! settle_to_day = 30
//!
//! [[connectivity.species]]
//! name = "kelp"
//! matrix = "kelp-links-{scenario}.csv"   # a supplied matrix (from,to,probability) instead
//! ```

use super::{Checker, Extra, LayerTemplate, Missing, RawLayer};
use serde::Deserialize;
use std::path::PathBuf;

/// `[connectivity]` as written.
#[derive(Deserialize)]
pub(crate) struct RawConnectivity {
    u: Option<RawLayer>,
    v: Option<RawLayer>,
    particles_per_cell: Option<i64>,
    seed: Option<i64>,
    step_hours: Option<f64>,
    currents_year: Option<i64>,
    reachability_target: Option<f64>,
    reachability_weight: Option<f64>,
    #[serde(default)]
    species: Vec<RawSpeciesLarvae>,
    #[serde(flatten)]
    extra: Extra,
}

#[derive(Deserialize)]
struct RawSpeciesLarvae {
    name: Option<String>,
    larval_days: Option<f64>,
    diffusivity_m2_s: Option<f64>,
    settle_from_day: Option<f64>,
    settle_to_day: Option<f64>,
    matrix: Option<String>,
    #[serde(flatten)]
    extra: Extra,
}

/// How a species' dispersal matrix is made.
#[derive(Debug, Clone, PartialEq)]
pub enum DispersalSource {
    /// Particles advected by the plan's currents.
    Particles(Larvae),
    /// Key `matrix`: a CSV `from,to,probability` of cell ids (path may use `{scenario}`).
    Supplied(String),
}

/// A species' larval traits (the particle-tracking inputs).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Larvae {
    /// Key `larval_days`: pelagic larval duration. Units: days.
    pub larval_days: f64,
    /// Key `diffusivity_m2_s`: horizontal eddy diffusivity (default 0). Units: m²/s.
    pub diffusivity_m2_s: f64,
    /// Keys `settle_from_day`, `settle_to_day`: the days after release during which larvae
    /// can settle (default: the last day, `larval_days`, only). Units: days.
    pub settle_window_days: (f64, f64),
}

/// One species' dispersal settings.
#[derive(Debug, Clone, PartialEq)]
pub struct SpeciesDispersal {
    /// The species (a `[[species]]` name).
    pub name: String,
    /// Particles or a supplied matrix.
    pub source: DispersalSource,
}

/// Validated `[connectivity]` settings.
#[derive(Debug, Clone, PartialEq)]
pub struct ConnectivityPlan {
    /// Eastward and northward surface current (m/s), per scenario when the path uses
    /// `{scenario}`, else shared; `None` when every species has a supplied matrix.
    pub currents: Option<(LayerTemplate, LayerTemplate)>,
    /// Key `particles_per_cell` (default 100).
    pub particles_per_cell: u32,
    /// Key `seed` (default 1).
    pub seed: u64,
    /// Key `step_hours`: the largest time step (default 6). Units: hours.
    pub max_step_hours: f64,
    /// Key `currents_year`: the year a NetCDF current file with a time axis is read for (the
    /// mean of its steps in that year, or the layer's `years_window` around it); `None`: the
    /// plan's first year. CSV and raster currents have no time axis and ignore it.
    pub currents_year: Option<i32>,
    /// Keys `reachability_target` / `reachability_weight`: build reachability features.
    pub reachability: Option<super::climate::Goal>,
    /// Per species, in the order listed.
    pub species: Vec<SpeciesDispersal>,
}

fn positive(ck: &mut Checker, key: &str, v: f64, example: &str) -> f64 {
    if !(v.is_finite() && v > 0.0) {
        ck.push(
            key,
            format!("must be a positive number, e.g. `{example}`; got {v}"),
        );
    }
    v
}

/// Validates `[connectivity]`; `species` are the plan's species names, `scenarios` its
/// scenario names (to check every file a `{scenario}` template names).
pub(crate) fn validate(
    raw: &RawConnectivity,
    ck: &mut Checker,
    species: &[&str],
    scenarios: &[String],
) -> ConnectivityPlan {
    let key = "connectivity";
    ck.unknown(key, &raw.extra, &super::reference::keys_of("connectivity"));
    let particles_per_cell = match raw.particles_per_cell {
        None => 100,
        Some(n) if (1..=100_000).contains(&n) => n as u32,
        Some(n) => {
            ck.push(
                "connectivity.particles_per_cell",
                format!("must be a whole number from 1 to 100000, e.g. `particles_per_cell = 100`; got {n}"),
            );
            1
        }
    };
    let seed = match raw.seed {
        None => 1,
        Some(s) if s >= 0 => s as u64,
        Some(s) => {
            ck.push(
                "connectivity.seed",
                format!("must be a whole number ≥ 0, e.g. `seed = 7`; got {s}"),
            );
            1
        }
    };
    let max_step_hours = raw
        .step_hours
        .map(|h| positive(ck, "connectivity.step_hours", h, "step_hours = 3"))
        .unwrap_or(6.0);
    let currents_year = match raw.currents_year {
        None => None,
        Some(y) if (1..=9999).contains(&y) => Some(y as i32),
        Some(y) => {
            ck.push(
                "connectivity.currents_year",
                format!("must be a year from 1 to 9999, e.g. `currents_year = 2030`; got {y}"),
            );
            None
        }
    };
    let reachability = if raw.reachability_target.is_some() || raw.reachability_weight.is_some() {
        let target = raw
            .reachability_target
            .map(|t| ck.share("connectivity.reachability_target", t, true));
        let weight = raw.reachability_weight.unwrap_or(1.0);
        if !(weight.is_finite() && weight >= 0.0) {
            ck.push(
                "connectivity.reachability_weight",
                format!("must be a non-negative number, got {weight}"),
            );
        }
        Some(super::climate::Goal { target, weight })
    } else {
        None
    };

    if raw.species.is_empty() {
        ck.push(
            "connectivity.species",
            "needs at least one `[[connectivity.species]]` with `name` and `larval_days` (or `matrix`)",
        );
    }
    let mut out: Vec<SpeciesDispersal> = Vec::new();
    for (i, s) in raw.species.iter().enumerate() {
        let k = |f: &str| format!("connectivity.species[{i}].{f}");
        ck.unknown(
            &format!("connectivity.species[{i}]"),
            &s.extra,
            &super::reference::keys_of("connectivity.species[]"),
        );
        let name = match &s.name {
            Some(n) if species.contains(&n.as_str()) => n.clone(),
            Some(n) => {
                ck.push(
                    k("name"),
                    format!(
                        "no species `{n}` in the plan; expected one of: {}",
                        species.join(", ")
                    ),
                );
                n.clone()
            }
            None => {
                ck.push(
                    k("name"),
                    "missing: which `[[species]]` this is, e.g. `name = \"cod\"`",
                );
                String::new()
            }
        };
        if out.iter().any(|o| o.name == name) {
            ck.push(k("name"), format!("species `{name}` is listed twice"));
        }
        let source = if let Some(m) = &s.matrix {
            for (f, given) in [
                ("larval_days", s.larval_days.is_some()),
                ("diffusivity_m2_s", s.diffusivity_m2_s.is_some()),
                ("settle_from_day", s.settle_from_day.is_some()),
                ("settle_to_day", s.settle_to_day.is_some()),
            ] {
                if given {
                    ck.push(
                        k(f),
                        "only used for particle tracking; a supplied `matrix` replaces it",
                    );
                }
            }
            if !m.to_ascii_lowercase().ends_with(".csv") {
                ck.push(
                    k("matrix"),
                    format!("`{m}`: expected a CSV file with columns from,to,probability"),
                );
            }
            if m.contains("{species}") || m.contains("{year}") {
                ck.push(
                    k("matrix"),
                    "may use `{scenario}` but not `{species}` or `{year}` (one matrix per species and scenario)",
                );
            }
            let path = ck.resolve(m).to_string_lossy().into_owned();
            let sc: Vec<&str> = if path.contains("{scenario}") {
                scenarios.iter().map(String::as_str).collect()
            } else {
                vec![""]
            };
            for s in sc {
                let p = PathBuf::from(path.replace("{scenario}", s));
                if !p.is_file() {
                    ck.push(k("matrix"), super::not_a_file(&p));
                }
            }
            DispersalSource::Supplied(path)
        } else {
            let larval_days = match s.larval_days {
                Some(d) => positive(ck, &k("larval_days"), d, "larval_days = 30"),
                None => {
                    ck.push(
                        k("larval_days"),
                        "missing: the pelagic larval duration in days, e.g. `larval_days = 30` (or give `matrix`)",
                    );
                    1.0
                }
            };
            let diffusivity_m2_s = s.diffusivity_m2_s.unwrap_or(0.0);
            if !(diffusivity_m2_s.is_finite() && diffusivity_m2_s >= 0.0) {
                ck.push(
                    k("diffusivity_m2_s"),
                    format!("must be a diffusivity ≥ 0 in m²/s, e.g. `diffusivity_m2_s = 10`; got {diffusivity_m2_s}"),
                );
            }
            let from = s.settle_from_day.unwrap_or(larval_days);
            let to = s.settle_to_day.unwrap_or(larval_days);
            if !(from.is_finite()
                && to.is_finite()
                && 0.0 < from
                && from <= to
                && to <= larval_days)
            {
                ck.push(
                    k("settle_from_day"),
                    format!("the settlement window must satisfy 0 < settle_from_day ≤ settle_to_day ≤ larval_days ({larval_days}); got {from} to {to}"),
                );
            }
            DispersalSource::Particles(Larvae {
                larval_days,
                diffusivity_m2_s,
                settle_window_days: (from, to),
            })
        };
        out.push(SpeciesDispersal { name, source });
    }

    let needs_currents = out
        .iter()
        .any(|s| matches!(s.source, DispersalSource::Particles(_)));
    let current = |ck: &mut Checker, which: &str, raw: &Option<RawLayer>| {
        let key = format!("connectivity.{which}");
        let Some(r) = raw else {
            if needs_currents {
                ck.push(
                    &key,
                    format!("missing: particle tracking needs the {} current component in m/s, e.g. `{which} = {{ path = \"currents-{{scenario}}.csv\", column = \"{which}\" }}`", if which == "u" { "eastward" } else { "northward" }),
                );
            }
            return None;
        };
        let t = ck.layer(&key, r, Missing::Error)?;
        let f = t.field.as_deref().unwrap_or("");
        for bad in ["{species}", "{year}"] {
            if t.path.contains(bad) || f.contains(bad) {
                ck.push(
                    format!("{key}.path"),
                    format!(
                        "may use `{{scenario}}` but not `{bad}` (one current field per scenario)"
                    ),
                );
            }
        }
        ck.template_files(&key, &t, &[], scenarios, &[]);
        Some(t)
    };
    let u = current(ck, "u", &raw.u);
    let v = current(ck, "v", &raw.v);
    ConnectivityPlan {
        currents: u.zip(v),
        particles_per_cell,
        seed,
        max_step_hours,
        currents_year,
        reachability,
        species: out,
    }
}
