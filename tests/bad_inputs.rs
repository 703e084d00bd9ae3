//! A catalogue of bad inputs, as planners' files really break: for each, driftplan exits with
//! code 1, its message names the file and the key, line or feature, and the `--out` folder
//! (which holds an earlier file) is left exactly as it was.
//!
//! Each case breaks one thing in a copy of the coarse demo (plan keys, region and land
//! polygons, CSV lattices, network files, the output path); the rest of the run is sound, so
//! the message must come from the broken part.

mod common;

use std::ffi::OsString;
use std::path::{Path, PathBuf};
use std::process::Command;

/// The coarse demo, its plan text, and a folder per case.
struct Fixture {
    _tmp: tempfile::TempDir,
    dir: PathBuf,
    plan_text: String,
}

impl Fixture {
    fn new() -> Fixture {
        let tmp = tempfile::tempdir().unwrap();
        let dir = tmp.path().to_path_buf();
        let plan = common::plan_with(&dir, "max_share = 0.4", "objective = \"min-cost\"");
        let plan_text = std::fs::read_to_string(plan).unwrap();
        Fixture {
            _tmp: tmp,
            dir,
            plan_text,
        }
    }

    /// A plan variant next to the demo plan (so its relative paths still hold).
    fn plan(&self, case: &str, edit: impl Fn(&str) -> String) -> PathBuf {
        let path = self.dir.join("scenarios").join(format!("bad-{case}.toml"));
        std::fs::write(&path, edit(&self.plan_text)).unwrap();
        path
    }

    /// The plan with `rel` (a demo-data path as the plan writes it) pointing at `to`.
    fn plan_using(&self, case: &str, rel: &str, to: &Path) -> PathBuf {
        let from = format!("../demo-data/{rel}");
        assert!(self.plan_text.contains(&from), "{from}");
        self.plan(case, |t| t.replace(&from, &to.display().to_string()))
    }

    /// A case's own folder for broken files.
    fn case_dir(&self, case: &str) -> PathBuf {
        let d = self.dir.join("bad").join(case);
        std::fs::create_dir_all(&d).unwrap();
        d
    }

    /// A broken copy of demo-data/`rel`, named as the original, in the case's folder.
    fn broken(&self, case: &str, rel: &str, edit: impl Fn(&str) -> String) -> PathBuf {
        let text = std::fs::read_to_string(self.dir.join("demo-data").join(rel)).unwrap();
        let name = Path::new(rel).file_name().unwrap();
        let path = self.case_dir(case).join(name);
        std::fs::write(&path, edit(&text)).unwrap();
        path
    }

    /// A file of the case's own with these bytes.
    fn file(&self, case: &str, name: &str, bytes: &[u8]) -> PathBuf {
        let path = self.case_dir(case).join(name);
        std::fs::write(&path, bytes).unwrap();
        path
    }

    /// The plan with the cost CSV replaced by a broken copy.
    fn cost_csv(&self, case: &str, edit: impl Fn(&str) -> String) -> PathBuf {
        let csv = self.broken(case, "static.csv", edit);
        self.plan_using(case, "static.csv", &csv)
    }

    /// The plan with the region replaced by this GeoJSON.
    fn region(&self, case: &str, geojson: &str) -> PathBuf {
        let f = self.file(case, "region.geojson", geojson.as_bytes());
        self.plan_using(case, "region.geojson", &f)
    }

    fn solve(&self, plan: PathBuf) -> Vec<OsString> {
        vec!["solve".into(), plan.into()]
    }

    fn assess(&self, network: PathBuf) -> Vec<OsString> {
        let plan = self.plan("assess", |t| t.to_string());
        vec!["assess".into(), plan.into(), network.into()]
    }
}

/// One polygon feature with these rings, as GeoJSON text.
fn polygon(rings: &str) -> String {
    format!(
        r#"{{"type":"FeatureCollection","features":[{{"type":"Feature","properties":{{}},"geometry":{{"type":"Polygon","coordinates":{rings}}}}}]}}"#
    )
}

/// The demo region's box with a bow-tie order of corners.
const BOW_TIE: &str = "[[[-121.5,-39.5],[-117,-34],[-117,-39.5],[-121.5,-34],[-121.5,-39.5]]]";

