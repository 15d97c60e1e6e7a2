//! The sweep-file layout (format_version 2): a fixed number of HDF5 objects
//! per file whatever the number of cases, every case read back bit for bit,
//! merges that rebuild the columns exactly, refused old layouts, and output
//! paths checked before any case runs.
//!
//! The case runner here is synthetic (no simulation): its channels are
//! closed-form functions of the case's parameter value, with a sample count
//! that differs from case to case, so the tests can recompute exactly what
//! every case must hold. Nothing here checks physics.

use std::path::Path;
use std::sync::atomic::{AtomicUsize, Ordering};

use yawdyn::error::{Classify, ErrorKind};
use yawdyn::params::Override;
use yawdyn::results::{Channel, Criterion, Metric, Provenance, RunRecord, RunStatus};
use yawdyn::sweep::{
    CaseStatus, FORMAT_VERSION, Grid, Shard, SweepError, SweepOptions, SweepSpec, VaryAxis,
    merge_sweeps, read_sweep, run_sweep,
};

/// The varied value of a case (its last override).
fn value(o: &[Override]) -> f64 {
    o.last().and_then(|v| v.value.as_float()).unwrap()
}

/// Case number from the varied value of `spec_of(n)` (values 0, 1, 2, ...).
fn number(o: &[Override]) -> usize {
    value(o).round() as usize
}

/// A synthetic run: 5 + (k mod 7) samples at 0.1 s, channels `a` = sin(k t)
/// and `b` = k + t; metric `k` always, metric `late` from case 70 on (NaN at
/// 70 itself); criterion `k_small` (k ≤ 100) on even cases only.
fn synthetic(o: &[Override]) -> Result<RunRecord, String> {
    let k = number(o);
    let kf = k as f64;
    let time: Vec<f64> = (0..5 + k % 7).map(|i| i as f64 * 0.1).collect();
    let channel = |name: &str, unit: &str, f: &dyn Fn(f64) -> f64| Channel {
        name: name.into(),
        unit: unit.into(),
        description: format!("synthetic channel {name}"),
        data: time.iter().map(|&t| f(t)).collect(),
    };
    let channels = vec![
        channel("a", "rad", &|t| (kf * t).sin()),
        channel("b", "m", &|t| kf + t),
    ];
    let mut metrics = vec![Metric {
        name: "k".into(),
        value: kf,
        unit: "1".into(),
    }];
    if k >= 70 {
        metrics.push(Metric {
            name: "late".into(),
            value: if k == 70 { f64::NAN } else { kf * 0.5 },
            unit: "s".into(),
        });
    }
    let criteria = if k % 2 == 0 {
        vec![Criterion {
            name: "k_small".into(),
            value: kf,
            lower: None,
            upper: Some(100.0),
            passed: k <= 100,
        }]
    } else {
        Vec::new()
    };
    Ok(RunRecord {
        time,
        channels,
        provenance: Provenance::default(),
        status: RunStatus::Completed,
        metrics,
        criteria,
    })
}

fn spec_of(cases: usize) -> SweepSpec {
    SweepSpec {
        script_path: "synthetic".into(),
        script_text: "synthetic runner of tests/sweep_file.rs".into(),
        vehicle_path: String::new(),
        vehicle_toml: String::new(),
        base_overrides: vec![],
        grid: Grid::new(vec![
            VaryAxis::parse(&format!("case.number=0:{}:{cases}", cases - 1)).unwrap(),
        ])
        .unwrap(),
        channels: None,
    }
}

fn options(jobs: usize, shard: Shard) -> SweepOptions<'static> {
    SweepOptions {
        jobs,
        shard,
        progress: None,
    }
}

fn bits(v: &[f64]) -> Vec<u64> {
    v.iter().map(|x| x.to_bits()).collect()
}

