//! `report.html`, checked from outside: reserve outlines re-read from `network.geojson` by the
//! `geojson` crate and compared with the SVG paths, and the page rendered by headless Chromium
//! (console free of errors, screenshot decoded by the `png` crate and not blank).

use driftplan::assess::connectivity::ReserveLink;
use driftplan::assess::{assess, Assessment};
use driftplan::export::{network_geojson, write_outputs};
use driftplan::features::{Feature, FeatureKind, FeatureTable, Target};
use driftplan::grid::{Crs, Grid};
use driftplan::model::CellStatus;
use driftplan::report::{
    report_html, Basemap, ReportInput, ReportZones, StressCell, StressTable, SweepPoint,
};
use geo::polygon;
use geojson::{GeoJson, GeometryValue};
use std::path::Path;
use std::process::{Command, Stdio};
use std::str::FromStr;
use std::time::{Duration, Instant};

/// 10 km cells, 10×10, on a Lambert azimuthal equal-area projection centred at 10°E 55°N.
fn grid() -> Grid {
    Grid::full_rectangle(
        Crs::auto_laea(10.0, 55.0),
        10_000.0,
        [-50_000.0, -50_000.0],
        10,
        10,
    )
    .unwrap()
}

fn id(col: u32, row: u32) -> u32 {
    row * 10 + col
}

/// Four reserves: a ring around a hole, a block whose hole touches the exterior at a
/// corner, a coastal pair with one cell clipped to a triangle, and a lone cell.
fn network(g: &mut Grid) -> Vec<bool> {
    let mut sel = vec![false; g.len()];
    for r in 1..=3 {
        for c in 1..=3 {
            if (c, r) != (2, 2) {
                sel[id(c, r) as usize] = true;
            }
        }
    }
    for (c, r) in [(6, 6), (7, 6), (8, 6), (6, 7), (8, 7), (6, 8), (7, 8)] {
        sel[id(c, r) as usize] = true;
    }
    sel[id(5, 0) as usize] = true;
    sel[id(6, 0) as usize] = true;
    sel[id(4, 4) as usize] = true;
    let sq = g.cell_square(id(5, 0));
    let (a, b) = (sq.min(), sq.max());
    let c = &mut g.cells[id(5, 0) as usize];
    c.clipped = Some(geo::MultiPolygon(vec![polygon![
        (x: a.x, y: a.y), (x: b.x, y: a.y), (x: b.x, y: b.y), (x: a.x, y: a.y)
    ]]));
    c.sea_area_km2 = 50.0;
    g.sea_area_km2 -= 50.0;
    sel
}

/// Two species × two scenarios × three years of habitat, amounts shifting north with time.
fn features() -> FeatureTable {
    let scenarios = vec!["ssp1-2.6".to_string(), "ssp5-8.5".to_string()];
    let mut fs = Vec::new();
    for (s, _) in scenarios.iter().enumerate() {
        for (k, year) in [2030, 2050, 2070].into_iter().enumerate() {
            for (sp, col) in [("silver-bream", 2u32), ("sand-eel", 7u32)] {
                let row = (k as u32 * (1 + s as u32) * 2).min(9);
                let amounts: Vec<(u32, f64)> = vec![(id(col, row), 50.0), (id(col, 9), 50.0)];
                fs.push(Feature {
                    name: format!("habitat/{sp}/{}/{year}", scenarios[s]),
                    kind: FeatureKind::Habitat,
                    species: Some(sp.into()),
                    scenario: Some(s),
                    year: Some(year),
                    unit: "km2".into(),
                    amounts,
                    total: 100.0,
                    target: Target::Share(0.3),
                    weight: 1.0,
                });
            }
        }
    }
    FeatureTable {
        scenarios,
        years: vec![2030, 2050, 2070],
        features: fs,
    }
}

fn setup() -> (Grid, Vec<bool>, Vec<CellStatus>, Assessment) {
    let mut g = grid();
    let sel = network(&mut g);
    let cost: Vec<f64> = (0..g.len()).map(|i| 1.0 + i as f64 / 100.0).collect();
    let a = assess(&g, &features(), &cost, &sel);
    let mut status = vec![CellStatus::Free; g.len()];
    status[id(1, 1) as usize] = CellStatus::Required;
    status[id(4, 4) as usize] = CellStatus::Required;
    for c in 0..10 {
        status[id(c, 5) as usize] = CellStatus::Excluded;
    }
    (g, sel, status, a)
}

fn render(g: &Grid, sel: &[bool], status: &[CellStatus], a: &Assessment) -> String {
    render_zoned(g, sel, status, a, None)
}

