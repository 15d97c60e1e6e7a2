//! Parameter sweeps: grid order, determinism across thread counts, failure
//! isolation, shards and merge, and the `sweep`/`merge` commands.
//!
//! Library-level tests use a *direct-simulation* case runner: a fixed
//! power-on corner exit (constant speed entry, steering step, then full
//! throttle) simulated with `yawdyn::sim::Simulation` on the invented demo
//! crossover, no script involved. Its metrics are plain read-outs of the
//! simulated channels; nothing here checks their physics (the model has its
//! own tests), only how the sweep handles them.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use yawdyn::model::{Commands, straight_running};
use yawdyn::params::{Override, load_vehicle};
use yawdyn::results::{Metric, Provenance, RunRecord, RunStatus};
use yawdyn::sim::{Simulation, SolverSettings};
use yawdyn::sweep::{
    CaseStatus, Grid, Shard, SweepError, SweepOptions, SweepSpec, VaryAxis, merge_sweeps,
    read_sweep, run_sweep,
};

fn manifest(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(rel)
}

/// Power-on corner exit on the demo crossover, simulated directly:
/// 20 m/s straight running, 90° steering-wheel step at 0.2 s, full drive
/// request from 1.5 s to the end at `duration` s; 100 Hz controller ticks and
/// samples.
fn corner_exit(overrides: &[Override], duration: f64) -> Result<RunRecord, String> {
    let vehicle = load_vehicle(
        &manifest("scripts/vehicles/hybrid_crossover.toml"),
        overrides,
    )
    .map_err(|e| e.to_string())?;
    let mut sim = Simulation::new(
        &vehicle,
        straight_running(&vehicle, 20.0),
        SolverSettings::default(),
        100.0,
    )
    .map_err(|e| e.to_string())?;
    let mut commands = Commands::neutral(&vehicle);
    let ticks = (duration * 100.0).round() as usize;
    for tick in 1..=ticks {
        let t = tick as f64 / 100.0;
        commands.steer_wheel_angle = if t > 0.2 { 90f64.to_radians() } else { 0.0 };
        commands.drive_request = if t > 1.5 { 1.0 } else { 0.0 };
        if sim.advance(t, &commands).is_err() {
            break;
        }
    }
    let mut record = sim.into_record(Provenance::default());
    let last = |name: &str| {
        record
            .channel(name)
            .and_then(|c| c.data.last().copied())
            .unwrap_or(f64::NAN)
    };
    let peak_sideslip = record
        .channel("sideslip")
        .map(|c| c.data.iter().fold(0.0f64, |m, v| m.max(v.abs())))
        .unwrap_or(f64::NAN);
    let metrics = vec![
        Metric {
            name: "final_yaw_rate".into(),
            value: last("yaw_rate"),
            unit: "rad/s".into(),
        },
        Metric {
            name: "final_speed".into(),
            value: last("speed"),
            unit: "m/s".into(),
        },
        Metric {
            name: "peak_sideslip".into(),
            value: peak_sideslip,
            unit: "rad".into(),
        },
    ];
    record.metrics = metrics;
    Ok(record)
}

fn short_run(overrides: &[Override]) -> Result<RunRecord, String> {
    corner_exit(overrides, 2.0)
}

fn spec(axes: &[&str], channels: Option<Vec<&str>>) -> SweepSpec {
    SweepSpec {
        script_path: "direct/corner_exit".into(),
        script_text: "direct-simulation runner of tests/sweep".into(),
        vehicle_path: "scripts/vehicles/hybrid_crossover.toml".into(),
        vehicle_toml: std::fs::read_to_string("scripts/vehicles/hybrid_crossover.toml").unwrap(),
        base_overrides: vec![Override::parse("road.friction=0.9").unwrap()],
        grid: Grid::new(axes.iter().map(|a| VaryAxis::parse(a).unwrap()).collect()).unwrap(),
        channels: channels.map(|c| c.into_iter().map(String::from).collect()),
    }
}

fn options(jobs: usize, shard: Shard) -> SweepOptions<'static> {
    SweepOptions {
        jobs,
        shard,
        progress: None,
    }
}