/// Names of every group and dataset in the file, and of every attribute.
fn objects(path: &Path) -> (Vec<String>, usize) {
    fn walk(group: &hdf5::Group, names: &mut Vec<String>, attrs: &mut usize) {
        *attrs += group.attr_names().unwrap().len();
        for ds in group.datasets().unwrap() {
            *attrs += ds.attr_names().unwrap().len();
            names.push(ds.name());
        }
        for g in group.groups().unwrap() {
            names.push(g.name());
            walk(&g, names, attrs);
        }
    }
    let file = hdf5::File::open(path).unwrap();
    let (mut names, mut attrs) = (Vec::new(), 0);
    walk(&file, &mut names, &mut attrs);
    (names, attrs)
}

/// The file's bytes with the `created_utc` stamp blanked.
fn bytes_without_stamp(path: &Path) -> Vec<u8> {
    let stamp = read_sweep(path).unwrap().created_utc;
    let mut bytes = std::fs::read(path).unwrap();
    let at = bytes
        .windows(stamp.len())
        .position(|w| w == stamp.as_bytes())
        .unwrap();
    bytes[at..at + stamp.len()].fill(b'X');
    bytes
}

#[test]
fn objects_per_file_do_not_grow_with_cases() {
    let dir = tempfile::tempdir().unwrap();
    let small = dir.path().join("small.h5");
    let large = dir.path().join("large.h5");
    run_sweep(&spec_of(150), &options(2, Shard::WHOLE), &synthetic, &large).unwrap();
    // Same columns as the large sweep: the late metric appears from case 70.
    let mut few = spec_of(150);
    few.grid = Grid::new(vec![VaryAxis::parse("case.number=68:71:4").unwrap()]).unwrap();
    run_sweep(&few, &options(1, Shard::WHOLE), &synthetic, &small).unwrap();
    let (names_small, attrs_small) = objects(&small);
    let (names_large, attrs_large) = objects(&large);
    assert_eq!(names_small, names_large);
    assert_eq!(attrs_small, attrs_large);
    // spec (group + 9 datasets), summary (group, 9 datasets, 3 groups),
    // 1 parameter, 2 metrics, 1 criterion (group + 4), time, channel_order,
    // channels (group + 2).
    assert_eq!(names_large.len(), 36, "{names_large:#?}");
}

#[test]
fn every_case_reads_back_bit_for_bit() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("all.h5");
    let spec = spec_of(150);
    run_sweep(&spec, &options(2, Shard::WHOLE), &synthetic, &out).unwrap();
    let file = read_sweep(&out).unwrap();
    assert_eq!(file.channel_names(), vec!["a", "b"]);
    let late = file.summary.metric("late").unwrap();
    assert_eq!((late.first_case, late.unit.as_str()), (70, "s"));
    for index in 0..150 {
        let case = file.read_case(index).unwrap();
        let overrides = [Override::parse(&case.overrides[0]).unwrap()];
        let expected = synthetic(&overrides).unwrap();
        assert_eq!(case.index, index);
        let status = if index % 2 == 0 && index > 100 {
            CaseStatus::CriteriaFailed
        } else {
            CaseStatus::Completed
        };
        assert_eq!(case.status, status, "case {index}: {}", case.message);
        assert_eq!(bits(&case.time), bits(&expected.time), "case {index}");
        assert_eq!(case.channels.len(), 2);
        for (got, want) in case.channels.iter().zip(&expected.channels) {
            assert_eq!((&got.name, &got.unit), (&want.name, &want.unit));
            assert_eq!(got.description, want.description);
            assert_eq!(
                bits(&got.data),
                bits(&want.data),
                "case {index} {}",
                got.name
            );
        }
        // Read back: every metric of the file, NaN where the case had none.
        let names: Vec<&str> = case.metrics.iter().map(|m| m.name.as_str()).collect();
        assert_eq!(names, vec!["k", "late"]);
        assert_eq!(case.metrics[0].value, index as f64);
        let late = expected.metrics.get(1).map_or(f64::NAN, |m| m.value);
        assert_eq!(
            case.metrics[1].value.to_bits(),
            late.to_bits(),
            "case {index}"
        );
        assert_eq!(case.criteria, expected.criteria, "case {index}");
    }
}

