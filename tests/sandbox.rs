//! The script sandbox and the budgets of a run, through the real binary:
//! each hostile or mistaken input ends quickly with a located message and
//! the documented exit code (1 for a spent budget, the samples so far kept;
//! 2 for input that is refused), never a hang, an abort or a huge
//! allocation. Budgets are made small with the run options so that each
//! test takes seconds; no test asserts a time.

mod common;

use common::{TempDir, repo_path};
use yawdyn::results::{RunRecord, RunStatus, read_hdf5};

/// The vehicle line every script here starts with.
const VEHICLE: &str = "vehicle(\"vehicles/hybrid_crossover.toml\");\n";

/// A temporary folder holding the demo crossover under `vehicles/`.
fn folder() -> TempDir {
    let dir = TempDir::new();
    let text = std::fs::read_to_string(repo_path("scripts/vehicles/hybrid_crossover.toml"));
    dir.write("vehicles/hybrid_crossover.toml", &text.unwrap());
    dir
}

/// Runs `VEHICLE + body` as `name` with `args`; the results go to `r.h5`.
fn run(dir: &TempDir, name: &str, body: &str, args: &[&str]) -> common::Output {
    let path = dir.write(name, &format!("{VEHICLE}{body}"));
    let mut all = vec!["run", path.to_str().unwrap(), "--quiet", "--out", "r.h5"];
    all.extend_from_slice(args);
    dir.yawdyn(&all)
}

/// The message of a failed record.
fn failure(r: &RunRecord) -> &str {
    match &r.status {
        RunStatus::Failed { message, .. } => message,
        other => panic!("status {other:?}"),
    }
}

/// The operation budget covers the whole run: a controller that spends
/// 3000 operations per tick stops the run after about 70 ticks with a
/// budget of 200 000, although each call is far below it.
#[test]
fn operation_budget_covers_every_controller_call() {
    let dir = folder();
    let body = "controller(|s| { let x = 0; for i in 0..1000 { x += 1; } () });\nrun_for(600.0);\n";
    let out = run(&dir, "ctl.rhai", body, &["--max-operations", "200000"]);
    out.expect_code(1);
    assert!(
        out.stderr.contains("operation budget of 200000")
            && out.stderr.contains("--max-operations"),
        "{}",
        out.stderr
    );
    let r = read_hdf5(&dir.join("r.h5")).unwrap();
    let message = failure(&r);
    assert!(
        message.starts_with(&format!("{}:3:", dir.join("ctl.rhai").display())),
        "{message}"
    );
    assert!(r.duration_s() < 5.0, "{} s simulated", r.duration_s());
}

/// An endless loop before any phase: exit 1, the loop's position, no file.
#[test]
fn operation_budget_stops_a_top_level_loop() {
    let dir = folder();
    let out = run(
        &dir,
        "loop.rhai",
        "let x = 0;\nloop { x += 1; }\n",
        &["--max-operations", "100000"],
    );
    out.expect_code(1);
    assert!(out.stderr.contains("loop.rhai:3:"), "{}", out.stderr);
    assert!(out.stderr.contains("operation budget"), "{}", out.stderr);
    assert!(!dir.join("r.h5").exists());
}

/// In `evaluate` a spent budget and a recursion too deep are placed at
/// `fn evaluate` (Rhai gives no call position there), not at `:0:0`.
#[test]
fn evaluate_limits_are_located() {
    let dir = folder();
    let body = "run_for(0.2);\n\nfn evaluate(ch) {\n    loop { }\n}\n";
    let out = run(&dir, "ev.rhai", body, &["--max-operations", "100000"]);
    out.expect_code(1);
    let r = read_hdf5(&dir.join("r.h5")).unwrap();
    let message = failure(&r);
    assert!(
        message.contains("ev.rhai:4:1: in evaluate(ch): operation budget"),
        "{message}"
    );
    let body = "run_for(0.2);\nfn evaluate(ch) {\n    f(1);\n}\nfn f(n) { f(n + 1) }\n";
    let out = run(&dir, "rec.rhai", body, &[]);
    out.expect_code(1);
    let message = failure(&read_hdf5(&dir.join("r.h5")).unwrap()).to_string();
    assert!(
        message.contains("rec.rhai:3:1: in evaluate(ch): more than 64 nested function calls"),
        "{message}"
    );
}