/// Replaces line `n` (1-based) of a text.
fn line_edit(text: &str, n: usize, edit: impl Fn(&str) -> String) -> String {
    text.lines()
        .enumerate()
        .map(|(i, l)| if i + 1 == n { edit(l) } else { l.to_string() })
        .collect::<Vec<_>>()
        .join("\n")
        + "\n"
}

/// Replaces field `k` (0-based) of a CSV line.
fn field(line: &str, k: usize, value: &str) -> String {
    let mut f: Vec<&str> = line.split(',').collect();
    f[k] = value;
    f.join(",")
}

/// Sets up a case's files and returns the command's arguments before `--out`.
type Args = Box<dyn Fn(&Fixture, &str) -> Vec<OsString>>;
/// Makes the case's `--out` path.
type Out = Box<dyn Fn(&Fixture, &str) -> PathBuf>;

struct Case {
    name: &'static str,
    /// The command's arguments before `--out` (sets up the broken files).
    args: Args,
    /// What the message must hold: the file, then the key, line or feature and the problem.
    expect: Vec<&'static str>,
    /// Where `--out` points, when the case is about the output path itself.
    out: Option<Out>,
}

fn case(
    name: &'static str,
    expect: &[&'static str],
    args: impl Fn(&Fixture, &str) -> Vec<OsString> + 'static,
) -> Case {
    Case {
        name,
        args: Box::new(args),
        expect: expect.to_vec(),
        out: None,
    }
}

fn catalogue() -> Vec<Case> {
    let mut cases = vec![
        // --- the plan file: every message names the plan file and the key or line ---
        case(
            "unknown-key",
            &["bad-unknown-key.toml", "colour"],
            |f, c| f.solve(f.plan(c, |t| format!("colour = \"blue\"\n{t}"))),
        ),
        case(
            "negative-cell-size",
            &["bad-negative-cell-size.toml", "grid.cell_size_km"],
            |f, c| f.solve(f.plan(c, |t| t.replace("cell_size_km = 20", "cell_size_km = -5"))),
        ),
        case(
            "cell-size-as-text",
            &["bad-cell-size-as-text.toml", "line "],
            |f, c| {
                f.solve(f.plan(c, |t| {
                    t.replace("cell_size_km = 20", "cell_size_km = \"five\"")
                }))
            },
        ),
        case(
            "no-region",
            &["bad-no-region.toml", "`region`", "missing"],
            |f, c| {
                f.solve(f.plan(c, |t| {
                    t.lines()
                        .filter(|l| !l.starts_with("region ="))
                        .collect::<Vec<_>>()
                        .join("\n")
                }))
            },
        ),
        case(
            "region-not-found",
            &[
                "bad-region-not-found.toml",
                "`region`",
                "nowhere.geojson",
                "file not found",
            ],
            |f, c| f.solve(f.plan(c, |t| t.replace("region.geojson", "nowhere.geojson"))),
        ),
        case(
            "region-is-a-directory",
            &[
                "bad-region-is-a-directory.toml",
                "`region`",
                "is a directory",
            ],
            |f, c| {
                f.solve(f.plan(c, |t| {
                    t.replace("../demo-data/region.geojson", "../demo-data/ocean")
                }))
            },
        ),
        case(
            "years-as-text",
            &["bad-years-as-text.toml", "line "],
            |f, c| {
                f.solve(f.plan(c, |t| {
                    t.replace("years = [2030, 2050, 2070, 2090]", "years = [\"soon\"]")
                }))
            },
        ),
        case(
            "target-above-one",
            &["bad-target-above-one.toml", "targets.default"],
            |f, c| f.solve(f.plan(c, |t| t.replace("default = 0.3", "default = 1.5"))),
        ),
        case(
            "budget-share-two",
            &["bad-budget-share-two.toml", "budget.max_share"],
            |f, c| f.solve(f.plan(c, |t| t.replace("max_share = 0.4", "max_share = 2"))),
        ),
        case(
            "unknown-objective",
            &[
                "bad-unknown-objective.toml",
                "optimise.objective",
                "cheapest",
            ],
            |f, c| {
                f.solve(f.plan(c, |t| {
                    t.replace("objective = \"min-cost\"", "objective = \"cheapest\"")
                }))
            },
        ),
        case(
            "unknown-robustness",
            &[
                "bad-unknown-robustness.toml",
                "optimise.robustness",
                "sometimes",
            ],
            |f, c| {
                f.solve(f.plan(c, |t| {
                    t.replace(
                        "objective = \"min-cost\"",
                        "objective = \"min-cost\"\nrobustness = \"sometimes\"",
                    )
                }))
            },
        ),
        case(
            "negative-gap",
            &["bad-negative-gap.toml", "solver.gap"],
            |f, c| f.solve(f.plan(c, |t| t.replace("gap = 0\n", "gap = -1\n"))),
        ),
        case(
            "broken-placeholder",
            &["bad-broken-placeholder.toml", "habitat.column", "{Species}"],
            |f, c| {
                f.solve(f.plan(c, |t| {
                    t.replacen("column = \"{species}\"", "column = \"{Species}\"", 1)
                }))
            },
        ),
        case(
            "vector-habitat-with-column",
            &[
                "bad-vector-habitat-with-column.toml",
                "species[0].habitat.column",
                "attribute",
            ],
            |f, c| {
                f.solve(f.plan(c, |t| {
                t.replacen(
                    "habitat = { path = \"../demo-data/ocean/{scenario}_{year}.csv\", column = \"{species}\" }",
                    "habitat = { path = \"../demo-data/protected.geojson\", column = \"name\" }",
                    1,
                )
            }))
            },
        ),
        case("toml-syntax", &["bad-toml-syntax.toml", "line "], |f, c| {
            f.solve(f.plan(c, |t| format!("{t}\n[grid\n")))
        }),
        case(
            "plan-not-utf8",
            &["bad-plan-not-utf8.toml", "not UTF-8"],
            |f, c| {
                let path = f.dir.join("scenarios").join(format!("bad-{c}.toml"));
                let mut bytes = f.plan_text.as_bytes().to_vec();
                bytes.splice(0..0, b"# caf\xe9\n".iter().copied());
                std::fs::write(&path, bytes).unwrap();
                f.solve(path)
            },
        ),
        case(
            "temperature-column-missing",
            &["_2030.csv", "sea_temp"],
            |f, c| {
                f.solve(f.plan(c, |t| {
                    t.replace("column = \"sst_c\"", "column = \"sea_temp\"")
                }))
            },
        ),
        case(
            "cost-column-missing",
            &["static.csv", "fish_cost"],
            |f, c| {
                f.solve(f.plan(c, |t| {
                    t.replace("column = \"fishing_cost\"", "column = \"fish_cost\"")
                }))
            },
        ),
        case(
            "repair-not-a-boolean",
            &["bad-repair-not-a-boolean.toml", "line "],
            |f, c| f.solve(f.plan(c, |t| format!("repair_polygons = \"yes\"\n{t}"))),
        ),
        case(
            "cost-is-a-directory",
            &["bad-cost-is-a-directory.toml", "cost", "is a directory"],
            |f, c| {
                f.solve(f.plan(c, |t| {
                    t.replace("../demo-data/static.csv", "../demo-data/ocean")
                }))
            },
        ),
        case(
            "excluded-not-found",
            &["bad-excluded-not-found.toml", "excluded", "lane.geojson"],
            |f, c| f.solve(f.plan(c, |t| t.replace("shipping-lane.geojson", "lane.geojson"))),
        ),
        // --- polygons: the file, the feature and what is wrong ---
        case(
            "region-bow-tie",
            &["region.geojson", "feature 0", "crosses"],
            |f, c| f.solve(f.region(c, &polygon(BOW_TIE))),
        ),
        case(
            "region-hole-outside",
            &["region.geojson", "feature 0", "hole 0 is not inside"],
            |f, c| {
                f.solve(f.region(
                c,
                &polygon("[[[-121.5,-39.5],[-117,-39.5],[-117,-34],[-121.5,-34],[-121.5,-39.5]],[[-110,-30],[-109,-30],[-109,-29],[-110,-29],[-110,-30]]]"),
            ))
            },
        ),
        case(
            "region-truncated-json",
            &["region.geojson", "line "],
            |f, c| {
                let text = polygon(BOW_TIE);
                f.solve(f.region(c, &text[..text.len() / 2]))
            },
        ),
        case(
            "region-ring-not-closed",
            &["region.geojson", "feature 0", "not closed"],
            |f, c| {
                f.solve(f.region(
                    c,
                    &polygon("[[[-121.5,-39.5],[-117,-39.5],[-117,-34],[-121.5,-34]]]"),
                ))
            },
        ),
        case(
            "region-longitude-200",
            &["region.geojson", "feature 0", "outside WGS84"],
            |f, c| {
                f.solve(f.region(
                    c,
                    &polygon("[[[200,-39.5],[-117,-39.5],[-117,-34],[-121.5,-34],[200,-39.5]]]"),
                ))
            },
        ),
        case(
            "region-beyond-data",
            &[
                "region.geojson",
                "most of its grid lies outside the input layers' data",
                "static.csv",
            ],
            |f, c| {
                // A valid region far from every layer: the region is named first, not the layers.
                f.solve(f.region(c, &polygon("[[[10,0],[11,0],[11,1],[10,1],[10,0]]]")))
            },
        ),
        case(
            "region-partly-beyond-data",
            &[
                "static.csv",
                "cells are not covered",
                "the grid's sea is",
                "region.geojson",
            ],
            |f, c| {
                // A third of the region lies east of the lattices: the layers are named, with the
                // reminder that the sea comes from the region and land files.
                f.solve(f.region(c, &polygon("[[[-121.5,-39.5],[-114.5,-39.5],[-114.5,-34],[-121.5,-34],[-121.5,-39.5]]]")))
            },
        ),
        case(
            "region-is-a-point",
            &["region.geojson", "feature 0", "expected Polygon"],
            |f, c| {
                f.solve(f.region(
                c,
                r#"{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},"geometry":{"type":"Point","coordinates":[-119,-37]}}]}"#,
            ))
            },
        ),
        case(
            "land-parts-overlap",
            &["land.geojson", "feature 0", "parts 0 and 1 overlap"],
            |f, c| {
                let land = f.file(
                c,
                "land.geojson",
                br#"{"type":"Feature","properties":{},"geometry":{"type":"MultiPolygon","coordinates":[[[[-121.5,-39.5],[-121,-39.5],[-121,-39],[-121.5,-39],[-121.5,-39.5]]],[[[-121.2,-39.2],[-120.8,-39.2],[-120.8,-38.8],[-121.2,-38.8],[-121.2,-39.2]]]]}}"#,
            );
                f.solve(f.plan_using(c, "land.geojson", &land))
            },
        ),
        case(
            "required-null-geometry",
            &["protected.geojson", "feature 0", "null"],
            |f, c| {
                let p = f.file(
                c,
                "protected.geojson",
                br#"{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},"geometry":null}]}"#,
            );
                f.solve(f.plan_using(c, "protected.geojson", &p))
            },
        ),
        case(
            "required-bow-tie",
            &["protected.geojson", "feature 0", "crosses"],
            |f, c| {
                let p = f.file(
                    c,
                    "protected.geojson",
                    polygon("[[[-120,-36],[-119,-35],[-119,-36],[-120,-35],[-120,-36]]]")
                        .as_bytes(),
                );
                f.solve(f.plan_using(c, "protected.geojson", &p))
            },
        ),
        // --- CSV lattices: the file, the line and (where there is one) the column ---
        case(
            "csv-short-row",
            &["static.csv", "line 3", "expected 4 fields, found 3"],
            |f, c| {
                f.solve(f.cost_csv(c, |t| {
                    line_edit(t, 3, |l| l.rsplit_once(',').unwrap().0.to_string())
                }))
            },
        ),
        case(
            "csv-not-utf8",
            &["static.csv", "line 5", "fishing_cost", "UTF-8"],
            |f, c| {
                let text = std::fs::read_to_string(f.dir.join("demo-data/static.csv")).unwrap();
                let mut bytes = Vec::new();
                for (i, l) in text.lines().enumerate() {
                    if i + 1 == 5 {
                        let (head, _) = l.rsplit_once(',').unwrap();
                        bytes.extend_from_slice(head.as_bytes());
                        bytes.extend_from_slice(b",1\xff2");
                    } else {
                        bytes.extend_from_slice(l.as_bytes());
                    }
                    bytes.push(b'\n');
                }
                let csv = f.file(c, "static.csv", &bytes);
                f.solve(f.plan_using(c, "static.csv", &csv))
            },
        ),
        case(
            "csv-column-twice",
            &["static.csv", "line 1", "`fishing_cost` appears twice"],
            |f, c| {
                f.solve(f.cost_csv(c, |t| {
                    line_edit(t, 1, |_| "lon,lat,fishing_cost,fishing_cost".into())
                }))
            },
        ),
        case(
            "csv-point-twice",
            &["static.csv", "also on line 2", "fishing_cost"],
            |f, c| {
                f.solve(f.cost_csv(c, |t| {
                    let second = t.lines().nth(1).unwrap();
                    format!("{t}{}\n", field(second, 3, "999"))
                }))
            },
        ),
        case(
            "csv-text-value",
            &["static.csv", "line 4", "fishing_cost", "not a number"],
            |f, c| f.solve(f.cost_csv(c, |t| line_edit(t, 4, |l| field(l, 3, "abc")))),
        ),
        case(
            "csv-nan-value",
            &["static.csv", "line 6", "fishing_cost"],
            |f, c| f.solve(f.cost_csv(c, |t| line_edit(t, 6, |l| field(l, 3, "NaN")))),
        ),
        case(
            "csv-no-lat-column",
            &["static.csv", "line 1", "coordinate columns"],
            |f, c| f.solve(f.cost_csv(c, |t| line_edit(t, 1, |l| l.replace("lat", "latt")))),
        ),
        case(
            "csv-latitude-95",
            &["static.csv", "line 7", "outside"],
            |f, c| f.solve(f.cost_csv(c, |t| line_edit(t, 7, |l| field(l, 1, "95")))),
        ),
        case(
            "csv-header-only",
            &["static.csv", "no data rows"],
            |f, c| f.solve(f.cost_csv(c, |t| format!("{}\n", t.lines().next().unwrap()))),
        ),
        // --- network files given to assess: the file and the line or feature ---
        case(
            "network-cell-out-of-range",
            &["net.csv", "line 2", "out of range"],
            |f, c| f.assess(f.file(c, "net.csv", b"cell\n999999\n")),
        ),
        case(
            "network-bad-flag",
            &["net.csv", "line 2", "selected", "maybe"],
            |f, c| f.assess(f.file(c, "net.csv", b"cell,selected\n1,maybe\n")),
        ),
        case(
            "network-short-row",
            &["net.csv", "line 3", "expected 2 fields, found 1"],
            |f, c| f.assess(f.file(c, "net.csv", b"cell,selected\n1,1\n2\n")),
        ),
        case(
            "network-no-cell-column",
            &["net.csv", "line 1", "cell"],
            |f, c| f.assess(f.file(c, "net.csv", b"id\n1\n")),
        ),
        case(
            "network-bow-tie",
            &["net.geojson", "feature 0", "crosses"],
            |f, c| {
                f.assess(
                    f.file(
                        c,
                        "net.geojson",
                        polygon("[[[-120,-36],[-119,-35],[-119,-36],[-120,-35],[-120,-36]]]")
                            .as_bytes(),
                    ),
                )
            },
        ),
        case("network-text-file", &["net.txt", "`txt`"], |f, c| {
            f.assess(f.file(c, "net.txt", b"1\n2\n"))
        }),
        case(
            "network-is-a-directory",
            &["netdir.csv", "is a directory"],
            |f, c| {
                let d = f.case_dir(c).join("netdir.csv");
                std::fs::create_dir_all(&d).unwrap();
                f.assess(d)
            },
        ),
    ];
    // --- the output path itself ---
    cases.push(Case {
        name: "out-is-a-file",
        args: Box::new(|f, c| f.solve(f.plan(c, |t| t.to_string()))),
        expect: vec!["out-is-a-file.txt"],
        out: Some(Box::new(|f, c| {
            let p = f.case_dir(c).join("out-is-a-file.txt");
            std::fs::write(&p, "an earlier file").unwrap();
            p
        })),
    });
    cases.push(Case {
        name: "out-under-a-file",
        args: Box::new(|f, c| f.solve(f.plan(c, |t| t.to_string()))),
        expect: vec!["plain.txt"],
        out: Some(Box::new(|f, c| {
            let p = f.case_dir(c).join("plain.txt");
            std::fs::write(&p, "an earlier file").unwrap();
            p.join("out")
        })),
    });
    cases
}

/// Every file under `dir` with its bytes, sorted; a plain file gives itself.
fn snapshot(dir: &Path) -> Vec<(PathBuf, Vec<u8>)> {
    let mut out = Vec::new();
    if dir.is_file() {
        out.push((dir.to_path_buf(), std::fs::read(dir).unwrap()));
        return out;
    }
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        let Ok(entries) = std::fs::read_dir(&d) else {
            continue;
        };
        for e in entries {
            let p = e.unwrap().path();
            if p.is_dir() {
                out.push((p.clone(), Vec::new()));
                stack.push(p);
            } else {
                out.push((p.clone(), std::fs::read(&p).unwrap()));
            }
        }
    }
    out.sort();
    out
}

