//! Reading CSV point tables `lon,lat,<columns...>`: every value parsed once, problems kept per
//! column with their line number so a layer fails only for the column it uses.

use super::geojson::Coords;
use super::LayerError;
use std::path::{Path, PathBuf};

/// One value column of a table.
#[derive(Debug, Clone)]
struct Column {
    /// Header name as written (trimmed).
    name: String,
    /// One value per data row; NaN where `first_bad` applies.
    values: Vec<f64>,
    /// The first unparsable, NaN or infinite entry: (line, message).
    first_bad: Option<(u64, String)>,
}

/// A parsed CSV point table.
#[derive(Debug, Clone)]
pub(crate) struct CsvTable {
    /// Where it was read from, for messages.
    pub path: PathBuf,
    /// First coordinate of each row (lon, or x in the file's CRS).
    pub xs: Vec<f64>,
    /// Second coordinate of each row (lat, or y in the file's CRS).
    pub ys: Vec<f64>,
    /// 1-based file line number of each row (header is line 1).
    pub lines: Vec<u64>,
    columns: Vec<Column>,
}

/// Coordinate header names accepted, first coordinate then second.
fn coordinate_names(coords: Coords) -> &'static [(&'static str, &'static str)] {
    match coords {
        Coords::LonLat => &[("lon", "lat"), ("longitude", "latitude")],
        Coords::Projected => &[("x", "y"), ("lon", "lat"), ("longitude", "latitude")],
    }
}

fn parse_number(text: &str) -> Result<f64, String> {
    match text.parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(v),
        Ok(v) => Err(format!("`{text}` is {v} (expected a finite number)")),
        Err(_) if text.is_empty() => Err("empty (expected a number, e.g. `0.5`)".into()),
        Err(_) => Err(format!("`{text}` is not a number (expected e.g. `0.5`)")),
    }
}

/// Reads a CSV table. The header must name the coordinate columns (`lon`,`lat` or
/// `longitude`,`latitude`; also `x`,`y` for a projected CRS), matched case-insensitively.
/// Bad coordinates are errors at once; bad values are errors when their column is used.
pub(crate) fn parse_file(path: &Path, coords: Coords) -> Result<CsvTable, LayerError> {
    let io = |source: std::io::Error| LayerError::Io {
        path: path.to_path_buf(),
        source,
    };
    super::require_file(path)?;
    let file = std::fs::File::open(path).map_err(io)?;
    let mut reader = ::csv::ReaderBuilder::new()
        .trim(::csv::Trim::All)
        .from_reader(file);
    let csv_err = |e: ::csv::Error, header: &[String]| {
        let (line, column, message) = describe_error(&e, header);
        match e.into_kind() {
            ::csv::ErrorKind::Io(source) => io(source),
            _ => LayerError::Csv {
                path: path.to_path_buf(),
                line,
                column,
                message,
            },
        }
    };
    let header: Vec<String> = reader
        .headers()
        .map_err(|e| csv_err(e, &[]))?
        .iter()
        .map(str::to_string)
        .collect();
    let lower: Vec<String> = header.iter().map(|h| h.to_lowercase()).collect();
    if let Some((a, b)) = repeated_name(&lower) {
        return Err(LayerError::CsvHeader {
            path: path.to_path_buf(),
            message: format!(
                "column `{}` appears twice (columns {} and {}); expected each column name once",
                header[b],
                a + 1,
                b + 1
            ),
        });
    }
    let find = |name: &str| lower.iter().position(|h| h == name);
    let names = coordinate_names(coords);
    let Some((ix, iy)) = names.iter().find_map(|(a, b)| Some((find(a)?, find(b)?))) else {
        let wanted: Vec<String> = names.iter().map(|(a, b)| format!("`{a},{b}`")).collect();
        return Err(LayerError::CsvHeader {
            path: path.to_path_buf(),
            message: format!(
                "found columns {header:?}; expected coordinate columns {}",
                wanted.join(" or ")
            ),
        });
    };
    let value_idx: Vec<usize> = (0..header.len()).filter(|&i| i != ix && i != iy).collect();
    let mut columns: Vec<Column> = value_idx
        .iter()
        .map(|&i| Column {
            name: header[i].clone(),
            values: Vec::new(),
            first_bad: None,
        })
        .collect();
    let (mut xs, mut ys, mut lines) = (Vec::new(), Vec::new(), Vec::new());
    for record in reader.records() {
        let record = record.map_err(|e| csv_err(e, &header))?;
        let line = record.position().map_or(0, |p| p.line());
        let coord = |i: usize| -> Result<f64, LayerError> {
            parse_number(&record[i]).map_err(|message| LayerError::Csv {
                path: path.to_path_buf(),
                line,
                column: header[i].clone(),
                message,
            })
        };
        let (x, y) = (coord(ix)?, coord(iy)?);
        if coords == Coords::LonLat
            && !((-180.0..=360.0).contains(&x) && (-90.0..=90.0).contains(&y))
        {
            return Err(LayerError::Csv {
                path: path.to_path_buf(),
                line,
                column: format!("{},{}", header[ix], header[iy]),
                message: format!(
                    "({x}, {y}) is outside lon −180..360 / lat −90..90 (expected WGS84 degrees; \
                     give `crs` for projected coordinates)"
                ),
            });
        }
        xs.push(x);
        ys.push(y);
        lines.push(line);
        for (col, &i) in columns.iter_mut().zip(&value_idx) {
            match parse_number(&record[i]) {
                Ok(v) => col.values.push(v),
                Err(message) => {
                    col.values.push(f64::NAN);
                    col.first_bad.get_or_insert((line, message));
                }
            }
        }
    }
    if xs.is_empty() {
        return Err(LayerError::Spec {
            path: path.to_path_buf(),
            message: "no data rows (expected a header and at least one row)".into(),
        });
    }
    let mut table = CsvTable {
        path: path.to_path_buf(),
        xs,
        ys,
        lines,
        columns,
    };
    table.drop_repeated_points(&header[ix], &header[iy])?;
    Ok(table)
}

