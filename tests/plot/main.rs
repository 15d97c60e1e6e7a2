//! `yawdyn plot`: SVG plots of results files through the real binary. The
//! results files come from real model runs of the invented demo vehicle
//! `scripts/vehicles/hybrid_crossover.toml`: a slow steer ramp at constant
//! speed under a speed controller (a quasi-steady-state test in the manner of
//! ISO 4138's constant-speed method).

use std::path::{Path, PathBuf};

use yawdyn::model::linear::summarize;
use yawdyn::params::load_vehicle;

#[path = "../common/mod.rs"]
mod common;
use common::{SteerRamp, text, yawdyn_raw as yawdyn};

const VEHICLE: &str = concat!(
    env!("CARGO_MANIFEST_DIR"),
    "/scripts/vehicles/hybrid_crossover.toml"
);

/// Steer ramp of `rate_deg_s` at the steering wheel from t = 0.5 s, at
/// 80 km/h for `duration` s; writes `dir/name` with `script_path` in the
/// provenance (the script itself is not run: the manoeuvre is coded here).
fn simulate(dir: &Path, name: &str, script_path: &str, rate_deg_s: f64, duration: f64) -> PathBuf {
    SteerRamp {
        overrides: &[],
        rate_deg_s,
        duration,
        sample_rate: 50.0,
        script_path,
    }
    .write(dir, name)
}

fn assert_labels(svg: &Path, labels: &[&str]) {
    let svg = std::fs::read_to_string(svg).expect("svg written");
    assert!(svg.starts_with("<svg"));
    for label in labels {
        assert!(svg.contains(label), "missing {label:?}");
    }
}

/// The `points` of every `<polyline>` drawn in `colour` ("#RRGGBB").
fn polylines(svg: &str, colour: &str) -> Vec<Vec<(f64, f64)>> {
    svg.lines()
        .filter(|l| l.starts_with("<polyline") && l.contains(&format!("stroke=\"{colour}\"")))
        .map(|l| {
            l.split("points=\"")
                .nth(1)
                .unwrap()
                .split('"')
                .next()
                .unwrap()
                .split_whitespace()
                .map(|p| {
                    let (x, y) = p.split_once(',').unwrap();
                    (x.parse().unwrap(), y.parse().unwrap())
                })
                .collect()
        })
        .collect()
}

/// First two colours of the plot palette (Okabe–Ito blue and vermillion).
const FIRST: &str = "#0072B2";
const SECOND: &str = "#D55E00";

