//! SVG path data for a set of cells, kept small: full squares next to each other in a lattice
//! row become one rectangle, and clipped coastal cells keep their own shape only while the
//! grid is small enough for that detail to be worth its bytes.

use super::frame::MapFrame;
use crate::grid::Grid;

/// Above this many cells, clipped cells are drawn as their full squares (inside row runs) and
/// feature maps average blocks of cells: a million-cell grid would otherwise give a page of
/// tens of megabytes (common practice for web maps, no source).
pub(crate) const DETAIL_LIMIT: usize = 20_000;

/// Path data covering every cell for which `pick(cell id)` holds.
///
/// Full cells (and, when the grid has more than [`DETAIL_LIMIT`] cells, clipped ones too)
/// are merged into one rectangle per run of consecutive lattice columns; otherwise clipped
/// cells are drawn with their sea polygon. Use `fill-rule="evenodd"` only if clipped
/// polygons have holes; runs and polygons never overlap.
pub(crate) fn cells_path(grid: &Grid, frame: &MapFrame, pick: impl Fn(u32) -> bool) -> String {
    let detailed = grid.len() <= DETAIL_LIMIT;
    let mut d = String::new();
    let in_run = |id: u32| pick(id) && !(detailed && grid.cells[id as usize].clipped.is_some());
    for row in 0..grid.n_rows {
        let mut start: Option<u32> = None;
        let mut last = 0u32;
        for col in 0..=grid.n_cols {
            let here = if col < grid.n_cols {
                grid.cell_at(col, row).filter(|&id| in_run(id))
            } else {
                None
            };
            match (here, start) {
                (Some(id), None) => {
                    start = Some(id);
                    last = id;
                }
                (Some(id), Some(_)) => last = id,
                (None, Some(first)) => {
                    let (a, b) = (grid.cell_square(first), grid.cell_square(last));
                    frame.push_rect(&mut d, a.min().x, a.min().y, b.max().x, b.max().y);
                    start = None;
                }
                (None, None) => {}
            }
        }
    }
    if detailed {
        for (id, cell) in grid.cells.iter().enumerate() {
            if let Some(mp) = &cell.clipped {
                if pick(id as u32) {
                    frame.push_multipolygon(&mut d, mp);
                }
            }
        }
    }
    d
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::Crs;
    use geo::{polygon, MultiPolygon};

    #[test]
    fn runs_merge_along_rows() {
        // 4 × 2 cells of 10 km from (0, 0), fitted 400 units wide: 0.01 units/m, 100 per cell.
        let mut g =
            Grid::full_rectangle(Crs::auto_laea(10.0, 55.0), 10_000.0, [0.0, 0.0], 4, 2).unwrap();
        let f = MapFrame::fit(&g, 400.0, 400.0);
        // Row 0: cells 0, 1, 3 picked → runs [0,1] and [3]; row 1: cell 5 → run [5].
        let d = cells_path(&g, &f, |id| [0, 1, 3, 5].contains(&id));
        // Hand (PAD 10, map height 200, y flipped): row 0 spans v = 110..210, row 1 10..110.
        assert_eq!(
            d,
            "M10 110H210V210H10ZM310 110H410V210H310ZM110 10H210V110H110Z"
        );
        // A clipped cell leaves the run and is drawn with its own shape.
        g.cells[1].clipped = Some(MultiPolygon(vec![polygon![
            (x: 10_000.0, y: 0.0), (x: 20_000.0, y: 0.0), (x: 10_000.0, y: 10_000.0)
        ]]));
        let d = cells_path(&g, &f, |id| id < 2);
        assert_eq!(d, "M10 110H110V210H10ZM110 210L210 210L110 110Z");
    }
}