/// The first pair of equal names (already lower-cased), as 0-based column indices.
fn repeated_name(names: &[String]) -> Option<(usize, usize)> {
    let mut order: Vec<usize> = (0..names.len()).collect();
    order.sort_by(|&a, &b| names[a].cmp(&names[b]).then(a.cmp(&b)));
    order
        .windows(2)
        .filter(|w| names[w[0]] == names[w[1]])
        .map(|w| (w[0], w[1]))
        .min_by_key(|&(_, b)| b)
}

/// A csv-crate error in plain words: `(line, column, message)`, the line 1-based (0 when the
/// crate gives none), the column named from `header` where the error has one (`?` otherwise).
/// The network reader shares it, so both CSV readers speak alike.
pub(crate) fn describe_error(e: &::csv::Error, header: &[String]) -> (u64, String, String) {
    let line = e.position().map_or(0, |p| p.line());
    match e.kind() {
        ::csv::ErrorKind::UnequalLengths {
            expected_len, len, ..
        } => (
            line,
            "?".into(),
            format!("expected {expected_len} fields, found {len} (one per header column)"),
        ),
        ::csv::ErrorKind::Utf8 { err, .. } => {
            let column = header
                .get(err.field())
                .cloned()
                .unwrap_or_else(|| format!("{}", err.field() + 1));
            (
                line.max(1),
                column,
                "not valid UTF-8 (expected a UTF-8 text file; re-save it as UTF-8)".into(),
            )
        }
        ::csv::ErrorKind::Io(source) => (line, "?".into(), format!("cannot read: {source}")),
        _ => (line, "?".into(), format!("cannot read this row: {e}")),
    }
}

impl CsvTable {
    /// Rows at the same point: identical ones are kept once; different values at one point
    /// are an error naming both lines, since no rule could say which value is meant.
    fn drop_repeated_points(&mut self, x_name: &str, y_name: &str) -> Result<(), LayerError> {
        let key = |i: usize| (self.xs[i].to_bits(), self.ys[i].to_bits());
        let mut order: Vec<usize> = (0..self.xs.len()).collect();
        order.sort_by_key(|&i| (key(i), i));
        let mut drop = vec![false; self.xs.len()];
        for w in order.windows(2) {
            let (a, b) = (w[0], w[1]);
            if key(a) != key(b) {
                continue;
            }
            let differs = self.columns.iter().find(|c| {
                let (va, vb) = (c.values[a], c.values[b]);
                !(va == vb || (va.is_nan() && vb.is_nan()))
            });
            if let Some(c) = differs {
                return Err(LayerError::Csv {
                    path: self.path.clone(),
                    line: self.lines[b],
                    column: format!("{x_name},{y_name}"),
                    message: format!(
                        "({}, {}) is also on line {}, with a different `{}` ({} there, {} here); expected one row per point",
                        self.xs[a], self.ys[a], self.lines[a], c.name, c.values[a], c.values[b]
                    ),
                });
            }
            drop[b] = true;
        }
        if drop.iter().any(|&d| d) {
            let keep = |v: &mut Vec<f64>| {
                let mut i = 0;
                v.retain(|_| {
                    i += 1;
                    !drop[i - 1]
                })
            };
            keep(&mut self.xs);
            keep(&mut self.ys);
            for c in &mut self.columns {
                keep(&mut c.values);
            }
            let mut i = 0;
            self.lines.retain(|_| {
                i += 1;
                !drop[i - 1]
            });
        }
        Ok(())
    }

