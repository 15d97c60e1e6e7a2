//! Script runs that go wrong, through the real binary: errors after the
//! simulation keep the data (file written, status `failed`, exit code 1,
//! script position in the message); input errors (syntax, wrong argument
//! types, unknown `--set` keys, `eval`) keep their kind to exit code 2 with
//! the file, line and column; a spent operation budget and a diverging run
//! exit 1; manoeuvre parameters are checked before anything runs.

mod common;

use std::path::Path;

use common::{TempDir, repo_path, with_vehicle};
use yawdyn::results::{RunRecord, RunStatus, read_hdf5};

/// Runs `text` as `name` in `dir` with `args`, with the demo crossover
/// copied into `dir/vehicles/` (a script reads only vehicle files inside
/// its folder); returns the output.
fn run(dir: &TempDir, name: &str, text: &str, args: &[&str]) -> common::Output {
    let vehicle = std::fs::read_to_string(repo_path("scripts/vehicles/hybrid_crossover.toml"));
    dir.write("vehicles/hybrid_crossover.toml", &vehicle.unwrap());
    let path = dir.write(name, text);
    let mut all = vec!["run", path.to_str().unwrap(), "--quiet", "--out", "r.h5"];
    all.extend_from_slice(args);
    dir.yawdyn(&all)
}

/// The failure message and time of a failed record.
fn failure(r: &RunRecord) -> (&str, f64) {
    match &r.status {
        RunStatus::Failed { message, time_s } => (message, *time_s),
        other => panic!("status {other:?}"),
    }
}

/// Every channel holds one finite value per sample.
fn assert_channels_kept(r: &RunRecord, min_samples: usize) {
    assert!(r.samples() >= min_samples, "{} samples", r.samples());
    for c in &r.channels {
        assert_eq!(c.data.len(), r.samples(), "{}", c.name);
        assert!(c.data.iter().all(|v| v.is_finite()), "{}", c.name);
    }
}

/// Reduced rear grip (λμy = 0.6) makes the demo crossover spin in the
/// sine with dwell. The shipped evaluation records it: the FMVSS 126
/// criteria fail with NaN values, the reason is a note, the run exits 1 and
/// the file keeps every channel. The yaw angle passing 90° confirms the spin.
#[test]
fn spinning_car_in_sine_with_dwell_fails_its_criteria_and_keeps_its_channels() {
    let dir = TempDir::new();
    let script = repo_path("scripts/sine_with_dwell.rhai");
    let out = dir.yawdyn([
        "run",
        script.to_str().unwrap(),
        "--quiet",
        "--out",
        "spin.h5",
        "--set",
        "tyre.rear.magic_formula.lambda_muy=0.6",
    ]);
    out.expect_code(1);
    let r = read_hdf5(&dir.join("spin.h5")).unwrap();
    assert_eq!(r.status, RunStatus::Completed);
    assert_channels_kept(&r, 900);
    let yaw = &r.channel("yaw").unwrap().data;
    assert!(
        yaw.iter().any(|y| y.abs() > std::f64::consts::FRAC_PI_2),
        "no spin"
    );
    assert_eq!(r.criteria.len(), 3);
    assert!(r.criteria.iter().all(|c| !c.passed && c.value.is_nan()));
    let ratio = r.metrics.iter().find(|m| m.name == "yaw_rate_ratio_1_00");
    assert!(ratio.unwrap().value.is_nan());
    let note = r
        .provenance
        .extra
        .iter()
        .find(|(k, _)| k == "note.sine_with_dwell_result");
    assert!(note.unwrap().1.contains("yaw-rate peak"), "{note:?}");
}

/// The same spin with an evaluation that throws: the run is `failed`, the
/// message names the script position of the failing call, exit code 1, and
/// the channels are kept.
#[test]
fn evaluate_error_after_a_spin_writes_a_failed_file_with_the_position() {
    let dir = TempDir::new();
    let shipped = std::fs::read_to_string(repo_path("scripts/sine_with_dwell.rhai")).unwrap();
    let cut = shipped.find("fn evaluate(ch)").unwrap();
    let text = format!(
        "{}fn evaluate(ch) {{\n    let r = sine_with_dwell_result(ch.time, ch.steer_wheel_angle, ch.yaw_rate, ch.lateral_offset, 1900.0);\n}}\n",
        &shipped[..cut]
    );
    let line = text.lines().count() - 1;
    let out = run(
        &dir,
        "spin.rhai",
        &text,
        &["--set", "tyre.rear.magic_formula.lambda_muy=0.6"],
    );
    out.expect_code(1);
    let at = format!("spin.rhai:{line}:13");
    assert!(out.stderr.contains(&at), "{at} in {}", out.stderr);
    let r = read_hdf5(&dir.join("r.h5")).unwrap();
    let (message, time) = failure(&r);
    assert!(
        message.contains(&at) && message.contains("yaw-rate peak"),
        "{message}"
    );
    assert_eq!(time, *r.time.last().unwrap());
    assert_channels_kept(&r, 900);
}

