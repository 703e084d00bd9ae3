//! Climate trajectories (Burrows et al. 2014, Nature 507:492): paths traced from each cell
//! centre along the local climate velocity, and the flow classes of cells they reveal
//! (sources, sinks, corridors).

use super::stats::quantile;
use super::velocity::Velocity;
use super::{check_range, ClimateError};
use crate::grid::Grid;
use rayon::prelude::*;

/// How trajectories are traced and cells classed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TrajectoryParams {
    /// How long each trajectory runs. Units: years.
    pub horizon_years: f64,
    /// Longest time step. Units: years. The tracer also shortens each step so it moves at
    /// most half a cell, so that no cell on the way is skipped.
    pub step_years: f64,
    /// Cells whose count of entering trajectories is at or above this quantile (type 7, over
    /// the cells that any trajectory enters) and that trajectories also leave are
    /// corridors. Our rule after Burrows et al. 2014, who mark the cells of highest through-flow
    /// (the exact published cut-off not confirmed; 0.9 = the top decile by default).
    pub corridor_quantile: f64,
}

impl Default for TrajectoryParams {
    fn default() -> Self {
        TrajectoryParams {
            horizon_years: 50.0,
            step_years: 1.0,
            corridor_quantile: 0.9,
        }
    }
}

/// Why a trajectory stopped.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Stop {
    /// It ran the whole horizon (possibly standing still in a cell with no velocity vector).
    Horizon,
    /// It moved onto land or out of the grid.
    LeftSea,
    /// It reached a cell with no velocity (missing temperature data).
    NoVelocity,
}

/// One traced trajectory.
#[derive(Debug, Clone, PartialEq)]
pub struct Trajectory {
    /// Cells visited in order, the start cell first; consecutive repeats removed (a cell left
    /// and entered again appears again).
    pub cells: Vec<u32>,
    /// Final position, projected metres.
    pub end_xy: [f64; 2],
    /// Why it stopped.
    pub stop: Stop,
    /// Length of the path on the grid. Units: km.
    pub travelled_km: f64,
}

impl Trajectory {
    /// The cell it ends in, unless it left the sea.
    pub fn end_cell(&self) -> Option<u32> {
        (self.stop != Stop::LeftSea).then(|| {
            *self
                .cells
                .last()
                .expect("a trajectory holds its start cell")
        })
    }
}

/// Checks the tracing parameters.
fn check_params(params: &TrajectoryParams) -> Result<(), ClimateError> {
    check_range(
        "horizon_years",
        params.horizon_years,
        0.0,
        f64::INFINITY,
        false,
    )?;
    check_range("step_years", params.step_years, 0.0, f64::INFINITY, false)?;
    check_range(
        "corridor_quantile",
        params.corridor_quantile,
        0.0,
        1.0,
        true,
    )
}

/// Traces one trajectory from the centre of cell `start` (Burrows et al. 2014).
///
/// Each step moves by velocity × dt with the velocity of the cell the point is in (the vector
/// is re-sampled after every step); dt is `step_years`, shortened so a step covers at most
/// half a cell and so the last step ends exactly at the horizon. It stops on leaving the sea
/// (onto a lattice square with no cell, or off the grid), on reaching a cell without velocity,
/// or at the horizon. A cell with a zero vector holds the trajectory until the horizon.
/// Burrows et al. 2014 deflect paths along coasts; this tracer stops them instead.
pub fn trace(
    grid: &Grid,
    velocity: &Velocity,
    start: u32,
    params: &TrajectoryParams,
) -> Result<Trajectory, ClimateError> {
    check_params(params)?;
    if start as usize >= grid.len() || velocity.grid_velocity.len() != grid.len() {
        return Err(ClimateError::Invalid(format!(
            "trajectory start cell {start} or velocity of {} cells does not fit a grid of {} cells",
            velocity.grid_velocity.len(),
            grid.len()
        )));
    }
    Ok(trace_unchecked(grid, velocity, start, params))
}

