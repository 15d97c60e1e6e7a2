//! Manoeuvre scripts end to end: the shipped scripts through the real
//! binary, the closed-loop drivers against their targets, the driveline
//! facts of the trade, bad input and the results file.

mod common;

use std::path::Path;

use common::{TempDir, channel, extra, metric, repo_path};
use yawdyn::params::{GRAVITY, Override, load_vehicle, load_vehicle_text};
use yawdyn::results::{RunRecord, RunStatus, read_hdf5};
use yawdyn::script::{RunOptions, run_script, run_script_text};

const SHIPPED: [&str; 11] = [
    "step_steer",
    "steady_state_circle",
    "power_on_exit",
    "power_on_exit_closed_loop",
    "sine_with_dwell",
    "brake_in_turn",
    "power_off_in_turn",
    "straight_acceleration",
    "double_lane_change",
    "brake_in_turn_hybrid",
    "power_on_exit_hybrid",
];

/// A script text run as if it lived in scripts/ (so `vehicles/...` resolves).
fn run_text(text: &str) -> RunRecord {
    run_script_text(
        text,
        &repo_path("scripts/test_inline.rhai"),
        &RunOptions::default(),
    )
    .unwrap_or_else(|e| panic!("script failed: {e}"))
}

/// Values of `name` for sample times in [t0, t1].
fn window(r: &RunRecord, name: &str, t0: f64, t1: f64) -> Vec<f64> {
    r.time
        .iter()
        .zip(channel(r, name))
        .filter(|(t, _)| **t >= t0 && **t <= t1)
        .map(|(_, v)| *v)
        .collect()
}

#[test]
fn every_shipped_script_runs_and_writes_a_complete_file() {
    let dir = TempDir::new();
    let expected: Vec<(String, String)> = yawdyn::sim::channel_list()
        .into_iter()
        .map(|(name, unit, _)| (name.to_string(), unit.to_string()))
        .collect();
    for name in SHIPPED {
        let script = repo_path(&format!("scripts/{name}.rhai"));
        let out = dir.yawdyn(["run", script.to_str().unwrap(), "--quiet"]);
        out.expect_code(0);
        // Default output: results/<script>.h5 relative to the working directory.
        let file = dir.join(&format!("results/{name}.h5"));
        let r = read_hdf5(&file).unwrap_or_else(|e| panic!("{name}: {e}"));
        assert_eq!(r.status, RunStatus::Completed, "{name}");
        let got: Vec<(String, String)> = r
            .channels
            .iter()
            .map(|c| (c.name.clone(), c.unit.clone()))
            .collect();
        assert_eq!(got, expected, "{name}: channels and units");
        assert!(r.samples() > 100, "{name}: {} samples", r.samples());
        assert!(
            r.duration_s() <= 150.0 + 1e-9,
            "{name}: {} s",
            r.duration_s()
        );
        assert!(!r.metrics.is_empty(), "{name}: no metrics");
        assert!(
            r.metrics.iter().all(|m| m.value.is_finite()),
            "{name}: {:?}",
            r.metrics
        );
        let p = &r.provenance;
        assert!(
            p.yawdyn_version.starts_with(env!("CARGO_PKG_VERSION"))
                && p.yawdyn_version.contains('('),
            "{name}: version {}",
            p.yawdyn_version
        );
        let c = p.created_utc.as_bytes();
        assert!(
            c.len() == 20 && c[4] == b'-' && c[10] == b'T' && c[19] == b'Z',
            "{name}: created {}",
            p.created_utc
        );
        assert_eq!(
            p.script_text,
            std::fs::read_to_string(&script).unwrap(),
            "{name}"
        );
        assert!(p.script_path.ends_with(&format!("{name}.rhai")), "{name}");
        assert!(p.vehicle_path.ends_with(".toml"), "{name}");
        assert!(!p.vehicle_toml.is_empty(), "{name}");
        assert_eq!(p.solver, "dopri5", "{name}");
        assert!(
            p.rtol > 0.0 && p.atol > 0.0 && p.sample_rate_hz > 0.0,
            "{name}"
        );
        assert_eq!(p.tick_rate_hz, 100.0, "{name}");
    }
}

