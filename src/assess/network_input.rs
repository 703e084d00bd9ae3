//! Reading a given network: a GeoJSON file of polygons, or a CSV list of cell ids, becomes one
//! "chosen" flag per grid cell, ready for [`crate::assess::assess`].
//!
//! Polygons are overlaid on the grid with the layers stage's area-share sampling (the same
//! projection, densification and boolean overlay that habitat polygons get), so a network drawn
//! by hand and a habitat layer are measured alike.

use crate::grid::Grid;
use crate::layers::{LayerError, LayerSpec, Missing, Sampling, SourceCache};
use crate::model::CellStatus;
use std::path::{Path, PathBuf};

/// File extensions [`read_network`] accepts, for messages.
pub const NETWORK_EXTENSIONS: &str =
    "`.geojson` or `.json` (polygons, WGS84 lon/lat) or `.csv` (a `cell` column of grid cell ids)";

/// A share within this distance below `min_share` still counts as reaching it. A network
/// written by driftplan and read back passes through lon/lat rounded to 6 decimals (about
/// 10 cm), so a cell meant to be exactly at the threshold must not drop out on round-off.
const SHARE_TOL: f64 = 1e-9;

/// Errors reading a network file. Each names the file and, where it applies, the line or
/// feature and the form that was expected.
#[derive(Debug, thiserror::Error)]
pub enum NetworkError {
    /// The extension is not one driftplan reads networks from.
    #[error("{}: cannot read a network from a file ending `{extension}` (expected {NETWORK_EXTENSIONS})", path.display())]
    Extension {
        /// The file.
        path: PathBuf,
        /// The extension found (empty when there is none).
        extension: String,
    },
    /// `min_share` is not a share in (0, 1].
    #[error("{}: minimum share {value} of a cell inside the network polygons must be a number above 0 and at most 1, e.g. 0.5", path.display())]
    MinShare {
        /// The file being read.
        path: PathBuf,
        /// The value given.
        value: f64,
    },
    /// The polygons could not be read or overlaid (the layer error names file and feature).
    #[error("network polygons: {source}")]
    Polygons {
        /// The file.
        path: PathBuf,
        /// The layers stage's error, naming the feature index and the expected form.
        #[source]
        source: LayerError,
    },
    /// The CSV file cannot be opened or read.
    #[error("{}: cannot read file: {source}", path.display())]
    Io {
        /// The file.
        path: PathBuf,
        /// The operating system's error.
        #[source]
        source: std::io::Error,
    },
    /// The CSV header lacks the cell id column.
    #[error("{}: line 1 (header): no `cell` or `cell_id` column (found {found:?}; expected e.g. `cell,selected`)", path.display())]
    CsvHeader {
        /// The file.
        path: PathBuf,
        /// The header fields found.
        found: Vec<String>,
    },
    /// A CSV row is malformed or holds a bad value.
    #[error("{}: line {line}{}: {message}", path.display(), crate::layers::column_part(column))]
    CsvRow {
        /// The file.
        path: PathBuf,
        /// 1-based line number (the header is line 1).
        line: u64,
        /// The column concerned (`?` when the row itself is malformed).
        column: String,
        /// What is wrong and what was expected.
        message: String,
    },
}

/// Reads a network file into one flag per grid cell (index = cell id).
///
/// * `.geojson` / `.json`: Polygon / MultiPolygon geometries (FeatureCollection, Feature or bare
///   Geometry) in WGS84 lon/lat (RFC 7946). A cell is chosen when at least `min_share` (0–1]
///   of its sea area lies inside the union of the polygons; 0.5 means "mostly inside".
/// * `.csv`: a header with a `cell` (or `cell_id`) column of 0-based grid cell ids, as in the
///   `cells.csv` driftplan writes, and optionally a `selected` column (`1`/`0`/`true`/`false`);
///   rows with `0`/`false` are not chosen. Repeated ids are allowed.
///
/// `min_share` is checked for every file type, so a bad value is caught whatever the input.
pub fn read_network(path: &Path, grid: &Grid, min_share: f64) -> Result<Vec<bool>, NetworkError> {
    if !(min_share > 0.0 && min_share <= 1.0) {
        return Err(NetworkError::MinShare {
            path: path.to_path_buf(),
            value: min_share,
        });
    }
    match extension(path).as_str() {
        "geojson" | "json" => Ok(polygon_shares(path, grid)?
            .into_iter()
            .map(|s| s >= min_share - SHARE_TOL)
            .collect()),
        "csv" => read_cell_csv(path, grid),
        other => Err(NetworkError::Extension {
            path: path.to_path_buf(),
            extension: other.to_string(),
        }),
    }
}

