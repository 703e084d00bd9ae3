//! Report: takes a run's grid, network, derived feature values, coverage and optional stress
//! test and budget sweep, and returns `report.html`: one self-contained page (inline SVG maps
//! and charts, HTML tables, inline CSS) that needs no network access and runs no script.
//!
//! Maps use the grid's own equal-area projected metres, y flipped, scaled to SVG units, so the
//! scale bar is exact in projected metres; reserves are the same dissolved outlines that
//! `network.geojson` carries.

mod basemap;
mod cells_path;
mod chart;
mod compare_page;
mod coverage_heatmap;
mod escape;
mod feature_map;
mod frame;
mod links_map;
mod network_map;
mod palette;
mod tables;

pub use basemap::{Basemap, GraticuleLine};
pub use compare_page::{compare_report_html, CompareReport};

use crate::assess::{Coverage, Reserve};
use crate::export::{ExportError, BENEFIT, CAUTION};
use crate::grid::Grid;
use crate::model::CellStatus;
use chart::{line_chart, Chart, Series};
use escape::esc;
use std::fmt::Write;

/// Everything the report shows, borrowed from the run.
#[derive(Debug, Clone)]
pub struct ReportInput<'a> {
    /// Plan name, shown as the page title.
    pub title: &'a str,
    /// Run facts in display order, as `(name, value)` text (plan hash, solver, status,
    /// objective, bound, gap, seconds, cost, area, share, reserves, targets reached …).
    pub facts: Vec<(String, String)>,
    /// The planning grid (cells in projected metres).
    pub grid: &'a Grid,
    /// Chosen cells, one flag per cell id.
    pub selected: &'a [bool],
    /// Required / excluded / free, one per cell id.
    pub status: &'a [CellStatus],
    /// The network's reserves in assessment order (`Assessment::reserves`): the same order
    /// and numbering as `network.geojson`.
    pub reserves: &'a [Reserve],
    /// One map per derived climate feature: name and one value per cell id (NaN = no value).
    pub feature_maps: Vec<(String, Vec<f64>)>,
    /// Direction arrows over feature maps: the map's name and, per cell id, a unit vector
    /// `[east, north]` in the grid's axes (NaN: no arrow), e.g. climate velocity's bearing.
    pub arrows: Vec<(String, Vec<[f64; 2]>)>,
    /// Coverage of every feature (`Assessment::coverage`), drawn through time per scenario.
    pub coverage: &'a [Coverage],
    /// Networks designed for one scenario (rows) scored in every scenario (columns).
    pub stress: Option<StressTable>,
    /// The cost–benefit curve of a budget sweep, in budget order.
    pub sweep: Option<Vec<SweepPoint>>,
    /// Several networks drawn side by side (each budget of a sweep), after the network map.
    pub panels: Option<NetworkPanels>,
    /// The zone of each cell of a zoned network: the map fills each zone in its own colour.
    pub zones: Option<ReportZones<'a>>,
    /// Land, graticule and north for the network map ([`Basemap::build`]); `None` draws the
    /// cells alone.
    pub basemap: Option<Basemap>,
    /// Larval exchange between reserves, strongest first
    /// (`assess::connectivity::reserve_links`); empty: no links section.
    pub reserve_links: Vec<crate::assess::connectivity::ReserveLink>,
}

/// A zoned network's zones ([`crate::model::zones`]) as the report draws them.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ReportZones<'a> {
    /// Zone names, in plan order (the first gets the reserve colour).
    pub names: &'a [String],
    /// Per cell id: 0 outside the network, 1 + the zone's index (a code beyond `names` is
    /// not drawn).
    pub assignment: &'a [u8],
}

/// One network of several drawn side by side.
#[derive(Debug, Clone, PartialEq)]
pub struct NetworkPanel {
    /// Caption (e.g. `budget 10%: cost 812, 34 of 40 targets reached`).
    pub label: String,
    /// Its reserves (`Assessment::reserves`).
    pub reserves: Vec<Reserve>,
}