/// Every dataset and attribute of an HDF5 file, as (path, bytes-as-text)
/// pairs, skipping the root `created_utc`, read with the HDF5 library.
fn contents(path: &Path) -> Vec<(String, String)> {
    fn walk(group: &hdf5::Group, out: &mut Vec<(String, String)>) {
        for name in group.attr_names().unwrap() {
            if group.name() == "/" && name == "created_utc" {
                continue;
            }
            let attr = group.attr(&name).unwrap();
            out.push((format!("{}@{name}", group.name()), value_text(&attr)));
        }
        for ds in group.datasets().unwrap() {
            out.push((ds.name(), value_text(&ds)));
            for name in ds.attr_names().unwrap() {
                let attr = ds.attr(&name).unwrap();
                out.push((format!("{}@{name}", ds.name()), value_text(&attr)));
            }
        }
        for g in group.groups().unwrap() {
            walk(&g, out);
        }
    }
    fn value_text(c: &hdf5::Container) -> String {
        use hdf5::types::{TypeDescriptor, VarLenUnicode};
        match c.dtype().unwrap().to_descriptor().unwrap() {
            TypeDescriptor::VarLenUnicode => {
                let v: Vec<VarLenUnicode> = c.read_raw().unwrap();
                format!("{v:?}")
            }
            TypeDescriptor::Float(_) => {
                let v: Vec<f64> = c.read_raw().unwrap();
                format!("{:?}", v.iter().map(|x| x.to_bits()).collect::<Vec<_>>())
            }
            TypeDescriptor::Integer(_) => format!("{:?}", c.read_raw::<i64>().unwrap()),
            TypeDescriptor::Unsigned(_) => format!("{:?}", c.read_raw::<u8>().unwrap()),
            other => panic!("unexpected type {other:?}"),
        }
    }
    let file = hdf5::File::open(path).unwrap();
    let mut out = Vec::new();
    walk(&file, &mut out);
    out.sort();
    out
}

/// The file's bytes with its `created_utc` text blanked out: files of equal
/// content must then be byte-identical (object time tracking is off).
fn bytes_without_stamp(path: &Path) -> Vec<u8> {
    let stamp = read_sweep(path).unwrap().created_utc;
    assert_eq!(stamp.len(), 20, "{stamp}");
    let mut bytes = std::fs::read(path).unwrap();
    let found: Vec<usize> = bytes
        .windows(stamp.len())
        .enumerate()
        .filter(|(_, w)| *w == stamp.as_bytes())
        .map(|(i, _)| i)
        .collect();
    assert_eq!(found.len(), 1, "created_utc should appear once");
    bytes[found[0]..found[0] + stamp.len()].fill(b'X');
    bytes
}

#[test]
fn grid_order_and_counts_in_the_file() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("grid.h5");
    let spec = spec(
        &["drive.front_share=0:1:3", "road.friction=0.6:1.0:2"],
        None,
    );
    // A runner that only echoes its overrides as metrics: checks what each case ran with.
    let echo = |o: &[Override]| -> Result<RunRecord, String> {
        let mut r = RunRecord {
            time: vec![0.0],
            channels: vec![],
            provenance: Provenance::default(),
            status: RunStatus::Completed,
            metrics: vec![],
            criteria: vec![],
        };
        for (i, ov) in o.iter().enumerate() {
            r.metrics.push(Metric {
                name: format!("override_{i}"),
                value: ov.value.as_float().unwrap_or(f64::NAN),
                unit: ov.path.clone(),
            });
        }
        Ok(r)
    };
    let report = run_sweep(&spec, &options(2, Shard::WHOLE), &echo, &out).unwrap();
    assert_eq!(report.summary.len(), 6);
    let file = read_sweep(&out).unwrap();
    assert_eq!(file.case_count(), 6);
    assert_eq!(
        file.varied_keys(),
        vec!["drive.front_share", "road.friction"]
    );
    assert_eq!(file.summary.case_index, vec![0, 1, 2, 3, 4, 5]);
    // First --vary slowest.
    assert_eq!(
        file.summary.parameter("drive.front_share").unwrap(),
        &[0.0, 0.0, 0.5, 0.5, 1.0, 1.0]
    );
    assert_eq!(
        file.summary.parameter("road.friction").unwrap(),
        &[0.6, 1.0, 0.6, 1.0, 0.6, 1.0]
    );
    // Base override first, then the varied ones (the varied friction wins).
    assert_eq!(
        file.summary.metric("override_0").unwrap().values,
        vec![0.9; 6]
    );
    assert_eq!(
        file.summary.metric("override_2").unwrap().values,
        vec![0.6, 1.0, 0.6, 1.0, 0.6, 1.0]
    );
    let case = file.read_case(3).unwrap();
    assert_eq!(
        case.overrides,
        vec![
            "road.friction=0.9",
            "drive.front_share=0.5",
            "road.friction=1.0"
        ]
    );
    assert_eq!(case.status, CaseStatus::Completed);
}

