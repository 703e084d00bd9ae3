//! Shared by the command-line tests: a coarse copy of the demo plan.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::Command;

/// Demo data and a coarse copy of its plan with `optimise` as the `[optimise]` table,
/// `budget` as the `[budget]` table, solved to optimality.
pub fn plan_with(dir: &Path, budget: &str, optimise: &str) -> PathBuf {
    plan_with_gap(dir, budget, optimise, 0.0)
}

/// As [`plan_with`], solved to the relative gap `gap`.
pub fn plan_with_gap(dir: &Path, budget: &str, optimise: &str, gap: f64) -> PathBuf {
    if !dir.join("scenarios/demo.toml").exists() {
        let out = Command::new(env!("CARGO_BIN_EXE_driftplan"))
            .args(["demo", "--quiet", "--data-only", "--out"])
            .arg(dir)
            .output()
            .unwrap();
        assert!(out.status.success());
    }
    let text = std::fs::read_to_string(dir.join("scenarios/demo.toml")).unwrap();
    let mut kept = String::new();
    let mut skip = false;
    let mut species = 0;
    for line in text.lines() {
        if line.starts_with('[') {
            species += (line == "[[species]]") as usize;
            // Three species keep every solve exact (gap 0) within a second or so.
            skip = line == "[optimise]" || line == "[budget]" || line == "[solver]" || species > 3;
        }
        if !skip {
            kept.push_str(&line.replace("cell_size_km = 5 ", "cell_size_km = 20"));
            kept.push('\n');
        }
    }
    // Tables go before the first [[species]] so they are not read as species keys.
    let extra = format!(
        "[budget]\n{budget}\n[optimise]\n{optimise}\n[solver]\ngap = {gap}\ntime_limit_s = 60\n"
    );
    let at = kept.find("[[species]]").unwrap();
    kept.insert_str(at, &extra);
    let name = format!("plan-{}-{gap}.toml", optimise.len() * 1000 + budget.len());
    let path = dir.join("scenarios").join(name);
    std::fs::write(&path, kept).unwrap();
    path
}

/// Runs the driftplan binary quietly with `args` and returns its output.
pub fn run_quiet(args: &[&std::ffi::OsStr]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_driftplan"))
        .args(args)
        .arg("--quiet")
        .output()
        .unwrap()
}

/// `s` as an `OsStr`, for argument lists.
pub fn os(s: &str) -> &std::ffi::OsStr {
    std::ffi::OsStr::new(s)
}

/// Writes the NetCDF file `nc` from the CDL text `cdl` with ncgen (Debian netcdf-bin, an
/// outside writer; `.ci/run` installs it). The CDL text is kept beside it as `<nc>.cdl`.
pub fn ncgen(cdl: &str, nc: &Path) {
    let cdl_path = nc.with_extension("cdl");
    std::fs::write(&cdl_path, cdl).unwrap();
    let out = Command::new("ncgen")
        .arg("-o")
        .arg(nc)
        .arg(&cdl_path)
        .output()
        .expect("ncgen (Debian netcdf-bin) is needed; .ci/run installs it");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}