/// A network read from a file, with what a reader should know before trusting its scores.
#[derive(Debug, Clone, PartialEq)]
pub struct GivenNetwork {
    /// One chosen flag per cell id.
    pub selected: Vec<bool>,
    /// Plain-words warnings (see [`read_given_network`]); the network is scored all the same.
    pub warnings: Vec<String>,
}

/// Reads a network as [`read_network`] does and says what would make its scores misleading:
/// it chooses no cell (its polygons lie wholly outside the region's sea, or cover too little of
/// any cell), it covers cells the plan excludes, or it leaves out cells the plan requires.
/// `status` is the plan's per-cell status.
pub fn read_given_network(
    path: &Path,
    grid: &Grid,
    min_share: f64,
    status: &[CellStatus],
) -> Result<GivenNetwork, NetworkError> {
    let is_polygons = matches!(extension(path).as_str(), "geojson" | "json");
    let (selected, largest_share) = if is_polygons && min_share > 0.0 && min_share <= 1.0 {
        let shares = polygon_shares(path, grid)?;
        let largest = shares.iter().copied().fold(0.0, f64::max);
        let selected = shares.iter().map(|&s| s >= min_share - SHARE_TOL).collect();
        (selected, Some(largest))
    } else {
        (read_network(path, grid, min_share)?, None)
    };
    let warnings = network_warnings(&selected, status, largest_share, min_share);
    Ok(GivenNetwork { selected, warnings })
}

/// The warnings of [`read_given_network`] for a network already read. `largest_share` is the
/// largest share of any cell inside the network's polygons (`None` for a cell list).
pub fn network_warnings(
    selected: &[bool],
    status: &[CellStatus],
    largest_share: Option<f64>,
    min_share: f64,
) -> Vec<String> {
    let mut out = Vec::new();
    let examples = |ids: &[usize]| {
        let shown: Vec<String> = ids.iter().take(5).map(|i| i.to_string()).collect();
        format!(
            "{}{}",
            shown.join(", "),
            if ids.len() > 5 { ", …" } else { "" }
        )
    };
    let cells = |n: usize| format!("{n} cell{}", if n == 1 { "" } else { "s" });
    if !selected.iter().any(|&s| s) {
        out.push(match largest_share {
            Some(s) if s <= SHARE_TOL => "it lies wholly outside the region's sea: none of its polygons overlaps a cell of the grid, so it protects nothing here (check its coordinates and CRS)".to_string(),
            Some(s) => format!(
                "it chooses no cell: no cell has {:.0}% of its sea inside the polygons (the most any cell has is {:.1}%); lower --min-share to count partly covered cells",
                100.0 * min_share,
                100.0 * s
            ),
            None => "it chooses no cell, so it protects nothing".to_string(),
        });
    }
    let excluded: Vec<usize> = (0..selected.len())
        .filter(|&i| selected[i] && status.get(i) == Some(&CellStatus::Excluded))
        .collect();
    if !excluded.is_empty() {
        out.push(format!(
            "it covers {} the plan excludes (cells {}): a solved network never would, and the plan forbids protecting them",
            cells(excluded.len()),
            examples(&excluded)
        ));
    }
    let required: Vec<usize> = (0..status.len())
        .filter(|&i| {
            status[i] == CellStatus::Required && !selected.get(i).copied().unwrap_or(false)
        })
        .collect();
    if !required.is_empty() {
        let total = status
            .iter()
            .filter(|s| **s == CellStatus::Required)
            .count();
        out.push(format!(
            "it leaves out {} of the plan's {total} required (already protected) cells (cells {}), which every solved network holds",
            cells(required.len()),
            examples(&required)
        ));
    }
    out
}

