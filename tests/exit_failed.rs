//! Exit code 1 for a valid input whose run, criterion, check or analysis
//! failed, through the binary. The outputs are still written.

mod common;

use common::{TempDir, repo_path};

/// A short straight run at `manoeuvre.speed` (default 20 m/s) with a
/// criterion that the final speed is at most `limit` m/s (the vehicle comes
/// from `--vehicle`).
fn script(limit: f64) -> String {
    format!(
        "// Exit-code test manoeuvre: straight running, speed criterion.\n\
         sample_rate(50);\nstart_speed(param(\"speed\", 20.0));\nrun_for(0.2);\n\
         fn evaluate(ch) {{\n    let n = ch.speed.len();\n    \
         criterion(\"speed_at_most\", ch.speed[n - 1], 0.0, {limit:?});\n}}\n"
    )
}

fn vehicle() -> String {
    repo_path("scripts/vehicles/hybrid_crossover.toml")
        .to_str()
        .unwrap()
        .to_string()
}

#[test]
fn a_failed_criterion_is_1_and_the_results_file_is_written() {
    let dir = TempDir::new();
    let slow = dir.write("slow.rhai", &script(10.0));
    let out = dir.join("slow.h5");
    let v = vehicle();
    let o = dir.yawdyn([
        "run",
        slow.to_str().unwrap(),
        "--vehicle",
        &v,
        "--quiet",
        "--out",
        out.to_str().unwrap(),
    ]);
    o.expect_code(1);
    let record = yawdyn::results::read_hdf5(&out).unwrap();
    assert_eq!(record.criteria.len(), 1);
    assert!(!record.criteria[0].passed);
}

#[test]
fn a_failed_regression_check_is_1() {
    let dir = TempDir::new();
    let v = vehicle();
    let s = dir.write("probe.rhai", &script(100.0));
    let run = |name: &str, speed: &str| {
        let out = dir.join(name);
        dir.yawdyn([
            "run",
            s.to_str().unwrap(),
            "--vehicle",
            &v,
            "--set",
            &format!("manoeuvre.speed={speed}"),
            "--quiet",
            "--out",
            out.to_str().unwrap(),
        ])
        .expect_code(0);
        out
    };
    let a = run("a.h5", "20.0");
    let b = run("b.h5", "21.0");
    let o = dir.yawdyn([
        "check",
        a.to_str().unwrap(),
        "--against",
        b.to_str().unwrap(),
    ]);
    o.expect_code(1);
    assert!(o.stdout.contains("FAIL"), "{}", o.stdout);
}

#[test]
fn no_trim_is_1() {
    let dir = TempDir::new();
    let v = vehicle();
    let o = dir.yawdyn(["stability", &v, "--speed-kph", "80", "--lat-accel-g", "1.5"]);
    o.expect_code(1);
    assert!(
        format!("{}{}", o.stdout, o.stderr).contains("no steady state"),
        "{}\n{}",
        o.stdout,
        o.stderr
    );
}

#[test]
fn a_sweep_with_a_failing_case_is_1_and_the_file_is_written() {
    let dir = TempDir::new();
    let s = dir.write("probe.rhai", &script(20.5));
    let v = vehicle();
    let out = dir.join("sweep.h5");
    // Start speeds 20 and 21 m/s: the second misses the criterion.
    dir.yawdyn([
        "sweep",
        s.to_str().unwrap(),
        "--vehicle",
        &v,
        "--vary",
        "manoeuvre.speed=20:21:2",
        "--quiet",
        "--out",
        out.to_str().unwrap(),
    ])
    .expect_code(1);
    let file = yawdyn::sweep::read_sweep(&out).unwrap();
    assert_eq!(
        file.summary.status,
        vec![
            yawdyn::sweep::CaseStatus::Completed,
            yawdyn::sweep::CaseStatus::CriteriaFailed
        ]
    );
}
