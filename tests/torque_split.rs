//! The torque-split question on swept results: power-on corner exit over the
//! front torque share, through the real `yawdyn sweep` command.
//!
//! Checks are facts of the trade (common practice, no single published
//! source): power on the front axle out of a corner gives understeer, on the
//! rear axle oversteer; an all-wheel-drive car uses the grip of both axles.

use std::path::{Path, PathBuf};
use std::process::Command;

use yawdyn::sweep::read_sweep;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Runs `yawdyn sweep` on the power-on exit script; returns the sweep file.
fn sweep(dir: &Path, name: &str, extra: &[&str]) -> PathBuf {
    let out = dir.join(name);
    let script = root().join("scripts/power_on_exit.rhai");
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_yawdyn"));
    cmd.arg("sweep")
        .arg(&script)
        .args([
            "--vary",
            "drive.front_share=0:1:11",
            "--jobs",
            "2",
            "--quiet",
        ])
        .args(["--channels", "sideslip,ax"])
        .arg("--out")
        .arg(&out)
        .args(extra)
        .current_dir(dir);
    let o = cmd.output().unwrap();
    assert!(
        o.status.success(),
        "{}\n{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
    out
}

fn column(file: &Path, metric: &str) -> (Vec<f64>, Vec<f64>) {
    let s = read_sweep(file).unwrap();
    let share = s.summary.parameter("drive.front_share").unwrap().to_vec();
    let values = s.summary.metric(metric).unwrap().values.clone();
    (share, values)
}

/// Same total torque at every split (the script's default 1400 N·m): the
/// path-radius growth rises monotonically with the front share (power-on
/// understeer grows as torque moves to the steered axle).
#[test]
fn corner_exit_radius_growth_rises_with_front_share() {
    let dir = tempfile::tempdir().unwrap();
    let file = sweep(dir.path(), "exit.h5", &[]);
    let (share, growth) = column(&file, "path_radius_growth_ratio_2s");
    assert_eq!(share.len(), 11);
    for w in growth.windows(2) {
        assert!(w[1] > w[0], "not monotonic: {growth:?}");
    }
    assert!(growth[10] > growth[0] * 1.05, "{growth:?}");
}

/// An all-wheel-drive setup (each axle able to take the whole demand alone)
/// with a demand beyond the grip: the exit acceleration reached before the
/// sideslip leaves a ±2° band is highest for a split between the extremes.
#[test]
fn sideslip_limited_exit_acceleration_peaks_between_the_extremes() {
    let dir = tempfile::tempdir().unwrap();
    let sets = [
        "drive.front.max_torque=1200",
        "drive.front.max_power=400000",
        "drive.rear.max_torque=1200",
        "drive.rear.max_power=400000",
        "drive.rear.ratio=9.0",
        "drive.rear.efficiency=0.9",
        "manoeuvre.exit_torque=9000",
        "manoeuvre.ramp_time=2.5",
    ];
    let args: Vec<&str> = sets.iter().flat_map(|s| ["--set", *s]).collect();
    let file = sweep(dir.path(), "awd.h5", &args);
    let (share, accel) = column(&file, "exit_accel_within_sideslip_limit");
    let (best, best_accel) = accel
        .iter()
        .enumerate()
        .max_by(|a, b| a.1.total_cmp(b.1))
        .map(|(i, a)| (i, *a))
        .unwrap();
    assert!(
        best > 0 && best < share.len() - 1,
        "best split {} at an extreme: {accel:?}",
        share[best]
    );
    assert!(
        best_accel > 1.2 * accel[0].max(accel[accel.len() - 1]),
        "{accel:?}"
    );
}