#[test]
fn merge_rebuilds_columns_first_reported_late_and_as_nan() {
    // Shard 2 of 3 covers cases 42..85 and so spans the write-block boundary
    // at 64; the `late` metric is first reported (as NaN) at case 70. The
    // merge must create its column in the same block as the unsharded run.
    let dir = tempfile::tempdir().unwrap();
    let spec = spec_of(128);
    let whole = dir.path().join("whole.h5");
    run_sweep(&spec, &options(2, Shard::WHOLE), &synthetic, &whole).unwrap();
    let shards: Vec<_> = (1..=3)
        .map(|k| {
            let path = dir.path().join(format!("s{k}.h5"));
            let shard = Shard { index: k, count: 3 };
            run_sweep(&spec, &options(1, shard), &synthetic, &path).unwrap();
            path
        })
        .collect();
    assert_eq!(
        read_sweep(&shards[1]).unwrap().summary.case_index[0],
        42,
        "the shard should start before the block boundary"
    );
    let merged = dir.path().join("merged.h5");
    merge_sweeps(&merged, &shards).unwrap();
    assert_eq!(bytes_without_stamp(&whole), bytes_without_stamp(&merged));
}

#[test]
fn a_case_with_other_channels_is_recorded_as_error() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("other.h5");
    let runner = |o: &[Override]| -> Result<RunRecord, String> {
        let mut record = synthetic(o)?;
        if number(o) == 2 {
            record.channels.pop();
        }
        Ok(record)
    };
    let report = run_sweep(&spec_of(4), &options(2, Shard::WHOLE), &runner, &out).unwrap();
    assert_eq!(report.failed(), 1);
    let file = read_sweep(&out).unwrap();
    assert_eq!(file.summary.status[2], CaseStatus::Error);
    assert!(
        file.summary.message[2].contains("[a]") && file.summary.message[2].contains("[a, b]"),
        "{}",
        file.summary.message[2]
    );
    let case = file.read_case(2).unwrap();
    assert!(case.time.is_empty() && case.channels.is_empty());
    assert_eq!(file.read_case(3).unwrap().time.len(), 5 + 3);
}

#[test]
fn unwritable_output_is_bad_input_before_any_case_runs() {
    let dir = tempfile::tempdir().unwrap();
    let calls = AtomicUsize::new(0);
    let counting = |o: &[Override]| {
        calls.fetch_add(1, Ordering::Relaxed);
        synthetic(o)
    };
    let plain = dir.path().join("plain");
    std::fs::write(&plain, "not a directory").unwrap();
    for out in [dir.path().to_path_buf(), plain.join("sweep.h5")] {
        let err = run_sweep(&spec_of(3), &options(1, Shard::WHOLE), &counting, &out).unwrap_err();
        assert_eq!(err.kind(), ErrorKind::BadInput, "{err}");
    }
    assert_eq!(calls.load(Ordering::Relaxed), 0);
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
}

/// A file with the first sweep layout's root attributes (one group per case).
fn write_old_layout(path: &Path) {
    use hdf5::types::VarLenUnicode;
    let file = hdf5::File::create(path).unwrap();
    let text = |s: &str| s.parse::<VarLenUnicode>().unwrap();
    let attr = |name: &str, v: &str| {
        file.new_attr::<VarLenUnicode>()
            .shape(())
            .create(name)
            .unwrap()
            .write_scalar(&text(v))
            .unwrap();
    };
    attr("format", "yawdyn-sweep");
    attr("yawdyn_version", "0.1.0 (old)");
    file.new_attr::<i64>()
        .shape(())
        .create("format_version")
        .unwrap()
        .write_scalar(&1i64)
        .unwrap();
    file.create_group("cases/0").unwrap();
}