#[test]
fn every_bad_input_is_refused_with_its_place_and_out_untouched() {
    let fx = Fixture::new();
    let cases = catalogue();
    assert!(
        cases.len() >= 40,
        "the catalogue holds {} cases",
        cases.len()
    );
    let mut failures = Vec::new();
    for c in &cases {
        let args = (c.args)(&fx, c.name);
        let out = match &c.out {
            Some(out) => out(&fx, c.name),
            None => {
                // An output folder that holds an earlier file, as a re-run meets it.
                let out = fx.dir.join("out").join(c.name);
                std::fs::create_dir_all(&out).unwrap();
                std::fs::write(out.join("keep.txt"), "from an earlier run").unwrap();
                out
            }
        };
        let before = snapshot(&out);
        let run = Command::new(env!("CARGO_BIN_EXE_driftplan"))
            .args(&args)
            .arg("--out")
            .arg(&out)
            .arg("--quiet")
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&run.stderr);
        let mut wrong = Vec::new();
        if run.status.code() != Some(1) {
            wrong.push(format!("exit code {:?} (expected 1)", run.status.code()));
        }
        for e in &c.expect {
            if !stderr.contains(e) {
                wrong.push(format!("message lacks `{e}`"));
            }
        }
        if stderr.contains("panicked") {
            wrong.push("panicked".into());
        }
        if snapshot(&out) != before {
            wrong.push(format!("--out changed: {:?}", snapshot(&out)));
        }
        if !wrong.is_empty() {
            failures.push(format!(
                "{}: {}\n  stderr: {}",
                c.name,
                wrong.join("; "),
                stderr.trim()
            ));
        }
    }
    assert!(
        failures.is_empty(),
        "{} of {} cases:\n{}",
        failures.len(),
        cases.len(),
        failures.join("\n")
    );
}

