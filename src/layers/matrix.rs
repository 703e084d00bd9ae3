//! Reads a supplied dispersal matrix: a CSV with columns `from`, `to`, `probability` (cell ids
//! of the plan's grid, the same form `driftplan features` writes as `connectivity-*.csv`).

use super::LayerError;
use std::path::Path;

/// Reads `path` into one sorted row per cell: `rows[i]` = `(j, P[i→j])`. Every problem names
/// the file and line: unknown cell ids, probabilities outside [0, 1], a pair given twice, and
/// rows summing to more than 1 (a row is the fate of the larvae released in one cell).
pub fn read_dispersal_matrix(
    path: &Path,
    n_cells: usize,
) -> Result<Vec<Vec<(u32, f64)>>, LayerError> {
    super::require_file(path)?;
    let file = std::fs::File::open(path).map_err(|source| LayerError::Io {
        path: path.to_path_buf(),
        source,
    })?;
    let mut reader = ::csv::ReaderBuilder::new()
        .trim(::csv::Trim::All)
        .from_reader(file);
    let header: Vec<String> = reader
        .headers()
        .map_err(|e| LayerError::CsvHeader {
            path: path.to_path_buf(),
            message: e.to_string(),
        })?
        .iter()
        .map(|h| h.to_ascii_lowercase())
        .collect();
    let col = |name: &str| {
        header
            .iter()
            .position(|h| h == name)
            .ok_or_else(|| LayerError::CsvHeader {
                path: path.to_path_buf(),
                message: format!("no column `{name}`; expected the header `from,to,probability`"),
            })
    };
    let (cf, ct, cp) = (col("from")?, col("to")?, col("probability")?);
    let mut rows: Vec<Vec<(u32, f64)>> = vec![Vec::new(); n_cells];
    let bad = |line: u64, column: &str, message: String| LayerError::Csv {
        path: path.to_path_buf(),
        line,
        column: column.to_string(),
        message,
    };
    for (k, rec) in reader.records().enumerate() {
        let line = k as u64 + 2;
        let rec = rec.map_err(|e| bad(line, "?", e.to_string()))?;
        let id = |c: usize, name: &str| -> Result<u32, LayerError> {
            let t = rec.get(c).unwrap_or("");
            match t.parse::<u64>() {
                Ok(v) if (v as usize) < n_cells => Ok(v as u32),
                _ => Err(bad(
                    line,
                    name,
                    format!(
                        "`{t}`: expected a cell id of the plan's grid (0 to {})",
                        n_cells.saturating_sub(1)
                    ),
                )),
            }
        };
        let (i, j) = (id(cf, "from")?, id(ct, "to")?);
        let t = rec.get(cp).unwrap_or("");
        let p = match t.parse::<f64>() {
            Ok(p) if (0.0..=1.0).contains(&p) => p,
            _ => {
                return Err(bad(
                    line,
                    "probability",
                    format!("`{t}`: expected a probability between 0 and 1"),
                ))
            }
        };
        rows[i as usize].push((j, p));
    }
    for (i, row) in rows.iter_mut().enumerate() {
        row.sort_by_key(|e| e.0);
        if let Some(w) = row.windows(2).find(|w| w[0].0 == w[1].0) {
            return Err(LayerError::Spec {
                path: path.to_path_buf(),
                message: format!("the pair from {i} to {} is given twice", w[0].0),
            });
        }
        let sum: f64 = row.iter().map(|e| e.1).sum();
        // Rounding in a written file may add a few units in the last place.
        if sum > 1.0 + 1e-6 {
            return Err(LayerError::Spec {
                path: path.to_path_buf(),
                message: format!("the probabilities from cell {i} sum to {sum} (expected at most 1: the larvae released in a cell settle at most once)"),
            });
        }
        row.retain(|e| e.1 > 0.0);
    }
    Ok(rows)
}