/// A metric recorded twice fails the run at the second call; the first
/// value is kept.
#[test]
fn duplicate_metric_fails_the_run_at_its_line() {
    let dir = TempDir::new();
    let text = "vehicle(\"vehicles/hybrid_crossover.toml\");\nstart_speed(10.0);\nrun_for(0.2);\n\
                fn evaluate(ch) {\n    metric(\"m\", 1.0);\n    metric(\"m\", 2.0);\n}\n";
    let out = run(&dir, "dup.rhai", text, &[]);
    out.expect_code(1);
    let r = read_hdf5(&dir.join("r.h5")).unwrap();
    let (message, _) = failure(&r);
    assert!(message.contains("dup.rhai:6:5"), "{message}");
    assert!(
        message.contains("metric `m` is recorded twice"),
        "{message}"
    );
    assert_eq!(r.metrics.len(), 1);
    assert_eq!(r.metrics[0].value, 1.0);
}

/// The 600 s simulated-time limit stops the run where the limit is, with
/// the position of the phase call; the samples up to it are written.
#[test]
fn time_limit_fails_the_run_and_keeps_the_data() {
    let dir = TempDir::new();
    let text = "vehicle(\"vehicles/hybrid_crossover.toml\");\ntick_rate(1);\nsample_rate(1);\n\
                run_for(500.0);\n  run_for(200.0);\nfn evaluate(ch) { metric(\"never\", 1.0); }\n";
    let out = run(&dir, "limit.rhai", text, &[]);
    out.expect_code(1);
    let r = read_hdf5(&dir.join("r.h5")).unwrap();
    let (message, time) = failure(&r);
    assert!(message.contains("limit.rhai:5:3"), "{message}");
    assert!(message.contains("time limit of 600 s"), "{message}");
    assert_eq!(time, 600.0);
    assert_eq!(r.samples(), 601);
    assert!(r.metrics.is_empty(), "evaluate does not run after a stop");
}

/// `fail_on_timeout` names the `run_until` call that timed out.
#[test]
fn run_until_timeout_names_its_call() {
    let dir = TempDir::new();
    let text = "vehicle(\"vehicles/hybrid_crossover.toml\");\nstart_speed(10.0);\n\
                run_until(#{ speed_above: 50.0, max_time: 0.3, fail_on_timeout: true });\n";
    let out = run(&dir, "slow.rhai", text, &[]);
    out.expect_code(1);
    let r = read_hdf5(&dir.join("r.h5")).unwrap();
    let (message, time) = failure(&r);
    assert!(
        message.starts_with(&format!(
            "{}:3:1: run_until",
            dir.join("slow.rhai").display()
        )),
        "{message}"
    );
    assert!((time - 0.3).abs() < 1e-9);
}

/// A sweep over a manoeuvre parameter the script does not read is bad
/// input, found from the script's text before any case runs: exit code 2,
/// the names the script reads, no sweep file.
#[test]
fn misspelt_manoeuvre_key_in_a_sweep_exits_2_before_any_case() {
    let dir = TempDir::new();
    let script = repo_path("scripts/power_on_exit.rhai");
    let script = script.to_str().unwrap();
    for extra in [
        vec!["--vary", "manoeuvre.nope=0:1:2"],
        vec![
            "--vary",
            "drive.front_share=0:1:2",
            "--set",
            "manoeuvre.exit_torqe=900",
        ],
    ] {
        let mut args = vec!["sweep", script, "--quiet", "--out", "s.h5"];
        args.extend(extra);
        let out = dir.yawdyn(&args);
        out.expect_code(2);
        let e = &out.stderr;
        assert!(e.contains("unknown manoeuvre parameter"), "{e}");
        assert!(
            e.contains("`radius`, `lat_accel`, `exit_torque`, `ramp_time`"),
            "{e}"
        );
        let left: Vec<_> = std::fs::read_dir(dir.path()).unwrap().collect();
        assert!(left.is_empty(), "files left: {left:?}");
    }
}

