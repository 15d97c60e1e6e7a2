//! Taking up a sweep file stopped while it was being closed: every case in
//! it, the last block short. Nothing here checks physics (the case runner
//! is synthetic).

use std::path::Path;

use crate::params::Override;
use crate::results::{Channel, Metric, Provenance, RunRecord, RunStatus};

use super::super::engine::{Resume, SweepOptions, resume_sweep, run_sweep};
use super::super::stamp::utc_now;
use super::super::writer::{Stamp, SweepWriter, TempOptions};
use super::super::{Grid, Shard, SweepSpec, VaryAxis, run_cases};
use super::find_unfinished;

/// A run of 3 + (k mod 4) samples with one channel and one metric, k the
/// varied value.
fn synthetic(o: &[Override]) -> Result<RunRecord, String> {
    let k = o.last().and_then(|v| v.value.as_float()).unwrap_or(0.0);
    let time: Vec<f64> = (0..3 + (k as usize) % 4).map(|i| i as f64 * 0.5).collect();
    Ok(RunRecord {
        channels: vec![Channel {
            name: "y".into(),
            unit: "m".into(),
            description: "synthetic".into(),
            data: time.iter().map(|t| k * t).collect(),
        }],
        time,
        provenance: Provenance::default(),
        status: RunStatus::Completed,
        metrics: vec![Metric {
            name: "k".into(),
            value: k,
            unit: "1".into(),
        }],
        criteria: Vec::new(),
    })
}

/// The file's bytes with the `created_utc` stamp `stamp` blanked.
fn without_stamp(path: &Path, stamp: &str) -> Vec<u8> {
    let mut bytes = std::fs::read(path).unwrap();
    let at = bytes
        .windows(stamp.len())
        .position(|w| w == stamp.as_bytes())
        .unwrap();
    bytes[at..at + stamp.len()].fill(b'X');
    bytes
}

#[test]
fn a_file_stopped_while_closing_resumes_without_running_a_case() {
    let dir = tempfile::tempdir().unwrap();
    let spec = SweepSpec {
        script_path: "synthetic".into(),
        script_text: "synthetic runner".into(),
        vehicle_path: String::new(),
        vehicle_toml: String::new(),
        base_overrides: vec![],
        grid: Grid::new(vec![VaryAxis::parse("case.k=0:9:10").unwrap()]).unwrap(),
        channels: None,
    };
    let options = SweepOptions {
        jobs: 1,
        shard: Shard::WHOLE,
        progress: None,
    };
    let out = dir.path().join("c.h5");
    // Every case written and the short last block flushed, the file not
    // yet renamed: a copy under the name of a process that no longer runs.
    let stamp_text = utc_now();
    let stamp = Stamp {
        created_utc: &stamp_text,
        yawdyn_version: &super::super::yawdyn_version(),
        shard: Shard::WHOLE,
    };
    let mut writer = SweepWriter::create(&out, &spec, &stamp, &TempOptions::default()).unwrap();
    run_cases(&spec, 0..10, &options, &synthetic, |case| {
        writer.write_case(case)
    })
    .unwrap();
    writer.end_block().unwrap();
    let temp = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().path())
        .find(|p| p.to_string_lossy().contains(".yawdyn-tmp-"))
        .unwrap();
    std::fs::copy(temp, dir.path().join(".c.h5.yawdyn-tmp-2147483646-0")).unwrap();
    drop(writer);
    let from = find_unfinished(&out).unwrap().expect("the copy");
    assert_eq!(from.cases, 10);
    let never = |_: &[Override]| -> Result<RunRecord, String> { panic!("no case runs again") };
    let resume = Resume {
        from: Some(&from),
        note_on_signal: None,
    };
    let report = resume_sweep(&spec, &options, &never, &out, &resume).unwrap();
    assert_eq!(report.resumed, 10);
    let resumed = without_stamp(&out, &stamp_text);
    let full = dir.path().join("full.h5");
    run_sweep(&spec, &options, &synthetic, &full).unwrap();
    let full_stamp = super::super::read_sweep(&full).unwrap().created_utc;
    assert_eq!(resumed, without_stamp(&full, &full_stamp));
}