#[test]
fn resolved_vehicle_in_file_round_trips_with_overrides() {
    let dir = TempDir::new();
    let script = repo_path("scripts/step_steer.rhai");
    dir.yawdyn([
        "run",
        script.to_str().unwrap(),
        "--quiet",
        "--out",
        "r.h5",
        "--set",
        "drive.front_share=0.3",
        "--set",
        "chassis.mass=1900",
    ])
    .expect_code(0);
    let r = read_hdf5(&dir.join("r.h5")).unwrap();
    assert_eq!(
        r.provenance.overrides,
        ["drive.front_share=0.3", "chassis.mass=1900"]
    );
    let overrides = [
        Override::parse("drive.front_share=0.3").unwrap(),
        Override::parse("chassis.mass=1900").unwrap(),
    ];
    let original = load_vehicle(
        &repo_path("scripts/vehicles/hybrid_crossover.toml"),
        &overrides,
    )
    .unwrap();
    let stored =
        load_vehicle_text(&r.provenance.vehicle_toml, Path::new("stored.toml"), &[]).unwrap();
    assert_eq!(stored.to_toml(), original.to_toml());
    assert_eq!(stored.powertrain.front_share, 0.3);
    assert_eq!(stored.chassis.mass, 1900.0);
    assert_eq!(
        stored.chassis.wheelbase.to_bits(),
        original.chassis.wheelbase.to_bits()
    );
}

/// Common practice target from the task: the speed controller holds its
/// target within 0.5 km/h on a straight once settled.
#[test]
fn speed_controller_holds_target_within_half_kph() {
    let r = run_text(
        r#"
        vehicle("vehicles/hybrid_crossover.toml");
        start_speed(kph(60));
        hold_speed(kph(80));
        follow_line();
        run_for(20.0);
        "#,
    );
    let speed = window(&r, "speed", 12.0, 20.0);
    assert!(!speed.is_empty());
    let worst = speed
        .iter()
        .map(|v| (v * 3.6 - 80.0).abs())
        .fold(0.0, f64::max);
    assert!(worst < 0.5, "worst speed error {worst} km/h");
}

/// Common practice target from the task: the path follower holds a 100 m
/// circle within 0.1 m at 0.3 g. Checked from the recorded positions
/// (distance from the circle's centre), independently of the follower's own
/// error estimate.
#[test]
fn path_follower_holds_100_m_circle_within_a_tenth_of_a_metre() {
    let r = run_text(
        r#"
        vehicle("vehicles/hybrid_crossover.toml");
        let speed = sqrt(g(0.3) * 100.0);
        start_speed(speed);
        hold_speed(speed);
        follow_circle(100.0, "left");
        run_for(15.0);
        reset_max_cross_track_error();
        run_for(5.0);
        remember("max_error", max_cross_track_error());
        "#,
    );
    let (cx, cy) = (
        extra(&r, "value.circle_centre_x"),
        extra(&r, "value.circle_centre_y"),
    );
    let x = window(&r, "x", 15.0, 20.0);
    let y = window(&r, "y", 15.0, 20.0);
    let worst = x
        .iter()
        .zip(&y)
        .map(|(x, y)| ((x - cx).hypot(y - cy) - 100.0).abs())
        .fold(0.0, f64::max);
    assert!(worst < 0.1, "worst radial error {worst} m");
    assert!(extra(&r, "value.max_error") < 0.1);
    let ay = window(&r, "ay", 15.0, 20.0);
    let mean_ay = ay.iter().sum::<f64>() / ay.len() as f64;
    assert!((mean_ay / GRAVITY - 0.3).abs() < 0.02, "ay = {mean_ay}");
}

fn power_on(dir: &TempDir, out: &str, sets: &[&str]) -> RunRecord {
    let script = repo_path("scripts/power_on_exit.rhai");
    let mut args = vec![
        "run".to_string(),
        script.to_str().unwrap().to_string(),
        "--quiet".into(),
        "--out".into(),
        out.into(),
    ];
    for s in sets {
        args.push("--set".into());
        args.push((*s).into());
    }
    dir.yawdyn(&args).expect_code(0);
    read_hdf5(&dir.join(out)).unwrap()
}

