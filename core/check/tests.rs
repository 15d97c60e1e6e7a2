//! Tests of the regression check.

use super::*;
use crate::results::{Channel, Metric, Provenance};

fn record(time: Vec<f64>, data: Vec<f64>) -> RunRecord {
    RunRecord {
        channels: vec![Channel {
            name: "yaw_rate".into(),
            unit: "rad/s".into(),
            description: String::new(),
            data,
        }],
        time,
        provenance: Provenance::default(),
        status: RunStatus::Completed,
        metrics: vec![Metric {
            name: "peak".into(),
            value: 1.0,
            unit: "rad/s".into(),
        }],
        criteria: Vec::new(),
    }
}

#[test]
fn allclose_rule_boundaries() {
    // |a − b| ≤ atol + rtol·|b| (NumPy allclose convention, common practice).
    let tol = Tolerance {
        rtol: 1e-3,
        atol: 1e-6,
    };
    assert!(tol.accepts(1000.9, 1000.0)); // allowed 1.000001
    assert!(!tol.accepts(1001.1, 1000.0));
    assert!(tol.accepts(5e-7, 0.0));
    assert!(!tol.accepts(2e-6, 0.0));
    assert!(tol.accepts(f64::NAN, f64::NAN));
    assert!(!tol.accepts(f64::NAN, 0.0));
    assert!(tol.accepts(f64::INFINITY, f64::INFINITY));
    assert!(!tol.accepts(f64::INFINITY, f64::NEG_INFINITY));
}

#[test]
fn identical_records_pass_with_zero_deviation() {
    let r = record(vec![0.0, 0.1, 0.2], vec![0.0, 0.5, 1.0]);
    let c = compare(&r, &r, Tolerance::default());
    assert!(c.passed());
    assert_eq!(c.alignment, Alignment::Identical);
    assert!(c.deviations.iter().all(|d| d.max_abs_deviation == 0.0));
}

#[test]
fn worst_sample_is_reported() {
    let b = record(vec![0.0, 0.1, 0.2], vec![0.0, 0.5, 1.0]);
    let r = record(vec![0.0, 0.1, 0.2], vec![0.0, 0.5, 1.1]);
    let c = compare(&r, &b, Tolerance::default());
    assert!(!c.passed());
    let d = c.failures().next().unwrap();
    assert_eq!(d.name, "yaw_rate");
    assert_eq!(d.time_s, Some(0.2));
    assert!((d.max_abs_deviation - 0.1).abs() < 1e-12);
    assert_eq!(d.failed_samples, 1);
}

#[test]
fn interpolates_onto_baseline_times() {
    // A straight line is reproduced exactly by linear interpolation.
    let b = record(
        vec![0.0, 0.25, 0.5, 0.75, 1.0],
        vec![0.0, 0.5, 1.0, 1.5, 2.0],
    );
    let t: Vec<f64> = (0..=10).map(|i| i as f64 * 0.1).collect();
    let y = t.iter().map(|t| 2.0 * t).collect();
    let r = record(t, y);
    let c = compare(&r, &b, Tolerance::default());
    assert!(matches!(
        c.alignment,
        Alignment::Interpolated { samples: 5, .. }
    ));
    assert!(c.passed(), "{c:#?}");
}

#[test]
fn missing_channel_and_shorter_run_fail() {
    let b = record(vec![0.0, 0.1, 0.2], vec![0.0, 0.5, 1.0]);
    let mut r = record(vec![0.0, 0.1], vec![0.0, 0.5]);
    let c = compare(&r, &b, Tolerance::default());
    assert!(!c.passed());
    assert_eq!(c.failures().next().unwrap().name, "time_end");
    r.channels.clear();
    let c = compare(&r, &b, Tolerance::default());
    assert_eq!(c.missing_channels, vec!["yaw_rate".to_string()]);
}

#[test]
fn metric_and_status_differences_fail() {
    let b = record(vec![0.0, 0.1], vec![0.0, 0.5]);
    let mut r = b.clone();
    r.metrics[0].value = 1.001;
    let c = compare(&r, &b, Tolerance::default());
    let d = c.failures().next().unwrap();
    assert_eq!((d.kind, d.name.as_str()), (ItemKind::Metric, "peak"));
    assert!(
        compare(
            &r,
            &b,
            Tolerance {
                rtol: 1e-2,
                atol: 0.0
            }
        )
        .passed()
    );

    let mut r = b.clone();
    r.status = RunStatus::Failed {
        message: "state `vx` became non-finite".into(),
        time_s: 0.1,
    };
    let c = compare(&r, &b, Tolerance::default());
    assert!(!c.status_matches() && !c.passed());
}

#[test]
fn update_replaces_baseline_and_refuses_non_results_file() {
    let dir = tempfile::tempdir().unwrap();
    let (a, b) = (dir.path().join("a.h5"), dir.path().join("sub/b.h5"));
    crate::results::write_hdf5(&record(vec![0.0], vec![1.0]), &a).unwrap();
    update_baseline(&a, &b).unwrap();
    assert_eq!(fs::read(&a).unwrap(), fs::read(&b).unwrap());
    let junk = dir.path().join("junk.h5");
    fs::write(&junk, "text").unwrap();
    assert!(matches!(
        update_baseline(&junk, &b),
        Err(CheckError::Read { role: "result", .. })
    ));
    assert_eq!(fs::read(&a).unwrap(), fs::read(&b).unwrap());
    // No temporary file left behind.
    assert_eq!(fs::read_dir(dir.path().join("sub")).unwrap().count(), 1);
}