fn trace_unchecked(
    grid: &Grid,
    velocity: &Velocity,
    start: u32,
    params: &TrajectoryParams,
) -> Trajectory {
    let half_cell_km = 0.5 * grid.cell_size_m / 1000.0;
    let mut pos = grid.cells[start as usize].centre;
    let mut cells = vec![start];
    let mut current = start;
    let mut t = 0.0;
    let mut travelled_km = 0.0;
    // Relative slack so rounding of the last step does not add a zero-length step.
    let eps = 1e-12 * params.horizon_years.max(1.0);
    let stop = loop {
        if t >= params.horizon_years - eps {
            break Stop::Horizon;
        }
        let v = velocity.grid_velocity[current as usize];
        if !(v[0].is_finite() && v[1].is_finite()) {
            break Stop::NoVelocity;
        }
        let speed = v[0].hypot(v[1]);
        if speed == 0.0 {
            break Stop::Horizon;
        }
        let dt = params
            .step_years
            .min(params.horizon_years - t)
            .min(half_cell_km / speed);
        pos = [pos[0] + v[0] * dt * 1000.0, pos[1] + v[1] * dt * 1000.0];
        t += dt;
        travelled_km += speed * dt;
        match grid.locate(pos) {
            None => break Stop::LeftSea,
            Some(id) if id != current => {
                cells.push(id);
                current = id;
            }
            Some(_) => {}
        }
    };
    Trajectory {
        cells,
        end_xy: pos,
        stop,
        travelled_km,
    }
}

/// Every trajectory of one scenario, stored compactly: trajectory `k` starts in
/// `starts[k]` and visits `cells[offsets[k]..offsets[k + 1]]`.
#[derive(Debug, Clone, PartialEq)]
pub struct TrajectorySet {
    /// Start cell of each trajectory, ascending.
    pub starts: Vec<u32>,
    /// Offsets into `cells`; one more than there are trajectories.
    pub offsets: Vec<usize>,
    /// Visited cells of all trajectories, concatenated (see [`Trajectory::cells`]).
    pub cells: Vec<u32>,
    /// Why each trajectory stopped.
    pub stops: Vec<Stop>,
    /// Path length of each trajectory. Units: km.
    pub travelled_km: Vec<f64>,
    /// Index of the trajectory starting in each cell (`u32::MAX` where none starts).
    pub by_start: Vec<u32>,
}

impl TrajectorySet {
    /// Number of trajectories.
    pub fn len(&self) -> usize {
        self.starts.len()
    }

    /// True when no trajectory was traced.
    pub fn is_empty(&self) -> bool {
        self.starts.is_empty()
    }

    /// Cells visited by trajectory `k`, in order.
    pub fn path(&self, k: usize) -> &[u32] {
        &self.cells[self.offsets[k]..self.offsets[k + 1]]
    }

    /// The cell trajectory `k` ends in, unless it left the sea.
    pub fn end_cell(&self, k: usize) -> Option<u32> {
        (self.stops[k] != Stop::LeftSea).then(|| self.cells[self.offsets[k + 1] - 1])
    }

    /// Index of the trajectory that starts in `cell`, if any.
    pub fn starting_in(&self, cell: u32) -> Option<usize> {
        let k = *self.by_start.get(cell as usize)?;
        (k != u32::MAX).then_some(k as usize)
    }
}