/// Common practice: power on the front axle out of a corner gives
/// understeer (the path radius grows), on the rear axle with enough power
/// oversteer (the sideslip grows).
#[test]
fn power_on_front_drive_understeers_rear_drive_oversteers() {
    let dir = TempDir::new();
    let front = power_on(&dir, "front.h5", &["drive.front_share=1"]);
    let rear = power_on(
        &dir,
        "rear.h5",
        &[
            "drive.front_share=0",
            "drive.rear.max_power=300000",
            "drive.rear.max_torque=800",
            "drive.store.max_discharge_power=400000",
            "manoeuvre.exit_torque=6000",
            "manoeuvre.ramp_time=2.0",
        ],
    );
    let growth_front = metric(&front, "path_radius_growth_ratio_2s");
    let growth_rear = metric(&rear, "path_radius_growth_ratio_2s");
    assert!(
        growth_front > 1.2,
        "front drive radius growth {growth_front}"
    );
    assert!(
        growth_rear < growth_front,
        "rear {growth_rear} vs front {growth_front}"
    );
    let slip_front = metric(&front, "sideslip_peak");
    let slip_rear = metric(&rear, "sideslip_peak");
    let slip_rear_start = metric(&rear, "sideslip_at_power_on").abs();
    assert!(
        slip_rear > 3.0 * slip_rear_start.max(0.5),
        "rear sideslip {slip_rear} deg from {slip_rear_start}"
    );
    assert!(
        slip_rear > 2.0 * slip_front,
        "rear {slip_rear} vs front {slip_front} deg"
    );
}

/// Longitudinal load transfer ΔFz = m·ax·h/L (Milliken & Milliken, Race Car
/// Vehicle Dynamics, ch. 18; Gillespie ch. 2): braking moves load to the
/// front axle, accelerating to the rear. Checked in sign and, once pitch has
/// settled, within 15 % in size (aero and rolling resistance neglected).
#[test]
fn braking_loads_the_front_axle_and_accelerating_the_rear() {
    let v = load_vehicle(&repo_path("scripts/vehicles/hybrid_crossover.toml"), &[]).unwrap();
    let static_front = yawdyn::model::static_axle_loads(&v.chassis)[0];
    let front_gain = |r: &RunRecord, t0: f64, t1: f64| -> (f64, f64) {
        let fl = window(r, "fz_front_left", t0, t1);
        let fr = window(r, "fz_front_right", t0, t1);
        let ax = window(r, "ax", t0, t1);
        let n = fl.len() as f64;
        let front = fl.iter().zip(&fr).map(|(a, b)| a + b).sum::<f64>() / n;
        let ax = ax.iter().sum::<f64>() / n;
        (front - static_front, ax)
    };
    let braking = run_text(
        r#"
        vehicle("vehicles/hybrid_crossover.toml");
        start_speed(kph(100));
        follow_line();
        run_for(1.0);
        brake(0.3);
        run_for(2.0);
        "#,
    );
    let (gain, ax) = front_gain(&braking, 2.0, 2.5);
    assert!(ax < -3.0, "deceleration {ax}");
    assert!(gain > 0.0, "front axle load change {gain} N under braking");
    let expected = -v.chassis.mass * ax * v.chassis.cg_height / v.chassis.wheelbase;
    assert!(
        (gain - expected).abs() < 0.15 * expected,
        "ΔFz {gain} N vs m·ax·h/L {expected} N"
    );

    let accelerating = run_text(
        r#"
        vehicle("vehicles/hybrid_crossover.toml");
        start_speed(kph(30));
        follow_line();
        drive(1.0);
        run_for(2.0);
        "#,
    );
    let (gain, ax) = front_gain(&accelerating, 1.0, 2.0);
    assert!(ax > 2.0, "acceleration {ax}");
    assert!(
        gain < 0.0,
        "front axle load change {gain} N under acceleration"
    );
}

