//! The `sweep` and `merge` commands through the real binary, the sweep's
//! thread pool, and the timed checks (ignored by default).

use super::*;

fn yawdyn<S: AsRef<std::ffi::OsStr>>(dir: &Path, args: &[S]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_yawdyn"))
        .args(args)
        .current_dir(dir)
        .output()
        .expect("run yawdyn")
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

#[test]
fn bad_sweep_options_exit_2_naming_the_option() {
    let dir = tempfile::tempdir().unwrap();
    let script = dir.path().join("s.rhai");
    std::fs::write(&script, "// never run\n").unwrap();
    let s = script.to_str().unwrap();
    for (args, needle) in [
        (
            vec!["--vary", "drive.front_share=0:1"],
            "--vary drive.front_share=0:1",
        ),
        (vec!["--vary", "drive.front_share=0:1:0"], "count"),
        (vec!["--vary", "drive.front_share=a:1:3"], "start"),
        (vec!["--vary", "=0:1:3"], "--vary"),
        (vec!["--vary", "a=0:1:2", "--vary", "a=0:1:3"], "twice"),
        (vec!["--vary", "a=0:1:2", "--shard", "4/3"], "--shard 4/3"),
        (vec!["--vary", "a=0:1:2", "--jobs", "0"], "--jobs"),
        (vec!["--vary", "a=0:1:2", "--set", "nokey"], "--set nokey"),
        (vec![], "--vary"),
    ] {
        let mut full = vec!["sweep", s];
        full.extend(args.iter().copied());
        let o = yawdyn(dir.path(), &full);
        assert_eq!(o.status.code(), Some(2), "{full:?}: {}", stderr(&o));
        assert!(stderr(&o).contains(needle), "{full:?}: {}", stderr(&o));
    }
    let o = yawdyn(dir.path(), &["sweep", "missing.rhai", "--vary", "a=0:1:2"]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(!dir.path().join("results").exists());
}

#[test]
fn merge_command_refuses_bad_shards_with_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    let not_sweep = dir.path().join("plain.h5");
    hdf5::File::create(&not_sweep).unwrap();
    let out = dir.path().join("m.h5");
    let o = yawdyn(
        dir.path(),
        &["merge", out.to_str().unwrap(), not_sweep.to_str().unwrap()],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("not a yawdyn sweep file"),
        "{}",
        stderr(&o)
    );
}

/// Performance figure, not an assertion: a 1,000-case corner-exit sweep with
/// the direct-simulation runner (40 × 25 grid, 4 s manoeuvre, four channels
/// stored). Run by hand:
/// `SWEEP_JOBS=2 /usr/bin/time -v <test binary> --ignored --exact perf_direct_corner_exit_1000_cases`.
#[test]
#[ignore = "performance measurement, run by hand"]
fn perf_direct_corner_exit_1000_cases() {
    let jobs: usize = std::env::var("SWEEP_JOBS")
        .ok()
        .and_then(|j| j.parse().ok())
        .unwrap_or(2);
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("perf.h5");
    let spec = spec(
        &["drive.front_share=0:1:40", "road.friction=0.5:1.0:25"],
        Some(vec!["yaw_rate", "sideslip", "ay", "speed"]),
    );
    let runner = |o: &[Override]| corner_exit(o, 4.0);
    let report = run_sweep(&spec, &options(jobs, Shard::WHOLE), &runner, &out).unwrap();
    let size = std::fs::metadata(&out).unwrap().len();
    println!(
        "jobs {jobs}: {} cases, {} not completed, wall {:.2} s, writer thread {:.3} s CPU, file {:.1} MB",
        report.summary.len(),
        report.failed(),
        report.wall_time_s,
        report.writer_cpu_s,
        size as f64 / 1e6
    );
}

#[test]
fn pool_has_exactly_jobs_threads() {
    use std::collections::HashSet;
    use std::sync::Mutex;
    let dir = tempfile::tempdir().unwrap();
    let spec = spec(&["drive.front_share=0:1:12"], None);
    for jobs in [1usize, 2, 3] {
        let seen = Mutex::new(HashSet::new());
        let runner = |_: &[Override]| -> Result<RunRecord, String> {
            seen.lock().unwrap().insert(std::thread::current().id());
            // Long enough that every worker takes cases.
            std::thread::sleep(std::time::Duration::from_millis(30));
            Ok(RunRecord {
                time: vec![0.0],
                channels: vec![],
                provenance: Provenance::default(),
                status: RunStatus::Completed,
                metrics: vec![],
                criteria: vec![],
            })
        };
        let out = dir.path().join(format!("pool{jobs}.h5"));
        run_sweep(&spec, &options(jobs, Shard::WHOLE), &runner, &out).unwrap();
        assert_eq!(seen.lock().unwrap().len(), jobs);
        assert!(!seen.lock().unwrap().contains(&std::thread::current().id()));
    }
}

/// A short power-on corner exit script for the command-line tests (2 s,
/// 50 Hz samples), with one metric and one criterion that fails for
/// `drive.front_share` above 0.5 (a bookkeeping check, not a physical limit).
const TEST_SCRIPT: &str = r#"
// Test manoeuvre: steer step at 20 m/s, then full drive request.
sample_rate(50);
start_speed(20.0);
remember("front_share", vehicle_info().front_share);
steer(step(0.0, deg(90), 0.2, deg(900)));
run_for(1.0);
drive(1.0);
run_for(1.0);

fn evaluate(ch) {
    let n = ch.yaw_rate.len();
    metric("final_yaw_rate", ch.yaw_rate[n - 1], "rad/s");
    criterion("front_share_at_most_half", recall("front_share"), 0.0, 0.5);
}
"#;

fn test_script(dir: &Path) -> String {
    let path = dir.join("corner_exit_test.rhai");
    std::fs::write(&path, TEST_SCRIPT).unwrap();
    path.to_str().unwrap().to_string()
}

fn vehicle_arg() -> String {
    manifest("scripts/vehicles/hybrid_crossover.toml")
        .to_str()
        .unwrap()
        .to_string()
}

#[test]
fn sweep_command_writes_file_prints_table_and_exit_code() {
    let dir = tempfile::tempdir().unwrap();
    let script = test_script(dir.path());
    let vehicle = vehicle_arg();
    let args = |extra: &[&str]| -> Vec<String> {
        let mut a = vec!["sweep", script.as_str(), "--vehicle", vehicle.as_str()];
        a.extend_from_slice(extra);
        a.into_iter().map(String::from).collect()
    };
    // All front shares ≤ 0.5: every case passes, exit 0, default output path.
    let o = yawdyn(
        dir.path(),
        &args(&["--vary", "drive.front_share=0:0.5:3", "--jobs", "2"]),
    );
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let stdout = String::from_utf8_lossy(&o.stdout);
    assert!(stdout.contains("drive.front_share"), "{stdout}");
    assert!(stdout.contains("final_yaw_rate [rad/s]"), "{stdout}");
    assert!(stdout.contains("cases: 3"), "{stdout}");
    let file = read_sweep(&dir.path().join("results/corner_exit_test_sweep.h5")).unwrap();
    assert_eq!(file.case_count(), 3);
    assert_eq!(file.spec.script_text, TEST_SCRIPT);
    // Front shares above 0.5 miss the criterion: exit 1, statuses recorded.
    let out = dir.path().join("half.h5");
    let o = yawdyn(
        dir.path(),
        &args(&[
            "--vary",
            "drive.front_share=0:1:3",
            "--channels",
            "yaw_rate,ay",
            "--quiet",
            "--out",
            out.to_str().unwrap(),
        ]),
    );
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    let file = read_sweep(&out).unwrap();
    assert_eq!(
        file.summary.status,
        vec![
            CaseStatus::Completed,
            CaseStatus::Completed,
            CaseStatus::CriteriaFailed
        ]
    );
    let case = file.read_case(2).unwrap();
    let names: Vec<&str> = case.channels.iter().map(|c| c.name.as_str()).collect();
    assert_eq!(names, vec!["yaw_rate", "ay"]);
    // An unknown channel or parameter key is bad input, before any file is written.
    let bad = dir.path().join("bad.h5");
    for extra in [
        vec!["--vary", "drive.front_share=0:1:2", "--channels", "yaw_rat"],
        vec!["--vary", "drive.front_sharee=0:1:2"],
        vec!["--vary", "drive.rear.differential.kind=0:1:2"],
    ] {
        let mut e = extra.clone();
        e.extend(["--out", bad.to_str().unwrap()]);
        let o = yawdyn(dir.path(), &args(&e));
        assert_eq!(o.status.code(), Some(2), "{e:?}: {}", stderr(&o));
        assert!(!bad.exists());
    }
}

#[test]
fn sweep_command_jobs_and_shards_give_byte_identical_files() {
    let dir = tempfile::tempdir().unwrap();
    let script = test_script(dir.path());
    let vehicle = vehicle_arg();
    let run = |extra: &[&str], out: &str| {
        let mut a = vec![
            "sweep",
            script.as_str(),
            "--vehicle",
            vehicle.as_str(),
            "--vary",
            "drive.front_share=0:0.5:3",
            "--vary",
            "road.friction=0.8:1.0:2",
            "--quiet",
            "--out",
            out,
        ];
        a.extend_from_slice(extra);
        let o = Command::new(env!("CARGO_BIN_EXE_yawdyn"))
            .args(&a)
            .current_dir(dir.path())
            .env("SOURCE_DATE_EPOCH", "1764626400")
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(0), "{a:?}: {}", stderr(&o));
    };
    run(&["--jobs", "1"], "j1.h5");
    run(&["--jobs", "2"], "j2.h5");
    for k in 1..=3 {
        run(
            &["--jobs", "1", "--shard", &format!("{k}/3")],
            &format!("s{k}.h5"),
        );
    }
    let o = Command::new(env!("CARGO_BIN_EXE_yawdyn"))
        .args(["merge", "merged.h5", "s3.h5", "s1.h5", "s2.h5"])
        .current_dir(dir.path())
        .env("SOURCE_DATE_EPOCH", "1764626400")
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let bytes = |name: &str| std::fs::read(dir.path().join(name)).unwrap();
    assert_eq!(bytes("j1.h5"), bytes("j2.h5"));
    assert_eq!(bytes("j1.h5"), bytes("merged.h5"));
    assert_eq!(
        read_sweep(&dir.path().join("j1.h5")).unwrap().created_utc,
        "2025-12-01T22:00:00Z"
    );
    // A shard of a different sweep is refused.
    run(
        &[
            "--jobs",
            "1",
            "--shard",
            "3/3",
            "--set",
            "chassis.mass=1900",
        ],
        "other3.h5",
    );
    let o = yawdyn(
        dir.path(),
        &["merge", "bad.h5", "s1.h5", "s2.h5", "other3.h5"],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("--set"), "{}", stderr(&o));
}