/// Networks drawn side by side under one heading.
#[derive(Debug, Clone, PartialEq)]
pub struct NetworkPanels {
    /// Section heading.
    pub title: String,
    /// One sentence under the heading (what the panels show).
    pub note: String,
    /// The networks, in display order.
    pub panels: Vec<NetworkPanel>,
}

/// One cell of the stress table: a network designed for one scenario, evaluated in another.
#[derive(Debug, Clone, PartialEq)]
pub struct StressCell {
    /// Targets the network meets in the evaluated scenario.
    pub targets_reached: usize,
    /// Targets in the evaluated scenario.
    pub targets_total: usize,
    /// Benefit in the evaluated scenario (weighted target attainment, the objective's unit).
    pub benefit: f64,
}

/// Designed-for × evaluated-in stress test: how a network planned for one scenario fares
/// under the others.
#[derive(Debug, Clone, PartialEq)]
pub struct StressTable {
    /// Row labels: the scenario (or robustness rule) each network was designed for.
    pub designed_for: Vec<String>,
    /// Column labels: the scenarios each network is scored in.
    pub evaluated_in: Vec<String>,
    /// `cells[row][column]`, one row per `designed_for`, one column per `evaluated_in`.
    pub cells: Vec<Vec<StressCell>>,
}

/// One solve of a budget sweep.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SweepPoint {
    /// Budget as a share of the region (0–1).
    pub budget_share: f64,
    /// Cost of the network found (the plan's cost unit).
    pub cost: f64,
    /// Benefit of the network found (weighted target attainment).
    pub benefit: f64,
    /// The solver's relative gap to its bound (0–1).
    pub gap: f64,
    /// Targets the budget's network reaches.
    pub targets_reached: usize,
    /// Targets in all.
    pub targets_total: usize,
}

/// Page style: system fonts only (no web fonts), print-friendly.
const STYLE: &str = "body{font-family:system-ui,-apple-system,'Segoe UI',Roboto,Arial,sans-serif;\
margin:24px auto;max-width:1160px;color:#1a1a1a;line-height:1.4;padding:0 16px}\
h1{font-size:1.6em;margin:0 0 12px}h2{font-size:1.2em;margin:28px 0 8px;border-bottom:1px solid #ccc}\
.caution{border:2px solid #D55E00;background:#fdf3ec;padding:10px 14px;border-radius:4px}\
table{border-collapse:collapse;margin:8px 0}th,td{border:1px solid #ccc;padding:4px 8px;text-align:left;\
vertical-align:top}th{background:#f4f4f4}.small{font-size:0.85em;color:#444}\
.maps{display:flex;flex-wrap:wrap;gap:16px}figure{margin:0}figcaption{font-size:0.9em;color:#333}\
svg{max-width:100%;height:auto}\
table.heat td{text-align:right;min-width:3.5em}table.heat caption{text-align:left;font-weight:600;padding:4px 0}\
td.absent,.swatch.absent{background:repeating-linear-gradient(45deg,#fff,#fff 3px,#ddd 3px,#ddd 6px);color:#555}\
.swatch{display:inline-block;width:1em;height:1em;border:1px solid #999;vertical-align:middle;margin:0 4px 0 10px}";

