//! Wires the stages together: plan → grid → layers → features → model → solve → assess.
//! The CLI calls these; each returns a value and prints nothing (progress goes through a
//! callback the caller supplies).

use crate::assess::{assess, Assessment};
use crate::features::edges::meridian_distance_km;
use crate::features::habitat::{habitat_feature, HabitatLayer};
use crate::features::FeatureTable;
use crate::grid::{build_grid, Grid, GridError};
use crate::layers::{read_multipolygon, sample, Layer, LayerError, SamplingReport, SourceCache};
use crate::model::{
    Budget, CellStatus, EdgePenalty, MinReserve, ModelFeature, Problem, Scenario, Spacing,
};
use crate::plan::{CostPlan, Plan};
use crate::solve::{Solution, SolveError, SolveOptions};
use rayon::prelude::*;

/// Errors of a run, by stage.
#[derive(Debug, thiserror::Error)]
pub enum RunError {
    /// The grid could not be built.
    #[error(transparent)]
    Grid(#[from] GridError),
    /// An input layer could not be read.
    #[error(transparent)]
    Layer(#[from] LayerError),
    /// Several input layers could not be read.
    #[error("{} input problems:\n  - {}", .0.len(), .0.iter().map(|e| e.to_string()).collect::<Vec<_>>().join("\n  - "))]
    Layers(Vec<LayerError>),
    /// Layers the plan names could not be read: the layer problems, and the plan that names
    /// them (a wrong column, species name or path in the plan shows as a layer problem).
    #[error("{}{}\n  (layers named by {})", if .errors.len() == 1 { String::new() } else { format!("{} input problems:\n  - ", .errors.len()) }, .errors.iter().map(|e| e.to_string()).collect::<Vec<_>>().join("\n  - "), .plan.display())]
    PlanLayers {
        /// The plan file.
        plan: std::path::PathBuf,
        /// The layer problems.
        errors: Vec<LayerError>,
    },
    /// Most of the grid lies outside the layers' data: more likely a wrong region (a bad
    /// vertex, a hole outside its exterior) than bad layers, so the region file is named first.
    #[error("{}: the region spans lon {}, lat {}, and most of its grid lies outside the input layers' data; check the region first — the layer problems may come from it:\n  - {}", .region.display(), .lon, .lat, .errors.iter().map(|e| e.to_string()).collect::<Vec<_>>().join("\n  - "))]
    RegionBeyondData {
        /// The plan's region file.
        region: std::path::PathBuf,
        /// Longitude range of the grid's cell centres, `min to max`.
        lon: String,
        /// Latitude range of the grid's cell centres.
        lat: String,
        /// The layer problems.
        errors: Vec<LayerError>,
    },
    /// Some cells are not covered by layers: the layer problems, with a reminder that the
    /// grid's sea comes from the region and land files, which may be what is wrong.
    #[error("{}\n  (the grid's sea is {} minus {}: if the uncovered cells are land or lie beyond the data, check those files)", .errors.iter().map(|e| e.to_string()).collect::<Vec<_>>().join("\n  - "), .region.display(), .land.as_ref().map(|l| l.display().to_string()).unwrap_or_else(|| "no land file".into()))]
    SeaUncovered {
        /// The plan's region file.
        region: std::path::PathBuf,
        /// The plan's land file, if any.
        land: Option<std::path::PathBuf>,
        /// The layer problems.
        errors: Vec<LayerError>,
    },
    /// An inputs cache cannot be used for this plan.
    #[error("{}: {message}", .path.display())]
    Cache {
        /// The cache file.
        path: std::path::PathBuf,
        /// What is wrong and what to do.
        message: String,
    },
    /// Cells that are both required and excluded.
    #[error("{count} cells are both required (by {required}) and excluded (by {excluded}), e.g. cell {example} at lon/lat {lon:.4}, {lat:.4}; fix the polygons or the `min_share` values")]
    Conflict {
        /// How many cells.
        count: usize,
        /// Required-areas file.
        required: String,
        /// Excluded-areas file.
        excluded: String,
        /// First such cell.
        example: u32,
        /// Its longitude.
        lon: f64,
        /// Its latitude.
        lat: f64,
    },
    /// Species with no habitat anywhere in the region (every scenario and year) that the plan
    /// does not allow to be absent; one message per species, naming its key and layer.
    #[error("{}", .0.join("\n"))]
    SpeciesNowhere(Vec<String>),
    /// Derived climate features could not be built.
    #[error(transparent)]
    Climate(#[from] crate::climate::ClimateError),
    /// The optimiser failed or the targets cannot be reached.
    #[error(transparent)]
    Solve(#[from] SolveError),
    /// The required cells alone break a budget limit of the plan.
    #[error("{}: {}", .file.display(), .problems.join("; "))]
    RequiredOverBudget {
        /// The plan file.
        file: std::path::PathBuf,
        /// One sentence per broken limit, naming its key.
        problems: Vec<String>,
    },
}

/// Everything the optimiser and the outputs need, derived from a plan.
#[derive(Debug, Clone, serde::Serialize, serde::Deserialize)]
pub struct Inputs {
    /// The planning grid.
    pub grid: Grid,
    /// Per-cell layers worth showing in `cells.geojson` (cost, status, temperature, ...).
    pub layers: Vec<Layer>,
    /// Cost of each cell.
    pub cost: Vec<f64>,
    /// Free / required / excluded per cell.
    pub status: Vec<CellStatus>,
    /// Per plan zone: cells that must take it (empty without zones).
    pub zone_required: Vec<Vec<bool>>,
    /// Per plan zone: cells that may not take it (empty without zones).
    pub zone_excluded: Vec<Vec<bool>>,
    /// All features with their targets.
    pub features: FeatureTable,
    /// Range-edge shifts per species and scenario (empty without a `[climate]` section).
    pub edge_shifts: Vec<crate::features::derive::EdgeShift>,
    /// How each point-lattice layer was sampled (bilinear / coastal / nearest / missing cells).
    pub sampling: Vec<SamplingReport>,
    /// Per scenario: cells whose temperature gradient was below the velocity floor.
    pub velocity_floored: Vec<(String, usize)>,
    /// Dispersal matrices per species and scenario (empty without `[connectivity]`).
    pub connectivity: Vec<crate::connectivity::SpeciesLinks>,
}

/// File name of the inputs cache in a `driftplan features` output folder.
pub const INPUTS_CACHE: &str = "inputs.bin";

/// What the cache says it holds, checked before its inputs are used.
#[derive(serde::Serialize, serde::Deserialize)]
struct CacheHeader {
    format: String,
    version: u32,
    driftplan: String,
    plan_hash: String,
}

const CACHE_FORMAT: &str = "driftplan-inputs";
const CACHE_VERSION: u32 = 1;

/// The inputs cache: a header (format, version, driftplan version, the plan file's SHA-256)
/// and the prepared [`Inputs`] (grid, layers, features), bincode-encoded so every number comes
/// back bit for bit (NaN included). Study shards read it instead of the plan's files, so 100
/// shards do not sample the same rasters 100 times.
pub fn inputs_cache_bytes(plan: &Plan, inputs: &Inputs) -> Result<Vec<u8>, RunError> {
    let header = CacheHeader {
        format: CACHE_FORMAT.into(),
        version: CACHE_VERSION,
        driftplan: env!("CARGO_PKG_VERSION").into(),
        plan_hash: plan.hash.clone(),
    };
    bincode::serialize(&(header, inputs)).map_err(|e| RunError::Cache {
        path: INPUTS_CACHE.into(),
        message: format!("cannot encode the inputs: {e}"),
    })
}

/// Reads an inputs cache written by `driftplan features` for `plan`: refused, naming the file,
/// when it is not a cache, is of another format version or driftplan version, or was made
/// from another plan (the plan file's SHA-256 differs: rebuild it with `driftplan features`).
pub fn load_inputs_cache(path: &std::path::Path, plan: &Plan) -> Result<Inputs, RunError> {
    let err = |message: String| RunError::Cache {
        path: path.to_path_buf(),
        message,
    };
    let bytes = std::fs::read(path).map_err(|e| err(format!("cannot read it: {e}")))?;
    let not_cache = || {
        err(format!(
            "not an inputs cache (expected the {INPUTS_CACHE} that `driftplan features PLAN --out DIR` writes)"
        ))
    };
    let header: CacheHeader = bincode::deserialize(&bytes).map_err(|_| not_cache())?;
    if header.format != CACHE_FORMAT {
        return Err(not_cache());
    }
    if header.version != CACHE_VERSION || header.driftplan != env!("CARGO_PKG_VERSION") {
        return Err(err(format!(
            "written by driftplan {} (cache format {}), this is {} (format {CACHE_VERSION}); rebuild it with `driftplan features`",
            header.driftplan,
            header.version,
            env!("CARGO_PKG_VERSION")
        )));
    }
    if header.plan_hash != plan.hash {
        return Err(err(format!(
            "made from another version of the plan (SHA-256 {}…, {} is now {}…); rebuild it with `driftplan features {} --out DIR`",
            &header.plan_hash[..header.plan_hash.len().min(12)],
            plan.file.display(),
            &plan.hash[..plan.hash.len().min(12)],
            plan.file.display()
        )));
    }
    let (_, inputs): (CacheHeader, Inputs) = bincode::deserialize(&bytes).map_err(|e| {
        err(format!(
            "damaged: {e}; rebuild it with `driftplan features`"
        ))
    })?;
    Ok(inputs)
}

/// Builds the grid of a plan.
pub fn grid(plan: &Plan) -> Result<Grid, RunError> {
    let region = read_multipolygon(&plan.region, plan.repair_polygons)?;
    let land = plan
        .land
        .as_deref()
        .map(|l| read_multipolygon(l, plan.repair_polygons))
        .transpose()?;
    Ok(build_grid(&plan.grid, &region, land.as_ref())?)
}

/// Builds grid, layers and features; `progress` hears one line per stage.
pub fn prepare(plan: &Plan, progress: &dyn Fn(&str)) -> Result<Inputs, RunError> {
    progress("building the equal-area grid");
    let grid = grid(plan)?;
    progress(&format!(
        "grid: {} cells, {:.0} km² of sea",
        grid.len(),
        grid.sea_area_km2
    ));
    prepare_on(plan, grid, progress)
}

/// Layers and features of a plan on a grid already built.
pub fn prepare_on(plan: &Plan, grid: Grid, progress: &dyn Fn(&str)) -> Result<Inputs, RunError> {
    let cache = SourceCache::default();
    progress("sampling habitat layers");
    let mut jobs = Vec::new();
    for (si, sp) in plan.species.iter().enumerate() {
        for (ci, scenario) in plan.scenarios.iter().enumerate() {
            for &year in &plan.years {
                jobs.push((si, ci, year, sp.habitat.resolve(&sp.name, scenario, year)));
            }
        }
    }
    // Each layer becomes its sparse feature as soon as it is sampled, so only the layers in
    // flight (one per thread) are ever dense: at 1M cells × 480 layers the dense layers alone
    // would be 3.8 GB. Collected in job order, so the table does not depend on thread count.
    let sampled: Vec<Result<crate::features::Feature, LayerError>> = jobs
        .par_iter()
        .map(|(si, ci, year, spec)| {
            let sp = &plan.species[*si];
            let name = format!("habitat/{}/{}/{}", sp.name, plan.scenarios[*ci], year);
            let layer = sample(&name, spec, &grid, &cache)?;
            Ok(habitat_feature(
                &grid,
                &HabitatLayer {
                    species: &sp.name,
                    scenario: *ci,
                    scenario_name: &plan.scenarios[*ci],
                    year: *year,
                    share: &layer.values,
                    target_share: plan.target_share(sp),
                    weight: sp.weight,
                },
            ))
        })
        .collect();
    let mut errors = Vec::new();
    let mut features = FeatureTable {
        scenarios: plan.scenarios.clone(),
        years: plan.years.clone(),
        features: Vec::with_capacity(sampled.len()),
    };
    for feature in sampled {
        match feature {
            Ok(f) => features.features.push(f),
            Err(e) => errors.push(e),
        }
    }

    progress("sampling cost, protected areas and exclusions");
    let mut layers = Vec::new();
    let cost = match &plan.cost {
        CostPlan::Area => grid
            .cells
            .iter()
            .map(|c| c.sea_area_km2)
            .collect::<Vec<_>>(),
        CostPlan::Layer { layer, per_km2 } => match sample("cost", &layer.fixed(), &grid, &cache) {
            Ok(l) => {
                let cost = l
                    .values
                    .iter()
                    .zip(&grid.cells)
                    .map(|(v, c)| if *per_km2 { v * c.sea_area_km2 } else { *v })
                    .collect();
                layers.push(Layer {
                    name: "cost_input".into(),
                    values: l.values,
                });
                cost
            }
            Err(e) => {
                errors.push(e);
                vec![0.0; grid.len()]
            }
        },
    };
    let mut share_of = |rule: &Option<crate::plan::AreaRule>, name: &str| -> Vec<bool> {
        match rule {
            None => vec![false; grid.len()],
            Some(r) => match sample(name, &r.layer.fixed(), &grid, &cache) {
                Ok(l) => {
                    let flags = l.values.iter().map(|v| *v >= r.min_share).collect();
                    layers.push(Layer {
                        name: format!("{name}_share"),
                        values: l.values,
                    });
                    flags
                }
                Err(e) => {
                    errors.push(e);
                    vec![false; grid.len()]
                }
            },
        }
    };
    let mut required = share_of(&plan.required, "required");
    let excluded = share_of(&plan.excluded, "excluded");
    // Per zone: cells that must take it (mostly inside its `required` polygons) and cells that
    // may not (touching its `excluded` ones), with the same shares as the plan's own rules.
    let mut zone_required = Vec::new();
    let mut zone_excluded = Vec::new();
    for z in &plan.zones {
        let rule = |t: &Option<crate::plan::LayerTemplate>, min_share: f64| {
            t.as_ref().map(|layer| crate::plan::AreaRule {
                layer: layer.clone(),
                min_share,
            })
        };
        let r = share_of(
            &rule(&z.required, 0.5),
            &format!("zone_{}_required", z.name),
        );
        let x = share_of(
            &rule(&z.excluded, 0.01),
            &format!("zone_{}_excluded", z.name),
        );
        for (all, own) in required.iter_mut().zip(&r) {
            *all |= *own;
        }
        zone_required.push(r);
        zone_excluded.push(x);
    }

    // temperature[scenario][year][cell], °C.
    let mut temperature: Vec<Vec<Vec<f64>>> = Vec::new();
    if let Some(t) = &plan.temperature {
        progress("sampling sea temperature");
        for scenario in &plan.scenarios {
            let mut series = Vec::new();
            for &year in &plan.years {
                let name = format!("sst_c/{scenario}/{year}");
                match sample(&name, &t.resolve("", scenario, year), &grid, &cache) {
                    Ok(l) => {
                        series.push(l.values.clone());
                        layers.push(l);
                    }
                    Err(e) => errors.push(e),
                }
            }
            temperature.push(series);
        }
    }
    // One broken file read for many layers (a CSV with a column per species) is one problem.
    let mut seen = std::collections::BTreeSet::new();
    errors.retain(|e| seen.insert(e.to_string()));
    let mostly_uncovered = errors
        .iter()
        .any(|e| matches!(e, LayerError::Uncovered { count, total, .. } if 2 * count > *total));
    if mostly_uncovered {
        let (mut lo, mut hi) = ([f64::INFINITY; 2], [f64::NEG_INFINITY; 2]);
        for c in &grid.cells {
            for k in 0..2 {
                lo[k] = lo[k].min(c.lonlat[k]);
                hi[k] = hi[k].max(c.lonlat[k]);
            }
        }
        return Err(RunError::RegionBeyondData {
            region: plan.region.clone(),
            lon: format!("{:.3} to {:.3}", lo[0], hi[0]),
            lat: format!("{:.3} to {:.3}", lo[1], hi[1]),
            errors,
        });
    }
    if errors
        .iter()
        .any(|e| matches!(e, LayerError::Uncovered { .. }))
    {
        return Err(RunError::SeaUncovered {
            region: plan.region.clone(),
            land: plan.land.clone(),
            errors,
        });
    }
    if !errors.is_empty() {
        return Err(RunError::PlanLayers {
            plan: plan.file.clone(),
            errors,
        });
    }

    let refused = crate::features::absent::refused_species(&plan.species, &features);
    if !refused.is_empty() {
        return Err(RunError::SpeciesNowhere(refused));
    }

    let both: Vec<u32> = (0..grid.len())
        .filter(|&i| required[i] && excluded[i])
        .map(|i| i as u32)
        .collect();
    if let Some(&example) = both.first() {
        let ll = grid.cells[example as usize].lonlat;
        return Err(RunError::Conflict {
            count: both.len(),
            required: plan
                .required
                .as_ref()
                .map(|r| r.layer.path.clone())
                .unwrap_or_default(),
            excluded: plan
                .excluded
                .as_ref()
                .map(|r| r.layer.path.clone())
                .unwrap_or_default(),
            example,
            lon: ll[0],
            lat: ll[1],
        });
    }
    let status = (0..grid.len())
        .map(|i| {
            if required[i] {
                CellStatus::Required
            } else if excluded[i] {
                CellStatus::Excluded
            } else {
                CellStatus::Free
            }
        })
        .collect();
    layers.insert(
        0,
        Layer {
            name: "cost".into(),
            values: cost.clone(),
        },
    );
    let mut edge_shifts = Vec::new();
    let mut velocity_floored = Vec::new();
    if let Some(climate) = &plan.climate {
        progress("deriving climate features (velocity, trajectories, edges, refugia, ...)");
        let derived = crate::features::derive::derive_climate_features(
            climate,
            &grid,
            &plan.scenarios,
            &plan.years,
            &temperature,
            &features,
            &cache,
        )?;
        features.features.extend(derived.features);
        layers.extend(derived.layers);
        edge_shifts = derived.edge_shifts;
        velocity_floored = derived.velocity_floored;
    }
    let mut connectivity = Vec::new();
    if let Some(cp) = &plan.connectivity {
        progress("tracking larvae in the currents (connectivity)");
        connectivity = dispersal(plan, cp, &grid, &cache)?;
        if let Some(goal) = &cp.reachability {
            features.features.extend(reachability_features(
                plan,
                &grid,
                &features,
                &connectivity,
                goal,
            ));
        }
    }
    progress(&format!("features: {}", features.features.len()));
    Ok(Inputs {
        connectivity,
        grid,
        layers,
        cost,
        status,
        zone_required,
        zone_excluded,
        features,
        edge_shifts,
        sampling: cache.sampling_reports(),
        velocity_floored,
    })
}

/// The dispersal matrix of every `[connectivity]` species in every scenario: particles in the
/// scenario's currents (sampled once per distinct file and column), or the supplied matrix.
pub fn dispersal(
    plan: &Plan,
    cp: &crate::plan::connectivity::ConnectivityPlan,
    grid: &Grid,
    cache: &SourceCache,
) -> Result<Vec<crate::connectivity::SpeciesLinks>, RunError> {
    use crate::connectivity::{disperse_species, CurrentField, Origin, SpeciesLinks};
    use crate::plan::connectivity::DispersalSource;
    // currents[scenario] = (u, v), m/s per cell.
    let mut currents: Vec<(Vec<f64>, Vec<f64>)> = Vec::new();
    if let Some((u, v)) = &cp.currents {
        for (k, sc) in plan.scenarios.iter().enumerate() {
            if k > 0 && !u.varies_by_scenario_or_year() && !v.varies_by_scenario_or_year() {
                currents.push(currents[0].clone());
                continue;
            }
            // A NetCDF file with a time axis is read for one year (plan::connectivity).
            let year = cp
                .currents_year
                .or(plan.years.first().copied())
                .unwrap_or(0);
            let read = |t: &crate::plan::LayerTemplate, c: &str| {
                sample(
                    &format!("current_{c}/{sc}"),
                    &t.resolve("", sc, year),
                    grid,
                    cache,
                )
            };
            currents.push((read(u, "u")?.values, read(v, "v")?.values));
        }
    }
    // Every tracked species per scenario at once, so species with equal traits share one
    // tracking; a scenario with scenario 0's currents reuses its matrices.
    let larvae: Vec<&crate::plan::connectivity::Larvae> = cp
        .species
        .iter()
        .filter_map(|sd| match &sd.source {
            DispersalSource::Particles(l) => Some(l),
            DispersalSource::Supplied(_) => None,
        })
        .collect();
    let mut tracked: Vec<Vec<Option<(crate::connectivity::Dispersal, Origin)>>> = Vec::new();
    if !larvae.is_empty() {
        let larvae: Vec<_> = larvae.into_iter().copied().collect();
        for k in 0..plan.scenarios.len() {
            if k > 0 && currents[k] == currents[0] {
                tracked.push(tracked[0].clone());
                continue;
            }
            let (u, v) = &currents[k];
            tracked.push(
                disperse_species(
                    CurrentField::new(grid, u, v),
                    &larvae,
                    cp.particles_per_cell,
                    cp.seed,
                    cp.max_step_hours,
                )
                .into_iter()
                .map(Some)
                .collect(),
            );
        }
    }
    let mut out = Vec::new();
    let mut nth_tracked = 0;
    for sd in &cp.species {
        for (k, sc) in plan.scenarios.iter().enumerate() {
            let (matrix, origin) = match &sd.source {
                DispersalSource::Particles(_) => tracked[k][nth_tracked]
                    .take()
                    .expect("each tracked matrix is used once"),
                DispersalSource::Supplied(path) => {
                    let p = std::path::PathBuf::from(path.replace("{scenario}", sc));
                    let rows = crate::layers::read_dispersal_matrix(&p, grid.len())?;
                    (crate::connectivity::Dispersal { rows }, Origin::Supplied(p))
                }
            };
            out.push(SpeciesLinks {
                species: sd.name.clone(),
                scenario: k,
                matrix,
                origin,
            });
        }
        if matches!(sd.source, DispersalSource::Particles(_)) {
            nth_tracked += 1;
        }
    }
    Ok(out)
}

/// Adds the connectivity measures (`assess::connectivity::connectivity_measures`) of each
/// network in `selections` (in the comparison's network order) to `cmp`; nothing without
/// `[connectivity]`.
pub fn push_connectivity_measures(
    cmp: &mut crate::compare::Comparison,
    plan: &Plan,
    inputs: &Inputs,
    selections: &[&[bool]],
) {
    use crate::assess::connectivity::{connectivity_measures, network_connectivity};
    if inputs.connectivity.is_empty() {
        return;
    }
    let per: Vec<Vec<(String, f64)>> = selections
        .iter()
        .map(|sel| {
            connectivity_measures(&network_connectivity(
                &inputs.grid,
                &plan.scenarios,
                &inputs.connectivity,
                &inputs.features,
                sel,
            ))
        })
        .collect();
    for (k, (name, _)) in per[0].iter().enumerate() {
        let values = per.iter().map(|m| m[k].1).collect();
        cmp.push_measure(name, crate::compare::Better::Higher, values);
    }
}

/// One `reachability/<species>/<scenario>` feature per dispersal matrix, from the species'
/// first-year and last-year habitat (see [`crate::features::reachability`]).
pub fn reachability_features(
    plan: &Plan,
    grid: &Grid,
    table: &FeatureTable,
    links: &[crate::connectivity::SpeciesLinks],
    goal: &crate::plan::climate::Goal,
) -> Vec<crate::features::Feature> {
    let (Some(first), Some(last)) = (plan.years.first(), plan.years.last()) else {
        return Vec::new();
    };
    let habitat = |sp: &str, sc: usize, year: i32| {
        table
            .features
            .iter()
            .find(|f| {
                f.kind == crate::features::FeatureKind::Habitat
                    && f.species.as_deref() == Some(sp)
                    && f.scenario == Some(sc)
                    && f.year == Some(year)
            })
            .map(|f| f.amounts.as_slice())
            .unwrap_or(&[])
    };
    links
        .iter()
        .map(|l| {
            crate::features::reachability::reachability_feature(
                grid,
                &l.species,
                l.scenario,
                &plan.scenarios[l.scenario],
                habitat(&l.species, l.scenario, *first),
                habitat(&l.species, l.scenario, *last),
                &l.matrix,
                goal.target(),
                goal.weight,
            )
        })
        .collect()
}

/// What a planner should know about how the inputs were read: per group of point-lattice
/// layers, how many cells were bilinear / coastal fallback / nearest / missing; per scenario,
/// how many cells' temperature gradient fell below the velocity floor. `check` prints these
/// and the run header shows them.
pub fn input_notes(inputs: &Inputs) -> Vec<String> {
    let mut notes: Vec<String> = crate::layers::sampling_lines(&inputs.sampling)
        .into_iter()
        .map(|l| format!("sampled {l}"))
        .collect();
    for (scenario, n) in &inputs.velocity_floored {
        if *n > 0 {
            notes.push(format!(
                "climate velocity in {scenario}: {n} of {} cells have a temperature gradient below the floor (speed capped at trend ÷ floor; bearing left missing on purpose)",
                inputs.grid.len()
            ));
        }
    }
    notes
}

/// Fails when the required cells alone cost more than `budget.max_cost` or cover more than
/// `budget.max_share` of the region's sea: no network can then meet the plan, and saying so
/// with the key is better than an infeasible solve later.
pub fn check_budget(plan: &Plan, inputs: &Inputs) -> Result<(), RunError> {
    let required: Vec<usize> = (0..inputs.status.len())
        .filter(|&i| inputs.status[i] == CellStatus::Required)
        .collect();
    let source = plan
        .required
        .as_ref()
        .map(|r| format!("`{}`", r.layer.path))
        .unwrap_or_default();
    let cost: f64 = required.iter().map(|&i| inputs.cost[i]).sum();
    let area: f64 = required
        .iter()
        .map(|&i| inputs.grid.cells[i].sea_area_km2)
        .sum();
    let share = area / inputs.grid.sea_area_km2;
    let mut problems = Vec::new();
    if let Some(max) = plan.budget.max_cost {
        if !crate::model::evaluate::at_least(max, cost) {
            problems.push(format!(
                "`budget.max_cost` = {max} is below the cost of the required cells alone \
                 ({cost:.1} for {} cells required by {source}); raise `budget.max_cost` to at \
                 least {cost:.1} or require fewer cells",
                required.len()
            ));
        }
    }
    if let Some(max) = plan.budget.max_share {
        if !crate::model::evaluate::at_least(max, share) {
            problems.push(format!(
                "`budget.max_share` = {max} ({:.1}% of the region's sea) is below the share the \
                 required cells alone cover ({:.1}%: {} cells required by {source}); raise \
                 `budget.max_share` to at least {:.4} or require fewer cells",
                100.0 * max,
                100.0 * share,
                required.len(),
                share
            ));
        }
    }
    if problems.is_empty() {
        Ok(())
    } else {
        Err(RunError::RequiredOverBudget {
            file: plan.file.clone(),
            problems,
        })
    }
}

/// The model's feature rows: each feature's amounts with its target as an absolute amount.
pub fn model_features(table: &FeatureTable) -> Vec<ModelFeature> {
    table
        .features
        .iter()
        .map(|f| ModelFeature {
            name: f.name.clone(),
            scenario: f.scenario,
            amounts: f.amounts.clone(),
            target: f.target.amount(f.total),
            weight: f.weight,
        })
        .collect()
}

/// [`model_features`] without the copy: the amounts move out of `table` (its features keep
/// their names, totals and targets, with empty amounts) into the model rows. At 1M cells the
/// amounts are gigabytes; [`return_model_features`] puts them back once the model is done.
pub fn take_model_features(table: &mut FeatureTable) -> Vec<ModelFeature> {
    table
        .features
        .iter_mut()
        .map(|f| ModelFeature {
            name: f.name.clone(),
            scenario: f.scenario,
            amounts: std::mem::take(&mut f.amounts),
            target: f.target.amount(f.total),
            weight: f.weight,
        })
        .collect()
}

/// Gives the amounts taken by [`take_model_features`] back to `table` (same order).
pub fn return_model_features(table: &mut FeatureTable, rows: Vec<ModelFeature>) {
    debug_assert_eq!(table.features.len(), rows.len());
    for (f, row) in table.features.iter_mut().zip(rows) {
        f.amounts = row.amounts;
    }
}

/// Copies the model rows' amounts back into a table emptied by [`take_model_features`], for
/// the stages after a solve that need both (assessment beside the stress test).
pub fn copy_model_amounts(table: &mut FeatureTable, rows: &[ModelFeature]) {
    debug_assert_eq!(table.features.len(), rows.len());
    for (f, row) in table.features.iter_mut().zip(rows) {
        f.amounts.clone_from(&row.amounts);
    }
}

/// The solver-neutral problem a plan asks for.
pub fn problem(plan: &Plan, inputs: &Inputs) -> Problem {
    problem_with_rows(plan, inputs, model_features(&inputs.features))
}

/// [`problem`] with the amounts moved out of `inputs.features` instead of copied, so a large
/// run holds one copy while it solves; [`copy_model_amounts`] restores them afterwards.
pub fn problem_taking_amounts(plan: &Plan, inputs: &mut Inputs) -> Problem {
    let rows = take_model_features(&mut inputs.features);
    problem_with_rows(plan, inputs, rows)
}

/// The problem of `plan` with the given feature rows (the rest from `inputs`; zoning reads
/// only the features' totals and kinds, never their amounts).
fn problem_with_rows(plan: &Plan, inputs: &Inputs, features: Vec<ModelFeature>) -> Problem {
    let scenarios = plan
        .scenarios
        .iter()
        .zip(&plan.scenario_weights)
        .map(|(name, w)| Scenario {
            name: name.clone(),
            weight: *w,
        })
        .collect();
    Problem {
        cost: inputs.cost.clone(),
        area_km2: inputs.grid.cells.iter().map(|c| c.sea_area_km2).collect(),
        status: inputs.status.clone(),
        scenarios,
        features,
        objective: plan.objective,
        robustness: plan.robustness,
        budget: Budget {
            max_cost: plan.budget.max_cost,
            max_area_km2: plan.budget.max_share.map(|s| s * inputs.grid.sea_area_km2),
        },
        edge_penalty: plan
            .rules
            .edge_penalty
            .map(|w| edge_penalty(&inputs.grid, w, plan.rules.count_coast_edges)),
        link_reward: plan.rules.connectivity.map(|rule| {
            crate::connectivity::link_reward(
                &inputs.connectivity,
                &plan.scenario_weights,
                inputs.grid.len(),
                &rule,
            )
        }),
        spacing: plan.rules.max_gap_km.map(|g| Spacing {
            position_km: inputs
                .grid
                .cells
                .iter()
                .map(|c| meridian_distance_km(c.lonlat[1]))
                .collect(),
            max_gap_km: g,
        }),
        scenario_best: None,
        keep_objective: None,
        alternative: None,
        zoning: zoning(plan, inputs),
        min_reserve: plan.rules.min_reserve_km2.map(|m| MinReserve {
            min_area_km2: m,
            neighbours: inputs
                .grid
                .neighbours
                .iter()
                .map(|l| l.iter().map(|n| n.cell).collect())
                .collect(),
        }),
        min_neighbours: plan
            .rules
            .min_chosen_neighbours
            .map(|k| crate::model::MinNeighbours {
                k,
                neighbours: inputs
                    .grid
                    .neighbours
                    .iter()
                    .map(|l| l.iter().map(|n| n.cell).collect())
                    .collect(),
            }),
    }
}

/// The plan's zones as the model states them (`None` without `[[zones]]`): each zone's cost
/// share; its credit for each feature by the feature's species and kind; which cells may take
/// it (not excluded from it, and not required by another zone — a cell required by two zones
/// takes the first); and per targeted feature the amount its zone target asks for.
pub fn zoning(plan: &Plan, inputs: &Inputs) -> Option<crate::model::Zoning> {
    if plan.zones.is_empty() {
        return None;
    }
    let feats = &inputs.features.features;
    let n = inputs.grid.len();
    let first_required: Vec<Option<usize>> = (0..n)
        .map(|i| inputs.zone_required.iter().position(|r| r[i]))
        .collect();
    let mut targets = Vec::new();
    for (z, zone) in plan.zones.iter().enumerate() {
        if let Some(share) = zone.target {
            for (k, f) in feats.iter().enumerate() {
                if f.target.amount(f.total) > 0.0 && share > 0.0 {
                    targets.push(crate::model::ZoneTarget {
                        zone: z,
                        feature: k,
                        amount: share * f.total,
                    });
                }
            }
        }
    }
    Some(crate::model::Zoning {
        names: plan.zones.iter().map(|z| z.name.clone()).collect(),
        cost_share: plan.zones.iter().map(|z| z.cost_share).collect(),
        credit: plan
            .zones
            .iter()
            .map(|z| {
                feats
                    .iter()
                    .map(|f| z.credit_for(f.kind.as_str(), f.species.as_deref()))
                    .collect()
            })
            .collect(),
        allowed: (0..plan.zones.len())
            .map(|z| {
                (0..n)
                    .map(|i| {
                        !inputs.zone_excluded[z][i] && first_required[i].is_none_or(|r| r == z)
                    })
                    .collect()
            })
            .collect(),
        targets,
    })
}

/// Edge-penalty data from the grid: each neighbouring pair once, and each cell's edge that
/// counts when it stands alone (its shared edges, plus coast/boundary edge if asked).
pub fn edge_penalty(grid: &Grid, weight: f64, count_coast_edges: bool) -> EdgePenalty {
    let mut pairs = Vec::new();
    let mut alone = Vec::with_capacity(grid.len());
    for (i, list) in grid.neighbours.iter().enumerate() {
        let mut shared = 0.0;
        for n in list {
            shared += n.shared_km;
            if (i as u32) < n.cell {
                pairs.push((i as u32, n.cell, n.shared_km));
            }
        }
        alone.push(if count_coast_edges {
            shared + grid.boundary_km(i as u32)
        } else {
            shared
        });
    }
    EdgePenalty {
        weight,
        pairs,
        exposed_if_alone_km: alone,
    }
}

/// Solver options from the plan, with CLI overrides already applied by the caller. The time
/// limit is the whole command's (see [`crate::solve::time`]).
pub fn solve_options(plan: &Plan) -> SolveOptions {
    SolveOptions {
        time_limit_s: Some(plan.solver.time_limit_s),
        rel_gap: plan.solver.gap,
        threads: plan.solver.threads,
        verbose: false,
        seed: 1,
        progress: None,
        method: plan.solver.method,
    }
}

/// Solves the problem exactly by the method the options pick (`[solver] method`: the direct
/// model in HiGHS or the decomposition, [`crate::solve::decompose::solve_exact`]).
pub fn optimise(problem: &Problem, options: &SolveOptions) -> Result<Solution, RunError> {
    Ok(crate::solve::decompose::solve_exact(problem, options)?)
}

/// Assesses a solved network: as [`assess_network`], re-scored for its zones when the problem
/// has them (`assess::zones`), with each zone's share of the network and of each reserve.
pub fn assess_solution(
    inputs: &Inputs,
    problem: &Problem,
    solution: &Solution,
) -> (Assessment, Option<Vec<crate::assess::zones::ZoneShare>>) {
    assess_zoned(
        inputs,
        problem,
        &solution.selected,
        solution.zones.as_deref(),
    )
}

/// Assesses a network under the plan: as [`assess_network`], and on a zoned problem re-scored
/// with each cell's zone (`assignment`: 0 outside, 1 + zone index; `None` puts every chosen
/// cell in the first zone, [`crate::model::zones::first_zone`]), with each zone's share of
/// the network and of each reserve.
pub fn assess_zoned(
    inputs: &Inputs,
    problem: &Problem,
    selected: &[bool],
    assignment: Option<&[u8]>,
) -> (Assessment, Option<Vec<crate::assess::zones::ZoneShare>>) {
    let mut a = assess_network(inputs, selected);
    let shares = problem.zoning.as_ref().map(|z| {
        let first;
        let asg = match assignment {
            Some(asg) => asg,
            None => {
                first = crate::model::zones::first_zone(selected);
                &first
            }
        };
        crate::assess::zones::apply_zones(
            &mut a,
            &inputs.grid,
            &inputs.features,
            &inputs.cost,
            z,
            asg,
        )
    });
    (a, shares)
}

/// Assesses a network under the plan's features.
pub fn assess_network(inputs: &Inputs, selected: &[bool]) -> Assessment {
    assess(&inputs.grid, &inputs.features, &inputs.cost, selected)
}

/// The report's run facts, in display order: plan, hash, solver and its status, objective,
/// bound and gap (when a solve made the network), then the network's measures.
pub fn run_facts(
    plan: &Plan,
    solution: Option<&Solution>,
    a: &Assessment,
) -> Vec<(String, String)> {
    let mut f = vec![
        ("plan".to_string(), plan.name.clone()),
        ("plan file SHA-256".to_string(), plan.hash.clone()),
    ];
    if let Some(s) = solution {
        f.push(("solver".into(), s.solver.clone()));
        f.push(("status".into(), s.status.as_str().into()));
        f.push(("objective".into(), format!("{:.4}", s.objective)));
        f.push((
            "bound".into(),
            if s.bound.is_finite() {
                format!("{:.4}", s.bound)
            } else {
                "none proven".into()
            },
        ));
        f.push(("gap".into(), crate::solve::progress::gap_percent(s.gap)));
        f.push(("solve time".into(), format!("{:.1} s", s.seconds)));
        f.push(("solver settings".into(), plan.solver.describe()));
        for w in crate::solve::warnings(s) {
            f.push(("warning".into(), w));
        }
    }
    f.push(("cost".into(), format!("{:.1}", a.cost)));
    f.push((
        "area".into(),
        format!(
            "{:.0} km² ({:.1}% of the region's sea)",
            a.area_km2,
            100.0 * a.share_of_region
        ),
    ));
    f.push(("reserves".into(), a.reserves.len().to_string()));
    f.push((
        "targets reached".into(),
        crate::assess::targets_reached_text(a),
    ));
    f.push((
        "compactness ratio".into(),
        format!("{:.2} (1 = circle)", a.compactness_ratio),
    ));
    f.push((
        "largest gap along the poleward axis".into(),
        format!("{:.1} km", a.largest_gap_km),
    ));
    f
}

/// The grid and how each layer was sampled, for the report's run facts: what a reader needs to
/// judge the numbers (cell size and count, the equal-area CRS, cells that fell back from
/// bilinear sampling, cells where the velocity's gradient was floored).
pub fn grid_facts(inputs: &Inputs) -> Vec<(String, String)> {
    let g = &inputs.grid;
    let crs = g.crs.describe();
    let mut f = vec![
        (
            "grid".to_string(),
            format!(
                "{} cell{} of {} km, {:.0} km² of sea",
                g.len(),
                if g.len() == 1 { "" } else { "s" },
                g.cell_size_m / 1000.0,
                g.cells.iter().map(|c| c.sea_area_km2).sum::<f64>()
            ),
        ),
        (
            "grid CRS".to_string(),
            match crs.epsg {
                Some(code) => format!("EPSG:{code} ({})", crs.definition),
                None => crs.proj.unwrap_or(crs.definition),
            },
        ),
    ];
    f.extend(
        crate::layers::sampling_lines(&inputs.sampling)
            .into_iter()
            .map(|l| ("layer sampling".to_string(), l)),
    );
    for (scenario, n) in &inputs.velocity_floored {
        if *n > 0 {
            f.push((
                "velocity floored".to_string(),
                format!(
                    "{scenario}: {n} cell{} with a gradient below the floor (bearing left empty)",
                    if *n == 1 { "" } else { "s" }
                ),
            ));
        }
    }
    f
}

/// Maps of the derived climate features: per feature kind, per scenario, for the first and
/// the last year, the sum of that kind's amounts per cell over all species (scenario-free and
/// year-free features once). Named `kind (unit) · scenario · year`, so the report shows every
/// scenario and how each feature moves between the first and last year. Habitat is left out
/// (the coverage tables show it).
pub fn derived_feature_maps(inputs: &Inputs) -> Vec<(String, Vec<f64>)> {
    let t = &inputs.features;
    let (first, last) = (t.years.first().copied(), t.years.last().copied());
    // (kind, scenario index, year) → (unit, sums); BTreeMap order: kind, scenario, year.
    type Key<'a> = (&'a str, Option<usize>, Option<i32>);
    let mut maps: std::collections::BTreeMap<Key, (&str, Vec<f64>)> = Default::default();
    for f in &t.features {
        if f.kind == crate::features::FeatureKind::Habitat
            || f.year.is_some_and(|y| Some(y) != first && Some(y) != last)
        {
            continue;
        }
        let m = maps
            .entry((f.kind.as_str(), f.scenario, f.year))
            .or_insert_with(|| (f.unit.as_str(), vec![0.0; inputs.grid.len()]));
        for &(c, a) in &f.amounts {
            m.1[c as usize] += a;
        }
    }
    maps.into_iter()
        .map(|((kind, scenario, year), (unit, v))| {
            let unit = unit.replace("km2", "km²").replace(" x ", " × ");
            let sc = scenario
                .and_then(|i| t.scenarios.get(i))
                .map_or("all scenarios", String::as_str);
            let name = match year {
                Some(y) => format!("{kind} ({unit}) · {sc} · {y}"),
                None => format!("{kind} ({unit}) · {sc}"),
            };
            (name, v)
        })
        .collect()
}

/// What goes into `report.html` besides the plan, inputs and the network shown.
#[derive(Default)]
pub struct ReportExtras<'a> {
    /// The solve that made the network, if one did.
    pub solution: Option<&'a Solution>,
    /// The stress test, if run.
    pub stress: Option<&'a crate::study::StressMatrix>,
    /// The budget sweep, if run.
    pub sweep: Option<&'a crate::study::Sweep>,
    /// More facts, shown after the run facts (e.g. which network is shown).
    pub facts: Vec<(String, String)>,
    /// More per-cell maps, shown before the derived-feature maps (e.g. selection share).
    pub maps: Vec<(String, Vec<f64>)>,
    /// Several networks side by side (e.g. each budget of a sweep).
    pub panels: Option<crate::report::NetworkPanels>,
}

/// `report.html` of a network under the plan (see [`crate::report`]); a zoned solution's zones
/// are coloured on the map.
pub fn report_html(
    plan: &Plan,
    inputs: &Inputs,
    selected: &[bool],
    assessment: &Assessment,
    extras: ReportExtras,
) -> Result<String, crate::export::ExportError> {
    let zones = extras.solution.and_then(|s| s.zones.clone());
    report_html_zoned(plan, inputs, selected, zones.as_deref(), assessment, extras)
}

/// [`report_html`] of a network whose cells carry zones (`assignment`: 0 outside, 1 + the
/// plan zone's index), drawn in each zone's colour when the plan has `[[zones]]`.
pub fn report_html_zoned(
    plan: &Plan,
    inputs: &Inputs,
    selected: &[bool],
    assignment: Option<&[u8]>,
    assessment: &Assessment,
    extras: ReportExtras,
) -> Result<String, crate::export::ExportError> {
    let zone_names: Vec<String> = plan.zones.iter().map(|z| z.name.clone()).collect();
    let mut facts = run_facts(plan, extras.solution, assessment);
    facts.extend(grid_facts(inputs));
    facts.extend(
        crate::features::absent::absent_notes(&inputs.features)
            .into_iter()
            .map(|n| ("absent".to_string(), n)),
    );
    facts.extend(
        crate::features::derive::clipped_notes(&inputs.edge_shifts)
            .into_iter()
            .map(|n| ("clipped edge".to_string(), n)),
    );
    facts.extend(extras.facts);
    let mut feature_maps = extras.maps;
    let (velocity_maps, arrows) = velocity_maps(inputs);
    feature_maps.extend(velocity_maps);
    feature_maps.extend(derived_feature_maps(inputs));
    // The land mask again, for the map (the grid keeps only the sea). A map without its
    // base is still a map: a land file or projection that fails here was read once already,
    // so the report is drawn without it rather than not at all.
    let land = plan
        .land
        .as_deref()
        .and_then(|l| read_multipolygon(l, plan.repair_polygons).ok());
    let basemap = crate::report::Basemap::build(&inputs.grid, land.as_ref()).ok();
    crate::report::report_html(&crate::report::ReportInput {
        title: &plan.name,
        facts,
        grid: &inputs.grid,
        selected,
        status: &inputs.status,
        reserves: &assessment.reserves,
        feature_maps,
        coverage: &assessment.coverage,
        stress: extras.stress.map(crate::study::stress::report_table),
        sweep: extras.sweep.map(crate::study::sweep::report_points),
        panels: extras.panels,
        zones: assignment.filter(|_| !zone_names.is_empty()).map(|asg| {
            crate::report::ReportZones {
                names: &zone_names,
                assignment: asg,
            }
        }),
        basemap,
        arrows,
        reserve_links: crate::assess::connectivity::reserve_links(
            &inputs.connectivity,
            &plan.scenario_weights,
            &crate::assess::reserve_of_cells(assessment, inputs.grid.len()),
        ),
    })
}

/// Climate velocity per scenario for the report: the speed as a map (`velocity (km/yr) ·
/// scenario`) and the bearing as arrows over it, turned into the grid's axes at each cell
/// ([`crate::features::derive::grid_direction`]). Empty when the plan derives no velocity.
#[allow(clippy::type_complexity)]
pub fn velocity_maps(inputs: &Inputs) -> (Vec<(String, Vec<f64>)>, Vec<(String, Vec<[f64; 2]>)>) {
    let (mut maps, mut arrows) = (Vec::new(), Vec::new());
    let Ok(projector) = inputs.grid.projector() else {
        return (maps, arrows);
    };
    for speed in &inputs.layers {
        let Some(sc) = speed.name.strip_prefix("velocity_km_per_yr/") else {
            continue;
        };
        let name = format!("velocity (km/yr) · {sc}");
        let bearing = inputs
            .layers
            .iter()
            .find(|l| l.name == format!("velocity_bearing_deg/{sc}"));
        if let Some(b) = bearing {
            let dirs = inputs
                .grid
                .cells
                .iter()
                .zip(&b.values)
                .map(|(c, &deg)| {
                    crate::features::derive::grid_direction(&projector, c.lonlat, deg)
                        .unwrap_or([f64::NAN; 2])
                })
                .collect();
            arrows.push((name.clone(), dirs));
        }
        maps.push((name, speed.values.clone()));
    }
    (maps, arrows)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::Crs;

    #[test]
    fn model_features_turn_shares_into_absolute_targets() {
        use crate::features::{Feature, FeatureKind, Target};
        let table = FeatureTable {
            scenarios: vec!["s".into()],
            years: vec![2050],
            features: vec![Feature {
                name: "f".into(),
                kind: FeatureKind::Habitat,
                species: None,
                scenario: Some(0),
                year: Some(2050),
                unit: "km2".into(),
                amounts: vec![(1, 4.0), (2, 6.0)],
                total: 10.0,
                target: Target::Share(0.3),
                weight: 2.0,
            }],
        };
        let rows = model_features(&table);
        // 30% of 10 km² = 3 km² (hand computation).
        assert!((rows[0].target - 3.0).abs() < 1e-12);
        assert_eq!((rows[0].scenario, rows[0].weight), (Some(0), 2.0));
        // Taking the amounts instead of copying them gives the same rows; giving them back
        // (or copying them back) restores the table exactly.
        let mut taken = table.clone();
        let moved = take_model_features(&mut taken);
        assert_eq!(moved, rows);
        assert!(taken.features[0].amounts.is_empty());
        assert_eq!(taken.features[0].total, 10.0);
        copy_model_amounts(&mut taken, &moved);
        assert_eq!(taken, table);
        let _ = take_model_features(&mut taken);
        return_model_features(&mut taken, moved);
        assert_eq!(taken, table);
    }

    #[test]
    fn edge_penalty_pairs_and_alone_edges_from_the_grid() {
        // 2×2 grid of 10 km squares (hand computation): 4 neighbouring pairs of 10 km; each cell
        // shares 20 km with its two neighbours and has 20 km of outer boundary.
        let grid =
            Grid::full_rectangle(Crs::auto_laea(150.0, -40.0), 10_000.0, [0.0, 0.0], 2, 2).unwrap();
        let open_sea = edge_penalty(&grid, 2.0, false);
        assert_eq!(open_sea.pairs.len(), 4);
        assert!(open_sea
            .pairs
            .iter()
            .all(|p| p.0 < p.1 && (p.2 - 10.0).abs() < 1e-9));
        assert!(open_sea
            .exposed_if_alone_km
            .iter()
            .all(|e| (e - 20.0).abs() < 1e-9));
        let coast = edge_penalty(&grid, 2.0, true);
        assert!(coast
            .exposed_if_alone_km
            .iter()
            .all(|e| (e - 40.0).abs() < 1e-9));
        // The whole block chosen: exposed = Σ P − 2 Σ l = 4·40 − 2·4·10 = 80 km, its perimeter.
        let all = vec![true; 4];
        assert!((crate::model::compact::exposed_edge_km(&coast, &all) - 80.0).abs() < 1e-9);
    }

    #[test]
    fn derived_maps_sum_each_kind_per_scenario_in_the_first_and_last_year() {
        use crate::features::{Feature, FeatureKind, Target};
        let f = |kind, scenario, year, amounts: Vec<(u32, f64)>| Feature {
            name: "x".into(),
            kind,
            species: None,
            scenario,
            year,
            unit: "score".into(),
            total: amounts.iter().map(|a| a.1).sum(),
            amounts,
            target: Target::Share(0.0),
            weight: 1.0,
        };
        let grid =
            Grid::full_rectangle(Crs::auto_laea(150.0, -40.0), 10_000.0, [0.0, 0.0], 3, 1).unwrap();
        let features = FeatureTable {
            scenarios: vec!["s1".into(), "s2".into()],
            years: vec![2030, 2090],
            features: vec![
                f(
                    FeatureKind::Refugium,
                    Some(0),
                    Some(2090),
                    vec![(0, 1.0), (2, 2.0)],
                ),
                f(FeatureKind::Refugium, Some(0), Some(2090), vec![(2, 0.5)]),
                // Another scenario and the first year are maps of their own; habitat is not.
                f(FeatureKind::Refugium, Some(1), Some(2090), vec![(1, 9.0)]),
                f(FeatureKind::Refugium, Some(0), Some(2030), vec![(1, 9.0)]),
                f(FeatureKind::Habitat, Some(0), Some(2090), vec![(1, 9.0)]),
                // Scenario- and year-free features count.
                f(FeatureKind::Distinctness, None, None, vec![(1, 0.25)]),
            ],
        };
        let inputs = Inputs {
            cost: vec![1.0; 3],
            status: vec![CellStatus::Free; 3],
            zone_required: vec![],
            zone_excluded: vec![],
            layers: vec![],
            features,
            edge_shifts: vec![],
            sampling: vec![],
            velocity_floored: vec![],
            connectivity: vec![],
            grid,
        };
        let maps = derived_feature_maps(&inputs);
        // Hand sums, by kind, then scenario, then year: distinctness [0, 0.25, 0] (no scenario
        // or year); refugium s1 2030 [0, 9, 0]; s1 2090 [1, 0, 2.5]; s2 2090 [0, 9, 0]. Habitat
        // is left out.
        let names: Vec<&str> = maps.iter().map(|m| m.0.as_str()).collect();
        assert_eq!(
            names,
            [
                "distinctness (score) · all scenarios",
                "refugium (score) · s1 · 2030",
                "refugium (score) · s1 · 2090",
                "refugium (score) · s2 · 2090"
            ]
        );
        assert_eq!(maps[0].1, vec![0.0, 0.25, 0.0]);
        assert_eq!(maps[1].1, vec![0.0, 9.0, 0.0]);
        assert_eq!(maps[2].1, vec![1.0, 0.0, 2.5]);
        assert_eq!(maps[3].1, vec![0.0, 9.0, 0.0]);
    }
}