/// Arrays, maps of large strings and closures holding large strings end
/// with a clear error instead of gigabytes (1 000 000 bytes per string
/// value, 50 000 elements per array, 256 MiB for the script's values).
#[test]
fn large_values_are_refused() {
    let dir = folder();
    let out = run(
        &dir,
        "push.rhai",
        "let a = [];\nfor i in 0..200000 { a.push(1.0); }\n",
        &[],
    );
    out.expect_code(2);
    assert!(
        out.stderr.contains("push.rhai:3:") && out.stderr.contains("at most 50000 elements"),
        "{}",
        out.stderr
    );
    let map = "let big = \"\";\nbig.pad(900000, \"x\");\nlet q = #{};\n\
               for i in 0..3000 { q[`k${i}`] = big + `${i}`; }\nrun_for(0.1);\n";
    let out = run(&dir, "map.rhai", map, &[]);
    out.expect_code(1);
    assert!(
        out.stderr.contains("script memory budget of 256 MiB"),
        "{}",
        out.stderr
    );
    let closures = "let big = \"\";\nbig.pad(900000, \"x\");\nlet fs = [];\n\
                    for i in 0..3000 { let s = big + `${i}`; fs.push(|| s); }\n";
    let out = run(&dir, "fs.rhai", closures, &[]);
    out.expect_code(1);
    assert!(
        out.stderr.contains("fs.rhai:5:") && out.stderr.contains("script memory budget"),
        "{}",
        out.stderr
    );
    let signal = "let s = constant(0.0);\nfor i in 0..1000 { s = s + 1.0; }\n";
    let out = run(&dir, "sig.rhai", signal, &[]);
    out.expect_code(2);
    assert!(
        out.stderr.contains("signal nested 33 deep"),
        "{}",
        out.stderr
    );
}

/// The samples planned for a phase are checked before it runs: an 8 GB
/// request stops at once at the phase call (no file: nothing simulated);
/// a later phase over the budget keeps the samples of the earlier one.
#[test]
fn sample_memory_is_checked_before_each_phase() {
    let dir = folder();
    let out = run(
        &dir,
        "rate.rhai",
        "sample_rate(100000);\nrun_for(100.0);\n",
        &[],
    );
    out.expect_code(1);
    assert!(
        out.stderr
            .contains("rate.rhai:3:1: the samples up to t = 100 s would take")
            && out.stderr.contains("sample memory budget of 512 MiB"),
        "{}",
        out.stderr
    );
    assert!(!dir.join("r.h5").exists());
    let body = "start_speed(10.0);\nrun_for(1.0);\nrun_for(500.0);\n";
    let out = run(&dir, "two.rhai", body, &["--max-memory", "1"]);
    out.expect_code(1);
    let r = read_hdf5(&dir.join("r.h5")).unwrap();
    assert_eq!(r.samples(), 101);
    assert!(
        failure(&r).contains("two.rhai:4:1: the samples up to t = 501 s"),
        "{}",
        failure(&r)
    );
}

/// `fixed_step` has a lower bound, and `rk4` at most 100 000 steps per tick.
#[test]
fn fixed_step_is_bounded() {
    let dir = folder();
    let out = run(
        &dir,
        "tiny.rhai",
        "solver(\"rk4\");\nfixed_step(1e-12);\nrun_for(1.0);\n",
        &[],
    );
    out.expect_code(2);
    assert!(
        out.stderr
            .contains("tiny.rhai:3:1: fixed step must be at least 0.000001 s"),
        "{}",
        out.stderr
    );
    let body = "solver(\"rk4\");\nfixed_step(1e-6);\ntick_rate(1.0);\nrun_for(1.0);\n";
    let out = run(&dir, "tick.rhai", body, &[]);
    out.expect_code(2);
    assert!(
        out.stderr.contains("tick.rhai:5:1:") && out.stderr.contains("1000000 steps per tick"),
        "{}",
        out.stderr
    );
}

/// The wall-clock budget stops a run as failed with its data kept, both
/// while the model integrates and while script code runs.
#[test]
fn wall_clock_budget_stops_the_run_and_keeps_the_data() {
    let dir = folder();
    // A fixed 10 µs RK4 step over 600 s is 6e7 steps: far beyond 0.3 s on
    // any machine, so the budget (not the run's end) must stop it.
    let body = "solver(\"rk4\");\nfixed_step(1e-5);\nstart_speed(20.0);\nhold_speed(20.0);\nrun_for(600.0);\n";
    let out = run(&dir, "long.rhai", body, &["--max-wall", "0.3"]);
    out.expect_code(1);
    let r = read_hdf5(&dir.join("r.h5")).unwrap();
    assert!(r.samples() > 1 && r.duration_s() < 600.0);
    assert!(
        failure(&r).contains("long.rhai:6:1: wall-clock budget of 0.3 s exceeded"),
        "{}",
        failure(&r)
    );
    let body = "run_for(0.1);\nlet x = 0;\nloop { x += 1; }\n";
    let args = ["--max-wall", "0.3", "--max-operations", "100000000000"];
    let out = run(&dir, "spin.rhai", body, &args);
    out.expect_code(1);
    let r = read_hdf5(&dir.join("r.h5")).unwrap();
    assert!(failure(&r).contains("spin.rhai:4:"), "{}", failure(&r));
    assert!(failure(&r).contains("wall-clock budget"), "{}", failure(&r));
}

