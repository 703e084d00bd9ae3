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
use crate::solve::{Solution, SolveError, SolveOptions, Solver};
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
#[derive(Debug, Clone)]
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
    let sampled: Vec<Result<Layer, LayerError>> = jobs
        .par_iter()
        .map(|(si, ci, year, spec)| {
            let name = format!(
                "habitat/{}/{}/{}",
                plan.species[*si].name, plan.scenarios[*ci], year
            );
            sample(&name, spec, &grid, &cache)
        })
        .collect();
    let mut errors = Vec::new();
    let mut features = FeatureTable {
        scenarios: plan.scenarios.clone(),
        years: plan.years.clone(),
        features: Vec::new(),
    };
    for ((si, ci, year, _), layer) in jobs.iter().zip(sampled) {
        match layer {
            Ok(layer) => {
                let sp = &plan.species[*si];
                features.features.push(habitat_feature(
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
                ));
            }
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
        return Err(if errors.len() == 1 {
            RunError::Layer(errors.remove(0))
        } else {
            RunError::Layers(errors)
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
    use crate::connectivity::{disperse, species_seed, CurrentField, Origin, SpeciesLinks};
    use crate::plan::connectivity::DispersalSource;
    // currents[scenario] = (u, v), m/s per cell.
    let mut currents: Vec<(Vec<f64>, Vec<f64>)> = Vec::new();
    if let Some((u, v)) = &cp.currents {
        for (k, sc) in plan.scenarios.iter().enumerate() {
            if k > 0 && !u.varies_by_scenario_or_year() && !v.varies_by_scenario_or_year() {
                currents.push(currents[0].clone());
                continue;
            }
            let read = |t: &crate::plan::LayerTemplate, c: &str| {
                sample(
                    &format!("current_{c}/{sc}"),
                    &t.resolve("", sc, 0),
                    grid,
                    cache,
                )
            };
            currents.push((read(u, "u")?.values, read(v, "v")?.values));
        }
    }
    let mut out = Vec::new();
    for sd in &cp.species {
        let si = plan
            .species
            .iter()
            .position(|s| s.name == sd.name)
            .unwrap_or(0);
        for (k, sc) in plan.scenarios.iter().enumerate() {
            let (matrix, origin) = match &sd.source {
                DispersalSource::Particles(larvae) => {
                    let same_as_first = k > 0 && currents[k] == currents[0];
                    if same_as_first {
                        let first: &SpeciesLinks = out
                            .iter()
                            .rev()
                            .find(|l: &&SpeciesLinks| l.species == sd.name && l.scenario == 0)
                            .expect("scenario 0 comes first");
                        (first.matrix.clone(), first.origin.clone())
                    } else {
                        let (u, v) = &currents[k];
                        disperse(
                            CurrentField::new(grid, u, v),
                            larvae,
                            cp.particles_per_cell,
                            species_seed(cp.seed, si),
                            cp.max_step_hours,
                        )
                    }
                }
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
    }
    Ok(out)
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

/// The solver-neutral problem a plan asks for.
pub fn problem(plan: &Plan, inputs: &Inputs) -> Problem {
    let features = model_features(&inputs.features);
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
    }
}

/// Solves the problem exactly with HiGHS.
pub fn optimise(problem: &Problem, options: &SolveOptions) -> Result<Solution, RunError> {
    Ok(crate::solve::ilp::Highs::default().solve(problem, options)?)
}

/// Assesses a solved network: as [`assess_network`], re-scored for its zones when the problem
/// has them (`assess::zones`), with each zone's share of the network and of each reserve.
pub fn assess_solution(
    inputs: &Inputs,
    problem: &Problem,
    solution: &Solution,
) -> (Assessment, Option<Vec<crate::assess::zones::ZoneShare>>) {
    let mut a = assess_network(inputs, &solution.selected);
    let shares = match (&problem.zoning, &solution.zones) {
        (Some(z), Some(asg)) => Some(crate::assess::zones::apply_zones(
            &mut a,
            &inputs.grid,
            &inputs.features,
            &inputs.cost,
            z,
            asg,
        )),
        _ => None,
    };
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

/// One map per derived climate feature kind: the sum of that kind's amounts per cell over
/// the features of the first scenario (and scenario-free ones) in the last year (or without
/// a year). Habitat is left out (it has its own coverage charts).
pub fn derived_feature_maps(inputs: &Inputs) -> Vec<(String, Vec<f64>)> {
    let t = &inputs.features;
    let last_year = t.years.last().copied();
    let mut maps: std::collections::BTreeMap<&str, Vec<f64>> = Default::default();
    for f in &t.features {
        if f.kind == crate::features::FeatureKind::Habitat
            || f.scenario.is_some_and(|s| s != 0)
            || f.year.is_some_and(|y| Some(y) != last_year)
        {
            continue;
        }
        let m = maps
            .entry(f.kind.as_str())
            .or_insert_with(|| vec![0.0; inputs.grid.len()]);
        for &(c, a) in &f.amounts {
            m[c as usize] += a;
        }
    }
    let when = |name: &str| {
        let sc = t.scenarios.first().map(String::as_str).unwrap_or("");
        match last_year {
            Some(y) => format!("{name} ({sc}, {y}, all species)"),
            None => format!("{name} ({sc}, all species)"),
        }
    };
    maps.into_iter().map(|(k, v)| (when(k), v)).collect()
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

/// `report.html` of a network under the plan (see [`crate::report`]).
pub fn report_html(
    plan: &Plan,
    inputs: &Inputs,
    selected: &[bool],
    assessment: &Assessment,
    extras: ReportExtras,
) -> Result<String, crate::export::ExportError> {
    let mut facts = run_facts(plan, extras.solution, assessment);
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
    feature_maps.extend(derived_feature_maps(inputs));
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
    })
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
    fn derived_maps_sum_one_kind_in_the_first_scenario_and_last_year() {
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
                // Left out: another scenario, an earlier year, habitat.
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
        // Hand sums: refugium [1, 0, 2.5]; distinctness [0, 0.25, 0]; names by kind.
        assert_eq!(maps.len(), 2);
        assert_eq!(maps[0].0, "distinctness (s1, 2090, all species)");
        assert_eq!(maps[0].1, vec![0.0, 0.25, 0.0]);
        assert_eq!(maps[1].1, vec![1.0, 0.0, 2.5]);
    }
}
