//! Reading a given network: a GeoJSON file of polygons, or a CSV list of cell ids, becomes one
//! "chosen" flag per grid cell, ready for [`crate::assess::assess`].
//!
//! Polygons are overlaid on the grid with the layers stage's area-share sampling (the same
//! projection, densification and boolean overlay that habitat polygons get), so a network drawn
//! by hand and a habitat layer are measured alike.
//!
//! Under a plan with `[[zones]]`, [`read_zoned_network`] also reads the zone of each chosen
//! cell: a `zone` property of each GeoJSON feature, or a `zone` column of the CSV, naming a
//! plan zone (or giving its 1-based code, as the cells' `zone` column does).

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
    /// A feature's `zone` property names no zone of the plan, or only some features have one.
    #[error("{}: feature {feature}, property `zone`: {message}", path.display())]
    Zone {
        /// The file.
        path: PathBuf,
        /// 0-based feature index.
        feature: usize,
        /// What is wrong and the zones the plan has.
        message: String,
    },
    /// The zone asked for a network without zones is not one of the plan's.
    #[error("--zone `{zone}`: {message}")]
    AssumedZone {
        /// The zone asked for.
        zone: String,
        /// Why it cannot be used (the plan's zones).
        message: String,
    },
    /// A temporary copy of one zone's features could not be written.
    #[error("{}: cannot write a temporary copy of zone `{zone}`'s features: {source}", path.display())]
    ZoneCopy {
        /// The network file.
        path: PathBuf,
        /// The zone.
        zone: String,
        /// The operating system's error.
        #[source]
        source: std::io::Error,
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
    Ok(read_zoned_network(path, grid, min_share, &[])?.selected)
}

/// A network read from a file, with the zones it gives its cells.
#[derive(Debug, Clone, PartialEq)]
pub struct NetworkRead {
    /// One flag per grid cell.
    pub selected: Vec<bool>,
    /// Under a zoned plan, per cell 0 (outside) or 1 + the plan zone's index; `None` when the
    /// plan has no zones.
    pub zones: Option<Vec<u8>>,
    /// Where the zones came from.
    pub zone_source: ZoneSource,
    /// The largest share of any cell's sea inside the file's polygons (`None` for a cell list),
    /// for [`network_warnings`].
    pub largest_share: Option<f64>,
}

/// Where a network's zones came from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ZoneSource {
    /// The plan has no zones and the file names none.
    Unzoned,
    /// The file names the zone of every chosen cell.
    File,
    /// The file names no zones: every chosen cell takes this zone (the plan's first, or the
    /// one asked for).
    Assumed {
        /// The zone's name.
        zone: String,
        /// Whether the zone was asked for (otherwise it is the plan's first).
        asked: bool,
    },
    /// The file names zones but the plan has none, so they were not read.
    Ignored,
}

impl ZoneSource {
    /// One sentence for the terminal and the outputs, `None` when there is nothing to say.
    pub fn note(&self, path: &Path) -> Option<String> {
        let file = path.display();
        match self {
            ZoneSource::Unzoned => None,
            ZoneSource::File => Some(format!("zones as {file} gives them")),
            ZoneSource::Assumed { zone, asked } => Some(format!(
                "{file} names no zones: every chosen cell is assessed as zone `{zone}` ({})",
                if *asked {
                    "as asked with --zone"
                } else {
                    "the plan's first zone; --zone picks another"
                }
            )),
            ZoneSource::Ignored => Some(format!(
                "{file} names zones but the plan has no `[[zones]]`: its zones are ignored"
            )),
        }
    }
}

/// [`read_zoned_network`], then under a zoned plan a file without zones puts every chosen cell
/// in zone `assumed` (a plan zone's name; `None`: the plan's first zone, its strictest).
pub fn read_plan_network(
    path: &Path,
    grid: &Grid,
    min_share: f64,
    zone_names: &[String],
    assumed: Option<&str>,
) -> Result<NetworkRead, NetworkError> {
    if let Some(z) = assumed {
        if zone_names.is_empty() {
            return Err(NetworkError::AssumedZone {
                zone: z.to_string(),
                message: "the plan has no `[[zones]]`".into(),
            });
        }
        if !zone_names.iter().any(|n| n == z) {
            return Err(NetworkError::AssumedZone {
                zone: z.to_string(),
                message: expected_zones(zone_names),
            });
        }
    }
    let mut read = read_zoned_network(path, grid, min_share, zone_names)?;
    if read.zone_source == ZoneSource::Unzoned && !zone_names.is_empty() {
        let zone = assumed.unwrap_or(&zone_names[0]);
        // Validated above, or the first zone.
        let code = zone_names.iter().position(|n| n == zone).unwrap_or(0) as u8 + 1;
        read.zones = Some(
            read.selected
                .iter()
                .map(|&s| if s { code } else { 0 })
                .collect(),
        );
        read.zone_source = ZoneSource::Assumed {
            zone: zone.to_string(),
            asked: assumed.is_some(),
        };
    }
    Ok(read)
}

