//! One small map per derived climate feature: per-cell values on the viridis ramp, quantised
//! into a few classes so cells of one class share one SVG path, with a gradient legend.

use super::cells_path::{cells_path, DETAIL_LIMIT};
use super::escape::esc;
use super::frame::{round1, MapFrame, PAD};
use super::palette::{hex, ramp_rgb, ramp_stops, NO_VALUE};
use crate::grid::Grid;
use std::fmt::Write;

/// Colour classes: 32 steps are finer than the eye separates on a small map, and keep the
/// map at ≤ 33 paths (common practice, no source).
const LEVELS: usize = 32;
/// Largest map area. Units: SVG units.
pub(crate) const MAX_W: f64 = 380.0;
pub(crate) const MAX_H: f64 = 380.0;
/// Space under the map for the legend. Units: SVG units.
const FOOTER: f64 = 44.0;
/// Narrowest drawing, so the legend fits. Units: SVG units.
const MIN_SVG_W: f64 = 300.0;

/// The finite range of `values`, or `None` when no value is finite.
pub(crate) fn finite_range(values: &[f64]) -> Option<(f64, f64)> {
    values
        .iter()
        .filter(|v| v.is_finite())
        .fold(None, |acc, &v| match acc {
            None => Some((v, v)),
            Some((lo, hi)) => Some((lo.min(v), hi.max(v))),
        })
}

/// Colour class of a value in `lo..=hi` (0..LEVELS), `None` for non-finite values. A flat
/// range (lo = hi) puts every value in class 0.
pub(crate) fn level(v: f64, lo: f64, hi: f64) -> Option<usize> {
    if !v.is_finite() {
        return None;
    }
    if hi <= lo {
        return Some(0);
    }
    let t = ((v - lo) / (hi - lo)).clamp(0.0, 1.0);
    Some(((t * LEVELS as f64).floor() as usize).min(LEVELS - 1))
}

/// The colour drawn for a class: the ramp at the class's middle.
pub(crate) fn level_colour(l: usize) -> String {
    hex(ramp_rgb((l as f64 + 0.5) / LEVELS as f64))
}

/// Block side (in cells) so a grid is drawn with at most about [`DETAIL_LIMIT`] squares.
pub(crate) fn block_side(n_cells: usize) -> u32 {
    if n_cells <= DETAIL_LIMIT {
        1
    } else {
        (n_cells as f64 / DETAIL_LIMIT as f64).sqrt().ceil() as u32
    }
}

/// Mean of the finite values of the cells in each `k × k` block of lattice squares, blocks
/// row-major from the south-west; NaN where a block has no cell with a finite value.
/// Returns (block columns, block rows, means).
pub(crate) fn block_means(grid: &Grid, values: &[f64], k: u32) -> (u32, u32, Vec<f64>) {
    let k = k.max(1);
    let (bc, br) = (grid.n_cols.div_ceil(k), grid.n_rows.div_ceil(k));
    let mut sum = vec![0.0; bc as usize * br as usize];
    let mut count = vec![0u32; sum.len()];
    // Cells are ordered by row then column, so the sums run in a fixed order.
    for (id, cell) in grid.cells.iter().enumerate() {
        let v = values[id];
        if v.is_finite() {
            let b = (cell.row / k) as usize * bc as usize + (cell.col / k) as usize;
            sum[b] += v;
            count[b] += 1;
        }
    }
    let means = sum
        .iter()
        .zip(&count)
        .map(|(&s, &n)| if n > 0 { s / n as f64 } else { f64::NAN })
        .collect();
    (bc, br, means)
}

/// The unit in a map's name, `refugium (km²) · ssp1-2.6 · 2090` → `km²`; `None` without one.
pub(crate) fn unit_of(name: &str) -> Option<&str> {
    let a = name.find('(')?;
    let b = a + name[a..].find(')')?;
    Some(&name[a + 1..b]).filter(|u| !u.is_empty())
}