/// The land the network leaves out of cell (5, 0): the triangle above its clipped sea half,
/// as lon/lat (the plan's land mask).
fn land_lonlat(g: &Grid) -> geo::MultiPolygon<f64> {
    let sq = g.cell_square(id(5, 0));
    let (a, b) = (sq.min(), sq.max());
    let p = g.projector().unwrap();
    let ll = |x: f64, y: f64| {
        let q = p.to_lonlat(x, y).unwrap();
        (q[0], q[1])
    };
    let (p0, p1, p2) = (ll(a.x, a.y), ll(b.x, b.y), ll(a.x, b.y));
    geo::MultiPolygon(vec![polygon![
        (x: p0.0, y: p0.1), (x: p1.0, y: p1.1), (x: p2.0, y: p2.1), (x: p0.0, y: p0.1)
    ]])
}

fn render_zoned(
    g: &Grid,
    sel: &[bool],
    status: &[CellStatus],
    a: &Assessment,
    zones: Option<ReportZones>,
) -> String {
    let velocity: Vec<f64> = g
        .cells
        .iter()
        .map(|c| c.row as f64 * 0.5 + c.col as f64 * 0.1)
        .collect();
    let mut refugium: Vec<f64> = g
        .cells
        .iter()
        .map(|c| ((c.col * 7 + c.row * 3) % 10) as f64)
        .collect();
    refugium[0] = f64::NAN;
    let cell = |m, b| StressCell {
        targets_reached: m,
        targets_total: 6,
        benefit: b,
    };
    report_html(&ReportInput {
        title: "Merrow <Sound> & Skerrin",
        facts: vec![
            ("plan hash".into(), "3f2a…".into()),
            ("solver".into(), "HiGHS".into()),
            ("status".into(), "optimal".into()),
            ("gap".into(), "0 %".into()),
            ("cost".into(), format!("{:.2}", a.cost)),
            ("reserves".into(), a.reserves.len().to_string()),
            (
                "targets reached".into(),
                format!("{} of {}", a.targets_reached, a.coverage.len()),
            ),
        ],
        grid: g,
        selected: sel,
        status,
        reserves: &a.reserves,
        feature_maps: vec![
            ("velocity (km/yr)".into(), velocity),
            ("refugium".into(), refugium),
        ],
        coverage: &a.coverage,
        stress: Some(StressTable {
            designed_for: vec![
                "ssp1-2.6".into(),
                "ssp5-8.5".into(),
                "every-scenario".into(),
            ],
            evaluated_in: vec!["ssp1-2.6".into(), "ssp5-8.5".into()],
            cells: vec![
                vec![cell(6, 1.0), cell(3, 0.6)],
                vec![cell(4, 0.8), cell(6, 1.0)],
                vec![cell(6, 1.0), cell(6, 1.0)],
            ],
        }),
        sweep: Some(vec![
            SweepPoint {
                budget_share: 0.1,
                cost: 12.0,
                benefit: 0.41,
                gap: 0.0,
                targets_reached: 6,
                targets_total: 12,
            },
            SweepPoint {
                budget_share: 0.2,
                cost: 23.5,
                benefit: 0.72,
                gap: 0.002,
                targets_reached: 6,
                targets_total: 12,
            },
            SweepPoint {
                budget_share: 0.3,
                cost: 35.0,
                benefit: 0.93,
                gap: 0.0,
                targets_reached: 12,
                targets_total: 12,
            },
        ]),
        panels: Some(driftplan::report::NetworkPanels {
            title: "Network at each budget".into(),
            note: "One small map per budget.".into(),
            panels: vec![driftplan::report::NetworkPanel {
                label: "budget 30% <all>".into(),
                reserves: a.reserves.clone(),
            }],
        }),
        zones,
        basemap: Some(Basemap::build(g, Some(&land_lonlat(g))).unwrap()),
        // Velocity pointing due north in grid axes everywhere.
        arrows: vec![("velocity (km/yr)".into(), vec![[0.0, 1.0]; g.len()])],
        reserve_links: test_links(a.reserves.len()),
    })
    .unwrap()
}

/// Larval links between the first reserves: 1 → 2 (12%), 2 → 1 (3%), 3 → 1 (0.5%); none with
/// fewer than three reserves.
fn test_links(reserves: usize) -> Vec<ReserveLink> {
    if reserves < 3 {
        return Vec::new();
    }
    [(0, 1, 0.12), (1, 0, 0.03), (2, 0, 0.005)]
        .iter()
        .map(|&(from, to, share)| ReserveLink { from, to, share })
        .collect()
}

