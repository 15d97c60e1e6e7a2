//! Results in the user's tools: the Python (h5py, pandas) snippets of
//! `docs/file-formats.md` run against files the binary writes, `yawdyn
//! show` reads all three kinds, and `yawdyn export` writes their CSV tables.
//!
//! The Python test needs `python3` with h5py and pandas (`apt-get install
//! python3-h5py python3-pandas`; `YAWDYN_PYTHON` names another interpreter).
//! Without them it checks nothing and says SKIPPED on stderr, or fails when
//! `YAWDYN_REQUIRE_PYTHON=1` is set, as CI does.

mod common;

use std::io::Write;
use std::path::Path;
use std::process::Command;
use std::sync::OnceLock;

use common::{TempDir, repo_path};

/// The three files of the format document, written once for all tests:
/// a step-steer run, a small torque-split sweep and a stability map.
fn files() -> &'static TempDir {
    static FILES: OnceLock<TempDir> = OnceLock::new();
    FILES.get_or_init(|| {
        let dir = TempDir::new();
        dir.yawdyn([
            "run",
            "step_steer",
            "--quiet",
            "--out",
            "results/step_steer.h5",
        ])
        .expect_code(0);
        dir.yawdyn([
            "sweep",
            "power_on_exit",
            "--vary",
            "drive.front_share=0:1:3",
            "--vary",
            "manoeuvre.lat_accel=4:5:2",
            "--channels",
            "yaw_rate,sideslip",
            "--quiet",
            "--out",
            "results/torque_split_same_torque.h5",
        ])
        .expect_code(0);
        dir.yawdyn([
            "stability",
            "hybrid_crossover",
            "--speed-kph",
            "80",
            "--long-accel-g",
            "0.15",
            "--set",
            "chassis.mass=1850",
            "--vary",
            "front_share=0:1:3",
            "--vary",
            "lat_accel_g=0.1:0.5:2",
            "--out",
            "results/torque_split_stability.h5",
        ])
        .expect_code(0);
        dir
    })
}

/// The fenced blocks of `language` in `text`, in order.
fn blocks(text: &str, language: &str) -> Vec<String> {
    let fence = format!("```{language}\n");
    text.split(&fence)
        .skip(1)
        .map(|rest| rest.split("```").next().unwrap_or("").to_string())
        .collect()
}

/// Checks appended to each Python snippet, in document order: what the
/// snippet must have read from the files written by [`files`].
const PYTHON_CHECKS: [&str; 4] = [
    // CSV of the sweep summary.
    r#"
assert len(table) == 6, table
assert list(table["case"]) == list(range(6))
assert units["drive.front_share"] == "1" and units["manoeuvre.lat_accel"] == "m/s^2", units
assert units["exit_accel_2s"] == "m/s^2", units
assert best["status"] == "completed"
"#,
    // Results file.
    r#"
assert "yaw_rate" in names and len(run) > 100
assert units["ay"] == "m/s^2" and units["yaw_rate"] == "rad/s", units
assert all(u.isascii() for u in units.values())
assert "lat_accel_steady" in metrics
"#,
    // Sweep file.
    r#"
assert len(table) == 6 and list(table.index) == list(range(6))
assert set(table["status"]) == {"completed"}, table["status"]
assert count > 0 and len(t) == count == len(yaw_rate)
"#,
    // Stability map.
    r#"
assert zeta.shape == (2, 3), zeta.shape
assert x.name == "front_share" and y.name == "lat_accel_g"
assert list(x) == [0.0, 0.5, 1.0] and list(y) == [0.1, 0.5]
assert fixed == {"speed_kph": 80.0, "long_accel_g": 0.15}, fixed
assert "[chassis]" in vehicle_toml
"#,
];

