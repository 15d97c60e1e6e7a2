//! The quasi-static and tyre commands end to end on the shipped (invented)
//! demo vehicles: `yaw-moment`, `gg-envelope` and `tyre` write their files
//! and plots, print JSON, and give exit code 2 on bad input. The physics is
//! tested against closed forms in the library's own tests
//! (`core/quasi_static/test.rs`, `core/tyre/inspect/test.rs`).

mod common;

use common::{TempDir, repo_path};
use serde_json::Value;

fn vehicle(name: &str) -> String {
    repo_path(&format!("scripts/vehicles/{name}.toml"))
        .display()
        .to_string()
}

fn json(stdout: &str) -> Value {
    serde_json::from_str(stdout).unwrap_or_else(|e| panic!("not JSON ({e}):\n{stdout}"))
}

fn hdf5_format(path: &std::path::Path) -> String {
    let file = hdf5::File::open(path).unwrap();
    let format: hdf5::types::VarLenUnicode = file.attr("format").unwrap().read_scalar().unwrap();
    format.as_str().to_string()
}

#[test]
fn yaw_moment_writes_file_plot_and_json() {
    let dir = TempDir::new();
    let car = vehicle("hybrid_crossover");
    let out = dir.yawdyn([
        "yaw-moment",
        &car,
        "--speed-kph",
        "80",
        "--sideslip-deg",
        "-6:6:9",
        "--steer-deg",
        "-8:8:9",
        "--out",
        "ym.h5",
        "--plot",
        "ym.svg",
        "--json",
    ]);
    out.expect_code(0);
    let v = json(&out.stdout);
    let d = &v["diagrams"][0];
    assert_eq!(d["total_points"], 81);
    assert!(d["trim_limit_lat_accel_g"].as_f64().unwrap() > 0.5);
    assert!(d["trim"].as_array().unwrap().len() >= 4);
    assert_eq!(v["longitudinal"]["case"], "free_rolling");
    assert_eq!(hdf5_format(&dir.join("ym.h5")), "yawdyn-yaw-moment");
    let svg = std::fs::read_to_string(dir.join("ym.svg")).unwrap();
    assert!(svg.contains("constant sideslip") && svg.contains("trim limit"));
}

#[test]
fn yaw_moment_share_sweep_gives_one_plot_per_share_and_a_summary() {
    let dir = TempDir::new();
    let car = vehicle("hybrid_crossover");
    let out = dir.yawdyn([
        "yaw-moment",
        &car,
        "--speed-kph",
        "80",
        "--sideslip-deg",
        "-8:8:9",
        "--steer-deg",
        "-8:8:9",
        "--drive-torque",
        "1000",
        "--front-share",
        "0,0.5,1",
        "--plot",
        "split.svg",
        "--out",
        "split.h5",
    ]);
    out.expect_code(0);
    for name in [
        "split_front_share_0.svg",
        "split_front_share_0.5.svg",
        "split_front_share_1.svg",
        "split_summary.svg",
    ] {
        assert!(dir.join(name).exists(), "{name} missing\n{}", out.stdout);
    }
    let file = hdf5::File::open(dir.join("split.h5")).unwrap();
    let shares: Vec<f64> = file
        .dataset("summary/front_share")
        .unwrap()
        .read_raw()
        .unwrap();
    assert_eq!(shares, vec![0.0, 0.5, 1.0]);
    assert!(out.stdout.contains("limit balance"));
}

#[test]
fn gg_envelope_writes_file_plot_and_json() {
    let dir = TempDir::new();
    let car = vehicle("track_car");
    let out = dir.yawdyn([
        "gg-envelope",
        &car,
        "--speed-kph",
        "80,160",
        "--directions",
        "24",
        "--out",
        "gg.h5",
        "--plot",
        "gg.svg",
        "--json",
    ]);
    out.expect_code(0);
    let v = json(&out.stdout);
    let speeds = v["speeds"].as_array().unwrap();
    assert_eq!(speeds.len(), 2);
    assert_eq!(speeds[0]["points"].as_array().unwrap().len(), 24);
    let lateral = |k: usize| speeds[k]["max_lateral_left_g"].as_f64().unwrap();
    assert!(
        lateral(1) > lateral(0),
        "downforce: {} -> {}",
        lateral(0),
        lateral(1)
    );
    assert_eq!(hdf5_format(&dir.join("gg.h5")), "yawdyn-gg-envelope");
    assert!(
        std::fs::read_to_string(dir.join("gg.svg"))
            .unwrap()
            .contains("160 km/h")
    );
}

#[test]
fn tyre_writes_plots_csv_and_json() {
    let dir = TempDir::new();
    let car = vehicle("track_car");
    let out = dir.yawdyn([
        "tyre", &car, "--axle", "rear", "--out", "tyres", "--plot", "tyres", "--json",
    ]);
    out.expect_code(0);
    let v = json(&out.stdout);
    let rear = &v["axles"][0];
    assert_eq!(rear["axle"], "rear");
    let mu = rear["at_nominal_load"]["peak_mu_y"].as_f64().unwrap();
    assert!((1.2..1.6).contains(&mu), "{mu}");
    for stem in [
        "longitudinal.svg",
        "lateral.svg",
        "combined_friction_ellipse.svg",
        "combined_magic_formula.svg",
        "load.svg",
        "curves.csv",
        "load.csv",
    ] {
        assert!(
            dir.join(&format!("tyres/tyre_rear_{stem}")).exists(),
            "{stem}"
        );
    }
    let table = dir.yawdyn(["tyre", &car]);
    table.expect_code(0);
    assert!(table.stdout.contains("cornering stiffness"));
}

#[test]
fn bad_input_exits_with_code_two() {
    let dir = TempDir::new();
    let car = vehicle("hybrid_crossover");
    for args in [
        vec!["yaw-moment", &car, "--speed-kph", "0"],
        vec![
            "yaw-moment",
            &car,
            "--speed-kph",
            "80",
            "--front-share",
            "1.5",
        ],
        vec![
            "yaw-moment",
            &car,
            "--speed-kph",
            "80",
            "--steer-deg",
            "2:1:3",
        ],
        vec![
            "gg-envelope",
            &car,
            "--speed-kph",
            "80",
            "--directions",
            "2",
        ],
        vec!["gg-envelope", &car, "--speed-kph", "fast"],
        vec!["tyre", &car, "--loads-n", "-5"],
        vec!["tyre", "no_such_vehicle.toml"],
    ] {
        let out = dir.yawdyn(&args);
        out.expect_code(2);
        assert!(out.stderr.contains("error"), "{args:?}: {}", out.stderr);
    }
}