/// Traces a trajectory from every cell that has a velocity ([`trace`]), in parallel; the
/// result does not depend on the thread count (each path is independent and they are
/// stored in start-cell order). Memory: one `u32` per visited cell per trajectory.
pub fn trace_all(
    grid: &Grid,
    velocity: &Velocity,
    params: &TrajectoryParams,
) -> Result<TrajectorySet, ClimateError> {
    check_params(params)?;
    if velocity.grid_velocity.len() != grid.len() {
        return Err(ClimateError::CellCount {
            what: "velocity".into(),
            expected: grid.len(),
            got: velocity.grid_velocity.len(),
        });
    }
    let starts: Vec<u32> = (0..grid.len() as u32)
        .filter(|&id| velocity.grid_velocity[id as usize][0].is_finite())
        .collect();
    let paths: Vec<Trajectory> = starts
        .par_iter()
        .map(|&s| trace_unchecked(grid, velocity, s, params))
        .collect();
    let mut offsets = Vec::with_capacity(paths.len() + 1);
    offsets.push(0);
    let mut cells = Vec::new();
    let mut stops = Vec::with_capacity(paths.len());
    let mut travelled_km = Vec::with_capacity(paths.len());
    for p in paths {
        cells.extend_from_slice(&p.cells);
        offsets.push(cells.len());
        stops.push(p.stop);
        travelled_km.push(p.travelled_km);
    }
    let mut by_start = vec![u32::MAX; grid.len()];
    for (k, &s) in starts.iter().enumerate() {
        by_start[s as usize] = k as u32;
    }
    Ok(TrajectorySet {
        starts,
        offsets,
        cells,
        stops,
        travelled_km,
        by_start,
    })
}

/// Per-cell trajectory counts (each trajectory counted at most once per cell).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FlowCounts {
    /// Trajectories that are in the cell at some time, including the one starting there.
    pub visits: Vec<u32>,
    /// Trajectories that move into the cell from another cell (the through-flow in).
    pub entries: Vec<u32>,
    /// Trajectories that move out of the cell, to another cell or off the sea.
    pub exits: Vec<u32>,
    /// Trajectories that end in the cell (at the horizon or at missing data).
    pub ends: Vec<u32>,
}

/// Flow class of a cell (after Burrows et al. 2014).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum FlowClass {
    /// No trajectory enters the cell and its own trajectory leaves: climates here have no
    /// analogue arriving from elsewhere.
    Source,
    /// Trajectories end in the cell and none leaves it: climates converge and stay.
    Sink,
    /// High through-flow: entries at or above the corridor quantile, and trajectories leave.
    Corridor,
    /// None of the above.
    Other,
    /// The cell has no velocity (missing temperature data).
    NoData,
}

impl FlowClass {
    /// Name for outputs.
    pub fn as_str(self) -> &'static str {
        match self {
            FlowClass::Source => "source",
            FlowClass::Sink => "sink",
            FlowClass::Corridor => "corridor",
            FlowClass::Other => "other",
            FlowClass::NoData => "no-data",
        }
    }
}