/// No clock, no sleep, no exit, no import: each is refused with a message
/// that says why (`import` before anything runs).
#[test]
fn the_outside_world_is_out_of_reach() {
    let dir = folder();
    dir.write("module.rhai", "print(\"module ran\");\n");
    let module = dir.join("module");
    let imp = format!("import \"{}\" as m;\nrun_for(0.1);\n", module.display());
    let out = run(&dir, "imp.rhai", &imp, &[]);
    out.expect_code(2);
    assert!(
        out.stderr
            .contains("imp.rhai:2:1: syntax error: import is not available"),
        "{}",
        out.stderr
    );
    assert!(!out.stderr.contains("module ran") && !out.stdout.contains("module ran"));
    for (call, word) in [
        ("timestamp()", "timestamp() is not available"),
        ("sleep(100)", "sleep() is not available"),
        ("exit()", "exit() is not available"),
        ("eval(\"1\")", "eval"),
    ] {
        let out = run(
            &dir,
            "w.rhai",
            &format!("let t = {call};\nrun_for(0.1);\n"),
            &[],
        );
        out.expect_code(2);
        assert!(
            out.stderr.contains("w.rhai:2:") && out.stderr.contains(word),
            "{}",
            out.stderr
        );
    }
    // print goes to stderr, and only the first 64 KiB of it.
    let out = run(
        &dir,
        "p.rhai",
        "for i in 0..20000 { print(\"0123456789\"); }\nrun_for(0.1);\n",
        &[],
    );
    out.expect_code(0);
    assert!(out.stdout.is_empty(), "{}", out.stdout);
    assert!(out.stderr.len() < 70_000 && out.stderr.contains("is not shown"));
}

/// A script reads only a vehicle file inside its folder; `--vehicle` and
/// `yawdyn vehicle` read only regular `.toml` files of at most 1 MiB.
#[test]
fn vehicle_files_are_checked_before_reading() {
    let dir = folder();
    for file in ["/dev/zero", "/etc/hostname.toml", "../x.toml", ""] {
        let text = format!("vehicle(\"{file}\");\nrun_for(0.1);\n");
        let path = dir.write("v.rhai", &text);
        let out = dir.yawdyn(["run", path.to_str().unwrap(), "--quiet"]);
        out.expect_code(2);
        assert!(
            out.stderr.contains("v.rhai:1:1:") && out.stderr.contains("inside it"),
            "{}",
            out.stderr
        );
    }
    let out = dir.yawdyn(["vehicle", "/dev/zero"]);
    out.expect_code(2);
    assert!(out.stderr.contains("not a .toml file"), "{}", out.stderr);
    let out = dir.yawdyn(["vehicle", "/dev/stdin"]);
    out.expect_code(2);
    dir.write("big.toml", &"# padding\n".repeat(120_000));
    let out = dir.yawdyn(["vehicle", "big.toml"]);
    out.expect_code(2);
    assert!(
        out.stderr
            .contains("larger than the limit of 1048576 bytes"),
        "{}",
        out.stderr
    );
    std::fs::create_dir(dir.join("folder.toml")).unwrap();
    let out = dir.yawdyn(["vehicle", "folder.toml"]);
    out.expect_code(2);
    assert!(
        out.stderr.contains("a folder, not a file"),
        "{}",
        out.stderr
    );
    let fifo = dir.join("pipe.toml");
    let made = std::process::Command::new("mkfifo").arg(&fifo).status();
    if made.is_ok_and(|s| s.success()) {
        let script = dir.write("f.rhai", "run_for(0.1);\n");
        let out = dir.yawdyn(["run", script.to_str().unwrap(), "--vehicle", "pipe.toml"]);
        out.expect_code(2);
        assert!(out.stderr.contains("not a regular file"), "{}", out.stderr);
    }
}