#[test]
fn jobs_1_and_2_give_identical_files() {
    let dir = tempfile::tempdir().unwrap();
    let spec = spec(
        &["drive.front_share=0:1:3", "road.friction=0.7:1.0:3"],
        Some(vec!["yaw_rate", "sideslip", "speed"]),
    );
    let one = dir.path().join("jobs1.h5");
    let two = dir.path().join("jobs2.h5");
    run_sweep(&spec, &options(1, Shard::WHOLE), &short_run, &one).unwrap();
    run_sweep(&spec, &options(2, Shard::WHOLE), &short_run, &two).unwrap();
    let (a, b) = (contents(&one), contents(&two));
    assert!(a.len() > 9 * 3, "too few objects compared: {}", a.len());
    assert_eq!(a, b);
    assert_eq!(bytes_without_stamp(&one), bytes_without_stamp(&two));
    let file = read_sweep(&one).unwrap();
    assert!(
        file.summary
            .status
            .iter()
            .all(|&s| s == CaseStatus::Completed),
        "{:?}",
        file.summary.message
    );
    let yaw = file.read_case(4).unwrap();
    assert_eq!(yaw.channels.len(), 3);
    assert_eq!(yaw.channel("yaw_rate").unwrap().unit, "rad/s");
    assert_eq!(yaw.time.len(), 201);
}

#[test]
fn failing_cases_are_recorded_and_the_sweep_goes_on() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("fail.h5");
    let spec = spec(&["drive.front_share=0:1:5"], Some(vec!["yaw_rate"]));
    let share = |o: &[Override]| o.last().and_then(|v| v.value.as_float()).unwrap();
    let runner = |o: &[Override]| -> Result<RunRecord, String> {
        let s = share(o);
        if s == 0.25 {
            return Err("invented input error for case 1".into());
        }
        if s == 0.5 {
            panic!("invented panic for case 2");
        }
        let mut r = short_run(o)?;
        if s == 0.75 {
            // As the simulation reports a diverged run: status Failed, samples kept.
            r.status = RunStatus::Failed {
                message: "state `vy` became non-finite at t = 1.2 s".into(),
                time_s: 1.2,
            };
        }
        Ok(r)
    };
    let report = run_sweep(&spec, &options(2, Shard::WHOLE), &runner, &out).unwrap();
    assert_eq!(report.failed(), 3);
    let file = read_sweep(&out).unwrap();
    assert_eq!(
        file.summary.status,
        vec![
            CaseStatus::Completed,
            CaseStatus::Error,
            CaseStatus::Error,
            CaseStatus::Failed,
            CaseStatus::Completed
        ]
    );
    assert_eq!(file.summary.message[1], "invented input error for case 1");
    assert!(file.summary.message[2].contains("invented panic"));
    let failed = file.read_case(3).unwrap();
    assert_eq!(failed.failure_time_s, 1.2);
    assert_eq!(failed.time.len(), 201);
    let yaw = &file.summary.metric("final_yaw_rate").unwrap().values;
    assert!(yaw[1].is_nan() && yaw[2].is_nan());
    assert!(yaw[0].is_finite() && yaw[4].is_finite());
    assert!(file.read_case(1).unwrap().time.is_empty());
}

#[test]
fn unknown_parameter_key_is_an_error_case() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("bad_key.h5");
    let spec = spec(&["chassis.mas=1500:1600:2"], None);
    let report = run_sweep(&spec, &options(1, Shard::WHOLE), &short_run, &out).unwrap();
    assert_eq!(report.failed(), 2);
    let file = read_sweep(&out).unwrap();
    assert!(
        file.summary.message[0].contains("chassis.mas"),
        "{}",
        file.summary.message[0]
    );
}