/// Counts trajectories per cell and classes each cell.
///
/// Rules (ours, after Burrows et al. 2014, checked in this order): `NoData` when the cell has
/// no velocity; `Sink` when at least one trajectory ends in it and none leaves it; `Source`
/// when none enters it and its own trajectory leaves; `Corridor` when its entries are at or
/// above the `corridor_quantile` of entries over cells that any trajectory enters, and
/// trajectories leave it; otherwise `Other`.
pub fn classify_flow(
    grid: &Grid,
    set: &TrajectorySet,
    params: &TrajectoryParams,
) -> Result<(FlowCounts, Vec<FlowClass>), ClimateError> {
    check_params(params)?;
    let n = grid.len();
    if set.by_start.len() != n {
        return Err(ClimateError::CellCount {
            what: "trajectory set".into(),
            expected: n,
            got: set.by_start.len(),
        });
    }
    let zero = || FlowCounts {
        visits: vec![0; n],
        entries: vec![0; n],
        exits: vec![0; n],
        ends: vec![0; n],
    };
    // Integer sums: the same totals whatever the split between threads. Each split holds
    // four dense count vectors, so splits are kept to about four per thread.
    let min_len = (set.len() / (4 * rayon::current_num_threads())).max(1);
    let counts = (0..set.len())
        .into_par_iter()
        .with_min_len(min_len)
        .fold(zero, |mut acc, k| {
            let path = set.path(k);
            let mut seen: Vec<u32> = path.to_vec();
            seen.sort_unstable();
            seen.dedup();
            for &c in &seen {
                acc.visits[c as usize] += 1;
            }
            let mut entered: Vec<u32> = path[1..].to_vec();
            entered.sort_unstable();
            entered.dedup();
            for &c in &entered {
                acc.entries[c as usize] += 1;
            }
            // Every visited cell but the last is left for the next; the last is left too
            // when the trajectory runs off the sea.
            let keep = if set.stops[k] == Stop::LeftSea {
                path.len()
            } else {
                path.len() - 1
            };
            let mut left: Vec<u32> = path[..keep].to_vec();
            left.sort_unstable();
            left.dedup();
            for &c in &left {
                acc.exits[c as usize] += 1;
            }
            if let Some(e) = set.end_cell(k) {
                acc.ends[e as usize] += 1;
            }
            acc
        })
        .reduce(zero, |mut a, b| {
            for i in 0..n {
                a.visits[i] += b.visits[i];
                a.entries[i] += b.entries[i];
                a.exits[i] += b.exits[i];
                a.ends[i] += b.ends[i];
            }
            a
        });
    let entered: Vec<f64> = counts
        .entries
        .iter()
        .filter(|&&e| e > 0)
        .map(|&e| e as f64)
        .collect();
    let cut = quantile(&entered, params.corridor_quantile);
    let classes = (0..n)
        .map(|i| {
            if set.by_start[i] == u32::MAX {
                FlowClass::NoData
            } else if counts.ends[i] > 0 && counts.exits[i] == 0 {
                FlowClass::Sink
            } else if counts.entries[i] == 0 && counts.exits[i] > 0 {
                FlowClass::Source
            } else if cut.is_some_and(|c| counts.entries[i] as f64 >= c) && counts.exits[i] > 0 {
                FlowClass::Corridor
            } else {
                FlowClass::Other
            }
        })
        .collect();
    Ok((counts, classes))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::Crs;

    /// A velocity field given directly in grid axes (km/yr), for tracer tests.
    fn field(grid: &Grid, f: impl Fn(u32, u32) -> [f64; 2]) -> Velocity {
        let n = grid.len();
        let gv: Vec<[f64; 2]> = grid.cells.iter().map(|c| f(c.col, c.row)).collect();
        Velocity {
            trend_c_per_yr: vec![0.0; n],
            gradient_xy: vec![[0.0, 0.0]; n],
            gradient_c_per_km: vec![0.0; n],
            speed_km_per_yr: gv.iter().map(|v| v[0].hypot(v[1])).collect(),
            bearing_deg: vec![f64::NAN; n],
            floored: vec![false; n],
            grid_velocity: gv,
        }
    }

    fn grid(n_cols: u32, n_rows: u32) -> Grid {
        Grid::full_rectangle(
            Crs::auto_laea(0.0, 0.0),
            10_000.0,
            [0.0, 0.0],
            n_cols,
            n_rows,
        )
        .unwrap()
    }

    #[test]
    fn a_uniform_eastward_flow_moves_speed_times_time() {
        // Closed form: 3 km/yr east for 20 years from the centre of column 1 (x = 15 km)
        // ends at x = 75 km (column 7), y unchanged; path = columns 1..=7.
        let g = grid(10, 1);
        let v = field(&g, |_, _| [3.0, 0.0]);
        let p = TrajectoryParams {
            horizon_years: 20.0,
            step_years: 1.0,
            corridor_quantile: 0.9,
        };
        let t = trace(&g, &v, 1, &p).unwrap();
        assert!((t.end_xy[0] - 75_000.0).abs() < 1e-6 && (t.end_xy[1] - 5_000.0).abs() < 1e-9);
        assert!((t.travelled_km - 60.0).abs() < 1e-9);
        assert_eq!(t.cells, vec![1, 2, 3, 4, 5, 6, 7]);
        assert_eq!(t.stop, Stop::Horizon);
        assert_eq!(t.end_cell(), Some(7));
        // From column 5 the path runs off the east edge (x = 100 km) after 15 years.
        let t = trace(&g, &v, 5, &p).unwrap();
        assert_eq!(t.stop, Stop::LeftSea);
        assert_eq!(t.end_cell(), None);
        assert_eq!(*t.cells.last().unwrap(), 9);
    }

    #[test]
    fn uniform_flow_classes() {
        // Hand reasoning: eastward 10 km/yr for 2.2 years moves 22 km, from the centre of
        // column c (10c + 5 km) to 10c + 27 km, column c + 2, in a 6×1 strip of 10 km cells.
        // Entries: column c is entered by the trajectories of min(c, 2) upstream columns:
        // 0,1,2,2,2,2. Ends: trajectories 0–3 end in columns 2–5; 4 and 5 run off the east
        // edge. Exits: column c is left by its visitors except the one ending there:
        // 1,2,2,2,2,2. The type-7 0.9 quantile of the non-zero entries (1,2,2,2,2) is 2, so
        // columns 2–5 are corridors; column 0 (no entries) is a source.
        let g = grid(6, 1);
        let v = field(&g, |_, _| [10.0, 0.0]);
        let p = TrajectoryParams {
            horizon_years: 2.2,
            step_years: 1.0,
            corridor_quantile: 0.9,
        };
        let set = trace_all(&g, &v, &p).unwrap();
        let (counts, classes) = classify_flow(&g, &set, &p).unwrap();
        assert_eq!(counts.entries, vec![0, 1, 2, 2, 2, 2]);
        assert_eq!(counts.ends, vec![0, 0, 1, 1, 1, 1]);
        assert_eq!(counts.exits, vec![1, 2, 2, 2, 2, 2]);
        assert_eq!(counts.visits, vec![1, 2, 3, 3, 3, 3]);
        use FlowClass::*;
        assert_eq!(
            classes,
            vec![Source, Other, Corridor, Corridor, Corridor, Corridor]
        );
    }

    #[test]
    fn converging_flow_makes_a_sink_and_missing_data_stops() {
        // Flow toward row 2 from both sides, still on row 2: every trajectory within reach
        // ends on row 2, none leaves it → sinks; rows 0 and 4 are sources.
        let g = grid(1, 5);
        let v = field(&g, |_, r| match r.cmp(&2) {
            std::cmp::Ordering::Less => [0.0, 4.0],
            std::cmp::Ordering::Greater => [0.0, -4.0],
            std::cmp::Ordering::Equal => [0.0, 0.0],
        });
        let p = TrajectoryParams {
            horizon_years: 10.0,
            ..Default::default()
        };
        let set = trace_all(&g, &v, &p).unwrap();
        let (counts, classes) = classify_flow(&g, &set, &p).unwrap();
        assert_eq!(counts.ends, vec![0, 0, 5, 0, 0]);
        use FlowClass::*;
        assert_eq!(classes[2], Sink);
        assert_eq!((classes[0], classes[4]), (Source, Source));
        // A cell without velocity: no trajectory starts there, and one entering it stops.
        let mut v2 = v.clone();
        v2.grid_velocity[2] = [f64::NAN, f64::NAN];
        let set = trace_all(&g, &v2, &p).unwrap();
        assert_eq!(set.len(), 4);
        assert_eq!(set.stops[set.starting_in(1).unwrap()], Stop::NoVelocity);
        let (_, classes) = classify_flow(&g, &set, &p).unwrap();
        assert_eq!(classes[2], NoData);
    }

    #[test]
    fn rejects_bad_parameters() {
        let g = grid(2, 1);
        let v = field(&g, |_, _| [1.0, 0.0]);
        let bad = TrajectoryParams {
            step_years: 0.0,
            ..Default::default()
        };
        assert!(trace(&g, &v, 0, &bad).is_err());
        assert!(trace(&g, &v, 7, &TrajectoryParams::default()).is_err());
        let bad = TrajectoryParams {
            corridor_quantile: 1.5,
            ..Default::default()
        };
        assert!(trace_all(&g, &v, &bad).is_err());
    }
}
