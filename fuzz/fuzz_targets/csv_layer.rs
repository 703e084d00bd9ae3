//! The CSV lattice reader: a point table interpolated onto a grid (lattice fit, coastal
//! fallbacks) — a layer or a `LayerError`, never a panic.
#![no_main]
mod common;

use driftplan::layers::{sample, LayerSpec, Missing, Sampling, SourceCache};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    common::with_file(data, "csv", |path| {
        for (sampling, field) in [
            (Sampling::Interpolate, "fishing_cost"),
            (Sampling::Interpolate, "sst_c"),
            (Sampling::PointMean, "fishing_cost"),
        ] {
            let spec = LayerSpec {
                field: Some(field.into()),
                missing: Missing::Zero,
                ..LayerSpec::new(path, sampling)
            };
            let _ = sample("fuzz", &spec, common::grid(), &SourceCache::new());
        }
    });
});