/// Share (0–1) of each cell's sea area inside the union of a GeoJSON file's polygons (WGS84
/// lon/lat), one value per cell id; 0 where no polygon reaches the cell. This is what
/// [`read_network`] thresholds; planners may also want to see partly covered cells.
pub fn polygon_shares(path: &Path, grid: &Grid) -> Result<Vec<f64>, NetworkError> {
    let spec = LayerSpec {
        path: path.to_path_buf(),
        sampling: Sampling::AreaShare,
        field: None,
        layer: None,
        year: None,
        years_window: 1,
        crs: None,
        valid_range: None,
        // No polygon over a cell means the cell is outside the network, not missing data.
        missing: Missing::Zero,
        // A given network is checked, never silently changed.
        repair: false,
    };
    let layer =
        crate::layers::sample("network", &spec, grid, &SourceCache::new()).map_err(|source| {
            NetworkError::Polygons {
                path: path.to_path_buf(),
                source,
            }
        })?;
    Ok(layer.values)
}

fn extension(path: &Path) -> String {
    path.extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase()
}

/// Reads a cell-id CSV (see [`read_network`]).
fn read_cell_csv(path: &Path, grid: &Grid) -> Result<Vec<bool>, NetworkError> {
    let io = |source| NetworkError::Io {
        path: path.to_path_buf(),
        source,
    };
    if path.is_dir() {
        return Err(io(std::io::Error::other(
            "is a directory (expected a file)",
        )));
    }
    let file = std::fs::File::open(path).map_err(io)?;
    let mut reader = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .from_reader(file);
    let row_error = |line: u64, column: &str, message: String| NetworkError::CsvRow {
        path: path.to_path_buf(),
        line,
        column: column.to_string(),
        message,
    };
    let header: Vec<String> = reader
        .headers()
        .map_err(|e| {
            let (line, column, message) = crate::layers::describe_csv_error(&e, &[]);
            row_error(line.max(1), &column, message)
        })?
        .iter()
        .map(str::to_string)
        .collect();
    let find = |names: &[&str]| {
        header
            .iter()
            .position(|h| names.iter().any(|n| h.eq_ignore_ascii_case(n)))
    };
    let Some(cell_col) = find(&["cell", "cell_id"]) else {
        return Err(NetworkError::CsvHeader {
            path: path.to_path_buf(),
            found: header,
        });
    };
    let cell_name = header[cell_col].clone();
    let selected_col = find(&["selected"]);
    let mut chosen = vec![false; grid.len()];
    for record in reader.records() {
        let record = record.map_err(|e| {
            let (line, column, message) = crate::layers::describe_csv_error(&e, &header);
            row_error(line, &column, message)
        })?;
        // Every record read from a file has a position; 0 only if the csv crate drops it.
        let line = record.position().map(|p| p.line()).unwrap_or(0);
        let field = |col: usize| record.get(col).unwrap_or("");
        if let Some(col) = selected_col {
            let v = field(col);
            let on = match v.to_ascii_lowercase().as_str() {
                "1" | "true" => true,
                "0" | "false" => false,
                _ => {
                    return Err(row_error(
                        line,
                        &header[col],
                        format!("`{v}` is not a selection flag (expected 1, 0, true or false)"),
                    ))
                }
            };
            if !on {
                continue;
            }
        }
        let text = field(cell_col);
        let id: u64 = text.parse().map_err(|_| {
            row_error(
                line,
                &cell_name,
                format!("`{text}` is not a cell id (expected a whole number ≥ 0)"),
            )
        })?;
        match chosen.get_mut(id as usize) {
            Some(flag) if id < grid.len() as u64 => *flag = true,
            _ => {
                return Err(row_error(
                    line,
                    &cell_name,
                    format!(
                        "cell id {id} is out of range: the grid has {} cells (expected 0..={})",
                        grid.len(),
                        grid.len().saturating_sub(1)
                    ),
                ))
            }
        }
    }
    Ok(chosen)
}

