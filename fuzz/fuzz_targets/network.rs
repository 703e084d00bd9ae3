//! The network reader: the same bytes as a cell-id CSV and as GeoJSON polygons — chosen
//! cells or a `NetworkError`, never a panic.
#![no_main]
mod common;

use driftplan::assess::network_input::read_network;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    for ext in ["csv", "geojson"] {
        common::with_file(data, ext, |path| {
            let _ = read_network(path, common::grid(), 0.5);
        });
    }
});