/// Reads a network file as [`read_network`] does, and under a plan with zones (`zone_names`,
/// in plan order; empty without zones) the zone of each chosen cell; a file that names no
/// zones gives `zones: None` (see [`read_plan_network`] for the zone assumed then):
///
/// * GeoJSON: each feature's `zone` property, a zone name (or its 1-based code). Either every
///   feature has one or none does. A cell is chosen as in [`read_network`] (the union of all
///   features' polygons) and takes the zone whose polygons cover most of its sea area (the
///   earlier zone on a tie).
/// * CSV: a `zone` column, a zone name or its 1-based code on every chosen row (the `zone`
///   column of `cells.csv` writes codes, 0 outside). A cell listed twice must keep its zone.
///
/// A zone the plan lacks is an error naming the feature or line and the plan's zones.
pub fn read_zoned_network(
    path: &Path,
    grid: &Grid,
    min_share: f64,
    zone_names: &[String],
) -> Result<NetworkRead, NetworkError> {
    if !(min_share > 0.0 && min_share <= 1.0) {
        return Err(NetworkError::MinShare {
            path: path.to_path_buf(),
            value: min_share,
        });
    }
    match extension(path).as_str() {
        "geojson" | "json" => {
            let shares = polygon_shares(path, grid)?;
            let largest_share = Some(shares.iter().copied().fold(0.0, f64::max));
            let selected: Vec<bool> = shares
                .into_iter()
                .map(|s| s >= min_share - SHARE_TOL)
                .collect();
            let (doc, codes) = feature_zones(path, zone_names)?;
            let (zones, zone_source) = match codes {
                Some(_) if zone_names.is_empty() => (None, ZoneSource::Ignored),
                Some(codes) => (
                    Some(zones_by_cover(
                        path, &doc, grid, &selected, &codes, zone_names,
                    )?),
                    ZoneSource::File,
                ),
                None => (None, ZoneSource::Unzoned),
            };
            Ok(NetworkRead {
                selected,
                zones,
                zone_source,
                largest_share,
            })
        }
        "csv" => read_cell_csv(path, grid, zone_names),
        other => Err(NetworkError::Extension {
            path: path.to_path_buf(),
            extension: other.to_string(),
        }),
    }
}

/// The zone code (1-based) of a zone word: a plan zone's name, or its code written as a number.
fn zone_code(word: &str, zone_names: &[String]) -> Option<u8> {
    if let Some(z) = zone_names.iter().position(|n| n == word) {
        return Some(z as u8 + 1);
    }
    word.parse::<usize>()
        .ok()
        .filter(|&c| (1..=zone_names.len()).contains(&c))
        .map(|c| c as u8)
}

/// What a zone word must be, for messages.
fn expected_zones(zone_names: &[String]) -> String {
    format!(
        "expected one of the plan's zones: {} (or its number 1–{})",
        zone_names
            .iter()
            .map(|n| format!("`{n}`"))
            .collect::<Vec<_>>()
            .join(", "),
        zone_names.len()
    )
}

/// The features of a parsed GeoJSON document (a FeatureCollection's, a lone Feature, or none
/// for a bare geometry).
fn json_features(doc: &serde_json::Value) -> Vec<&serde_json::Value> {
    match doc.get("type").and_then(|t| t.as_str()) {
        Some("FeatureCollection") => doc
            .get("features")
            .and_then(|f| f.as_array())
            .map(|a| a.iter().collect())
            .unwrap_or_default(),
        Some("Feature") => vec![doc],
        _ => Vec::new(),
    }
}