    /// The values of column `name` (matched case-insensitively), one per row; an error when the
    /// column is absent or any entry of it is unparsable, NaN or infinite.
    pub(crate) fn column(&self, name: &str) -> Result<&[f64], LayerError> {
        let wanted = name.to_lowercase();
        let Some(col) = self
            .columns
            .iter()
            .find(|c| c.name.to_lowercase() == wanted)
        else {
            let names: Vec<&str> = self.columns.iter().map(|c| c.name.as_str()).collect();
            return Err(LayerError::CsvHeader {
                path: self.path.clone(),
                message: format!("no column `{name}`; value columns are {names:?}"),
            });
        };
        if let Some((line, message)) = &col.first_bad {
            return Err(LayerError::Csv {
                path: self.path.clone(),
                line: *line,
                column: col.name.clone(),
                message: message.clone(),
            });
        }
        Ok(&col.values)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io::Write;

    fn write(text: &str) -> tempfile::NamedTempFile {
        let mut f = tempfile::Builder::new().suffix(".csv").tempfile().unwrap();
        f.write_all(text.as_bytes()).unwrap();
        f
    }

    #[test]
    fn parses_columns_and_line_numbers() {
        let f = write("Lon, Lat ,sst,depth\n10,50,12.5,100\n11,50.5,13,-20\n");
        let t = parse_file(f.path(), Coords::LonLat).unwrap();
        assert_eq!(t.xs, vec![10.0, 11.0]);
        assert_eq!(t.ys, vec![50.0, 50.5]);
        assert_eq!(t.lines, vec![2, 3]);
        assert_eq!(t.column("SST").unwrap(), &[12.5, 13.0]);
        assert_eq!(t.column("depth").unwrap(), &[100.0, -20.0]);
    }

    #[test]
    fn nan_is_reported_with_line_and_column_only_for_its_column() {
        let f = write("lon,lat,a,b\n0,0,1,2\n1,0,NaN,3\n2,0,x,4\n");
        let t = parse_file(f.path(), Coords::LonLat).unwrap();
        assert_eq!(t.column("b").unwrap(), &[2.0, 3.0, 4.0]);
        let e = t.column("a").unwrap_err().to_string();
        assert!(
            e.contains("line 3") && e.contains("`a`") && e.contains("NaN"),
            "{e}"
        );
    }

    #[test]
    fn header_and_coordinate_errors() {
        let f = write("x,y,v\n0,0,1\n");
        let e = parse_file(f.path(), Coords::LonLat)
            .unwrap_err()
            .to_string();
        assert!(e.contains("line 1") && e.contains("`lon,lat`"), "{e}");
        // x/y are accepted when the file has a projected CRS.
        assert!(parse_file(f.path(), Coords::Projected).is_ok());
        let f = write("longitude,latitude,v\n0,95,1\n");
        let e = parse_file(f.path(), Coords::LonLat)
            .unwrap_err()
            .to_string();
        assert!(e.contains("line 2") && e.contains("lat"), "{e}");
        let f = write("lon,lat,v\n0,1,1\n0,2\n");
        let e = parse_file(f.path(), Coords::LonLat)
            .unwrap_err()
            .to_string();
        assert!(e.contains("line 3"), "{e}");
        let f = write("lon,lat,v\n0,inf,1\n");
        let e = parse_file(f.path(), Coords::LonLat)
            .unwrap_err()
            .to_string();
        assert!(e.contains("line 2") && e.contains("finite"), "{e}");
        let t = parse_file(write("lon,lat,v\n0,1,1\n").path(), Coords::LonLat).unwrap();
        assert!(t
            .column("w")
            .unwrap_err()
            .to_string()
            .contains("no column `w`"));
    }
}