#[cfg(test)]
mod tests {
    use super::super::fixtures::{grid_4x3, pick};
    use super::*;
    use crate::features::{Feature, FeatureKind, FeatureTable, Target};
    use geo::{polygon, MultiPolygon};
    use std::io::Write;

    fn write(suffix: &str, text: &str) -> tempfile::NamedTempFile {
        let mut f = tempfile::Builder::new().suffix(suffix).tempfile().unwrap();
        f.write_all(text.as_bytes()).unwrap();
        f
    }

    /// A projected rectangle (metres, the grid's CRS) as a GeoJSON Polygon in lon/lat, with
    /// edges densified to 10 m before unprojecting, so that its outline in the grid's CRS is
    /// the straight rectangle to well under a millimetre.
    fn rect_geojson(g: &Grid, x0: f64, y0: f64, x1: f64, y1: f64) -> String {
        let p = g.projector().unwrap();
        let xy = MultiPolygon(vec![polygon![
            (x: x0, y: y0), (x: x1, y: y0), (x: x1, y: y1), (x: x0, y: y1), (x: x0, y: y0)
        ]]);
        let ll = p.polygon_to_lonlat(&xy, 10.0).unwrap();
        let ring: Vec<String> = ll.0[0]
            .exterior()
            .0
            .iter()
            .map(|c| format!("[{},{}]", c.x, c.y))
            .collect();
        format!(
            r#"{{"type":"FeatureCollection","features":[{{"type":"Feature","properties":{{}},"geometry":{{"type":"Polygon","coordinates":[[{}]]}}}}]}}"#,
            ring.join(",")
        )
    }

    #[test]
    fn two_cells_and_forty_percent_of_a_third() {
        // grid_4x3: 10 km cells, origin (0, 0), ids row-major from the south-west.
        // Hand computation: the rectangle x 0..24 km, y −1..10 km covers cells 0 (x 0..10) and
        // 1 (x 10..20) whole, and x 20..24 of cell 2 = 4 km × 10 km = 40 km² of 100 km² = 0.4.
        // Its part below y = 0 lies outside the lattice and is dropped.
        let g = grid_4x3();
        let f = write(
            ".geojson",
            &rect_geojson(&g, 0.0, -1000.0, 24_000.0, 10_000.0),
        );
        let shares = polygon_shares(f.path(), &g).unwrap();
        // Tolerance 1e-6: the outline passes through lon/lat and back (PROJ round trip ~1e-9°,
        // i.e. sub-millimetre against 10 km cells).
        assert!((shares[0] - 1.0).abs() < 1e-6, "{shares:?}");
        assert!((shares[1] - 1.0).abs() < 1e-6, "{shares:?}");
        assert!((shares[2] - 0.4).abs() < 1e-6, "{shares:?}");
        assert!(shares[3..].iter().all(|&s| s < 1e-6), "{shares:?}");
        assert_eq!(read_network(f.path(), &g, 0.5).unwrap(), pick(12, &[0, 1]));
        assert_eq!(
            read_network(f.path(), &g, 0.3).unwrap(),
            pick(12, &[0, 1, 2])
        );
    }

    #[test]
    fn round_trip_through_network_geojson() {
        let g = grid_4x3();
        let sel = pick(12, &[0, 1, 5, 3, 11]);
        let table = FeatureTable {
            scenarios: vec![],
            years: vec![],
            features: vec![Feature {
                name: "a".into(),
                kind: FeatureKind::Habitat,
                species: None,
                scenario: None,
                year: None,
                unit: "km2".into(),
                amounts: vec![(1, 2.0)],
                total: 2.0,
                target: Target::Share(0.3),
                weight: 1.0,
            }],
        };
        let a = crate::assess::assess(&g, &table, &[1.0; 12], &sel);
        let text = crate::export::network_geojson(&g, &a).unwrap();
        let f = write(".geojson", &text);
        assert_eq!(read_network(f.path(), &g, 0.5).unwrap(), sel);
        // Any threshold in (0, 1] gives the same cells: chosen cells are inside whole, the
        // others only touch the outline (6-decimal rounding moves it by about 10 cm).
        assert_eq!(read_network(f.path(), &g, 0.99).unwrap(), sel);
        assert_eq!(read_network(f.path(), &g, 0.01).unwrap(), sel);
    }