/// Cell ids from `driftplan features`' cells.csv: (all, required, excluded), using the plan's
/// thresholds (`min_share` 0.5 for required, 0.01 for excluded) on the shares it writes.
fn cell_classes(cells_csv: &Path) -> (Vec<usize>, Vec<usize>, Vec<usize>) {
    let mut r = csv::Reader::from_path(cells_csv).unwrap();
    let h = r.headers().unwrap().clone();
    let col = |n: &str| h.iter().position(|x| x == n).unwrap();
    let (ci, ri, ei) = (col("cell"), col("required_share"), col("excluded_share"));
    let (mut all, mut req, mut exc) = (vec![], vec![], vec![]);
    for rec in r.records() {
        let rec = rec.unwrap();
        let id: usize = rec[ci].parse().unwrap();
        all.push(id);
        if rec[ri].parse::<f64>().unwrap() >= 0.5 {
            req.push(id);
        }
        if rec[ei].parse::<f64>().unwrap() >= 0.01 {
            exc.push(id);
        }
    }
    (all, req, exc)
}

/// A network that is no network the plan allows is still scored, but the terminal,
/// assessment.json and the report say why its scores mislead; no output shows `-0`.
#[test]
fn questionable_networks_are_scored_with_warnings_everywhere() {
    let fx = Fixture::new();
    let plan = fx.plan("warn", |t| t.to_string());
    let feats = fx.dir.join("feats");
    let out = common::run_quiet(&[
        common::os("features"),
        plan.as_os_str(),
        common::os("--out"),
        feats.as_os_str(),
    ]);
    assert!(out.status.success());
    let (all, required, excluded) = cell_classes(&feats.join("cells.csv"));
    assert!(!required.is_empty() && !excluded.is_empty());
    let free = *all
        .iter()
        .find(|i| !required.contains(i) && !excluded.contains(i))
        .unwrap();
    let ids = |v: &[usize]| {
        "cell\n".to_string() + &v.iter().map(|i| format!("{i}\n")).collect::<String>()
    };
    let cells = |n: usize| format!("{n} cell{}", if n == 1 { "" } else { "s" });
    let cases: Vec<(&str, Vec<u8>, String)> = vec![
        (
            "everything.csv",
            ids(&all).into_bytes(),
            format!("it covers {} the plan excludes", cells(excluded.len())),
        ),
        (
            "one-cell.csv",
            ids(&[free]).into_bytes(),
            format!(
                "it leaves out {} of the plan's {} required",
                cells(required.len()),
                required.len()
            ),
        ),
        (
            "far-away.geojson",
            polygon("[[[0,0],[1,0],[1,1],[0,1],[0,0]]]").into_bytes(),
            "it lies wholly outside the region's sea".to_string(),
        ),
    ];
    let negative_zero = |text: &str| {
        text.split([',', '\n', ' ', '[', ']']).any(|tok| {
            tok.trim_end_matches(':') == "-0"
                || tok.starts_with("-0.0")
                    && tok.trim_start_matches("-0.").chars().all(|c| c == '0')
        })
    };
    for (name, bytes, warning) in cases {
        let net = fx.file("warn", name, &bytes);
        let dir = fx.dir.join("assessed").join(name);
        let run = Command::new(env!("CARGO_BIN_EXE_driftplan"))
            .args([common::os("assess"), plan.as_os_str(), net.as_os_str()])
            .arg("--out")
            .arg(&dir)
            .arg("--no-stress")
            .output()
            .unwrap();
        let stdout = String::from_utf8_lossy(&run.stdout);
        assert!(
            run.status.success(),
            "{name}: {}",
            String::from_utf8_lossy(&run.stderr)
        );
        assert!(
            stdout.contains(&format!("warning: {warning}")),
            "{name}: {stdout}"
        );
        let json: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(dir.join("assessment.json")).unwrap())
                .unwrap();
        let warnings = json["warnings"].as_array().unwrap();
        assert!(
            warnings
                .iter()
                .any(|w| w["warning"].as_str().unwrap().starts_with(&warning)),
            "{name}: {warnings:?}"
        );
        let report = std::fs::read_to_string(dir.join("report.html")).unwrap();
        // The report escapes text for HTML (`'` as `&#39;`).
        assert!(
            report.contains(&warning.replace('\'', "&#39;")),
            "{name}: the report lacks the warning"
        );
        for f in ["coverage.csv", "reserves.csv", "assessment.json"] {
            let text = std::fs::read_to_string(dir.join(f)).unwrap();
            assert!(!negative_zero(&text), "{name}: {f} shows -0");
        }
    }
}