/// Renders `report.html`. Pure: returns the text; write it with `export::write_outputs`.
///
/// Fails with [`ExportError::Length`] when a per-cell vector (`selected`, `status`, a
/// feature map) does not have one value per cell, a reserve names a cell the grid lacks, or
/// the stress table's cells do not match its labels.
pub fn report_html(input: &ReportInput) -> Result<String, ExportError> {
    check(input)?;
    let grid = input.grid;
    let mut s = String::with_capacity(64 * 1024);
    let _ = write!(
        s,
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"><title>{t} · driftplan report</title><style>{STYLE}</style></head><body>\n",
        t = esc(input.title)
    );
    let _ = writeln!(s, "<h1>{}</h1>", esc(input.title));
    let _ = writeln!(
        s,
        "<p class=\"caution\" role=\"note\"><strong>Caution.</strong> {}</p>",
        esc(CAUTION)
    );
    s.push_str("<h2>Run facts</h2>\n");
    s.push_str(&tables::facts_table(&input.facts));
    let chosen = input.selected.iter().filter(|&&b| b).count();
    let _ = write!(
        s,
        "\n<h2>Network</h2>\n<figure>{}<figcaption>{}, {} of {} chosen. Map in the grid's equal-area projection (projected metres); the scale bar is exact in that projection.</figcaption></figure>\n",
        network_map::network_map(
            grid,
            input.status,
            input.reserves,
            input.zones.as_ref(),
            input.basemap.as_ref(),
        ),
        crate::export::words::count(input.reserves.len(), "reserve"),
        chosen,
        crate::export::words::count(grid.len(), "cell")
    );
    if !input.reserve_links.is_empty() {
        s.push_str(&links_section(input));
    }
    if let Some(p) = &input.panels {
        s.push_str(&panels_html(grid, input.status, p));
    }
    if !input.feature_maps.is_empty() {
        s.push_str("<h2>Maps of derived features and layers</h2>\n<p class=\"small\">Each derived feature in every scenario, in the first and the last year (summed over species), on the viridis ramp from its lowest to its highest value; the network's reserves outlined.</p>\n<div class=\"maps\">");
        let small = frame::MapFrame::fit(grid, feature_map::MAX_W, feature_map::MAX_H);
        let mut outlines = String::new();
        for r in input.reserves {
            small.push_multipolygon(
                &mut outlines,
                &crate::export::dissolve::dissolve(grid, &r.cells),
            );
        }
        for (k, (name, values)) in input.feature_maps.iter().enumerate() {
            let _ = write!(
                s,
                "<figure>{}<figcaption>{}</figcaption></figure>",
                feature_map::feature_map(
                    grid,
                    k,
                    name,
                    values,
                    &outlines,
                    input
                        .arrows
                        .iter()
                        .find(|(n, _)| n == name)
                        .map(|(_, a)| a.as_slice()),
                ),
                esc(name)
            );
        }
        s.push_str("</div>\n");
    }
    let coverage = coverage_heatmap::coverage_section(input.coverage);
    if !coverage.is_empty() {
        s.push_str("<h2>Coverage through time</h2>\n<p class=\"small\">Share of each target the network protects, per scenario and year: one row per species' habitat or derived feature (the lowest share when several features share a row), the weakest rows first. Below 100% the target is missed.</p>\n");
        s.push_str(&coverage);
    }
    if let Some(t) = &input.stress {
        let _ = writeln!(s, "<h2>Scenario stress test</h2>\n<p class=\"small\">Each row is a network designed for one scenario, each column the scenario it is scored in: targets reached and benefit. ✓ all reached, △ at least half, ✗ fewer. {}.</p>", esc(&capital(BENEFIT)));
        s.push_str(&tables::stress_table(t));
        s.push('\n');
    }
    if let Some(points) = &input.sweep {
        let _ = writeln!(
            s,
            "<h2>Budget sweep</h2>\n<p class=\"small\">The best benefit each budget buys, at the least cost for that benefit. {}.</p>",
            esc(&capital(BENEFIT))
        );
        let mut series = vec![Series {
            label: "benefit".into(),
            points: points
                .iter()
                .map(|p| (100.0 * p.budget_share, p.benefit))
                .collect(),
        }];
        // The smallest budget whose network reaches every target, marked on the curve.
        if let Some(p) = points
            .iter()
            .find(|p| p.targets_total > 0 && p.targets_reached == p.targets_total)
        {
            series.push(Series {
                label: format!("every target reached from {:.0}%", 100.0 * p.budget_share),
                points: vec![(100.0 * p.budget_share, p.benefit)],
            });
        }
        s.push_str(&line_chart(&Chart {
            title: "Benefit by budget",
            x_label: "budget (% of region)",
            y_label: "benefit",
            series: &series,
            y_range: None,
            reference: None,
            x_ticks: None,
        }));
        s.push_str(&tables::sweep_table(points));
        s.push('\n');
    }
    let _ = write!(
        s,
        "<p class=\"small\">Written by driftplan {}. Colours: Okabe–Ito palette and the viridis ramp, chosen to read with colour-vision deficiency.</p>\n</body></html>\n",
        esc(env!("CARGO_PKG_VERSION"))
    );
    Ok(s)
}