#[test]
fn python_snippets_of_the_format_document_read_every_kind() {
    let python = std::env::var("YAWDYN_PYTHON").unwrap_or_else(|_| "python3".to_string());
    let ready = Command::new(&python)
        .args(["-c", "import h5py, pandas"])
        .output()
        .is_ok_and(|o| o.status.success());
    if !ready {
        assert!(
            std::env::var("YAWDYN_REQUIRE_PYTHON").as_deref() != Ok("1"),
            "`{python}` with h5py and pandas not found but YAWDYN_REQUIRE_PYTHON=1: \
             apt-get install python3-h5py python3-pandas"
        );
        let _ = writeln!(
            std::io::stderr(),
            "SKIPPED python_snippets_of_the_format_document_read_every_kind: `{python}` \
             with h5py and pandas not found (apt-get install python3-h5py python3-pandas); \
             nothing was checked"
        );
        return;
    }
    let dir = files();
    dir.yawdyn([
        "export",
        "results/torque_split_same_torque.h5",
        "--out",
        "sweep.csv",
    ])
    .expect_code(0);
    let doc = std::fs::read_to_string(repo_path("docs/file-formats.md")).unwrap();
    let snippets = blocks(&doc, "python");
    assert_eq!(snippets.len(), PYTHON_CHECKS.len(), "python snippets");
    for (k, (snippet, checks)) in snippets.iter().zip(PYTHON_CHECKS).enumerate() {
        let code = format!("{snippet}{checks}");
        let out = Command::new(&python)
            .args(["-c", &code])
            .current_dir(dir.path())
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "python snippet {k} failed:\n{code}\n--- stderr\n{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
}

#[test]
fn matlab_snippets_name_datasets_that_exist() {
    // MATLAB is not run here; every path its snippets read must exist.
    let doc = std::fs::read_to_string(repo_path("docs/file-formats.md")).unwrap();
    let snippets = blocks(&doc, "matlab");
    assert_eq!(snippets.len(), 3);
    let dir = files();
    for snippet in snippets {
        let file = snippet
            .split("file = '")
            .nth(1)
            .and_then(|rest| rest.split('\'').next())
            .expect("file = '...'");
        let h5 = dir.join(file);
        let listing = dir
            .yawdyn(["show", h5.to_str().unwrap(), "--json"])
            .expect_code(0)
            .stdout
            .clone();
        assert!(listing.contains("\"format\""), "{listing}");
        for path in snippet
            .split("(file, '")
            .skip(1)
            .filter_map(|rest| rest.split('\'').next())
        {
            assert!(
                dataset_exists(&h5, path),
                "{file}: MATLAB snippet reads {path}, which the file does not hold"
            );
        }
    }
}

/// Whether the object `path` exists in the HDF5 file (opened with the
/// library the binary uses).
fn dataset_exists(file: &Path, path: &str) -> bool {
    let f = hdf5::File::open(file).unwrap();
    path == "/" || f.link_exists(path.trim_start_matches('/'))
}

#[test]
fn show_reads_all_three_kinds() {
    let dir = files();
    let show = |file: &str| dir.yawdyn(["show", file]).expect_code(0).stdout.clone();
    let results = show("results/step_steer.h5");
    assert!(results.contains("status     completed"), "{results}");
    let sweep = show("results/torque_split_same_torque.h5");
    assert!(sweep.contains("format     yawdyn-sweep"), "{sweep}");
    assert!(sweep.contains("completed 6"), "{sweep}");
    assert!(sweep.contains("manoeuvre.lat_accel  m/s^2"), "{sweep}");
    let map = show("results/torque_split_stability.h5");
    assert!(map.contains("yawdyn-stability-map"), "{map}");
    assert!(map.contains("speed_kph = 80 km/h"), "{map}");
    assert!(map.contains("chassis.mass=1850"), "{map}");

    let json = |file: &str| -> serde_json::Value {
        let out = dir
            .yawdyn(["show", file, "--json"])
            .expect_code(0)
            .stdout
            .clone();
        serde_json::from_str(&out).unwrap()
    };
    let s = json("results/torque_split_same_torque.h5");
    assert_eq!(s["format"], "yawdyn-sweep");
    assert_eq!(s["cases"], 6);
    assert_eq!(s["grid"][1]["unit"], "m/s^2");
    // The sweep keeps the vehicle file the script names (before overrides).
    let file = hdf5::File::open(dir.join("results/torque_split_same_torque.h5")).unwrap();
    let toml: hdf5::types::VarLenUnicode = file
        .dataset("spec/vehicle_toml")
        .and_then(|d| d.read_scalar())
        .unwrap();
    let shipped = std::fs::read_to_string(repo_path("scripts/vehicles/hybrid_crossover.toml"));
    assert_eq!(toml.as_str(), shipped.unwrap());
    let m = json("results/torque_split_stability.h5");
    assert_eq!(m["format"], "yawdyn-stability-map");
    assert_eq!(m["points"], 6);
    assert_eq!(m["fixed"][0]["key"], "speed_kph");
    assert_eq!(json("results/step_steer.h5")["format"], "yawdyn-results");

    // Anything else is bad input naming the kinds that are read.
    let other = dir.write("other.h5", "not HDF5");
    let out = dir.yawdyn(["show", other.to_str().unwrap()]);
    out.expect_code(2);
}

/// CSV text split into rows of cells (no quoted commas in these tables).
fn rows(text: &str) -> Vec<Vec<String>> {
    text.lines()
        .map(|l| l.split(',').map(String::from).collect())
        .collect()
}

#[test]
fn export_writes_each_kind_as_csv() {
    let dir = files();
    // Results file: time and the chosen channels, names then units.
    let out = dir
        .yawdyn([
            "export",
            "results/step_steer.h5",
            "--channels",
            "ay,yaw_rate",
        ])
        .expect_code(0)
        .stdout
        .clone();
    let r = rows(&out);
    assert_eq!(r[0], ["time", "ay", "yaw_rate"]);
    assert_eq!(r[1], ["s", "m/s^2", "rad/s"]);
    assert!(r.len() > 100);
    let t: f64 = r[2][0].parse().unwrap();
    assert_eq!(t, 0.0);

    // Sweep summary: one row per case, units of parameters and metrics.
    let out = dir
        .yawdyn(["export", "results/torque_split_same_torque.h5"])
        .expect_code(0)
        .stdout
        .clone();
    let r = rows(&out);
    assert_eq!(
        &r[0][..4],
        ["case", "status", "drive.front_share", "manoeuvre.lat_accel"]
    );
    assert_eq!(&r[1][..4], ["", "", "1", "m/s^2"]);
    assert_eq!(r.len(), 2 + 6);
    assert!(r[1].iter().all(|u| u.is_ascii()));
    assert!(r[0].contains(&"failure_time_s".to_string()));

    // Sweep channels, tidy: the samples of cases 1 and 4 stacked, with the case column.
    let out = dir
        .yawdyn([
            "export",
            "results/torque_split_same_torque.h5",
            "--table",
            "channels",
            "--cases",
            "1,4",
            "--channels",
            "sideslip",
            "--no-unit-row",
        ])
        .expect_code(0)
        .stdout
        .clone();
    let r = rows(&out);
    assert_eq!(
        r[0],
        [
            "case",
            "drive.front_share",
            "manoeuvre.lat_accel",
            "time",
            "sideslip"
        ]
    );
    let cases: std::collections::BTreeSet<&str> = r[1..].iter().map(|c| c[0].as_str()).collect();
    assert_eq!(cases.into_iter().collect::<Vec<_>>(), ["1", "4"]);
    // First --vary slowest: case 4 = (front share 1, lat_accel 4), case 1 = (0, 5).
    let first = |case: &str| r[1..].iter().find(|c| c[0] == case).unwrap().clone();
    assert_eq!(first("4")[1..3], ["1", "4"]);
    assert_eq!(first("1")[1..3], ["0", "5"]);

    // Stability map: one row per grid point, axis 0 fastest, fixed conditions as columns.
    dir.yawdyn([
        "export",
        "results/torque_split_stability.h5",
        "--out",
        "map/points.csv",
    ])
    .expect_code(0);
    let text = std::fs::read_to_string(dir.join("map/points.csv")).unwrap();
    let r = rows(&text);
    assert_eq!(
        &r[0][..4],
        ["front_share", "lat_accel_g", "speed_kph", "long_accel_g"]
    );
    assert_eq!(&r[1][..4], ["1", "g", "km/h", "g"]);
    assert_eq!(r.len(), 2 + 6);
    assert_eq!([&r[3][0][..], &r[3][1][..]], ["0.5", "0.1"]);
    assert_eq!([&r[5][0][..], &r[5][1][..]], ["0", "0.5"]);

    // Options that do not fit the file are bad input, and nothing is written.
    dir.yawdyn([
        "export",
        "results/step_steer.h5",
        "--channels",
        "nonesuch",
        "--out",
        "bad.csv",
    ])
    .expect_code(2);
    assert!(!dir.join("bad.csv").exists());
    dir.yawdyn([
        "export",
        "results/torque_split_same_torque.h5",
        "--cases",
        "99",
    ])
    .expect_code(2);
}

/// Every numeric key of the demo vehicles has a unit for sweep files and map
/// axes ([`yawdyn::params::parameter_unit`]), ASCII; `_deg` keys are in deg.
#[test]
fn every_numeric_key_of_the_demo_vehicles_has_a_unit() {
    fn walk(prefix: &str, table: &toml::Table, keys: &mut Vec<String>) {
        for (key, value) in table {
            let path = if prefix.is_empty() {
                key.clone()
            } else {
                format!("{prefix}.{key}")
            };
            match value {
                toml::Value::Table(t) => walk(&path, t, keys),
                toml::Value::Float(_) | toml::Value::Integer(_) => keys.push(path),
                _ => {}
            }
        }
    }
    let mut keys = Vec::new();
    for entry in std::fs::read_dir(repo_path("scripts/vehicles")).unwrap() {
        let path = entry.unwrap().path();
        if path.extension().is_some_and(|x| x == "toml") {
            let table: toml::Table = std::fs::read_to_string(&path).unwrap().parse().unwrap();
            walk("", &table, &mut keys);
        }
    }
    assert!(keys.len() > 100, "{keys:?}");
    for key in &keys {
        let unit = yawdyn::params::parameter_unit(key)
            .unwrap_or_else(|| panic!("no unit for vehicle key {key}"));
        assert!(unit.is_ascii() && !unit.is_empty(), "{key}: {unit}");
        if key.ends_with("_deg") {
            assert_eq!(unit, "deg", "{key}");
        }
    }
    assert_eq!(yawdyn::params::parameter_unit("chassis.mass"), Some("kg"));
    assert_eq!(
        yawdyn::params::parameter_unit("chassis.roll_stiffness_front"),
        Some("N*m/rad")
    );
}