/// Path data of the SVG element carrying `marker`.
fn path_after<'a>(html: &'a str, marker: &str) -> &'a str {
    let at = html
        .find(marker)
        .unwrap_or_else(|| panic!("no `{marker}` in the report"));
    let d0 = html[at..].find(" d=\"").unwrap() + at + 4;
    let d1 = html[d0..].find('"').unwrap() + d0;
    &html[d0..d1]
}

/// `M…L…Z` path data → rings of SVG points.
fn parse_path(d: &str) -> Vec<Vec<[f64; 2]>> {
    d.split('Z')
        .filter(|p| !p.is_empty())
        .map(|sub| {
            sub.trim_start_matches('M')
                .split('L')
                .map(|pt| {
                    let v: Vec<f64> = pt.split(' ').map(|x| x.parse().unwrap()).collect();
                    [v[0], v[1]]
                })
                .collect()
        })
        .collect()
}

fn near_segment(p: [f64; 2], a: [f64; 2], b: [f64; 2], tol: f64) -> bool {
    let (dx, dy) = (b[0] - a[0], b[1] - a[1]);
    let len2 = dx * dx + dy * dy;
    let t = if len2 > 0.0 {
        (((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) / len2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    (p[0] - a[0] - t * dx).hypot(p[1] - a[1] - t * dy) <= tol
}

/// Same start, same vertices in the same order; GeoJSON may hold extra points along an edge
/// (its densification before unprojecting).
fn assert_same_ring(geo: &[[f64; 2]], svg: &[[f64; 2]], tol: f64) {
    let close = |p: [f64; 2], q: [f64; 2]| (p[0] - q[0]).hypot(p[1] - q[1]) <= tol;
    let mut q = svg.to_vec();
    q.push(svg[0]);
    assert!(close(geo[0], q[0]), "start {:?} vs {:?}", geo[0], q[0]);
    let mut j = 0;
    for &p in &geo[1..] {
        if j + 1 < q.len() && close(p, q[j + 1]) {
            j += 1;
        } else {
            assert!(
                j + 1 < q.len() && near_segment(p, q[j], q[j + 1], tol),
                "GeoJSON point {p:?} is off SVG edge {j}"
            );
        }
    }
    assert_eq!(j, q.len() - 1, "SVG ring has vertices GeoJSON lacks");
}

#[test]
fn svg_reserves_are_the_network_geojson_rings() {
    let (g, sel, status, a) = setup();
    let html = render(&g, &sel, &status, &a);
    let gj = network_geojson(&g, &a).unwrap();
    let GeoJson::FeatureCollection(fc) = GeoJson::from_str(&gj).unwrap() else {
        panic!("not a FeatureCollection")
    };
    assert_eq!(fc.features.len(), 4);
    // The network map fits the 100 km × 100 km lattice into at most 1000 × 900 SVG units,
    // so 900 × 900, with a 10-unit margin: u = 10 + (x + 50 000) · 0.009,
    // v = 10 + (50 000 − y) · 0.009 (hand).
    let scale = 900.0 / 100_000.0;
    let to_metres = |p: [f64; 2]| {
        [
            (p[0] - 10.0) / scale - 50_000.0,
            50_000.0 - (p[1] - 10.0) / scale,
        ]
    };
    // 0.05 units of SVG rounding ≈ 5.6 m; 6-decimal lon/lat adds ≈ 0.1 m.
    let tol = 0.06 / scale;
    let projector = g.projector().unwrap();
    let mut holes = 0;
    for (k, f) in fc.features.iter().enumerate() {
        let svg_rings: Vec<Vec<[f64; 2]>> =
            parse_path(path_after(&html, &format!("data-reserve=\"{}\"", k + 1)))
                .into_iter()
                .map(|r| r.into_iter().map(to_metres).collect())
                .collect();
        let polys: Vec<Vec<Vec<geojson::Position>>> = match &f.geometry.as_ref().unwrap().value {
            GeometryValue::Polygon { coordinates } => vec![coordinates.clone()],
            GeometryValue::MultiPolygon { coordinates } => coordinates.clone(),
            other => panic!("unexpected {}", other.type_name()),
        };
        let geo_rings: Vec<&Vec<geojson::Position>> = polys.iter().flatten().collect();
        assert_eq!(geo_rings.len(), svg_rings.len(), "reserve {}", k + 1);
        holes += polys.iter().map(|p| p.len() - 1).sum::<usize>();
        for (ring, svg_ring) in geo_rings.iter().zip(&svg_rings) {
            let metres: Vec<[f64; 2]> = ring
                .iter()
                .map(|p| projector.to_xy(p[0], p[1]).unwrap())
                .collect();
            assert_same_ring(&metres, svg_ring, tol);
        }
    }
    // Hand: reserve A has one hole, reserve B one (touching its exterior at a corner).
    assert_eq!(holes, 2);
    // Scale bar: 100 km wide → a quarter is 25 km → 20 km bar of 20 000 × 0.009 = 180 units.
    assert!(
        html.contains(r#"data-km="20" data-svg-length="180""#),
        "scale bar"
    );
    for bad in ["http://", "https://", "<script"] {
        assert!(!html.contains(bad), "report contains `{bad}`");
    }
}

/// Three zones, two of them used: the ring reserve and the lone cell no-take, the block
/// and the coastal pair (its clipped triangle included) partial use.
fn zone_setup() -> (
    Grid,
    Vec<bool>,
    Vec<CellStatus>,
    Assessment,
    Vec<String>,
    Vec<u8>,
) {
    let (g, sel, status, a) = setup();
    let names: Vec<String> = ["no-take", "partial-use", "seasonal"]
        .iter()
        .map(|s| s.to_string())
        .collect();
    let assignment: Vec<u8> = g
        .cells
        .iter()
        .enumerate()
        .map(|(i, c)| match (sel[i], c.col >= 5) {
            (false, _) => 0,
            (true, false) => 1,
            (true, true) => 2,
        })
        .collect();
    (g, sel, status, a, names, assignment)
}

/// Area of `M`/`L`/`H`/`V`/`Z` path data whose rings do not overlap (the cell runs and
/// clipped cells of one zone), by the shoelace formula per ring. Units: SVG units².
fn path_area(d: &str) -> f64 {
    // Tokens: a command letter, or a number (numbers are separated by spaces or letters).
    let mut tokens: Vec<String> = Vec::new();
    for c in d.chars() {
        if c.is_ascii_alphabetic() {
            tokens.push(c.to_string());
            tokens.push(String::new());
        } else if c == ' ' {
            tokens.push(String::new());
        } else {
            tokens.last_mut().unwrap().push(c);
        }
    }
    tokens.retain(|t| !t.is_empty());
    let (mut total, mut ring) = (0.0, Vec::<[f64; 2]>::new());
    let mut i = 0;
    let num = |i: usize| -> f64 { tokens[i].parse().unwrap() };
    while i < tokens.len() {
        match tokens[i].as_str() {
            "M" | "L" => {
                ring.push([num(i + 1), num(i + 2)]);
                i += 3;
            }
            "H" => {
                let y = ring.last().unwrap()[1];
                ring.push([num(i + 1), y]);
                i += 2;
            }
            "V" => {
                let x = ring.last().unwrap()[0];
                ring.push([x, num(i + 1)]);
                i += 2;
            }
            "Z" => {
                let n = ring.len();
                let twice: f64 = (0..n)
                    .map(|k| {
                        let (p, q) = (ring[k], ring[(k + 1) % n]);
                        p[0] * q[1] - q[0] * p[1]
                    })
                    .sum();
                total += twice.abs() / 2.0;
                ring.clear();
                i += 1;
            }
            other => panic!("unexpected path token {other}"),
        }
    }
    total
}

/// The value of attribute `name` in the element that starts at `html[at..]`.
fn attr<'a>(html: &'a str, at: usize, name: &str) -> &'a str {
    let end = html[at..].find('>').unwrap() + at;
    let key = format!(" {name}=\"");
    let k = html[at..end]
        .find(&key)
        .unwrap_or_else(|| panic!("no {name}"))
        + at
        + key.len();
    &html[k..k + html[k..].find('"').unwrap()]
}

#[test]
fn zoned_cells_are_filled_in_their_zone_colour_with_a_legend_entry_each() {
    let (g, sel, status, a, names, assignment) = zone_setup();
    let html = render_zoned(
        &g,
        &sel,
        &status,
        &a,
        Some(ReportZones {
            names: &names,
            assignment: &assignment,
        }),
    );
    // Okabe & Ito (2008) / Wong (2011, Nature Methods 8:441): bluish green #009E73 and orange
    // #E69F00; the first zone takes the reserve colour, the second the next hue.
    let colours = [("no-take", "#009E73"), ("partial-use", "#E69F00")];
    // The scale bar gives SVG units per km (20 km = 180 units here, see above).
    let per_km = 180.0 / 20.0;
    for (code, (zone, colour)) in colours.iter().enumerate() {
        let code = code as u8 + 1;
        let at = html
            .find(&format!(r#"class="zone" data-zone="{zone}""#))
            .unwrap_or_else(|| panic!("no fill for zone {zone}"));
        let at = html[..at].rfind('<').unwrap();
        assert_eq!(attr(&html, at, "fill"), *colour, "{zone}");
        // Hand: the filled area is the sea area of the zone's cells (10 km cells of 100 km²,
        // the clipped coastal cell 50 km²).
        let want: f64 = g
            .cells
            .iter()
            .enumerate()
            .filter(|(i, _)| assignment[*i] == code)
            .map(|(_, c)| c.sea_area_km2)
            .sum();
        let got = path_area(attr(&html, at, "d")) / (per_km * per_km);
        assert!(
            (got - want).abs() < 0.01 * want,
            "{zone}: {got} km² drawn, {want} km² in the zone"
        );
        let n = assignment.iter().filter(|&&v| v == code).count();
        assert_eq!(attr(&html, at, "data-cells"), n.to_string());
        // Its legend entry: the same colour and the zone's name with its cell count.
        let at = html
            .find(&format!(r#"class="legend-zone" data-zone="{zone}""#))
            .unwrap_or_else(|| panic!("no legend entry for zone {zone}"));
        let at = html[..at].rfind('<').unwrap();
        assert_eq!(attr(&html, at, "fill"), *colour);
        assert!(html.contains(&format!("Zone {zone} ({n} cells)")), "{zone}");
    }
    // The unused zone has neither a fill nor a legend entry; reserves become outlines.
    assert!(!html.contains(r#"data-zone="seasonal""#));
    assert_eq!(html.matches(r#"class="legend-zone""#).count(), 2);
    assert!(html.contains("Reserve outline (4)"));
    // The unzoned page has no zone paths.
    let plain = render(&g, &sel, &status, &a);
    assert!(!plain.contains(r#"class="zone""#) && !plain.contains("legend-zone"));
}

/// Runs a command with a deadline; returns (status ok, stdout, stderr).
fn run_with_deadline(cmd: &mut Command, limit: Duration) -> (bool, String, String) {
    let out_file = tempfile::NamedTempFile::new().unwrap();
    let err_file = tempfile::NamedTempFile::new().unwrap();
    let mut child = cmd
        .stdin(Stdio::null())
        .stdout(out_file.reopen().unwrap())
        .stderr(err_file.reopen().unwrap())
        .spawn()
        .expect("chromium starts");
    let start = Instant::now();
    let ok = loop {
        if let Some(s) = child.try_wait().unwrap() {
            break s.success();
        }
        if start.elapsed() > limit {
            let _ = child.kill();
            let _ = child.wait();
            panic!("chromium did not finish within {limit:?}");
        }
        std::thread::sleep(Duration::from_millis(100));
    };
    (
        ok,
        std::fs::read_to_string(out_file.path()).unwrap_or_default(),
        std::fs::read_to_string(err_file.path()).unwrap_or_default(),
    )
}

fn chromium(profile: &Path, extra: &[String], page: &Path) -> (bool, String, String) {
    let mut cmd = Command::new("chromium");
    cmd.args([
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-background-networking",
        "--disable-extensions",
        "--no-first-run",
        "--hide-scrollbars",
        "--window-size=1200,2000",
        "--enable-logging=stderr",
        "--v=0",
    ])
    .arg(format!("--user-data-dir={}", profile.display()))
    .args(extra)
    .arg(format!("file://{}", page.display()));
    run_with_deadline(&mut cmd, Duration::from_secs(120))
}

/// Page console messages. Chromium logs every console message, of any level, as an
/// `INFO:CONSOLE` line (so "ERROR" alone would miss `console.error`); the report runs no
/// script, so any console line (a failed load, a parse or security complaint) is a fault.
fn console_lines(stderr: &str) -> Vec<&str> {
    stderr.lines().filter(|l| l.contains(":CONSOLE")).collect()
}

/// Decodes a PNG and returns (non-white share of pixels, distinct colours).
fn png_stats(path: &Path) -> (f64, usize) {
    let file = std::io::BufReader::new(std::fs::File::open(path).unwrap());
    let mut decoder = png::Decoder::new(file);
    decoder.set_transformations(png::Transformations::EXPAND | png::Transformations::STRIP_16);
    let mut reader = decoder.read_info().unwrap();
    let mut buf = vec![0; reader.output_buffer_size().unwrap()];
    let info = reader.next_frame(&mut buf).unwrap();
    let channels = info.color_type.samples();
    assert!(
        channels >= 3,
        "expected a colour screenshot, got {:?}",
        info.color_type
    );
    let mut colours = std::collections::BTreeSet::new();
    let mut non_white = 0usize;
    let n = (info.width * info.height) as usize;
    for y in 0..info.height as usize {
        let row = &buf[y * info.line_size..(y + 1) * info.line_size];
        for px in row.chunks_exact(channels).take(info.width as usize) {
            let rgb = [px[0], px[1], px[2]];
            if rgb != [255, 255, 255] {
                non_white += 1;
            }
            colours.insert(rgb);
        }
    }
    (non_white as f64 / n as f64, colours.len())
}

/// Whether `chromium` runs here; without it a check is skipped with a note, unless
/// `DRIFTPLAN_REQUIRE_CHROMIUM=1` (CI) makes its absence a failure.
fn chromium_available(check: &str) -> bool {
    let have = Command::new("chromium")
        .arg("--version")
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .status()
        .is_ok_and(|s| s.success());
    if !have {
        assert!(
            std::env::var("DRIFTPLAN_REQUIRE_CHROMIUM").as_deref() != Ok("1"),
            "DRIFTPLAN_REQUIRE_CHROMIUM=1 but `chromium` is not on PATH"
        );
        eprintln!("note: `chromium` not found; skipping {check}");
    }
    have
}

#[test]
fn chromium_renders_the_report() {
    if !chromium_available("the rendering check") {
        return;
    }
    let (g, sel, status, a) = setup();
    let html = render(&g, &sel, &status, &a);
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("out");
    write_outputs(&dir, &[("report.html", html)]).unwrap();
    let page = dir.join("report.html");
    let shot = tmp.path().join("shot.png");

    // The console check can fail: a page that logs an error is caught.
    let bad = tmp.path().join("bad.html");
    std::fs::write(
        &bad,
        "<!DOCTYPE html><p>x</p><script>console.error('deliberate failure')</script>",
    )
    .unwrap();
    let (_, dom, err) = chromium(&tmp.path().join("p0"), &["--dump-dom".into()], &bad);
    assert!(
        dom.contains("<p>x</p>"),
        "chromium --dump-dom printed: {dom}"
    );
    assert!(
        !console_lines(&err).is_empty(),
        "a console error went unseen:\n{err}"
    );

    let (ok, dom, err) = chromium(&tmp.path().join("p1"), &["--dump-dom".into()], &page);
    assert!(ok, "chromium --dump-dom failed:\n{err}");
    assert!(console_lines(&err).is_empty(), "console errors:\n{err}");
    // Hand: one network map, one budget panel (the sweep's single budget), two feature maps,
    // one weakest-feature chart over both scenarios and one sweep chart = 6 SVG elements, and
    // one coverage table per scenario (two); the DOM holds all four reserves in the network
    // map and again in the budget panel.
    // The links map adds one more SVG with three arrows and the reserves again.
    assert_eq!(dom.matches("<svg").count(), 7, "{dom}");
    assert_eq!(dom.matches("class=\"link\"").count(), 3, "{dom}");
    assert_eq!(dom.matches("<table class=\"heat\"").count(), 2, "{dom}");
    // The base of the network map: land, degree labels of the graticule (the grid spans about
    // 9.2–10.8°E and 54.55–55.45°N, so a 0.5° spacing labels 10°E and 55°N), the north arrow
    // and each reserve's number.
    assert!(dom.contains("class=\"land\""), "no land in the DOM");
    for label in [">10°E<", ">55°N<"] {
        assert!(dom.contains(label), "no graticule label {label}");
    }
    assert!(dom.contains("class=\"north-arrow\""));
    // The sweep curve marks the smallest budget reaching every target (30% here).
    assert!(
        dom.contains("every target reached from 30%"),
        "no budget marker"
    );
    for n in 1..=4 {
        assert!(dom.contains(&format!("class=\"reserve-label\" data-reserve=\"{n}\"")));
    }
    assert_eq!(dom.matches("class=\"reserve\"").count(), 12);

    let (ok, _, err) = chromium(
        &tmp.path().join("p2"),
        &[format!("--screenshot={}", shot.display())],
        &page,
    );
    assert!(ok, "chromium --screenshot failed:\n{err}");
    assert!(console_lines(&err).is_empty(), "console errors:\n{err}");
    let (non_white, colours) = png_stats(&shot);
    // Maps and charts fill a good part of a 1200 × 2000 page; a blank or failed render is
    // all white or one colour.
    assert!(
        non_white > 0.05,
        "only {:.1}% of pixels are not white",
        100.0 * non_white
    );
    assert!(colours > 50, "only {colours} distinct colours");

    // A zoned network: the DOM Chromium builds holds a fill and a legend entry per zone used,
    // in the zone's Okabe–Ito colour, and the reserves as outlines over them.
    let (g, sel, status, a, names, assignment) = zone_setup();
    let zoned = render_zoned(
        &g,
        &sel,
        &status,
        &a,
        Some(ReportZones {
            names: &names,
            assignment: &assignment,
        }),
    );
    let zdir = tmp.path().join("zoned");
    write_outputs(&zdir, &[("report.html", zoned)]).unwrap();
    let (ok, dom, err) = chromium(
        &tmp.path().join("p3"),
        &["--dump-dom".into()],
        &zdir.join("report.html"),
    );
    assert!(ok, "chromium --dump-dom failed:\n{err}");
    assert!(console_lines(&err).is_empty(), "console errors:\n{err}");
    for (zone, colour) in [("no-take", "#009E73"), ("partial-use", "#E69F00")] {
        for class in ["zone", "legend-zone"] {
            let at = dom
                .find(&format!(r#"class="{class}" data-zone="{zone}""#))
                .unwrap_or_else(|| panic!("no {class} for {zone} in the DOM"));
            let at = dom[..at].rfind('<').unwrap();
            assert_eq!(attr(&dom, at, "fill"), colour, "{class} {zone}");
        }
    }
    assert_eq!(dom.matches(r#"class="legend-zone""#).count(), 2);
    assert!(!dom.contains(r#"data-zone="seasonal""#));
    assert!(dom.contains("Zone partial-use ("));
}

/// The first `<svg class="map"` … `</svg>` of a page: the network map.
fn network_svg(html: &str) -> String {
    let a = html.find("<svg class=\"map\"").unwrap();
    let b = a + html[a..].find("</svg>").unwrap() + "</svg>".len();
    html[a..b].to_string()
}

/// The mean of the vertices of the first `<path class="{class}" … d="…">`: inside a triangle.
fn path_centre(svg: &str, class: &str) -> (f64, f64) {
    let a = svg.find(&format!("class=\"{class}\"")).unwrap();
    let d = attr(svg, svg[..a].rfind('<').unwrap(), "d");
    let nums: Vec<f64> = d
        .split(|c: char| c.is_ascii_alphabetic() || c == ' ')
        .filter(|t| !t.is_empty())
        .map(|t| t.parse().unwrap())
        .collect();
    let n = (nums.len() / 2) as f64;
    let u = nums.iter().step_by(2).sum::<f64>() / n;
    let v = nums.iter().skip(1).step_by(2).sum::<f64>() / n;
    (u, v)
}

/// The RGB of pixel (x, y) of a PNG.
fn pixel(path: &Path, x: usize, y: usize) -> [u8; 3] {
    let file = std::io::BufReader::new(std::fs::File::open(path).unwrap());
    let mut decoder = png::Decoder::new(file);
    decoder.set_transformations(png::Transformations::EXPAND | png::Transformations::STRIP_16);
    let mut reader = decoder.read_info().unwrap();
    let mut buf = vec![0; reader.output_buffer_size().unwrap()];
    let info = reader.next_frame(&mut buf).unwrap();
    let ch = info.color_type.samples();
    let at = y * info.line_size + x * ch;
    [buf[at], buf[at + 1], buf[at + 2]]
}

#[test]
fn the_map_shows_land_where_the_land_mask_is_and_north_at_the_centre() {
    let (g, sel, status, a) = setup();
    // North at the projection's centre is the map's up (0°); 250 km east of it, meridians
    // converge toward the pole, so north turns west (counterclockwise): for an azimuthal
    // projection near its centre the convergence is about Δλ·sin φ ≈ 3.9° × sin 55° ≈ 3.2°
    // (an approximation, from memory).
    let centred = Basemap::build(&g, None).unwrap();
    assert!(centred.north_deg.abs() < 1e-6, "{}", centred.north_deg);
    let east = Grid::full_rectangle(
        Crs::auto_laea(10.0, 55.0),
        10_000.0,
        [200_000.0, -50_000.0],
        10,
        10,
    )
    .unwrap();
    let n = Basemap::build(&east, None).unwrap().north_deg;
    assert!((-4.5..-2.0).contains(&n), "{n}");

    if !chromium_available("the visual check") {
        return;
    }
    // The network map alone on a page, one SVG unit to one pixel: the pixel inside the land
    // triangle has the land colour (#D9D2C3); without a land mask the same pixel is not land.
    let tmp = tempfile::tempdir().unwrap();
    let shoot = |html: &str, name: &str| {
        let svg = network_svg(html);
        let page = tmp.path().join(format!("{name}.html"));
        std::fs::write(
            &page,
            format!("<!DOCTYPE html><html><body style=\"margin:0\">{svg}</body></html>"),
        )
        .unwrap();
        let shot = tmp.path().join(format!("{name}.png"));
        let (ok, _, err) = chromium(
            &tmp.path().join(format!("profile-{name}")),
            &[
                format!("--screenshot={}", shot.display()),
                "--force-device-scale-factor=1".into(),
            ],
            &page,
        );
        assert!(ok, "chromium --screenshot failed:\n{err}");
        (svg, shot)
    };
    let with_land = render(&g, &sel, &status, &a);
    let (svg, shot) = shoot(&with_land, "land");
    let (u, v) = path_centre(&svg, "land");
    let px = pixel(&shot, u.round() as usize, v.round() as usize);
    let land = [0xD9, 0xD2, 0xC3];
    let close = |p: [u8; 3], q: [u8; 3]| p.iter().zip(q).all(|(a, b)| a.abs_diff(b) <= 8);
    assert!(
        close(px, land),
        "pixel ({u:.0}, {v:.0}) is {px:?}, not land {land:?}"
    );
    let without = with_land.replace("class=\"land\"", "class=\"land\" visibility=\"hidden\"");
    let (_, shot) = shoot(&without, "no-land");
    let px = pixel(&shot, u.round() as usize, v.round() as usize);
    assert!(!close(px, land), "the check cannot fail: {px:?}");
}

#[test]
fn velocity_arrows_point_the_way_the_field_goes() {
    // 100 cells ≤ 400 arrows, so one arrow per cell; each points north, i.e. up the SVG (its
    // end has a smaller y than its start), and is 0.7 cells long: 10 km × 0.7 × 380 / 100 km
    // = 26.6 units (the feature map fits 100 km into 380 units; hand value).
    let (g, sel, status, a) = setup();
    let html = render(&g, &sel, &status, &a);
    assert_eq!(html.matches(r#"class="arrow""#).count(), 100);
    let at = html.find(r#"class="arrow""#).unwrap();
    let d = attr(&html, html[..at].rfind('<').unwrap(), "d");
    let nums: Vec<f64> = d
        .split(['M', 'L', ' '])
        .filter(|t| !t.is_empty())
        .map(|t| t.parse().unwrap())
        .collect();
    let (u0, v0, u1, v1) = (nums[0], nums[1], nums[2], nums[3]);
    assert!((u1 - u0).abs() < 0.11, "{d}");
    assert!(v1 < v0, "{d}");
    assert!(((v0 - v1) - 26.6).abs() < 0.11, "{d}");
}

#[test]
fn link_arrows_run_from_reserve_to_reserve() {
    // Each arrow of the links map starts within 12 SVG units (the trim) of its source
    // reserve's number and ends within 12 units of its destination's, on the same map frame;
    // wider for the stronger link (12% vs 3%).
    let (g, sel, status, a) = setup();
    let html = render(&g, &sel, &status, &a);
    let at = html.find(r#"<svg class="map links""#).expect("a links map");
    let svg = &html[at..at + html[at..].find("</svg>").unwrap()];
    let label = |n: usize| -> (f64, f64) {
        let k = svg
            .find(&format!(r#"class="reserve-label" data-reserve="{n}""#))
            .unwrap();
        let x: f64 = attr(svg, k, "x").parse().unwrap();
        let y: f64 = attr(svg, k, "y").parse().unwrap();
        (x, y - 4.0)
    };
    let mut widths = Vec::new();
    for (from, to) in [(1, 2), (2, 1), (3, 1)] {
        let k = svg
            .find(&format!(r#"data-from="{from}" data-to="{to}""#))
            .unwrap();
        let k = svg[..k].rfind('<').unwrap();
        let d = attr(svg, k, "d");
        let nums: Vec<f64> = d
            .split(['M', 'Q', ' '])
            .filter(|t| !t.is_empty())
            .map(|t| t.parse().unwrap())
            .collect();
        let (start, end) = ((nums[0], nums[1]), (nums[4], nums[5]));
        let dist = |p: (f64, f64), q: (f64, f64)| (p.0 - q.0).hypot(p.1 - q.1);
        assert!(dist(start, label(from)) <= 12.2, "{from}→{to}: {d}");
        assert!(dist(end, label(to)) <= 12.2, "{from}→{to}: {d}");
        widths.push(attr(svg, k, "stroke-width").parse::<f64>().unwrap());
    }
    assert!(widths[0] > widths[1] && widths[1] > widths[2], "{widths:?}");
}