/// Misuse of the API says what is wrong and where.
#[test]
fn api_misuse_is_located() {
    let dir = folder();
    let body = "run_for(0.2);\nfn evaluate(ch) {\n    let m = ch.yaw_rte[0];\n}\n";
    run(&dir, "ch.rhai", body, &[]).expect_code(1);
    let message = failure(&read_hdf5(&dir.join("r.h5")).unwrap()).to_string();
    assert!(
        message.contains(
            "ch.rhai:4:16: in evaluate(ch): no channel `yaw_rte` (did you mean `yaw_rate`?)"
        ),
        "{message}"
    );
    let body =
        "run_for(0.2);\nfn evaluate(ch) {\n    metric(\"a\", 1.0);\n    metric(\"a\", 2.0);\n}\n";
    run(&dir, "dup.rhai", body, &[]).expect_code(1);
    let message = failure(&read_hdf5(&dir.join("r.h5")).unwrap()).to_string();
    assert!(
        message.contains("dup.rhai:5:5: in evaluate(ch): metric `a` is recorded twice"),
        "{message}"
    );
    let body = "run_for(0.2);\nfn evaluate(ch) {\n    run_for(1.0);\n}\n";
    run(&dir, "late.rhai", body, &[]).expect_code(1);
    let message = failure(&read_hdf5(&dir.join("r.h5")).unwrap()).to_string();
    assert!(
        message.contains("late.rhai:4:5: in evaluate(ch): the simulation has ended"),
        "{message}"
    );
    let body = "controller(|s| { run_for(1.0); () });\nrun_for(0.2);\n";
    let out = run(&dir, "nest.rhai", body, &[]);
    out.expect_code(2);
    assert!(
        out.stderr.contains("nest.rhai:2:18: run_for/run_until cannot be called inside a controller (in function a closure)"),
        "{}",
        out.stderr
    );
}

/// One rule for every command: out of its documented range is an error at
/// the call (numbers, signals) or at the tick (controller outputs).
#[test]
fn commands_out_of_range_are_errors_at_the_call() {
    let dir = folder();
    let cases = [
        ("brake(-1.0);", "brake = -1 is outside its range 0…1"),
        ("drive(1.5);", "drive = 1.5 is outside its range 0…1"),
        (
            "front_share(2);",
            "front_share = 2 is outside its range 0…1",
        ),
        ("drive(ramp(0.0, 0.5));", "drive: the signal is 1.000"),
        (
            "brake(step(0.0, -0.2, 1.0, 1.0));",
            "brake: the signal is -0.000",
        ),
        (
            "hold_speed(-1.0);",
            "hold_speed: target speed = -1 is outside its range ≥ 0",
        ),
        (
            "harvest_limit(-5.0);",
            "harvest_limit = -5 is outside its range ≥ 0",
        ),
        (
            "blending(\"regen_first\");",
            "blending: unknown blending rule `regen_first` (did you mean",
        ),
        ("deploy_power(\"lots\");", "deploy_power"),
    ];
    for (call, message) in cases {
        let out = run(&dir, "r.rhai", &format!("{call}\nrun_for(0.1);\n"), &[]);
        out.expect_code(2);
        assert!(
            out.stderr.contains("r.rhai:2:1:") && out.stderr.contains(message),
            "{}",
            out.stderr
        );
    }
    // A pulse built from two steps stays in range although its bounds do not.
    let pulse = "brake(step(0.0, 0.3, 0.05, 10.0) + step(0.0, -0.3, 0.1, 10.0));\nrun_for(0.2);\n";
    run(&dir, "pulse.rhai", pulse, &[]).expect_code(0);
    let body = "controller(|s| #{ drive: s.time * 20.0 });\nrun_for(0.2);\n";
    let out = run(&dir, "c.rhai", body, &[]);
    out.expect_code(2);
    assert!(
        out.stderr
            .contains("c.rhai:3:1: controller output `drive` at t = 0.06 s = 1.2")
            && out.stderr.contains("outside its range 0…1"),
        "{}",
        out.stderr
    );
    let body = "controller(|s| #{ drive: clamp(s.time * 20.0, 0.0, 1.0) });\nrun_for(0.2);\n";
    run(&dir, "ok.rhai", body, &[]).expect_code(0);
    let drive = &read_hdf5(&dir.join("r.h5")).unwrap();
    let d = &drive.channel("drive_request").unwrap().data;
    assert!(d.iter().all(|v| (0.0..=1.0).contains(v)) && d.contains(&1.0));
}