/// Rows of the table under the links map.
const LINK_ROWS: usize = 10;

/// The links map and a table of the strongest links between reserves.
fn links_section(input: &ReportInput) -> String {
    let links = &input.reserve_links;
    let mut s = format!(
        "<h2>Larval links between reserves</h2>\n<p class=\"small\">Arrows from each reserve to the reserves its larvae settle in (the {} strongest of {}), from the dispersal matrices of the `[connectivity]` species: the share of the larvae released in a reserve that settle in the other, averaged over species and weighted over scenarios. Larvae that stay in their own reserve are in connectivity.csv (network_retention).</p>\n<figure>{}<figcaption>Links between reserves; reserve numbers as on the network map.</figcaption></figure>\n",
        links.len().min(links_map::MAX_ARROWS),
        crate::export::words::count(links.len(), "link"),
        links_map::links_map(input.grid, input.reserves, links, input.basemap.as_ref()),
    );
    s.push_str(r#"<table class="links"><thead><tr><th scope="col">from reserve</th><th scope="col">to reserve</th><th scope="col">share of larvae</th></tr></thead><tbody>"#);
    for l in links.iter().take(LINK_ROWS) {
        let _ = write!(
            s,
            "<tr><td>{}</td><td>{}</td><td>{:.2}%</td></tr>",
            l.from + 1,
            l.to + 1,
            100.0 * l.share
        );
    }
    s.push_str("</tbody></table>\n");
    s
}

/// A heading, a note and small network maps side by side, each with its caption.
pub(crate) fn panels_html(grid: &Grid, status: &[CellStatus], p: &NetworkPanels) -> String {
    let mut s = format!(
        "<h2>{}</h2>\n<p class=\"small\">{}</p>\n<div class=\"maps\">",
        esc(&p.title),
        esc(&p.note)
    );
    for panel in &p.panels {
        let _ = write!(
            s,
            "<figure>{}<figcaption>{}</figcaption></figure>",
            network_map::network_panel(grid, status, &panel.reserves, &panel.label),
            esc(&panel.label)
        );
    }
    s.push_str("</div>\n");
    s
}

/// `text` with its first letter in upper case (a sentence made of a definition).
fn capital(text: &str) -> String {
    let mut c = text.chars();
    match c.next() {
        Some(f) => f.to_uppercase().chain(c).collect(),
        None => String::new(),
    }
}

/// Checks every per-cell vector and the stress table's shape.
fn check(input: &ReportInput) -> Result<(), ExportError> {
    let n = input.grid.len();
    let len = |what: String, got: usize| {
        if got == n {
            Ok(())
        } else {
            Err(ExportError::Length {
                what,
                expected: n,
                got,
            })
        }
    };
    len("selected".into(), input.selected.len())?;
    len("status".into(), input.status.len())?;
    if let Some(z) = &input.zones {
        len("zone assignment".into(), z.assignment.len())?;
    }
    for (name, values) in &input.feature_maps {
        len(format!("feature map `{name}`"), values.len())?;
    }
    for (k, r) in input.reserves.iter().enumerate() {
        if let Some(&bad) = r.cells.iter().find(|&&c| c as usize >= n) {
            return Err(ExportError::Length {
                what: format!("reserve {} (cell id {bad})", k + 1),
                expected: n,
                got: bad as usize + 1,
            });
        }
    }
    for l in &input.reserve_links {
        let bad = l.from.max(l.to);
        if bad >= input.reserves.len() {
            return Err(ExportError::Length {
                what: format!("reserve link {} → {}", l.from + 1, l.to + 1),
                expected: input.reserves.len(),
                got: bad + 1,
            });
        }
    }
    for panel in input.panels.iter().flat_map(|p| &p.panels) {
        for r in &panel.reserves {
            if let Some(&bad) = r.cells.iter().find(|&&c| c as usize >= n) {
                return Err(ExportError::Length {
                    what: format!("network `{}` (cell id {bad})", panel.label),
                    expected: n,
                    got: bad as usize + 1,
                });
            }
        }
    }
    if let Some(t) = &input.stress {
        if t.cells.len() != t.designed_for.len() {
            return Err(ExportError::Length {
                what: "stress table rows (one per `designed_for` label)".into(),
                expected: t.designed_for.len(),
                got: t.cells.len(),
            });
        }
        for (label, row) in t.designed_for.iter().zip(&t.cells) {
            if row.len() != t.evaluated_in.len() {
                return Err(ExportError::Length {
                    what: format!("stress table row `{label}` (one cell per `evaluated_in` label)"),
                    expected: t.evaluated_in.len(),
                    got: row.len(),
                });
            }
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::Crs;

    fn grid() -> Grid {
        Grid::full_rectangle(Crs::auto_laea(4.0, 56.0), 5_000.0, [0.0, 0.0], 4, 3).unwrap()
    }

    fn input<'a>(
        g: &'a Grid,
        sel: &'a [bool],
        status: &'a [CellStatus],
        res: &'a [Reserve],
    ) -> ReportInput<'a> {
        ReportInput {
            title: "Plan <North> & \"South\"",
            facts: vec![("solver".into(), "HiGHS".into())],
            grid: g,
            selected: sel,
            status,
            reserves: res,
            feature_maps: vec![("refugium".into(), (0..g.len()).map(|i| i as f64).collect())],
            coverage: &[],
            stress: None,
            sweep: Some(vec![
                SweepPoint {
                    budget_share: 0.1,
                    cost: 10.0,
                    benefit: 0.5,
                    gap: 0.0,
                    targets_reached: 6,
                    targets_total: 12,
                },
                SweepPoint {
                    budget_share: 0.3,
                    cost: 30.0,
                    benefit: 0.9,
                    gap: 0.01,
                    targets_reached: 6,
                    targets_total: 12,
                },
            ]),
            panels: None,
            zones: None,
            basemap: None,
            arrows: vec![],
            reserve_links: vec![],
        }
    }

    #[test]
    fn title_is_escaped_and_caution_shown() {
        let g = grid();
        let sel = vec![false; g.len()];
        let st = vec![CellStatus::Free; g.len()];
        let html = report_html(&input(&g, &sel, &st, &[])).unwrap();
        assert!(html.contains("<h1>Plan &lt;North&gt; &amp; &quot;South&quot;</h1>"));
        assert!(!html.contains("<North>"));
        assert!(html.contains(&esc(CAUTION)));
        assert!(html.contains("Benefit by budget"));
    }

    #[test]
    fn no_external_references() {
        let g = grid();
        let sel = vec![true; g.len()];
        let st = vec![CellStatus::Free; g.len()];
        let res = crate::assess::reserves(&g, &vec![1.0; g.len()], &sel);
        let html = report_html(&input(&g, &sel, &st, &res)).unwrap();
        for bad in [
            "http://", "https://", "<script", "src=", "@import", "url(http", "<link",
        ] {
            assert!(!html.contains(bad), "report contains `{bad}`");
        }
        // The only url() references are to the page's own patterns and gradients.
        for (at, _) in html.match_indices("url(") {
            assert!(html[at..].starts_with("url(#"), "{}", &html[at..at + 20]);
        }
    }

    #[test]
    fn mismatched_vectors_are_errors() {
        let g = grid();
        let sel = vec![false; 3];
        let st = vec![CellStatus::Free; g.len()];
        let err = report_html(&input(&g, &sel, &st, &[])).unwrap_err();
        assert!(
            err.to_string()
                .contains("selected has 3 values but the grid has 12"),
            "{err}"
        );
        let sel = vec![false; g.len()];
        let mut i = input(&g, &sel, &st, &[]);
        i.stress = Some(StressTable {
            designed_for: vec!["a".into()],
            evaluated_in: vec!["a".into(), "b".into()],
            cells: vec![vec![StressCell {
                targets_reached: 1,
                targets_total: 1,
                benefit: 1.0,
            }]],
        });
        let err = report_html(&i).unwrap_err();
        assert!(err.to_string().contains("stress table row `a`"), "{err}");
    }
}
