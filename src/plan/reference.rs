//! Every key a plan file may hold, in one table. The validator takes each table's accepted
//! keys from here ([`keys_of`]), and `docs/plan-reference.md` is written from it
//! ([`markdown`]; a test fails when the page is out of date), so the reference and what the
//! validator accepts cannot drift apart.

/// One plan key, documented.
#[derive(Debug, Clone, Copy)]
pub struct KeyDoc {
    /// The table it belongs to: `""` for the top level, `grid`, `species[]`, `layer` (any layer
    /// table), `climate.refugium`, … as the validator names them.
    pub section: &'static str,
    /// The key.
    pub key: &'static str,
    /// TOML type, in words.
    pub kind: &'static str,
    /// The value when the key is left out (`required` when it may not be).
    pub default: &'static str,
    /// Allowed values or range.
    pub allowed: &'static str,
    /// Unit of a number (empty when it has none).
    pub unit: &'static str,
    /// A line as it would stand in a plan.
    pub example: &'static str,
    /// What it does.
    pub about: &'static str,
}

// One positional row per key reads as the table it is; named fields would triple its length.
#[allow(clippy::too_many_arguments)]
const fn k(
    section: &'static str,
    key: &'static str,
    kind: &'static str,
    default: &'static str,
    allowed: &'static str,
    unit: &'static str,
    example: &'static str,
    about: &'static str,
) -> KeyDoc {
    KeyDoc {
        section,
        key,
        kind,
        default,
        allowed,
        unit,
        example,
        about,
    }
}

/// The sections in the order the reference lists them, with a line on each.
pub const SECTIONS: &[(&str, &str)] = &[
    ("", "Top level: the region and what to call the run."),
    ("grid", "`[grid]`: the equal-area planning grid."),
    ("scenarios", "`[scenarios]`: the climate scenarios and the years of each."),
    ("targets", "`[targets]`: the share of each feature's total the network must hold."),
    ("species[]", "`[[species]]`: one table per species (repeat the table)."),
    ("species_list", "`[species_list]`: many species at once, for the common case of one layer file per scenario and year with a column per species. Each name becomes a species with the list's habitat, target and weight; `[[species]]` tables may stand beside it for species with their own source (names must differ)."),
    ("layer", "Layer tables: `[temperature]`, `[cost]`, `[required]`, `[excluded]`, each species' `habitat`, `[climate.velocity]`'s `speed`/`bearing`, `[climate.refugium]`'s `polygons`/`score`, `[climate.distinctness]`'s `layer`, and each zone's `required`/`excluded` all take these keys. Paths may use `{species}`, `{scenario}` and `{year}`."),
    ("cost", "`[cost]`: a layer table with one more key (or `cost = \"area\"` to make every km² cost 1)."),
    ("required, excluded", "`[required]` and `[excluded]`: layer tables (polygons) with one more key. Required cells are in every network (existing protected areas); excluded cells never are (shipping lanes, ports)."),
    ("budget", "`[budget]`: the most the network may use; leave both keys out for no budget."),
    ("optimise", "`[optimise]`: what the integer program optimises and which spatial rules it keeps."),
    ("solver", "`[solver]`: when HiGHS stops. The limit is for all the solves of one command together."),
    ("climate", "`[climate]`: derived climate-adaptation features; each sub-table turns one on."),
    ("climate.velocity", "`[climate.velocity]`: climate velocity, computed from `[temperature]` (gradient method) unless `speed` and `bearing` layers are given."),
    ("climate.trajectories", "`[climate.trajectories]`: climate trajectories followed along the velocity field."),
    ("climate.corridor", "`[climate.corridor]`: water that trajectories cross between today's and the last year's habitat."),
    ("climate.leading-edge, climate.trailing-edge", "`[climate.leading-edge]`, `[climate.trailing-edge]`: habitat near each species' poleward and equatorward range edges, every year."),
    ("climate.refugium", "`[climate.refugium]`: places where the climate changes least (computed, or given as polygons or a score layer)."),
    ("climate.boundary", "`[climate.boundary]`: bands around biogeographic boundaries (fronts)."),
    ("climate.distinctness", "`[climate.distinctness]`: genetically distinct populations, from sample points or a layer."),
    ("climate.time", "`[climate.time]`: how the years are weighed against each other."),
    ("connectivity", "`[connectivity]`: larvae tracked in ocean currents give each species a dispersal matrix per scenario (docs/method.md), and a reachability feature per species and scenario."),
    ("connectivity.species[]", "`[[connectivity.species]]`: one table per species tracked (repeat the table); a species of the plan by name."),
    ("zones[]", "`[[zones]]`: management zones, strictest first; each chosen cell takes one."),
];