#[test]
fn three_shards_merge_to_the_unsharded_file() {
    let dir = tempfile::tempdir().unwrap();
    let spec = spec(
        &["drive.front_share=0:1:4", "road.friction=0.8:1.0:2"],
        Some(vec!["ay"]),
    );
    let whole = dir.path().join("whole.h5");
    run_sweep(&spec, &options(2, Shard::WHOLE), &short_run, &whole).unwrap();
    let mut shards = Vec::new();
    for k in 1..=3 {
        let path = dir.path().join(format!("shard{k}.h5"));
        run_sweep(
            &spec,
            &options(1, Shard { index: k, count: 3 }),
            &short_run,
            &path,
        )
        .unwrap();
        let f = read_sweep(&path).unwrap();
        assert_eq!(
            f.summary.case_index,
            Shard { index: k, count: 3 }.range(8).collect::<Vec<_>>()
        );
        shards.push(path);
    }
    // Order of the shard files on the command line does not matter.
    shards.reverse();
    let merged = dir.path().join("merged.h5");
    merge_sweeps(&merged, &shards).unwrap();
    let (w, m) = (read_sweep(&whole).unwrap(), read_sweep(&merged).unwrap());
    assert_eq!(w.summary.case_index, m.summary.case_index);
    for ((kw, vw), (km, vm)) in w.summary.parameters.iter().zip(&m.summary.parameters) {
        assert_eq!(kw, km);
        assert_eq!(bits(vw), bits(vm));
    }
    for (a, b) in w.summary.metrics.iter().zip(&m.summary.metrics) {
        assert_eq!((&a.name, &a.unit), (&b.name, &b.unit));
        assert_eq!(bits(&a.values), bits(&b.values));
    }
    assert_eq!(w.summary.status, m.summary.status);
    assert_eq!(contents(&whole), contents(&merged));
    assert_eq!(bytes_without_stamp(&whole), bytes_without_stamp(&merged));
}

fn bits(v: &[f64]) -> Vec<u64> {
    v.iter().map(|x| x.to_bits()).collect()
}

#[test]
fn merge_refuses_mismatched_or_incomplete_shards() {
    let dir = tempfile::tempdir().unwrap();
    // A quick runner: these tests are about the bookkeeping only.
    let quick = |_: &[Override]| -> Result<RunRecord, String> {
        Ok(RunRecord {
            time: vec![0.0, 0.1],
            channels: vec![],
            provenance: Provenance::default(),
            status: RunStatus::Completed,
            metrics: vec![],
            criteria: vec![],
        })
    };
    let a = spec(&["drive.front_share=0:1:4"], None);
    let shard = |s: &SweepSpec, k: usize, n: usize, name: &str| {
        let path = dir.path().join(name);
        run_sweep(s, &options(1, Shard { index: k, count: n }), &quick, &path).unwrap();
        path
    };
    let a1 = shard(&a, 1, 2, "a1.h5");
    let a2 = shard(&a, 2, 2, "a2.h5");
    let out = dir.path().join("out.h5");
    let reason = |r: Result<_, SweepError>| match r {
        Err(e @ SweepError::Mismatch { .. }) => e.to_string(),
        Err(other) => panic!("wrong error: {other}"),
        Ok(_) => panic!("merge accepted bad shards"),
    };
    // Missing shard, duplicated shard.
    assert!(reason(merge_sweeps(&out, std::slice::from_ref(&a1))).contains("in no shard"));
    assert!(
        reason(merge_sweeps(&out, &[a1.clone(), a1.clone(), a2.clone()])).contains("more than one")
    );
    // Different vary spec, script text, base overrides.
    let b = spec(&["drive.front_share=0:1:5"], None);
    assert!(reason(merge_sweeps(&out, &[a1.clone(), shard(&b, 2, 2, "b2.h5")])).contains("--vary"));
    let mut c = a.clone();
    c.script_text.push_str(" (edited)");
    assert!(reason(merge_sweeps(&out, &[a1.clone(), shard(&c, 2, 2, "c2.h5")])).contains("script"));
    let mut d = a.clone();
    d.base_overrides = vec![Override::parse("road.friction=0.5").unwrap()];
    assert!(reason(merge_sweeps(&out, &[a1.clone(), shard(&d, 2, 2, "d2.h5")])).contains("--set"));
    assert!(!out.exists());
    merge_sweeps(&out, &[a2, a1]).unwrap();
    assert_eq!(read_sweep(&out).unwrap().case_count(), 4);
}

mod command;