/// The bow-tie region that the catalogue refuses builds its grid when the plan asks for the
/// repair: two triangles meeting at the box's centre, so about half of the box's cells.
#[test]
fn a_plan_that_asks_for_repair_gets_its_polygons_repaired() {
    let fx = Fixture::new();
    let grid_cells = |plan: PathBuf, name: &str| -> usize {
        let out = fx.dir.join("grids").join(name);
        let run = common::run_quiet(&[
            common::os("grid"),
            plan.as_os_str(),
            common::os("--out"),
            out.as_os_str(),
        ]);
        assert!(
            run.status.success(),
            "{}",
            String::from_utf8_lossy(&run.stderr)
        );
        csv::Reader::from_path(out.join("grid.csv"))
            .unwrap()
            .records()
            .count()
    };
    // Without the land mask, so only the region decides which cells there are.
    let no_land = |plan: PathBuf, repair: bool| {
        let text = std::fs::read_to_string(&plan).unwrap();
        let kept: Vec<&str> = text.lines().filter(|l| !l.starts_with("land =")).collect();
        let head = if repair {
            "repair_polygons = true\n"
        } else {
            ""
        };
        std::fs::write(&plan, format!("{head}{}\n", kept.join("\n"))).unwrap();
        plan
    };
    let box_ring = "[[[-121.5,-39.5],[-117,-39.5],[-117,-34],[-121.5,-34],[-121.5,-39.5]]]";
    let whole = grid_cells(no_land(fx.region("box", &polygon(box_ring)), false), "box");
    let repaired = grid_cells(no_land(fx.region("bow", &polygon(BOW_TIE)), true), "bow");
    // The diagonals cut the box into four triangles of a quarter each (hand geometry); the
    // repaired bow-tie keeps two of them. Cells cut by a diagonal are kept when at least 10%
    // of them is inside (min_sea_share), so the share is a little above one half.
    let share = repaired as f64 / whole as f64;
    assert!((0.5..0.6).contains(&share), "{repaired} of {whole} cells");
}