/// Every plan key, section by section in [`SECTIONS`] order.
pub const KEYS: &[KeyDoc] = &[
    // top level
    k("", "name", "string", "the plan file's name", "any text", "", "name = \"north-shelf-2050\"", "The run's name, shown in the report and summary.json."),
    k("", "region", "path", "required", "a polygon file (GeoJSON, GeoPackage, shapefile, FlatGeobuf)", "", "region = \"region.geojson\"", "The sea region to plan, WGS84 lon/lat or the file's own CRS."),
    k("", "land", "path", "no land mask", "a polygon file", "", "land = \"land.geojson\"", "Land polygons cut out of the region."),
    k("", "repair_polygons", "boolean", "false", "true, false", "", "repair_polygons = true", "Repair invalid input polygons (even-odd rule) instead of refusing them."),
    k("", "grid", "table", "required", "", "", "[grid]", "See `[grid]`."),
    k("", "scenarios", "table", "required", "", "", "[scenarios]", "See `[scenarios]`."),
    k("", "species", "array of tables", "required unless `[species_list]`", "", "", "[[species]]", "See `[[species]]`."),
    k("", "species_list", "table", "none", "", "", "[species_list]", "Many species sharing one habitat source; see `[species_list]`."),
    k("", "temperature", "layer table", "none", "", "", "[temperature]", "Projected sea temperature per scenario and year (°C, or Kelvin in NetCDF); needed for computed climate velocity."),
    k("", "cost", "layer table or \"area\"", "\"area\"", "", "", "cost = \"area\"", "The price of protecting each cell; see `[cost]`."),
    k("", "required", "layer table", "none", "", "", "[required]", "Cells in every network; see `[required]`."),
    k("", "excluded", "layer table", "none", "", "", "[excluded]", "Cells never chosen; see `[excluded]`."),
    k("", "targets", "table", "default 0.3", "", "", "[targets]", "See `[targets]`."),
    k("", "budget", "table", "no budget", "", "", "[budget]", "See `[budget]`."),
    k("", "optimise", "table", "min-cost, every-scenario", "", "", "[optimise]", "See `[optimise]`."),
    k("", "solver", "table", "gap 0.5%, 300 s", "", "", "[solver]", "See `[solver]`."),
    k("", "climate", "table", "no derived features", "", "", "[climate.refugium]", "See `[climate]`."),
    k("", "connectivity", "table", "no dispersal", "", "", "[connectivity]", "See `[connectivity]`."),
    k("", "zones", "array of tables", "no zones", "", "", "[[zones]]", "See `[[zones]]`."),
    // grid
    k("grid", "cell_size_km", "number", "required", "> 0", "km", "cell_size_km = 5", "Side of each square equal-area cell."),
    k("grid", "crs", "string", "\"auto\"", "\"auto\" or a CRS PROJ knows", "", "crs = \"EPSG:3035\"", "\"auto\" is Lambert azimuthal equal-area centred on the region; a given CRS must be projected and equal-area."),
    k("grid", "min_sea_share", "number", "0.1", "0–1", "share", "min_sea_share = 0.1", "Cells with less sea than this share of a full cell are dropped as slivers."),
    // scenarios
    k("scenarios", "names", "array of strings", "required", "letters, digits, `-`, `_`, `.`; distinct", "", "names = [\"ssp1-2.6\", \"ssp5-8.5\"]", "The climate scenarios; `{scenario}` in layer paths takes each."),
    k("scenarios", "years", "array of integers", "required", "strictly increasing", "year", "years = [2030, 2050, 2070, 2090]", "The time steps of every scenario; `{year}` in layer paths takes each."),
    k("scenarios", "weights", "array of numbers", "1 each", "≥ 0, one per scenario, not all 0", "", "weights = [1, 2, 1]", "How much each scenario counts under `robustness = \"expected\"`."),
    // targets
    k("targets", "default", "number", "0.3", "0–1", "share", "default = 0.3", "Share of each species' habitat (per scenario and year) the network must hold; 0.3 is the Kunming-Montreal Target 3 share."),
    // species
    k("species[]", "name", "string", "required", "any text without `/`, braces, quotes or backslashes; distinct", "", "name = \"Sebastes fasciatus\"", "The species; `{species}` in its habitat path or column takes it as written. Output column names use a safe form (lower case, `_` for anything else); tables keep the name as given."),
    k("species[]", "habitat", "layer table", "required", "values 0–1", "share of the cell", "habitat = { path = \"ocean/{scenario}_{year}.csv\", column = \"{species}\" }", "Habitat suitability per scenario and year; a cell holds suitability × its sea area (km²)."),
    k("species[]", "target", "number", "`[targets] default`", "0–1", "share", "target = 0.4", "This species' own target share."),
    k("species[]", "weight", "number", "1", "≥ 0", "", "weight = 2", "How much the species counts in max-benefit objectives."),
    k("species[]", "may_be_absent", "boolean", "false", "true, false", "", "may_be_absent = true", "A species with no habitat anywhere in the region is allowed (reported as absent) instead of an error."),
    // species_list
    k("species_list", "names", "array of strings", "required", "as `[[species]]` `name`; distinct", "", "names = [\"amber-wrasse\", \"Sebastes fasciatus\"]", "The species, in order."),
    k("species_list", "habitat", "layer table", "required", "values 0–1", "share of the cell", "habitat = { path = \"ocean/{scenario}_{year}.csv\", column = \"{species}\" }", "The shared habitat source; `{species}` takes each name."),
    k("species_list", "target", "number", "`[targets] default`", "0–1", "share", "target = 0.3", "The target share of every listed species."),
    k("species_list", "weight", "number", "1", "≥ 0", "", "weight = 1", "How much each listed species counts in max-benefit objectives."),
    k("species_list", "may_be_absent", "boolean", "false", "true, false", "", "may_be_absent = true", "A listed species with no habitat in the region is allowed (reported as absent)."),
    // layer
    k("layer", "path", "path", "required", ".csv, .geojson/.json, .gpkg, .shp, .fgb, .tif and other GDAL rasters, .nc", "", "path = \"ocean/{scenario}_{year}.csv\"", "The file; relative to the plan file."),
    k("layer", "column", "string", "required for CSV point grids", "a header name (case-insensitive)", "", "column = \"sst_c\"", "The CSV column that holds the values."),
    k("layer", "attribute", "string", "required for area-mean and point sums/means", "a property name", "", "attribute = \"depth_m\"", "The vector file's property that holds the values."),
    k("layer", "band", "integer", "1", "≥ 1", "", "band = 2", "The raster band to read."),
    k("layer", "variable", "string", "required for NetCDF", "a variable name", "", "variable = \"tos\"", "The NetCDF-CF variable; its CF time axis gives each year's mean."),
    k("layer", "years_window", "integer", "1", "≥ 1; NetCDF only", "years", "years_window = 20", "The mean over this many years centred on each plan year."),
    k("layer", "layer", "string", "the file's only layer", "a layer name", "", "layer = \"reefs\"", "Which layer of a multi-layer file (a GeoPackage)."),
    k("layer", "sampling", "string", "interpolate for CSV and rasters; area-share for polygons (area-mean with `attribute`)", "interpolate, area-share, area-mean, point-count, point-sum, point-mean", "", "sampling = \"area-mean\"", "How values become per-cell values: bilinear on a lattice (coastal plane where land points are missing), share of the cell inside polygons, area-weighted mean, or points counted, summed or averaged per cell."),
    k("layer", "crs", "string", "the file's own CRS, else WGS84 lon/lat", "a CRS PROJ knows", "", "crs = \"EPSG:32633\"", "The CRS of the file's coordinates, when the file does not say."),
    k("layer", "min", "number", "no lower bound (0 for habitat)", "≤ max", "the layer's", "min = 0", "Values below are errors naming the file and place."),
    k("layer", "max", "number", "no upper bound (1 for habitat)", "≥ min", "the layer's", "max = 40", "Values above are errors naming the file and place."),
    k("layer", "missing", "string", "\"error\" (\"zero\" for habitat, required and excluded polygons)", "error, zero", "", "missing = \"zero\"", "What cells the file says nothing about get: an error (never use missing data silently) or 0."),
    // cost
    k("cost", "per", "string", "\"km2\"", "km2, cell", "", "per = \"cell\"", "Whether the values are per km² (a cell costs value × its sea area) or per cell."),
    // required, excluded
    k("required, excluded", "min_share", "number", "0.5 for required, 0.01 for excluded", "0–1", "share of the cell", "min_share = 0.5", "A cell is required (excluded) when at least this share of its sea lies inside the polygons."),
    // budget
    k("budget", "max_cost", "number", "no limit", "≥ 0", "cost units", "max_cost = 50000", "The most cost the network may use."),
    k("budget", "max_share", "number", "no limit", "0–1", "share of the region's sea", "max_share = 0.3", "The most of the region's sea area the network may cover."),
    // optimise
    k("optimise", "objective", "string", "\"min-cost\"", "min-cost, max-benefit", "", "objective = \"max-benefit\"", "min-cost: hold every target at least cost (minimum set); max-benefit: hold the most target coverage within the budget (maximum coverage)."),
    k("optimise", "robustness", "string", "\"every-scenario\"", "every-scenario, worst-case, expected, least-regret", "", "robustness = \"least-regret\"", "How scenarios are combined: every target in every scenario, or (max-benefit) the worst scenario's benefit, the weighted mean, or the least regret against each scenario's best."),
    k("optimise", "edge_penalty", "number", "0", "≥ 0", "cost units per km", "edge_penalty = 1", "Weight per km of reserve edge exposed to unprotected sea: larger gives fewer, more compact reserves. To choose it, solve with a few weights (e.g. 0, 0.1, 1, 10 × the mean cost per km of cell side) and pick where edge length stops falling much for the cost added."),
    k("optimise", "count_coast_edges", "boolean", "false", "true, false", "", "count_coast_edges = true", "Count reserve edge along the coast and the region's boundary as exposed too."),
    k("optimise", "max_gap_km", "number", "no rule", "> 0", "km", "max_gap_km = 100", "Stepping stones: the largest distance allowed between neighbouring reserves along the poleward axis."),
    k("optimise", "min_reserve_km2", "number", "no rule", "> 0", "km²", "min_reserve_km2 = 50", "A free cell smaller than this may be chosen only with a chosen rook neighbour (no lone undersized cells; required cells exempt)."),
    k("optimise", "min_chosen_neighbours", "integer", "no rule", "0–4", "cells", "min_chosen_neighbours = 1", "Every chosen free cell has at least this many chosen rook neighbours (required cells exempt, and counted as neighbours)."),
    k("optimise", "connectivity_weight", "number", "0", "≥ 0", "objective units per unit of link strength", "connectivity_weight = 10", "Reward larval exchange between chosen cells: each kept pair of chosen cells earns this weight times its strength (the share of larvae exchanged both ways, summed over species, scenario-weighted). Needs `[connectivity]`. Lowers a minimised objective, raises a maximised one."),
    k("optimise", "connectivity_min_link", "number", "0.01", "≥ 0", "share of larvae", "connectivity_min_link = 0.02", "Weakest link strength the reward keeps."),
    k("optimise", "connectivity_links_per_cell", "integer", "4", "1–64", "links", "connectivity_links_per_cell = 6", "How many of its strongest links each cell keeps for the reward (a link stays when either end keeps it)."),
    // solver
    k("solver", "time_limit_s", "number", "300", "> 0", "s", "time_limit_s = 120", "Time for all the solves of one command together; the best network found is returned with its proven gap."),
    k("solver", "gap", "number", "0.005", "0–1", "share", "gap = 0.005", "Stop when the network is proven within this relative distance of the optimum."),
    k("solver", "threads", "integer", "HiGHS's choice", "≥ 1", "", "threads = 2", "Threads for the main solve."),
    k("solver", "method", "string", "\"auto\"", "auto, direct, decompose", "", "method = \"decompose\"", "Exact method: the whole integer program in HiGHS (`direct`), or the Lagrangian decomposition with a proven bound for very large models (`decompose`: min-cost and max-benefit under every robustness rule, with the edge penalty and the connectivity reward); `auto` decomposes from 8 000 free cells when the model is in its scope (docs/method.md)."),
    // climate
    k("climate", "velocity", "table", "computed from [temperature]", "", "", "[climate.velocity]", "See `[climate.velocity]`."),
    k("climate", "trajectories", "table", "defaults below", "", "", "[climate.trajectories]", "See `[climate.trajectories]`."),
    k("climate", "corridor", "table", "off", "", "", "[climate.corridor]", "Turns on corridor features."),
    k("climate", "leading-edge", "table", "off", "", "", "[climate.leading-edge]", "Turns on leading-edge features."),
    k("climate", "trailing-edge", "table", "off", "", "", "[climate.trailing-edge]", "Turns on trailing-edge features."),
    k("climate", "refugium", "table", "off", "", "", "[climate.refugium]", "Turns on refugium features."),
    k("climate", "boundary", "table", "off", "", "", "[climate.boundary]", "Turns on boundary features."),
    k("climate", "distinctness", "table", "off", "", "", "[climate.distinctness]", "Turns on distinctness features."),
    k("climate", "time", "table", "equal weights", "", "", "[climate.time]", "See `[climate.time]`."),
    // climate.velocity
    k("climate.velocity", "min_gradient_c_per_km", "number", "0.0005", "> 0", "°C/km", "min_gradient_c_per_km = 0.0005", "Spatial gradients below this are floored, so flat water does not give infinite velocity (such cells are counted and their bearing left empty)."),
    k("climate.velocity", "speed", "layer table", "computed", "", "km/yr", "speed = { path = \"velocity.csv\", column = \"speed\" }", "A velocity magnitude layer, given instead of computing it (with `bearing`)."),
    k("climate.velocity", "bearing", "layer table", "computed", "", "degrees clockwise from north", "bearing = { path = \"velocity.csv\", column = \"bearing\" }", "The velocity's direction, given with `speed`."),
    // climate.trajectories
    k("climate.trajectories", "horizon_years", "number", "last year − first year", "> 0", "years", "horizon_years = 60", "How long trajectories are followed."),
    k("climate.trajectories", "step_years", "number", "1", "> 0", "years", "step_years = 1", "The integration step."),
    k("climate.trajectories", "corridor_quantile", "number", "0.9", "strictly between 0 and 1", "quantile", "corridor_quantile = 0.9", "Cells entered by trajectories at or above this quantile, with paths leaving, are classed as corridors (the flow classes of trajectories)."),
    // climate.corridor
    k("climate.corridor", "min_habitat_share", "number", "0", "0–1", "share", "min_habitat_share = 0.1", "A cell holds habitat when more than this share of its sea is suitable; corridors count trajectories from first-year to last-year habitat through each cell, per species."),
    k("climate.corridor", "target", "number", "none", "0–1", "share", "target = 0.3", "Share of the feature's total the network must hold."),
    k("climate.corridor", "weight", "number", "1", "≥ 0", "", "weight = 1", "Weight in max-benefit objectives."),
    // edges
    k("climate.leading-edge, climate.trailing-edge", "band_km", "number", "100", "> 0", "km", "band_km = 60", "Habitat within this distance of the edge counts."),
    k("climate.leading-edge, climate.trailing-edge", "quantile", "number", "0.95 (leading), 0.05 (trailing)", "strictly between 0 and 1", "quantile", "quantile = 0.95", "The edge is this habitat-weighted quantile of position along the axis."),
    k("climate.leading-edge, climate.trailing-edge", "axis", "string", "\"latitude\"", "\"latitude\" or a GeoJSON line file", "", "axis = \"coast-axis.geojson\"", "The poleward axis: meridian distance, or distance along a line such as a coast."),
    k("climate.leading-edge, climate.trailing-edge", "target", "number", "none", "0–1", "share", "target = 0.3", "Share of the feature's total the network must hold."),
    k("climate.leading-edge, climate.trailing-edge", "weight", "number", "1", "≥ 0", "", "weight = 0.5", "Weight in max-benefit objectives."),
    // refugium
    k("climate.refugium", "metric", "string", "\"speed\"", "speed, warming", "", "metric = \"warming\"", "What makes a refugium: slow climate velocity, or little warming (needs `[temperature]`)."),
    k("climate.refugium", "low_quantile", "number", "0.25", "strictly between 0 and 1", "quantile", "low_quantile = 0.25", "Cells below this quantile of the metric are refugia."),
    k("climate.refugium", "min_habitat_share", "number", "0", "0–1", "share", "min_habitat_share = 0.1", "Persistence: the share of a cell's sea that must be suitable in every year of a scenario for persistent habitat."),
    k("climate.refugium", "per_species", "boolean", "false", "true, false", "", "per_species = true", "One refugium feature per species (its persistent habitat) beside the low-exposure water."),
    k("climate.refugium", "low_exposure_only", "boolean", "false", "true, false", "", "low_exposure_only = true", "Species refugia only in low-exposure (refuge) water."),
    k("climate.refugium", "polygons", "layer table", "computed", "", "", "polygons = { path = \"refugia.geojson\" }", "Refugia given as polygons instead of computed."),
    k("climate.refugium", "score", "layer table", "computed", "", "", "score = { path = \"refugia.csv\", column = \"score\" }", "Refugia given as a per-cell score instead of computed."),
    k("climate.refugium", "target", "number", "none", "0–1", "share", "target = 0.3", "Share of the feature's total the network must hold."),
    k("climate.refugium", "weight", "number", "1", "≥ 0", "", "weight = 1", "Weight in max-benefit objectives."),
    // boundary
    k("climate.boundary", "lines", "path", "required unless `edge_density`", "a GeoJSON line file", "", "lines = \"fronts.geojson\"", "The boundaries (fronts) as lines."),
    k("climate.boundary", "band_km", "number", "30", "> 0", "km", "band_km = 30", "Sea within this distance of a line counts."),
    k("climate.boundary", "decay", "string", "\"linear\"", "linear, exponential", "", "decay = \"exponential\"", "How a cell's value falls with distance from the line."),
    k("climate.boundary", "scale_km", "number", "band_km ÷ 3", "> 0; exponential only", "km", "scale_km = 10", "The e-folding distance of exponential decay."),
    k("climate.boundary", "edge_density", "boolean", "false", "true, false", "", "edge_density = true", "Also count, per cell, the species' range edges within `edge_band_km`: boundaries where many ranges end."),
    k("climate.boundary", "edge_band_km", "number", "25", "> 0", "km", "edge_band_km = 25", "With `edge_density`: the window for counting range edges near a cell."),
    k("climate.boundary", "axis", "string", "\"latitude\"", "\"latitude\" or a GeoJSON line file", "", "axis = \"latitude\"", "With `edge_density`: the axis range edges are measured along."),
    k("climate.boundary", "target", "number", "none", "0–1", "share", "target = 0.2", "Share of the feature's total the network must hold."),
    k("climate.boundary", "weight", "number", "1", "≥ 0", "", "weight = 1", "Weight in max-benefit objectives."),
    // distinctness
    k("climate.distinctness", "points", "path", "required unless `layer`", "a GeoJSON point file", "", "points = \"samples.geojson\"", "Sample sites with a distinctness value (e.g. G_ST or F_ST against the pooled sample)."),
    k("climate.distinctness", "attribute", "string", "required with `points`", "a property name", "", "attribute = \"gst\"", "The points' property that holds the value."),
    k("climate.distinctness", "radius_km", "number", "50", "> 0", "km", "radius_km = 40", "How far a sample's value is spread."),
    k("climate.distinctness", "method", "string", "\"idw\"", "idw, nearest", "", "method = \"nearest\"", "Spread sample values onto cells within the radius by inverse-distance weighting (Shepard 1968) or the nearest point."),
    k("climate.distinctness", "power", "number", "2", "> 0; idw only", "", "power = 2", "The inverse-distance exponent."),
    k("climate.distinctness", "layer", "layer table", "none", "", "", "layer = { path = \"distinct.csv\", column = \"fst\" }", "Distinctness given as a per-cell layer instead of points."),
    k("climate.distinctness", "target", "number", "none", "0–1", "share", "target = 0.3", "Share of the feature's total the network must hold."),
    k("climate.distinctness", "weight", "number", "1", "≥ 0", "", "weight = 1", "Weight in max-benefit objectives."),
    // time
    k("climate.time", "weights", "string", "\"equal\"", "equal, discount", "", "weights = \"discount\"", "How the years count in max-benefit objectives."),
    k("climate.time", "discount_rate", "number", "required with discount", "≥ 0", "per year", "discount_rate = 0.03", "Each year counts ∝ (1 + rate)^−(year − first year), normalised to sum to one."),
    k("climate.time", "combine_years", "boolean", "false", "true, false", "", "combine_years = true", "One time-weighted feature per species and scenario instead of one target per year; without it the time weights scale each year's objective weight."),
    // connectivity
    k("connectivity", "u", "layer table", "required unless every species gives `matrix`", "CSV lattice", "m/s", "u = { path = \"currents-{scenario}.csv\", column = \"u\" }", "Eastward surface current; `{scenario}` for one field per scenario, else shared."),
    k("connectivity", "v", "layer table", "required with `u`", "CSV lattice", "m/s", "v = { path = \"currents-{scenario}.csv\", column = \"v\" }", "Northward surface current."),
    k("connectivity", "particles_per_cell", "integer", "100", "1–100000", "", "particles_per_cell = 100", "Larvae released uniformly over each sea cell."),
    k("connectivity", "seed", "integer", "1", "≥ 0", "", "seed = 7", "Seed of the random walk; results do not depend on the thread count."),
    k("connectivity", "currents_year", "integer", "the plan's first year", "1–9999", "year", "currents_year = 2050", "The year NetCDF currents with a time axis are read for: the mean of the file's steps in that year (or the layer's `years_window` around it). CSV and raster currents ignore it."),
    k("connectivity", "step_hours", "number", "6", "> 0", "h", "step_hours = 3", "Largest RK4 step, shortened so a particle moves at most half a cell per step."),
    k("connectivity", "reachability_target", "number", "none", "0–1", "share", "reachability_target = 0.3", "Target of a `reachability/<species>/<scenario>` feature: last-year habitat reached by larvae from first-year habitat."),
    k("connectivity", "reachability_weight", "number", "1", "≥ 0", "", "reachability_weight = 1", "Weight of the reachability features in max-benefit objectives."),
    k("connectivity", "species", "array of tables", "required", "", "", "[[connectivity.species]]", "See `[[connectivity.species]]`."),
    k("connectivity.species[]", "name", "string", "required", "a species of the plan", "", "name = \"amber-wrasse\"", "The species tracked."),
    k("connectivity.species[]", "larval_days", "number", "required unless `matrix`", "> 0", "days", "larval_days = 30", "Pelagic larval duration."),
    k("connectivity.species[]", "diffusivity_m2_s", "number", "0", "≥ 0", "m²/s", "diffusivity_m2_s = 10", "Horizontal eddy diffusivity of the random walk (step √(2·K·dt) per axis)."),
    k("connectivity.species[]", "settle_from_day", "number", "the last day", "0–larval_days", "days", "settle_from_day = 25", "Start of the settlement window."),
    k("connectivity.species[]", "settle_to_day", "number", "larval_days", "settle_from_day–larval_days", "days", "settle_to_day = 30", "End of the settlement window."),
    k("connectivity.species[]", "matrix", "path", "tracked", "CSV `from,to,probability`", "", "matrix = \"links-{scenario}.csv\"", "A dispersal matrix supplied instead of tracking (cell ids of this plan's grid)."),
    // zones
    k("zones[]", "name", "string", "required", "letters, digits, `-`, `_`, `.`; distinct", "", "name = \"no-take\"", "The zone; the cells' `zone` column numbers zones in this order from 1."),
    k("zones[]", "cost_share", "number", "1", "0–1", "share", "cost_share = 0.4", "Share of a cell's cost paid when it is in this zone."),
    k("zones[]", "credit", "number", "1", "0–1", "share", "credit = 0.5", "Share of each feature's amount that counts toward its target in this zone."),
    k("zones[]", "credit_by_kind", "table", "`credit`", "kind = share", "share", "credit_by_kind = { refugium = 0.2 }", "Credit per feature kind (habitat, corridor, leading-edge, …)."),
    k("zones[]", "credit_by_species", "table", "`credit`", "species = share", "share", "credit_by_species = { \"harbour-seagrass\" = 0.8 }", "Credit per species."),
    k("zones[]", "target", "number", "none", "0–1", "share", "target = 0.1", "Share of each targeted feature's total that must lie in this zone."),
    k("zones[]", "required", "layer table", "none", "", "", "required = { path = \"cores.geojson\", min_share = 0.5 }", "Cells that must be in this zone."),
    k("zones[]", "excluded", "layer table", "none", "", "", "excluded = { path = \"lanes.geojson\" }", "Cells that may not be in this zone."),
];