/// With manoeuvre parameters given, a `param` call with a computed name is
/// refused at its position (exit 2); without them the script runs.
#[test]
fn computed_parameter_names_are_refused_when_parameters_are_given() {
    let dir = TempDir::new();
    let text = "vehicle(\"vehicles/hybrid_crossover.toml\");\nlet n = \"speed\";\n\
                start_speed(param(n, 10.0));\nrun_for(0.1);\n";
    let out = run(
        &dir,
        "computed.rhai",
        text,
        &["--set", "manoeuvre.speed=12"],
    );
    out.expect_code(2);
    assert!(out.stderr.contains("computed.rhai:3:13"), "{}", out.stderr);
    assert!(out.stderr.contains("literal string"), "{}", out.stderr);
    run(&dir, "computed.rhai", text, &[]).expect_code(0);
}

/// After `release_controller()` its last commands no longer apply: the
/// drive request falls back to the open-loop signal.
#[test]
fn released_controller_no_longer_commands() {
    let dir = TempDir::new();
    let text = "vehicle(\"vehicles/hybrid_crossover.toml\");\nstart_speed(10.0);\n\
                controller(|s| #{ drive: 0.5 });\nrun_for(0.5);\nrelease_controller();\nrun_for(0.5);\n";
    run(&dir, "ctl.rhai", text, &[]).expect_code(0);
    let r = read_hdf5(&dir.join("r.h5")).unwrap();
    let drive = &r.channel("drive_request").unwrap().data;
    let at = |t: f64| drive[r.time.iter().position(|x| (x - t).abs() < 1e-9).unwrap()];
    assert_eq!(at(0.3), 0.5);
    assert_eq!(at(0.8), 0.0);
}

/// Phases cannot start inside a controller (bad input, exit 2) nor inside
/// `evaluate`, where the simulation has ended (a late error: exit 1, file kept).
#[test]
fn phases_cannot_start_inside_a_controller_or_evaluate() {
    let dir = TempDir::new();
    let text = "vehicle(\"vehicles/hybrid_crossover.toml\");\nstart_speed(10.0);\n\
                controller(|s| { run_for(1.0); () });\nrun_for(0.1);\n";
    let out = run(&dir, "nested.rhai", text, &[]);
    out.expect_code(2);
    assert!(
        out.stderr.contains("cannot be called inside a controller"),
        "{}",
        out.stderr
    );
    let text = "vehicle(\"vehicles/hybrid_crossover.toml\");\nstart_speed(10.0);\nrun_for(0.1);\n\
                fn evaluate(ch) { run_for(1.0); }\n";
    let out = run(&dir, "late.rhai", text, &[]);
    out.expect_code(1);
    let r = read_hdf5(&dir.join("r.h5")).unwrap();
    assert!(
        failure(&r).0.contains("the simulation has ended"),
        "{:?}",
        r.status
    );
    assert!(Path::new(&dir.join("r.h5")).exists());
}

/// Runs `text` as `name` in `dir`, with the demo crossover copied into
/// `dir/vehicles/` (a script reads only vehicle files inside its folder).
fn bad_script(dir: &TempDir, name: &str, text: &str) -> common::Output {
    dir.add_demo_vehicle();
    let path = dir.write(name, text);
    dir.yawdyn(["run", path.to_str().unwrap(), "--quiet"])
}

#[test]
fn syntax_error_reports_file_line_column() {
    let dir = TempDir::new();
    let out = bad_script(
        &dir,
        "broken.rhai",
        &with_vehicle("start_speed(10.0);\nlet x = ;\n"),
    );
    out.expect_code(2);
    assert!(out.stderr.contains("broken.rhai:3:9"), "{}", out.stderr);
    assert!(out.stderr.contains("syntax error"), "{}", out.stderr);
}

