//! The GeoJSON reader: polygons (checked, and repaired), points and lines, and area shares
//! of the polygons on a grid — a result or a `LayerError`, never a panic.
#![no_main]
mod common;

use driftplan::layers::{read_lines, read_multipolygon, read_points, sample, LayerSpec};
use driftplan::layers::{Missing, Sampling, SourceCache};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    common::with_file(data, "geojson", |path| {
        let _ = read_multipolygon(path, false);
        let _ = read_multipolygon(path, true);
        let _ = read_points(path, None);
        let _ = read_lines(path);
        let spec = LayerSpec {
            missing: Missing::Zero,
            ..LayerSpec::new(path, Sampling::AreaShare)
        };
        let _ = sample("fuzz", &spec, common::grid(), &SourceCache::new());
    });
});
