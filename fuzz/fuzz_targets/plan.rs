//! The plan parser: any bytes as a plan file end in a plan or a `PlanError`, never a panic.
#![no_main]
mod common;

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    common::with_file(data, "toml", |path| {
        let _ = driftplan::plan::Plan::load(path);
    });
});