#[test]
fn runtime_error_reports_file_line_column() {
    let dir = TempDir::new();
    let out = bad_script(
        &dir,
        "wrong.rhai",
        &with_vehicle("start_speed(10.0);\nrun_for(0.5);\n  run_for(\"long\");\n"),
    );
    out.expect_code(2);
    assert!(out.stderr.contains("wrong.rhai:4:3"), "{}", out.stderr);
    assert!(
        out.stderr.contains("duration must be a number"),
        "{}",
        out.stderr
    );
    // An error inside the evaluation function comes after the simulation:
    // the run is failed (exit 1), its file is written, and the message
    // points into the function.
    let out = bad_script(
        &dir,
        "eval.rhai",
        &with_vehicle(
            "run_for(0.1);\nfn evaluate(ch) {\n    metric(\"m\", ch.no_such_channel[0], \"s\");\n}\n",
        ),
    );
    out.expect_code(1);
    assert!(out.stderr.contains("eval.rhai:4:"), "{}", out.stderr);
    let r = read_hdf5(&dir.join("results/eval.h5")).unwrap();
    let RunStatus::Failed { message, .. } = &r.status else {
        panic!("{:?}", r.status);
    };
    assert!(message.contains("eval.rhai:4:"), "{message}");
}

#[test]
fn endless_loop_is_stopped_by_the_operation_limit() {
    let dir = TempDir::new();
    let out = bad_script(&dir, "forever.rhai", "let n = 0;\nloop { n += 1; }\n");
    // A spent budget is a failed run (exit 1); nothing was simulated, no file.
    out.expect_code(1);
    assert!(out.stderr.contains("operation budget"), "{}", out.stderr);
    assert!(out.stderr.contains("forever.rhai:2:"), "{}", out.stderr);
    // Endless loop inside a per-tick controller at its first tick: the run
    // stops before its first sample (no file), at the phase call.
    let out = bad_script(
        &dir,
        "forever_ctl.rhai",
        &with_vehicle("start_speed(10.0);\ncontroller(|s| { loop { } });\nrun_for(1.0);\n"),
    );
    out.expect_code(1);
    assert!(out.stderr.contains("operation budget"), "{}", out.stderr);
    assert!(
        out.stderr.contains("forever_ctl.rhai:4:1"),
        "{}",
        out.stderr
    );
}

#[test]
fn eval_is_disabled() {
    let dir = TempDir::new();
    let out = bad_script(&dir, "ev.rhai", "eval(\"1 + 1\");\n");
    out.expect_code(2);
}

#[test]
fn unknown_set_key_lists_the_closest_names() {
    let dir = TempDir::new();
    let script = repo_path("scripts/step_steer.rhai");
    let out = dir.yawdyn([
        "run",
        script.to_str().unwrap(),
        "--quiet",
        "--set",
        "drive.frnt_share=0.3",
    ]);
    out.expect_code(2);
    assert!(out.stderr.contains("drive.frnt_share"), "{}", out.stderr);
    assert!(out.stderr.contains("front_share"), "{}", out.stderr);
}

/// A relaxation length of 1 mm with the fixed-step RK4 solver makes the slip
/// states unstable once V·h/σ passes RK4's stability limit (≈ 2.8): the run
/// must fail, say so, exit 1, and keep the channels up to the failure.
#[test]
fn diverging_run_exits_1_and_keeps_the_channels() {
    let dir = TempDir::new();
    let path = dir.write_with_vehicle(
        "diverge.rhai",
        r#"set("tyre.front.relaxation_length_lateral", 0.01);
set("tyre.front.relaxation_length_longitudinal", 0.01);
solver("rk4");
fixed_step(0.005);
start_speed(2.0);
drive(1.0);
run_for(5.0);
"#,
    );
    let out = dir.yawdyn(["run", path.to_str().unwrap(), "--out", "d.h5"]);
    out.expect_code(1);
    assert!(out.stdout.contains("FAILED"), "{}", out.stdout);
    let r = read_hdf5(&dir.join("d.h5")).unwrap();
    let RunStatus::Failed { time_s, message } = &r.status else {
        panic!("status {:?}", r.status);
    };
    assert!(message.contains("non-finite"), "{message}");
    assert!(*time_s > 0.1 && *time_s < 5.0, "failed at {time_s}");
    assert!(r.samples() > 10);
    assert!(*r.time.last().unwrap() <= *time_s);
    for c in &r.channels {
        assert_eq!(c.data.len(), r.samples());
        assert!(
            c.data.iter().all(|v| v.is_finite()),
            "{} has non-finite samples",
            c.name
        );
    }
    let show = dir.yawdyn(["show", "d.h5", "--json"]);
    show.expect_code(0);
    let json: serde_json::Value = serde_json::from_str(&show.stdout).unwrap();
    assert_eq!(json["status"], "failed");
}