/// The keys the table `section` accepts (see [`KeyDoc::section`]).
pub fn keys_of(section: &str) -> Vec<&'static str> {
    KEYS.iter()
        .filter(|d| d.section == section)
        .map(|d| d.key)
        .collect()
}

/// `docs/plan-reference.md`: every section with its keys, as a table.
pub fn markdown() -> String {
    let cell = |s: &str| {
        if s.is_empty() {
            "—".to_string()
        } else {
            s.replace('|', "\\|")
        }
    };
    let mut out = String::from(
        "# Plan file reference\n\n\
         Every key a driftplan plan file may hold, table by table. A plan is one TOML file; paths in it are\n\
         relative to it. `driftplan check PLAN` reports every problem with its key. This page is written from\n\
         the validator's own key table (`src/plan/reference.rs`), and a test fails when the two differ:\n\
         regenerate it with `DRIFTPLAN_WRITE_REFERENCE=1 cargo test --test plan_reference`.\n",
    );
    for (section, about) in SECTIONS {
        let title = match *section {
            "" => "Top level".to_string(),
            s => format!("`{s}`"),
        };
        out.push_str(&format!(
            "\n## {title}\n\n{about}\n\n| key | type | default | allowed | unit | example | what it does |\n|---|---|---|---|---|---|---|\n"
        ));
        for d in KEYS.iter().filter(|d| d.section == *section) {
            out.push_str(&format!(
                "| `{}` | {} | {} | {} | {} | `{}` | {} |\n",
                d.key,
                cell(d.kind),
                cell(d.default),
                cell(d.allowed),
                cell(d.unit),
                d.example.replace('|', "\\|"),
                cell(d.about)
            ));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_key_is_in_a_listed_section_once() {
        let mut seen = std::collections::BTreeSet::new();
        for d in KEYS {
            assert!(
                SECTIONS.iter().any(|(s, _)| *s == d.section),
                "{}: section `{}` is not listed",
                d.key,
                d.section
            );
            assert!(
                seen.insert((d.section, d.key)),
                "{}.{} twice",
                d.section,
                d.key
            );
        }
        assert_eq!(
            keys_of("grid"),
            vec!["cell_size_km", "crs", "min_sea_share"]
        );
    }
}