    #[test]
    fn csv_good_inputs() {
        let g = grid_4x3();
        let f = write(".csv", "cell\n3\n0\n3\n11\n");
        assert_eq!(
            read_network(f.path(), &g, 0.5).unwrap(),
            pick(12, &[0, 3, 11])
        );
        // The cells.csv form: extra columns, `selected` as true/false, padded fields.
        let f = write(
            ".csv",
            "cell,lon,lat,area_km2,selected\n0,1,2,100,true\n1,1,2,100,false\n 7 ,1,2,100, TRUE\n",
        );
        assert_eq!(read_network(f.path(), &g, 0.5).unwrap(), pick(12, &[0, 7]));
        let f = write(".CSV", "cell_id,selected\n2,1\n4,0\n");
        assert_eq!(read_network(f.path(), &g, 0.5).unwrap(), pick(12, &[2]));
        // A header only is the empty network.
        let f = write(".csv", "cell\n");
        assert_eq!(read_network(f.path(), &g, 0.5).unwrap(), vec![false; 12]);
    }

    #[test]
    fn csv_bad_inputs_name_the_line() {
        let g = grid_4x3();
        let f = write(".csv", "id,selected\n1,1\n");
        let e = read_network(f.path(), &g, 0.5).unwrap_err().to_string();
        assert!(
            e.contains("line 1") && e.contains("`cell`") && e.contains("\"id\""),
            "{e}"
        );
        // Line numbers: header is line 1, so the third data row is line 4.
        let f = write(".csv", "cell\n1\n2\nseven\n");
        let e = read_network(f.path(), &g, 0.5).unwrap_err().to_string();
        assert!(
            e.contains("line 4") && e.contains("`seven`") && e.contains("whole number"),
            "{e}"
        );
        let f = write(".csv", "cell\n1\n-2\n");
        let e = read_network(f.path(), &g, 0.5).unwrap_err().to_string();
        assert!(e.contains("line 3") && e.contains("`-2`"), "{e}");
        let f = write(".csv", "cell\n1\n12\n");
        let e = read_network(f.path(), &g, 0.5).unwrap_err().to_string();
        assert!(
            e.contains("line 3") && e.contains("12") && e.contains("12 cells"),
            "{e}"
        );
        let f = write(".csv", "cell,selected\n1,yes\n");
        let e = read_network(f.path(), &g, 0.5).unwrap_err().to_string();
        assert!(
            e.contains("line 2") && e.contains("`selected`") && e.contains("`yes`"),
            "{e}"
        );
        // A row with too many fields is malformed (the csv crate insists on equal lengths).
        let f = write(".csv", "cell\n1\n2,3\n");
        let e = read_network(f.path(), &g, 0.5).unwrap_err().to_string();
        assert!(e.contains("line 3"), "{e}");
        let e = read_network(Path::new("/nonexistent/net.csv"), &g, 0.5)
            .unwrap_err()
            .to_string();
        assert!(e.contains("/nonexistent/net.csv"), "{e}");
    }

    #[test]
    fn other_inputs_are_refused_with_the_expected_form() {
        let g = grid_4x3();
        let f = write(".shp", "");
        let e = read_network(f.path(), &g, 0.5).unwrap_err().to_string();
        assert!(
            e.contains("`shp`") && e.contains(".geojson") && e.contains(".csv"),
            "{e}"
        );
        let f = write(".csv", "cell\n1\n");
        for bad in [0.0, -0.1, 1.5, f64::NAN] {
            let e = read_network(f.path(), &g, bad).unwrap_err().to_string();
            assert!(e.contains("above 0 and at most 1"), "{bad}: {e}");
        }
        // A Point is not a network outline; the layers stage names the feature.
        let f = write(
            ".json",
            r#"{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},"geometry":{"type":"Point","coordinates":[10,55]}}]}"#,
        );
        let e = read_network(f.path(), &g, 0.5).unwrap_err().to_string();
        assert!(
            e.contains("feature 0") && e.contains("expected Polygon"),
            "{e}"
        );
    }
}