/// Memory figure of `merge_sweeps`, not an assertion: merges the sweep file
/// named by `SWEEP_MERGE_INPUT`. Run by hand under `/usr/bin/time -v`.
#[test]
#[ignore = "performance measurement, run by hand"]
fn perf_merge_of_a_given_file() {
    let Ok(input) = std::env::var("SWEEP_MERGE_INPUT") else {
        return;
    };
    if std::env::var("SWEEP_READ_ONLY").is_ok() {
        let file = read_sweep(Path::new(&input)).unwrap();
        let mut samples = 0;
        for &i in &file.summary.case_index {
            samples += file.read_case(i).unwrap().time.len();
        }
        println!("read {samples} samples");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let report = merge_sweeps(&dir.path().join("merged.h5"), &[PathBuf::from(input)]).unwrap();
    println!(
        "merged {} cases in {:.2} s",
        report.summary.len(),
        report.wall_time_s
    );
}

#[test]
fn shipped_power_on_exit_script_sweeps_front_share() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("power_on_exit.h5");
    let o = yawdyn(
        Path::new(env!("CARGO_MANIFEST_DIR")),
        &[
            "sweep",
            "scripts/power_on_exit.rhai",
            "--vary",
            "drive.front_share=0:1:2",
            "--channels",
            "yaw_rate,sideslip",
            "--jobs",
            "2",
            "--quiet",
            "--out",
            out.to_str().unwrap(),
        ],
    );
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let file = read_sweep(&out).unwrap();
    assert_eq!(file.summary.status, vec![CaseStatus::Completed; 2]);
    let peak = &file.summary.metric("sideslip_peak").unwrap().values;
    // Power on the rear axle grows the sideslip more than power on the front
    // axle (power-on oversteer vs understeer; common practice, as the script
    // header describes).
    assert!(peak[0] > peak[1], "sideslip peaks {peak:?}");
    let case = file.read_case(1).unwrap();
    assert_eq!(case.channels.len(), 2);
    assert!(
        case.overrides
            .contains(&"drive.front_share=1.0".to_string())
    );
}