#[test]
fn old_layout_is_refused_naming_both_versions() {
    let dir = tempfile::tempdir().unwrap();
    let old = dir.path().join("old.h5");
    write_old_layout(&old);
    let err = read_sweep(&old).unwrap_err();
    assert!(
        matches!(
            err,
            SweepError::UnsupportedVersion {
                found: 1,
                supported: FORMAT_VERSION,
                ..
            }
        ),
        "{err:?}"
    );
    assert_eq!(err.kind(), ErrorKind::BadInput);
    let message = err.to_string();
    assert!(
        message.contains("layout version 1") && message.contains("version 2"),
        "{message}"
    );
    assert!(message.contains("0.1.0 (old)"), "{message}");
    // The commands that read sweeps say the same and exit 2.
    for args in [
        vec!["plot", "old.h5", "--metric", "m"],
        vec!["merge", "merged.h5", "old.h5"],
    ] {
        let o = std::process::Command::new(env!("CARGO_BIN_EXE_yawdyn"))
            .args(&args)
            .current_dir(dir.path())
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {stderr}");
        assert!(stderr.contains("layout version 1"), "{args:?}: {stderr}");
    }
    assert!(!dir.path().join("merged.h5").exists());
}

/// A sweep taken up from the unfinished file it left part-way (a copy of
/// its temporary file made while case 150 ran: two blocks of 64 complete,
/// the third not yet written) runs only the other cases and writes the same
/// file as an uninterrupted sweep, columns first reported before and after
/// the resume point included.
#[test]
fn a_resumed_sweep_equals_the_uninterrupted_one() {
    use yawdyn::sweep::{Resume, find_unfinished, resume_sweep};
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("r.h5");
    // A pid above any pid_max: the copy is the file of a process that no longer runs.
    let copy = dir.path().join(".r.h5.yawdyn-tmp-2147483646-0");
    let spec = spec_of(300);
    // `synthetic`, plus a metric first reported at case 200.
    let with_late_metric = |o: &[Override]| {
        let mut record = synthetic(o)?;
        if number(o) >= 200 {
            record.metrics.push(Metric {
                name: "after_resume".into(),
                value: value(o),
                unit: "m".into(),
            });
        }
        Ok(record)
    };
    let stopping = |o: &[Override]| {
        if number(o) == 150 {
            let temp = std::fs::read_dir(dir.path())
                .unwrap()
                .map(|e| e.unwrap().path())
                .find(|p| p.to_string_lossy().contains(".r.h5.yawdyn-tmp-"))
                .unwrap();
            std::fs::copy(temp, &copy).unwrap();
        }
        with_late_metric(o)
    };
    run_sweep(&spec, &options(1, Shard::WHOLE), &stopping, &out).unwrap();
    let full = bytes_without_stamp(&out);
    std::fs::remove_file(&out).unwrap();
    let from = find_unfinished(&out).unwrap().expect("the unfinished copy");
    assert_eq!((from.cases, from.path.as_path()), (128, copy.as_path()));
    let ran = AtomicUsize::new(0);
    let counting = |o: &[Override]| {
        ran.fetch_add(1, Ordering::Relaxed);
        with_late_metric(o)
    };
    let resume = Resume {
        from: Some(&from),
        note_on_signal: None,
    };
    let report = resume_sweep(&spec, &options(2, Shard::WHOLE), &counting, &out, &resume).unwrap();
    assert_eq!(report.resumed, 128);
    assert_eq!(ran.load(Ordering::Relaxed), 300 - 128);
    assert_eq!(bytes_without_stamp(&out), full);
    assert!(!copy.exists());
    // Another grid is refused as bad input.
    std::fs::remove_file(&out).unwrap();
    run_sweep(&spec, &options(1, Shard::WHOLE), &stopping, &out).unwrap();
    let from = find_unfinished(&out).unwrap().unwrap();
    let err = from.check_matches(&spec_of(301), Shard::WHOLE).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::BadInput);
    assert!(err.to_string().contains("--vary"), "{err}");
}