#[test]
fn time_histories_default_channels_in_engineering_units_next_to_input() {
    let dir = tempfile::tempdir().unwrap();
    simulate(dir.path(), "ramp.h5", "invented_step.rhai", 20.0, 1.5);
    let out = yawdyn(dir.path(), &["plot", "ramp.h5"]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    assert_labels(
        &dir.path().join("ramp.svg"),
        &[
            "time [s]",
            "speed [km/h]",
            "yaw rate [deg/s]",
            "ay [g]",
            "sideslip [deg]",
            "steer wheel angle [deg]",
        ],
    );
}

#[test]
fn cross_plot_against_chosen_channel() {
    let dir = tempfile::tempdir().unwrap();
    simulate(dir.path(), "ramp.h5", "invented_step.rhai", 20.0, 1.5);
    let out = yawdyn(
        dir.path(),
        &[
            "plot",
            "ramp.h5",
            "--x",
            "ay",
            "--channels",
            "steer_wheel_angle,roll,fz_front_left",
            "--out",
            "cross.svg",
        ],
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    let svg = dir.path().join("cross.svg");
    assert_labels(
        &svg,
        &[
            "ay [g]",
            "steer wheel angle [deg]",
            "roll [deg]",
            "fz front left [N]",
        ],
    );
    assert!(
        !std::fs::read_to_string(&svg).unwrap().contains("time [s]"),
        "cross-plot must not use time as x"
    );
}

#[test]
fn handling_diagram_for_circle_script_with_understeer_gradient() {
    let dir = tempfile::tempdir().unwrap();
    // 3 deg/s for 14 s: up to about 40 deg at the wheel, past 0.4 g.
    simulate(
        dir.path(),
        "ramp.h5",
        "invented_circle_speed_ramp.rhai",
        3.0,
        14.0,
    );
    let out = yawdyn(dir.path(), &["plot", "ramp.h5"]);
    let report = text(&out);
    assert_eq!(out.status.code(), Some(0), "{report}");
    assert_labels(
        &dir.path().join("ramp.svg"),
        &[
            "lateral acceleration [g]",
            "road-wheel angle - Ackermann angle [deg]",
            "understeer gradient",
            "\nsimulation\n",
        ],
    );
    // Compare with the linear bicycle-model gradient K = m_f/C_f − m_r/C_r
    // (Gillespie, "Fundamentals of Vehicle Dynamics", ch. 6) of the same
    // vehicle, 1.30 deg/g. The nonlinear two-track model adds understeer from
    // lateral load transfer on degressive tyres and the front drive force, so
    // the fitted value is larger (1.63 deg/g seen over 0–0.4 g); the check is
    // that it is an understeerer of the same order: K_linear ≤ K ≤ 2·K_linear.
    let fitted: f64 = report
        .split("understeer gradient ")
        .nth(1)
        .and_then(|s| s.split_whitespace().next())
        .and_then(|s| s.parse().ok())
        .unwrap_or_else(|| panic!("no gradient printed: {report}"));
    let vehicle = load_vehicle(Path::new(VEHICLE), &[]).unwrap();
    let linear = summarize(&vehicle).understeer_gradient_deg_per_g;
    eprintln!("understeer gradient: fitted {fitted} deg/g, linear {linear} deg/g");
    assert!(linear > 0.0);
    assert!(
        fitted >= linear && fitted <= 2.0 * linear,
        "fitted {fitted} deg/g, linear {linear} deg/g"
    );
}

#[test]
fn friction_usage_plot() {
    let dir = tempfile::tempdir().unwrap();
    simulate(dir.path(), "ramp.h5", "invented_step.rhai", 20.0, 1.5);
    let out = yawdyn(
        dir.path(),
        &["plot", "ramp.h5", "--kind", "gg", "--out", "gg.svg"],
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    assert_labels(
        &dir.path().join("gg.svg"),
        &[
            "lateral acceleration [g]",
            "longitudinal acceleration [g]",
            "friction circle",
        ],
    );
}

#[test]
fn unknown_channel_is_bad_input_with_closest_names() {
    let dir = tempfile::tempdir().unwrap();
    simulate(dir.path(), "ramp.h5", "invented_step.rhai", 20.0, 0.5);
    let out = yawdyn(dir.path(), &["plot", "ramp.h5", "--channels", "yaw_rat"]);
    let report = text(&out);
    assert_eq!(out.status.code(), Some(2), "{report}");
    assert!(report.contains("`yaw_rat`"), "{report}");
    assert!(report.contains("closest: yaw_rate"), "{report}");
    assert!(!dir.path().join("ramp.svg").exists());
}

#[test]
fn non_yawdyn_file_is_bad_input() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("x.h5"), "plain text").unwrap();
    let out = yawdyn(dir.path(), &["plot", "x.h5"]);
    assert_eq!(out.status.code(), Some(2), "{}", text(&out));
}

#[test]
fn stability_map_as_heat_map() {
    let dir = tempfile::tempdir().unwrap();
    let out = yawdyn(
        dir.path(),
        &[
            "stability",
            VEHICLE,
            "--lat-accel-g",
            "0.3",
            "--vary",
            "speed_kph=60:140:3",
            "--vary",
            "chassis.cg_to_front_axle=1.13:1.6:2",
            "--out",
            "map.h5",
        ],
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    let out = yawdyn(dir.path(), &["plot", "map.h5"]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    assert_labels(
        &dir.path().join("map.svg"),
        &[
            "speed [km/h]",
            "chassis.cg_to_front_axle",
            "yaw/sideslip damping ratio [1]",
            // The full vehicle name and the fixed conditions, no raw keys.
            "Invented hybrid crossover (front engine, rear electric motor)",
            "lateral acceleration 0.3 g",
        ],
    );
    let svg = std::fs::read_to_string(dir.path().join("map.svg")).unwrap();
    assert!(!svg.contains("speed_kph"), "raw key on the map");
    // A map cannot be drawn as time histories.
    let out = yawdyn(dir.path(), &["plot", "map.h5", "--kind", "time"]);
    assert_eq!(out.status.code(), Some(2), "{}", text(&out));
}

#[test]
fn shipped_circle_script_gives_handling_diagram_matching_its_own_fit() {
    let dir = tempfile::tempdir().unwrap();
    let script = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/scripts/steady_state_circle.rhai"
    );
    let out = yawdyn(dir.path(), &["run", script, "--out", "circle.h5"]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    // The script fits its speed-sweep phase up to 2 m/s² = 0.20394 g; use
    // the same samples (phase start from the provenance) and range.
    let record = yawdyn::results::read_hdf5(&dir.path().join("circle.h5")).unwrap();
    let from = record
        .provenance
        .extra
        .iter()
        .find(|(k, _)| k == "phase.speed_sweep")
        .map(|(_, v)| v.clone())
        .expect("phase start recorded");
    let out = yawdyn(
        dir.path(),
        &[
            "plot",
            "circle.h5",
            "--fit-max-g",
            "0.20394",
            "--from",
            &from,
        ],
    );
    let report = text(&out);
    assert_eq!(out.status.code(), Some(0), "{report}");
    // Auto kind from the script path; radius from the remembered value.
    assert_labels(
        &dir.path().join("circle.svg"),
        &["lateral acceleration [g]", "handling diagram, R = 100 m"],
    );
    let fitted: f64 = report
        .split("understeer gradient ")
        .nth(1)
        .and_then(|s| s.split_whitespace().next())
        .and_then(|s| s.parse().ok())
        .unwrap_or_else(|| panic!("no gradient printed: {report}"));
    // Same ISO 4138 constant-radius fit as the script's evaluate() over the
    // same samples: agree within 1 % (only the first-sample boundary may differ).
    let own = record
        .metrics
        .iter()
        .find(|m| m.name == "understeer_gradient")
        .expect("script metric")
        .value;
    assert!(
        (fitted - own).abs() <= 0.01 * own.abs(),
        "plot {fitted} deg/g, script {own} deg/g"
    );
}

#[test]
fn sweep_metric_against_parameter_one_line_per_other_value() {
    let dir = tempfile::tempdir().unwrap();
    let script = concat!(env!("CARGO_MANIFEST_DIR"), "/scripts/step_steer.rhai");
    let out = yawdyn(
        dir.path(),
        &[
            "sweep",
            script,
            "--vary",
            "chassis.mass=1700:1900:3",
            "--vary",
            "drive.front_share=0.3:0.7:2",
            "--out",
            "sw.h5",
        ],
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    // Several metrics: --metric is required.
    let out = yawdyn(dir.path(), &["plot", "sw.h5"]);
    assert_eq!(out.status.code(), Some(2), "{}", text(&out));
    assert!(text(&out).contains("yaw_rate_gain"), "{}", text(&out));
    let out = yawdyn(
        dir.path(),
        &[
            "plot",
            "sw.h5",
            "--metric",
            "yaw_rate_gain",
            "--by",
            "drive.front_share",
        ],
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    assert_labels(
        &dir.path().join("sw.svg"),
        &[
            // The varied parameter with the unit the sweep file stores.
            "chassis.mass [kg]",
            "yaw rate gain",
            "drive.front_share = 0.3",
            "drive.front_share = 0.7",
            // The vehicle the script names, in the title.
            "vehicle hybrid_crossover",
        ],
    );
    let out = yawdyn(dir.path(), &["plot", "sw.h5", "--metric", "yaw_rate_gian"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        text(&out).contains("closest: yaw_rate_gain"),
        "{}",
        text(&out)
    );
}

#[test]
fn handling_diagram_says_what_it_plots() {
    let dir = tempfile::tempdir().unwrap();
    simulate(dir.path(), "ramp.h5", "invented_circle.rhai", 10.0, 4.0);
    let out = yawdyn(dir.path(), &["plot", "ramp.h5", "--kind", "handling"]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    let svg = std::fs::read_to_string(dir.path().join("ramp.svg")).unwrap();
    assert!(svg.contains("\nsimulation\n"), "data labelled simulation");
    assert!(
        svg.contains("road-wheel angle"),
        "y axis names what it plots"
    );
    assert!(!svg.contains("test data") && !svg.contains("steer angle [deg]"));
    assert!(
        !svg.contains("[-]"),
        "one unit style: [1] for dimensionless"
    );
}

#[test]
fn one_axis_stability_map_is_a_line_plot() {
    let dir = tempfile::tempdir().unwrap();
    let out = yawdyn(
        dir.path(),
        &[
            "stability",
            VEHICLE,
            "--speed-kph",
            "80",
            "--vary",
            "lat_accel_g=0.1:0.6:6",
            "--plot",
            "line.svg",
        ],
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    let svg = std::fs::read_to_string(dir.path().join("line.svg")).unwrap();
    assert!(svg.contains("lateral acceleration [g]"), "readable axis");
    assert!(!svg.contains("lat_accel_g"), "no raw key");
    assert!(
        svg.contains("speed 80 km/h"),
        "fixed conditions in the title"
    );
    // A line with a marker per point, no grid of cells or colour bar.
    let line = polylines(&svg, FIRST);
    assert_eq!(line.len(), 1, "one damping-ratio line");
    assert_eq!(line[0].len(), 6);
    assert!(svg.matches("<circle").count() >= 6);
    // The colour bar's top colour (viridis, as the heat map draws it).
    assert!(!svg.contains("#FDE725"), "drawn as a heat map");
}

#[test]
fn stability_refuses_a_value_for_a_varied_quantity() {
    let dir = tempfile::tempdir().unwrap();
    let out = yawdyn(
        dir.path(),
        &[
            "stability",
            VEHICLE,
            "--speed-kph",
            "80",
            "--lat-accel-g",
            "0.4",
            "--vary",
            "lat_accel_g=0.1:0.8:8",
        ],
    );
    assert_eq!(out.status.code(), Some(2), "{}", text(&out));
    assert!(text(&out).contains("--lat-accel-g"), "{}", text(&out));
}

mod overlay;