/// The parsed file and each feature's zone code from its `zone` property (`None` when no
/// feature has one). With no plan zones only whether any feature has one is told (codes all 0).
fn feature_zones(
    path: &Path,
    zone_names: &[String],
) -> Result<(serde_json::Value, Option<Vec<u8>>), NetworkError> {
    // The geometry was read by the layers stage already, so the file exists and is JSON.
    let text = std::fs::read_to_string(path).map_err(|source| NetworkError::Io {
        path: path.to_path_buf(),
        source,
    })?;
    let doc: serde_json::Value = serde_json::from_str(&text).unwrap_or(serde_json::Value::Null);
    let words: Vec<Option<&serde_json::Value>> = json_features(&doc)
        .iter()
        .map(|f| {
            f.get("properties")
                .and_then(|p| p.get("zone"))
                .filter(|v| !v.is_null())
        })
        .collect();
    let Some(first) = words.iter().position(Option::is_some) else {
        return Ok((serde_json::Value::Null, None));
    };
    if zone_names.is_empty() {
        return Ok((serde_json::Value::Null, Some(vec![0; words.len()])));
    }
    let err = |feature: usize, message: String| NetworkError::Zone {
        path: path.to_path_buf(),
        feature,
        message,
    };
    let codes = words
        .iter()
        .enumerate()
        .map(|(i, w)| {
            let word = match w {
                None => {
                    return Err(err(
                        i,
                        format!(
                            "absent, but feature {first} has one: give every feature a zone ({})",
                            expected_zones(zone_names)
                        ),
                    ))
                }
                Some(serde_json::Value::String(s)) => s.clone(),
                Some(serde_json::Value::Number(n)) => n.to_string(),
                Some(other) => other.to_string(),
            };
            zone_code(&word, zone_names).ok_or_else(|| {
                err(
                    i,
                    format!(
                        "`{word}` is not a zone of the plan; {}",
                        expected_zones(zone_names)
                    ),
                )
            })
        })
        .collect::<Result<Vec<u8>, _>>()?;
    Ok((doc, Some(codes)))
}

/// Each chosen cell's zone: the zone whose features cover most of its sea area. Each zone's
/// features are overlaid on their own (a temporary copy of the file holding only them, every
/// other member such as a `crs` kept) by the same area-share sampling as the whole file.
fn zones_by_cover(
    path: &Path,
    doc: &serde_json::Value,
    grid: &Grid,
    selected: &[bool],
    codes: &[u8],
    zone_names: &[String],
) -> Result<Vec<u8>, NetworkError> {
    let features: Vec<serde_json::Value> = json_features(doc).into_iter().cloned().collect();
    let mut best: Vec<(f64, u8)> = vec![(0.0, 0); grid.len()];
    for (z, name) in zone_names.iter().enumerate() {
        let code = z as u8 + 1;
        let mine: Vec<serde_json::Value> = features
            .iter()
            .zip(codes)
            .filter(|(_, &c)| c == code)
            .map(|(f, _)| f.clone())
            .collect();
        if mine.is_empty() {
            continue;
        }
        let mut copy = match doc {
            serde_json::Value::Object(o) if o.contains_key("features") => doc.clone(),
            _ => serde_json::json!({"type": "FeatureCollection"}),
        };
        copy["type"] = "FeatureCollection".into();
        copy["features"] = serde_json::Value::Array(mine);
        let copy_error = |source| NetworkError::ZoneCopy {
            path: path.to_path_buf(),
            zone: name.clone(),
            source,
        };
        let file = tempfile::Builder::new()
            .prefix("driftplan-zone-")
            .suffix(".geojson")
            .tempfile()
            .map_err(copy_error)?;
        std::fs::write(file.path(), copy.to_string()).map_err(copy_error)?;
        let shares = polygon_shares(file.path(), grid).map_err(|e| match e {
            // Name the user's file, not the temporary copy.
            NetworkError::Polygons { source, .. } => NetworkError::Polygons {
                path: path.to_path_buf(),
                source,
            },
            other => other,
        })?;
        for (b, s) in best.iter_mut().zip(shares) {
            if s > b.0 {
                *b = (s, code);
            }
        }
    }
    Ok(selected
        .iter()
        .zip(best)
        .map(|(&on, (_, code))| if on { code.max(1) } else { 0 })
        .collect())
}

/// What would make a given network's scores misleading, in plain words: it chooses no cell
/// (its polygons lie wholly outside the region's sea, or cover too little of any cell), it
/// covers cells the plan excludes, or it leaves out cells the plan requires. `status` is the
/// plan's per-cell status; `largest_share` is [`NetworkRead::largest_share`]. The network is
/// scored all the same.
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

