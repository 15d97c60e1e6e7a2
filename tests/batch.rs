//! Batch and CI conventions through the binary: plain progress lines on a
//! standard error that is not a terminal, `--json` summaries of `run`,
//! `sweep` and `merge`, and `check --all` with its JUnit XML report.

mod common;

use std::process::Command;

use common::{TempDir, repo_path};
use yawdyn::results::{read_hdf5, write_hdf5};

/// Runs the binary in `dir` with the progress-line interval `interval` s.
fn with_interval(dir: &TempDir, interval: &str, args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_yawdyn"))
        .args(args)
        .current_dir(dir.path())
        .env("YAWDYN_PROGRESS_INTERVAL", interval)
        .output()
        .expect("run yawdyn")
}

#[test]
fn progress_lines_on_a_non_terminal_stderr() {
    let dir = TempDir::new();
    // The test harness gives the child a pipe for stderr: not a terminal.
    let out = with_interval(&dir, "0", &["run", "step_steer", "--out", "a.h5"]);
    assert_eq!(out.status.code(), Some(0));
    let err = String::from_utf8_lossy(&out.stderr);
    let lines: Vec<&str> = err.lines().filter(|l| l.starts_with("run: ")).collect();
    assert!(lines.len() >= 2, "{err}");
    assert!(
        lines[0].contains("s simulated") && lines[0].contains("elapsed"),
        "{err}"
    );
    assert!(lines.iter().any(|l| l.contains("left")), "{err}");
    let last = lines.last().unwrap();
    assert!(
        last.starts_with("run: done, ") && last.contains(" s simulated in "),
        "{err}"
    );
    assert!(
        !err.contains('\r') && !err.contains('\u{1b}'),
        "no bar codes: {err:?}"
    );

    let out = with_interval(
        &dir,
        "0",
        &[
            "sweep",
            "step_steer",
            "--vary",
            "chassis.mass=1700:1900:3",
            "--jobs",
            "1",
            "--out",
            "s.h5",
        ],
    );
    assert_eq!(out.status.code(), Some(0));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("sweep: 1/3 cases, "), "{err}");
    assert!(err.contains("sweep: done, 3/3 cases in "), "{err}");

    let out = with_interval(
        &dir,
        "0",
        &[
            "stability",
            "hybrid_crossover",
            "--speed-kph",
            "80",
            "--vary",
            "lat_accel_g=0.1:0.3:3",
        ],
    );
    assert_eq!(out.status.code(), Some(0));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("stability: done, 3/3 points in "), "{err}");

    // The default interval (5 s) prints nothing for a short run, and --quiet never does.
    let out = with_interval(&dir, "1000", &["run", "step_steer", "--out", "b.h5"]);
    assert!(!String::from_utf8_lossy(&out.stderr).contains("run: "));
    let out = with_interval(
        &dir,
        "0",
        &["run", "step_steer", "--quiet", "--out", "c.h5"],
    );
    assert!(
        out.stderr.is_empty(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

#[test]
fn json_summaries_of_run_sweep_and_merge() {
    let dir = TempDir::new();
    let json = |args: &[&str]| -> serde_json::Value {
        let out = dir.yawdyn(args).expect_code(0).stdout.clone();
        serde_json::from_str(&out).unwrap_or_else(|e| panic!("{e}: {out}"))
    };
    let run = json(&["run", "step_steer", "--json", "--out", "r.h5"]);
    assert_eq!(run["status"], "completed");
    assert_eq!(run["passed"], true);
    assert_eq!(run["results_file"], "r.h5");
    assert_eq!(run["metric_units"]["lat_accel_steady"], "m/s^2");
    assert!(run["wall_time_s"].as_f64().unwrap() > 0.0);

    let vary = ["--vary", "chassis.mass=1700:1900:3"];
    let base = ["sweep", "step_steer", vary[0], vary[1], "--json"];
    let sweep = json(&[&base[..], &["--out", "whole.h5"]].concat());
    assert_eq!(sweep["cases"], 3);
    assert_eq!(sweep["status_counts"]["completed"], 3);
    assert_eq!(sweep["failed"], 0);
    assert_eq!(sweep["grid"][0]["unit"], "kg");
    assert_eq!(sweep["out"], "whole.h5");
    for k in ["1/2", "2/2"] {
        let out = format!("part{}.h5", &k[..1]);
        json(&[&base[..], &["--shard", k, "--out", &out]].concat());
    }
    let merge = json(&["merge", "merged.h5", "part1.h5", "part2.h5", "--json"]);
    assert_eq!(merge["cases"], 3);
    assert_eq!(merge["shards"].as_array().unwrap().len(), 2);
    assert_eq!(merge["status_counts"]["completed"], 3);
}

#[test]
fn check_all_reruns_every_baseline_and_writes_junit() {
    let dir = TempDir::new();
    let baselines = dir.join("baselines");
    std::fs::create_dir(&baselines).unwrap();
    for name in ["step_steer", "straight_acceleration"] {
        std::fs::copy(
            repo_path(&format!("results/baselines/{name}.h5")),
            baselines.join(format!("{name}.h5")),
        )
        .unwrap();
    }
    let out = dir.yawdyn(["check", "--all", "baselines", "--junit", "report/junit.xml"]);
    out.expect_code(0);
    assert!(
        out.stdout.contains("PASS: 2 of 2 baselines"),
        "{}",
        out.stdout
    );
    let xml = std::fs::read_to_string(dir.join("report/junit.xml")).unwrap();
    assert!(xml.starts_with("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<testsuites"));
    assert!(
        xml.contains("tests=\"2\" failures=\"0\" errors=\"0\""),
        "{xml}"
    );
    assert!(xml.contains("<testcase name=\"step_steer\""), "{xml}");

    // A baseline whose data no longer matches its run fails, and one that is
    // not a results file is an error; both appear in the report, exit 1.
    let path = baselines.join("step_steer.h5");
    let mut record = read_hdf5(&path).unwrap();
    let yaw_rate = record
        .channels
        .iter_mut()
        .find(|c| c.name == "yaw_rate")
        .unwrap();
    let last = yaw_rate.data.len() - 1;
    yaw_rate.data[last] *= 1.01;
    write_hdf5(&record, &path).unwrap();
    std::fs::write(baselines.join("broken.h5"), "not HDF5").unwrap();
    let out = dir.yawdyn(["check", "--all", "baselines", "--junit", "junit.xml"]);
    out.expect_code(1);
    assert!(
        out.stdout.contains("FAIL: 1 of 3 baselines"),
        "{}",
        out.stdout
    );
    let xml = std::fs::read_to_string(dir.join("junit.xml")).unwrap();
    assert!(
        xml.contains("tests=\"3\" failures=\"1\" errors=\"1\""),
        "{xml}"
    );
    assert!(
        xml.contains("<failure message=\"FAIL: 1 difference(s)"),
        "{xml}"
    );
    assert!(xml.contains("channel yaw_rate"), "{xml}");

    // A single check writes a one-case report too; an empty folder is bad input.
    let base = baselines.join("straight_acceleration.h5");
    let base = base.to_str().unwrap();
    dir.yawdyn(["check", base, "--against", base, "--junit", "one.xml"])
        .expect_code(0);
    let xml = std::fs::read_to_string(dir.join("one.xml")).unwrap();
    assert!(xml.contains("tests=\"1\" failures=\"0\""), "{xml}");
    std::fs::create_dir(dir.join("empty")).unwrap();
    dir.yawdyn(["check", "--all", "empty"]).expect_code(2);
}
