//! `yawdyn check`: regression comparison of results files, through the real
//! binary. The results files come from real model runs of the invented demo
//! vehicle `scripts/vehicles/hybrid_crossover.toml` (a steer ramp at constant
//! speed under a speed controller), written with `results::write_hdf5`.

use std::path::{Path, PathBuf};

mod common;
use common::{SteerRamp, text, yawdyn_raw as yawdyn};

/// Runs a steer ramp (4 deg/s at the steering wheel from t = 0.5 s) at
/// 80 km/h for `duration` s with the given overrides; writes `dir/name`.
fn simulate(dir: &Path, name: &str, overrides: &[&str], duration: f64) -> PathBuf {
    SteerRamp {
        overrides,
        rate_deg_s: 4.0,
        duration,
        sample_rate: 100.0,
        script_path: "tests/invented_steer_ramp.rhai",
    }
    .write(dir, name)
}

#[test]
fn identical_runs_pass() {
    let dir = tempfile::tempdir().unwrap();
    simulate(dir.path(), "a.h5", &[], 2.0);
    simulate(dir.path(), "b.h5", &[], 2.0);
    let out = yawdyn(dir.path(), &["check", "a.h5", "--against", "b.h5"]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    assert!(text(&out).contains("PASS"), "{}", text(&out));
    // Same inputs give bit-identical outputs: every deviation is exactly 0.
    let out = yawdyn(
        dir.path(),
        &["check", "a.h5", "--against", "b.h5", "--json"],
    );
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    assert_eq!(json["alignment"]["kind"], "identical");
    for d in json["deviations"].as_array().unwrap() {
        assert_eq!(d["max_abs_deviation"], 0.0, "{d}");
    }
}

#[test]
fn two_percent_heavier_car_fails_then_passes_loose_tolerance_then_update() {
    let dir = tempfile::tempdir().unwrap();
    simulate(dir.path(), "base.h5", &[], 3.0);
    // chassis.mass 1820 kg × 1.02 = 1856.4 kg.
    simulate(dir.path(), "heavy.h5", &["chassis.mass=1856.4"], 3.0);

    let out = yawdyn(dir.path(), &["check", "heavy.h5", "--against", "base.h5"]);
    let report = text(&out);
    assert_eq!(out.status.code(), Some(1), "{report}");
    assert!(report.contains("FAIL"), "{report}");
    let listed = report
        .lines()
        .find(|l| l.starts_with("outside tolerance ("))
        .unwrap_or_default();
    for channel in ["yaw_rate", "ay", "sideslip", "roll"] {
        assert!(
            listed.split([':', ',']).any(|n| n.trim() == channel),
            "{channel} not named:\n{report}"
        );
    }
    // The table names the worst items by kind and name.
    assert!(report.contains("channel fz_front_left"), "{report}");
    assert!(report.contains("max abs deviation"), "{report}");

    // JSON carries the same verdict and names.
    let out = yawdyn(
        dir.path(),
        &["check", "heavy.h5", "--against", "base.h5", "--json"],
    );
    assert_eq!(out.status.code(), Some(1));
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    assert_eq!(json["passed"], false);
    let failing: Vec<&str> = json["deviations"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|d| d["passed"] == false)
        .map(|d| d["name"].as_str().unwrap())
        .collect();
    assert!(failing.contains(&"yaw_rate"), "{failing:?}");

    // A 2 % mass change moves the response by a few per cent and the tyre
    // forces by a few newtons where they pass through zero: 5 % relative
    // plus 5 units absolute accepts it.
    let out = yawdyn(
        dir.path(),
        &[
            "check",
            "heavy.h5",
            "--against",
            "base.h5",
            "--rtol",
            "0.05",
            "--atol",
            "5",
        ],
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));

    let out = yawdyn(
        dir.path(),
        &["check", "heavy.h5", "--against", "base.h5", "--update"],
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    let out = yawdyn(dir.path(), &["check", "heavy.h5", "--against", "base.h5"]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    assert_eq!(
        std::fs::read(dir.path().join("heavy.h5")).unwrap(),
        std::fs::read(dir.path().join("base.h5")).unwrap()
    );
}

#[test]
fn shorter_run_is_interpolated_and_reported() {
    let dir = tempfile::tempdir().unwrap();
    simulate(dir.path(), "long.h5", &[], 2.0);
    simulate(dir.path(), "short.h5", &[], 1.5);
    let out = yawdyn(dir.path(), &["check", "short.h5", "--against", "long.h5"]);
    let report = text(&out);
    assert_eq!(out.status.code(), Some(1), "{report}");
    assert!(report.contains("time vectors differ"), "{report}");
    assert!(report.contains("time time_end"), "{report}");
}

#[test]
fn non_results_file_is_bad_input() {
    let dir = tempfile::tempdir().unwrap();
    simulate(dir.path(), "a.h5", &[], 0.5);
    std::fs::write(dir.path().join("notes.h5"), "not an HDF5 file").unwrap();
    let out = yawdyn(dir.path(), &["check", "notes.h5", "--against", "a.h5"]);
    assert_eq!(out.status.code(), Some(2), "{}", text(&out));
    let out = yawdyn(dir.path(), &["check", "a.h5", "--against", "missing.h5"]);
    assert_eq!(out.status.code(), Some(2), "{}", text(&out));
    let out = yawdyn(
        dir.path(),
        &["check", "a.h5", "--against", "a.h5", "--rtol", "-1"],
    );
    assert_eq!(out.status.code(), Some(2), "{}", text(&out));
    // --update refuses to install a non-results file as a baseline.
    let out = yawdyn(
        dir.path(),
        &["check", "notes.h5", "--against", "a.h5", "--update"],
    );
    assert_eq!(out.status.code(), Some(2), "{}", text(&out));
}

#[test]
fn shipped_step_steer_script_reruns_match_and_heavier_car_does_not() {
    let dir = tempfile::tempdir().unwrap();
    let script = concat!(env!("CARGO_MANIFEST_DIR"), "/scripts/step_steer.rhai");
    for (name, sets) in [
        ("a.h5", vec![]),
        ("b.h5", vec![]),
        ("heavy.h5", vec!["--set", "chassis.mass=1856.4"]),
    ] {
        let mut args = vec!["run", script, "--out", name];
        args.extend(sets);
        let out = yawdyn(dir.path(), &args);
        assert!(
            matches!(out.status.code(), Some(0 | 1)),
            "run {name}: {}",
            text(&out)
        );
    }
    let out = yawdyn(dir.path(), &["check", "b.h5", "--against", "a.h5"]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    let out = yawdyn(dir.path(), &["check", "heavy.h5", "--against", "a.h5"]);
    let report = text(&out);
    assert_eq!(out.status.code(), Some(1), "{report}");
    assert!(report.contains("yaw_rate"), "{report}");
}