/// Reads a cell-id CSV (see [`read_zoned_network`]).
fn read_cell_csv(
    path: &Path,
    grid: &Grid,
    zone_names: &[String],
) -> Result<NetworkRead, NetworkError> {
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
    let zone_col = find(&["zone"]);
    let read_zones = zone_col.is_some() && !zone_names.is_empty();
    let mut chosen = vec![false; grid.len()];
    let mut zones = vec![0u8; grid.len()];
    // Line where each cell got its zone, for the message when a repeat disagrees.
    let mut zone_line = vec![0u64; if read_zones { grid.len() } else { 0 }];
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
        if let (true, Some(col)) = (read_zones, zone_col) {
            let word = field(col);
            let code = zone_code(word, zone_names).ok_or_else(|| {
                row_error(
                    line,
                    &header[col],
                    format!(
                        "`{word}` is not a zone of the plan for chosen cell {id}; {}",
                        expected_zones(zone_names)
                    ),
                )
            })?;
            let i = id as usize;
            if zones[i] != 0 && zones[i] != code {
                return Err(row_error(
                    line,
                    &header[col],
                    format!(
                        "cell {id} is given zone `{}` here and `{}` on line {}; a cell takes one zone",
                        zone_names[code as usize - 1],
                        zone_names[zones[i] as usize - 1],
                        zone_line[i]
                    ),
                ));
            }
            zones[i] = code;
            zone_line[i] = line;
        }
    }
    let zone_source = match (zone_col.is_some(), zone_names.is_empty()) {
        (true, true) => ZoneSource::Ignored,
        (true, false) => ZoneSource::File,
        (false, _) => ZoneSource::Unzoned,
    };
    Ok(NetworkRead {
        zones: read_zones.then_some(zones),
        selected: chosen,
        zone_source,
        largest_share: None,
    })
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

    /// One Feature (a projected rectangle as in [`rect_geojson`]) with `props` as its
    /// properties.
    fn rect_feature(g: &Grid, r: [f64; 4], props: &str) -> String {
        let fc = rect_geojson(g, r[0], r[1], r[2], r[3]);
        let at = fc.find(r#"{"type":"Feature""#).unwrap();
        fc[at..fc.len() - 2].replace(r#""properties":{}"#, &format!(r#""properties":{props}"#))
    }

    fn collection(features: &[String]) -> String {
        format!(
            r#"{{"type":"FeatureCollection","features":[{}]}}"#,
            features.join(",")
        )
    }

    fn zones() -> Vec<String> {
        vec!["no-take".into(), "partial-use".into()]
    }

    #[test]
    fn zones_from_geojson_features_by_largest_cover() {
        // grid_4x3: 10 km cells, row-major from the south-west. Hand: feature 0 (no-take)
        // covers cells 0, 1 and the west 3 km of cell 5 (x 10..13 km, row 1); feature 1
        // (partial use, given by its code 2) covers cell 2 and the east 7 km of cell 5. Cell 5
        // is fully covered (chosen) and mostly partial use; cell 6 is only touched.
        let g = grid_4x3();
        let f = write(
            ".geojson",
            &collection(&[
                rect_feature(&g, [0.0, 0.0, 20_000.0, 10_000.0], r#"{"zone":"no-take"}"#),
                rect_feature(
                    &g,
                    [10_000.0, 10_000.0, 13_000.0, 20_000.0],
                    r#"{"zone":"no-take"}"#,
                ),
                rect_feature(&g, [20_000.0, 0.0, 30_000.0, 10_000.0], r#"{"zone":2}"#),
                rect_feature(
                    &g,
                    [13_000.0, 10_000.0, 20_000.0, 20_000.0],
                    r#"{"zone":"partial-use"}"#,
                ),
            ]),
        );
        let r = read_plan_network(f.path(), &g, 0.5, &zones(), None).unwrap();
        assert_eq!(r.selected, pick(12, &[0, 1, 2, 5]));
        assert_eq!(r.zones.unwrap(), vec![1, 1, 2, 0, 0, 2, 0, 0, 0, 0, 0, 0]);
        assert_eq!(r.zone_source, ZoneSource::File);
        // Under a plan without zones the property is ignored, and said so.
        let r = read_plan_network(f.path(), &g, 0.5, &[], None).unwrap();
        assert_eq!((r.zones, r.zone_source), (None, ZoneSource::Ignored));
        // A zone the plan lacks names the feature and the plan's zones.
        let bad = write(
            ".geojson",
            &collection(&[
                rect_feature(&g, [0.0, 0.0, 10_000.0, 10_000.0], r#"{"zone":"no-take"}"#),
                rect_feature(
                    &g,
                    [10_000.0, 0.0, 20_000.0, 10_000.0],
                    r#"{"zone":"core"}"#,
                ),
            ]),
        );
        let e = read_plan_network(bad.path(), &g, 0.5, &zones(), None)
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("feature 1")
                && e.contains("`core`")
                && e.contains("`no-take`, `partial-use`"),
            "{e}"
        );
        // Only some features with a zone: the first without one is named.
        let mixed = write(
            ".geojson",
            &collection(&[
                rect_feature(&g, [0.0, 0.0, 10_000.0, 10_000.0], r#"{"zone":"no-take"}"#),
                rect_feature(&g, [10_000.0, 0.0, 20_000.0, 10_000.0], "{}"),
            ]),
        );
        let e = read_plan_network(mixed.path(), &g, 0.5, &zones(), None)
            .unwrap_err()
            .to_string();
        assert!(e.contains("feature 1") && e.contains("absent"), "{e}");
    }

    #[test]
    fn a_file_without_zones_takes_the_first_zone_or_the_one_asked_for() {
        let g = grid_4x3();
        let f = write(".csv", "cell\n3\n4\n");
        let r = read_plan_network(f.path(), &g, 0.5, &zones(), None).unwrap();
        assert_eq!(r.zones.as_ref().unwrap()[3..5], [1, 1]);
        assert_eq!(
            r.zone_source,
            ZoneSource::Assumed {
                zone: "no-take".into(),
                asked: false
            }
        );
        assert!(r
            .zone_source
            .note(f.path())
            .unwrap()
            .contains("the plan's first zone"));
        let r = read_plan_network(f.path(), &g, 0.5, &zones(), Some("partial-use")).unwrap();
        assert_eq!(r.zones.as_ref().unwrap()[3..5], [2, 2]);
        let e = read_plan_network(f.path(), &g, 0.5, &zones(), Some("core"))
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("--zone `core`") && e.contains("`partial-use`"),
            "{e}"
        );
        let e = read_plan_network(f.path(), &g, 0.5, &[], Some("core"))
            .unwrap_err()
            .to_string();
        assert!(e.contains("no `[[zones]]`"), "{e}");
    }

    #[test]
    fn zones_from_a_csv_column_by_name_or_code() {
        let g = grid_4x3();
        // The cells.csv form: codes, 0 on rows not chosen.
        let f = write(
            ".csv",
            "cell,selected,zone\n0,true,2\n1,false,0\n2,true,1\n2,true,no-take\n",
        );
        let r = read_plan_network(f.path(), &g, 0.5, &zones(), None).unwrap();
        assert_eq!(r.selected, pick(12, &[0, 2]));
        assert_eq!(r.zones.unwrap()[..3], [2, 0, 1]);
        // A chosen row without a zone, or a cell given two zones, names the line.
        let f = write(".csv", "cell,zone\n0,no-take\n1,\n");
        let e = read_plan_network(f.path(), &g, 0.5, &zones(), None)
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("line 3") && e.contains("`zone`") && e.contains("cell 1"),
            "{e}"
        );
        let f = write(".csv", "cell,zone\n0,no-take\n0,partial-use\n");
        let e = read_plan_network(f.path(), &g, 0.5, &zones(), None)
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("line 3") && e.contains("line 2") && e.contains("one zone"),
            "{e}"
        );
        let f = write(".csv", "cell,zone\n0,3\n");
        let e = read_plan_network(f.path(), &g, 0.5, &zones(), None)
            .unwrap_err()
            .to_string();
        assert!(e.contains("`3`") && e.contains("1–2"), "{e}");
    }

    #[test]
    fn zoned_network_scored_by_hand() {
        // compare::fixtures: habitat/a holds 4 and 2 in cells 0 and 1 (target 4), costs 1 and
        // 2. Read from a CSV, cell 0 no-take and cell 1 partial use (cost share 0.4, credit
        // 0.5): protected 4 + 0.5 × 2 = 5 ≥ 4, cost 1 + 0.4 × 2 = 1.8 (hand).
        use crate::compare::fixtures::{cost, grid, table};
        let g = grid();
        let f = write(".csv", "cell,zone\n0,no-take\n1,partial-use\n");
        let r = read_plan_network(f.path(), &g, 0.5, &zones(), None).unwrap();
        let zoning = crate::model::Zoning {
            names: zones(),
            cost_share: vec![1.0, 0.4],
            credit: vec![vec![1.0; 3], vec![0.5; 3]],
            allowed: vec![vec![true; 6]; 2],
            targets: vec![],
        };
        let t = table();
        let mut a = crate::assess::assess(&g, &t, &cost(), &r.selected);
        crate::assess::zones::apply_zones(&mut a, &g, &t, &cost(), &zoning, &r.zones.unwrap());
        assert!((a.coverage[0].protected - 5.0).abs() < 1e-12);
        assert!((a.cost - 1.8).abs() < 1e-12);
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