/// Inline SVG of one feature map. `values` has one entry per cell (checked by the caller);
/// `index` makes the gradient's id unique on the page; `outlines` is SVG path data of the
/// network's reserves in this map's frame (`MapFrame::fit(grid, MAX_W, MAX_H)`), drawn over
/// the values so a reader sees what the network holds.
pub(crate) fn feature_map(
    grid: &Grid,
    index: usize,
    name: &str,
    values: &[f64],
    outlines: &str,
    arrows: Option<&[[f64; 2]]>,
) -> String {
    let frame = MapFrame::fit(grid, MAX_W, MAX_H);
    let w = (frame.width + 2.0 * PAD).max(MIN_SVG_W);
    let h = frame.height + 2.0 * PAD + FOOTER;
    let k = block_side(grid.len());
    let range = if k == 1 {
        finite_range(values)
    } else {
        finite_range(&block_means(grid, values, k).2)
    };
    let (lo, hi) = range.unwrap_or((0.0, 0.0));
    let mut s = String::new();
    let _ = write!(
        s,
        r#"<svg class="feature-map" viewBox="0 0 {w} {h}" width="{w}" height="{h}" role="img" aria-label="Map of {name}">"#,
        w = round1(w),
        h = round1(h),
        name = esc(name)
    );
    let _ = write!(
        s,
        r#"<defs><linearGradient id="dp-ramp-{index}" x1="0" x2="1" y1="0" y2="0">"#
    );
    for (off, c) in ramp_stops() {
        let _ = write!(s, r#"<stop offset="{off}" stop-color="{c}"/>"#);
    }
    s.push_str("</linearGradient></defs>");
    // One path per colour class, then one for cells without a value.
    let mut paths: Vec<String> = vec![String::new(); LEVELS + 1];
    if k == 1 {
        let levels: Vec<Option<usize>> = values.iter().map(|&v| level(v, lo, hi)).collect();
        for (l, d) in paths.iter_mut().enumerate() {
            let want = (l < LEVELS).then_some(l);
            *d = cells_path(grid, &frame, |id| levels[id as usize] == want);
        }
    } else {
        push_blocks(grid, &frame, values, k, lo, hi, &mut paths);
    }
    for (l, d) in paths.iter().enumerate() {
        if d.is_empty() {
            continue;
        }
        let fill = if l < LEVELS {
            level_colour(l)
        } else {
            NO_VALUE.to_string()
        };
        let _ = write!(s, r#"<path fill="{fill}" stroke="none" d="{d}"/>"#);
    }
    if let Some(dirs) = arrows {
        push_arrows(&mut s, grid, &frame, dirs);
    }
    if !outlines.is_empty() {
        let _ = write!(
            s,
            r##"<path class="reserve-outline" fill="none" stroke="#ffffff" stroke-width="2.2" d="{outlines}"/><path class="reserve-outline" fill="none" stroke="#1a1a1a" stroke-width="1" d="{outlines}"/>"##
        );
    }
    // Legend: the ramp from the lowest to the highest value drawn.
    let y = round1(PAD + frame.height + 12.0);
    let _ = write!(
        s,
        r##"<g class="ramp-legend" font-size="11"><rect x="{PAD}" y="{y}" width="180" height="10" fill="url(#dp-ramp-{index})" stroke="#666666" stroke-width="0.5"/><text x="{PAD}" y="{ty}">{lo}</text><text x="{x1}" y="{ty}" text-anchor="end">{hi}</text>"##,
        ty = round1(y + 24.0),
        x1 = PAD + 180.0,
        lo = esc(&value_label(lo)),
        hi = esc(&value_label(hi)),
    );
    if let Some(unit) = unit_of(name) {
        let _ = write!(
            s,
            r#"<text class="ramp-unit" x="{x}" y="{ty}" text-anchor="middle">{u}</text>"#,
            x = PAD + 90.0,
            ty = round1(y + 24.0),
            u = esc(unit)
        );
    }
    if !paths[LEVELS].is_empty() {
        let _ = write!(
            s,
            r##"<rect x="{x}" y="{y}" width="12" height="10" fill="{NO_VALUE}"/><text x="{tx}" y="{ty}">no value</text>"##,
            x = PAD + 196.0,
            tx = PAD + 212.0,
            ty = round1(y + 9.0)
        );
    }
    if k > 1 {
        let _ = write!(
            s,
            r#"<text x="{x}" y="{ty}">each square: mean of {k}×{k} cells</text>"#,
            x = PAD + 196.0,
            ty = round1(y + 24.0)
        );
    }
    s.push_str("</g></svg>");
    s
}

/// Most arrows on one map: enough to read a field's pattern, few enough to see the colours.
const MAX_ARROWS: usize = 400;

/// Direction arrows on a sub-lattice of cells (every `s`-th column and row, `s` chosen so at
/// most about [`MAX_ARROWS`] are drawn), each `0.7·s` cells long, centred on its cell and
/// pointing along the cell's unit vector `[east, north]` (grid axes; `y` flips for SVG).
fn push_arrows(s: &mut String, grid: &Grid, frame: &MapFrame, dirs: &[[f64; 2]]) {
    let step = ((grid.len() as f64 / MAX_ARROWS as f64).sqrt().ceil() as u32).max(1);
    let half = 0.35 * step as f64 * grid.cell_size_m;
    s.push_str(r##"<g class="arrows" stroke="#ffffff" stroke-width="1" fill="none">"##);
    for (id, c) in grid.cells.iter().enumerate() {
        if c.col % step != step / 2 || c.row % step != step / 2 {
            continue;
        }
        let Some(&[e, n]) = dirs.get(id) else {
            continue;
        };
        if !(e.is_finite() && n.is_finite()) {
            continue;
        }
        let (x, y) = (c.centre[0], c.centre[1]);
        let (u0, v0) = frame.to_svg(x - e * half, y - n * half);
        let (u1, v1) = frame.to_svg(x + e * half, y + n * half);
        // Head: two short strokes at ±150° from the shaft, a third of its length.
        let (du, dv) = (u1 - u0, v1 - v0);
        let len = du.hypot(dv).max(1e-9);
        let (hu, hv) = (
            du / len * len.min(12.0) / 3.0,
            dv / len * len.min(12.0) / 3.0,
        );
        let rot = |a: f64| {
            let (sa, ca) = a.to_radians().sin_cos();
            (u1 + hu * ca - hv * sa, v1 + hu * sa + hv * ca)
        };
        let (l, r) = (rot(150.0), rot(-150.0));
        let _ = write!(
            s,
            r#"<path class="arrow" d="M{} {}L{} {}M{} {}L{} {}L{} {}"/>"#,
            round1(u0),
            round1(v0),
            round1(u1),
            round1(v1),
            round1(l.0),
            round1(l.1),
            round1(u1),
            round1(v1),
            round1(r.0),
            round1(r.1)
        );
    }
    s.push_str("</g>");
}

/// Block squares for a large grid: per block row, runs of blocks in one class become one
/// rectangle, clipped at the lattice's east and north edges.
fn push_blocks(
    grid: &Grid,
    frame: &MapFrame,
    values: &[f64],
    k: u32,
    lo: f64,
    hi: f64,
    paths: &mut [String],
) {
    let (bc, br, means) = block_means(grid, values, k);
    // Blocks holding at least one cell (a block of land alone stays blank).
    let mut occupied = vec![false; means.len()];
    for cell in &grid.cells {
        occupied[(cell.row / k) as usize * bc as usize + (cell.col / k) as usize] = true;
    }
    let side = k as f64 * grid.cell_size_m;
    let east = grid.origin[0] + grid.n_cols as f64 * grid.cell_size_m;
    let north = grid.origin[1] + grid.n_rows as f64 * grid.cell_size_m;
    let class = |b: usize| occupied[b].then(|| level(means[b], lo, hi).unwrap_or(LEVELS));
    for r in 0..br {
        let y0 = grid.origin[1] + r as f64 * side;
        let y1 = (y0 + side).min(north);
        let mut c = 0;
        while c < bc {
            let b = (r * bc + c) as usize;
            let Some(l) = class(b) else {
                c += 1;
                continue;
            };
            let mut end = c + 1;
            while end < bc && class((r * bc + end) as usize) == Some(l) {
                end += 1;
            }
            let x0 = grid.origin[0] + c as f64 * side;
            let x1 = (grid.origin[0] + end as f64 * side).min(east);
            frame.push_rect(&mut paths[l], x0, y0, x1, y1);
            c = end;
        }
    }
}

/// A value for a legend: four significant digits, plain notation in the usual range.
pub(crate) fn value_label(v: f64) -> String {
    if v == 0.0 {
        return "0".into();
    }
    let a = v.abs();
    if (1e-3..1e6).contains(&a) {
        let decimals = (3 - a.log10().floor() as i32).max(0) as usize;
        let s = format!("{v:.decimals$}");
        if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        }
    } else {
        format!("{v:.3e}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::Crs;

    fn grid(cols: u32, rows: u32) -> Grid {
        Grid::full_rectangle(Crs::auto_laea(4.0, 56.0), 5_000.0, [0.0, 0.0], cols, rows).unwrap()
    }

    #[test]
    fn classes_span_the_ramp() {
        // Hand: 32 classes over 0..3; 0 → class 0, 3 → class 31, 1.5 → 16, NaN → none.
        assert_eq!(level(0.0, 0.0, 3.0), Some(0));
        assert_eq!(level(3.0, 0.0, 3.0), Some(31));
        assert_eq!(level(1.5, 0.0, 3.0), Some(16));
        assert_eq!(level(f64::NAN, 0.0, 3.0), None);
        assert_eq!(level(5.0, 2.0, 2.0), Some(0));
        // Hand: class 0 is drawn at t = 0.5/32 = 1/64, a quarter of the way from viridis
        // stop 0 (68,1,84) to stop 1 (72,24,106): 69, 6.75 → 7, 89.5 → 90 = #45075a.
        assert_eq!(level_colour(0), "#45075a");
        assert_eq!(finite_range(&[f64::NAN, 2.0, -1.0]), Some((-1.0, 2.0)));
        assert_eq!(finite_range(&[f64::NAN]), None);
    }

    #[test]
    fn lowest_and_highest_cells_get_the_end_classes() {
        let g = grid(4, 1);
        let svg = feature_map(
            &g,
            0,
            "refugium <A&B> (km²)",
            &[0.0, 1.0, 3.0, f64::NAN],
            "M1 1L2 2L1 2Z",
            None,
        );
        // Cell 0 (value 0) is class 0, cell 2 (value 3) class 31, cell 3 has no value.
        assert!(svg.contains(&format!(r#"fill="{}""#, level_colour(0))));
        assert!(svg.contains(&format!(r#"fill="{}""#, level_colour(31))));
        assert!(svg.contains(&format!(r#"fill="{NO_VALUE}""#)));
        assert!(svg.contains("refugium &lt;A&amp;B&gt;"));
        assert!(!svg.contains("<A&B>"));
        // Legend labels: the value range and the unit; the reserves outlined over the values.
        assert!(svg.contains(">0</text>") && svg.contains(">3</text>"));
        assert!(svg.contains(r#"class="ramp-unit""#) && svg.contains(">km²</text>"));
        assert_eq!(svg.matches(r#"class="reserve-outline""#).count(), 2);
        assert_eq!(unit_of("refugium (km²) · s1 · 2090"), Some("km²"));
        assert_eq!(unit_of("selection share"), None);
    }

    #[test]
    fn big_grids_average_blocks() {
        // 20 200 cells > 20 000 → block side ceil(√1.01) = 2 (hand).
        assert_eq!(block_side(20_200), 2);
        assert_eq!(block_side(20_000), 1);
        // 5 × 3 grid, value = column: 2 × 2 blocks → 3 × 2 blocks. Block (0,0) holds
        // columns 0,1 → mean 0.5; block (2,0) holds column 4 only → 4; block (1,1) holds
        // columns 2,3 of row 2 → 2.5.
        let g = grid(5, 3);
        let values: Vec<f64> = g.cells.iter().map(|c| c.col as f64).collect();
        let (bc, br, m) = block_means(&g, &values, 2);
        assert_eq!((bc, br), (3, 2));
        assert_eq!(m, vec![0.5, 2.5, 4.0, 0.5, 2.5, 4.0]);
        let mut paths = vec![String::new(); LEVELS + 1];
        let frame = MapFrame::fit(&g, MAX_W, MAX_H);
        push_blocks(&g, &frame, &values, 2, 0.5, 4.0, &mut paths);
        // Two block rows, one rectangle per class each. Hand: 0.5 → class 0; 2.5 →
        // (2.5 − 0.5)/3.5 × 32 = 18.29 → class 18; 4.0 → class 31.
        assert_eq!(paths[0].matches('M').count(), 2);
        assert_eq!(paths[18].matches('M').count(), 2);
        assert_eq!(paths[31].matches('M').count(), 2);
    }

    #[test]
    fn value_labels() {
        assert_eq!(value_label(3.0), "3");
        assert_eq!(value_label(0.123456), "0.1235");
        assert_eq!(value_label(1234.5678), "1235");
        assert_eq!(value_label(2.5e-5), "2.500e-5");
    }
}