#[test]
fn controller_commands_take_effect_and_see_the_state() {
    let r = run_text(
        r#"
        vehicle("vehicles/hybrid_crossover.toml");
        start_speed(kph(50));
        controller(|s| {
            if s.time < 1.0 { #{ drive: 0.3 } } else { #{ drive: 0.0, steer: -2.0 * s.yaw_rate + deg(10) } }
        });
        run_for(2.0);
        "#,
    );
    let drive = window(&r, "drive_request", 0.05, 0.95);
    assert!(drive.iter().all(|d| *d == 0.3), "drive held at 0.3");
    let late = window(&r, "drive_request", 1.05, 2.0);
    assert!(late.iter().all(|d| *d == 0.0));
    let steer = window(&r, "steer_wheel_angle", 1.05, 2.0);
    assert!(
        steer
            .iter()
            .all(|d| *d > 0.0 && *d <= 10f64.to_radians() + 1e-12)
    );
}

/// Same script, same inputs: bit-identical channels.
#[test]
fn runs_are_bit_identical() {
    let options = RunOptions::default();
    let a = run_script(&repo_path("scripts/double_lane_change.rhai"), &options).unwrap();
    let b = run_script(&repo_path("scripts/double_lane_change.rhai"), &options).unwrap();
    assert_eq!(a.time.len(), b.time.len());
    for (ca, cb) in a.channels.iter().zip(&b.channels) {
        assert!(
            ca.data
                .iter()
                .zip(&cb.data)
                .all(|(x, y)| x.to_bits() == y.to_bits()),
            "{}",
            ca.name
        );
    }
    assert_eq!(a.metrics, b.metrics);
}

#[test]
fn progress_reports_increasing_time() {
    let seen = std::sync::Arc::new(std::sync::Mutex::new(Vec::new()));
    let sink = seen.clone();
    let options = RunOptions {
        progress: Some(Box::new(move |t, end| sink.lock().unwrap().push((t, end)))),
        ..Default::default()
    };
    let r = run_script(&repo_path("scripts/step_steer.rhai"), &options).unwrap();
    let seen = seen.lock().unwrap();
    assert!(seen.len() >= 500, "{} reports", seen.len());
    assert!(seen.windows(2).all(|w| w[1].0 >= w[0].0));
    assert!((seen.last().unwrap().0 - r.duration_s()).abs() < 1e-9);
}

#[test]
fn show_json_has_status_and_metrics_and_csv_has_units() {
    let dir = TempDir::new();
    let script = repo_path("scripts/sine_with_dwell.rhai");
    dir.yawdyn([
        "run",
        script.to_str().unwrap(),
        "--quiet",
        "--out",
        "s.h5",
        "--csv",
        "s.csv",
    ])
    .expect_code(0);
    let show = dir.yawdyn(["show", "s.h5", "--json"]);
    show.expect_code(0);
    let json: serde_json::Value = serde_json::from_str(&show.stdout).unwrap();
    assert_eq!(json["status"], "completed");
    assert!(
        json["metrics"].get("yaw_rate_ratio_1_00").is_some(),
        "{}",
        show.stdout
    );
    let text = dir.yawdyn(["show", "s.h5"]);
    text.expect_code(0);
    assert!(text.stdout.contains("lateral_displacement_1_07"));
    let csv = std::fs::read_to_string(dir.join("s.csv")).unwrap();
    let mut lines = csv.lines();
    let names: Vec<&str> = lines.next().unwrap().split(',').collect();
    let units: Vec<&str> = lines.next().unwrap().split(',').collect();
    assert_eq!(names[0], "time");
    assert_eq!(units[0], "s");
    let i = names.iter().position(|n| *n == "yaw_rate").unwrap();
    assert_eq!(units[i], "rad/s");
}

#[test]
fn run_summary_lists_criteria_and_metrics() {
    let dir = TempDir::new();
    let script = repo_path("scripts/sine_with_dwell.rhai");
    let out = dir.yawdyn(["run", script.to_str().unwrap(), "--out", "s.h5"]);
    out.expect_code(0);
    for word in [
        "completed",
        "real-time factor",
        "yaw_rate_ratio_1_75",
        "PASS",
    ] {
        assert!(out.stdout.contains(word), "{word} missing:\n{}", out.stdout);
    }
}

/// A criterion that fails makes the run exit 1 (the file is still written).
#[test]
fn failed_criterion_exits_1() {
    let dir = TempDir::new();
    let path = dir.write_with_vehicle(
        "crit.rhai",
        "start_speed(10.0);\nrun_for(0.2);\nfn evaluate(ch) {\n    criterion(\"speed\", max(ch.speed), 20.0, ());\n}\n",
    );
    let out = dir.yawdyn(["run", path.to_str().unwrap(), "--out", "c.h5"]);
    out.expect_code(1);
    assert!(out.stdout.contains("FAIL"));
    let r = read_hdf5(&dir.join("c.h5")).unwrap();
    assert!(!r.criteria[0].passed);
}

/// Manoeuvre parameters: `--set manoeuvre.<name>=value` reaches `param(...)`
/// and is recorded in provenance; a name the script never reads is bad input.
#[test]
fn manoeuvre_parameters_reach_the_script_and_typos_are_refused() {
    let dir = TempDir::new();
    let script = repo_path("scripts/power_on_exit.rhai");
    let script = script.to_str().unwrap();
    dir.yawdyn([
        "run",
        script,
        "--quiet",
        "--out",
        "p.h5",
        "--set",
        "manoeuvre.exit_torque=900",
    ])
    .expect_code(0);
    let r = read_hdf5(&dir.join("p.h5")).unwrap();
    assert!(
        r.provenance
            .extra
            .iter()
            .any(|(k, v)| k == "param.exit_torque" && v == "900"),
        "{:?}",
        r.provenance.extra
    );
    let o = dir.yawdyn([
        "run",
        script,
        "--quiet",
        "--out",
        "q.h5",
        "--set",
        "manoeuvre.exit_torqe=900",
    ]);
    o.expect_code(2);
    let e = &o.stderr;
    assert!(
        e.contains("exit_torqe") && e.contains("`exit_torque`"),
        "{e}"
    );
}

/// `solver("ark436")` from the command line: the run completes, the file
/// names the solver, and a step steer's yaw rate and wheel speed follow the
/// default solver's run (measured: 5.1e-7 rad/s and 4.5e-4 rad/s apart; the
/// bounds are 200× and 20× that, far below the 0.1 rad/s peak yaw rate).
#[test]
fn additive_solver_runs_from_a_script_and_agrees_with_the_default() {
    let dir = TempDir::new();
    let body = |solver: &str| {
        format!(
            "{solver}sample_rate(200);\nstart_speed(22.0);\nhold_speed(22.0);\nrun_for(0.5);\nsteer(0.8);\nrun_for(3.0);\n"
        )
    };
    let ark = dir.write_with_vehicle("ark.rhai", &body("solver(\"ark436\");\n"));
    let default = dir.write_with_vehicle("default.rhai", &body(""));
    dir.yawdyn(["run", ark.to_str().unwrap(), "--out", "a.h5"])
        .expect_code(0);
    dir.yawdyn(["run", default.to_str().unwrap(), "--out", "d.h5"])
        .expect_code(0);
    let a = read_hdf5(&dir.join("a.h5")).unwrap();
    let d = read_hdf5(&dir.join("d.h5")).unwrap();
    assert_eq!(a.provenance.solver, "ark436");
    assert_eq!(d.provenance.solver, "dopri5");
    assert_eq!(a.time, d.time);
    let largest = |name: &str| {
        channel(&a, name)
            .iter()
            .zip(channel(&d, name))
            .map(|(x, y)| (x - y).abs())
            .fold(0.0, f64::max)
    };
    let peak = channel(&d, "yaw_rate")
        .iter()
        .fold(0.0, |m: f64, v| m.max(v.abs()));
    assert!(peak > 0.1, "the steer turns the car: {peak} rad/s");
    let yaw_rate = largest("yaw_rate");
    let wheel = largest("wheel_speed_front_left");
    assert!(yaw_rate < 1e-4, "yaw rate differs by {yaw_rate} rad/s");
    eprintln!("largest differences: yaw rate {yaw_rate:.2e} rad/s, wheel speed {wheel:.2e} rad/s");
    assert!(wheel < 1e-2, "wheel speed differs by {wheel} rad/s");
}
