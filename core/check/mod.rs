//! Regression check of one results file against a baseline results file.
//!
//! This module owns the comparison rule and the report it produces: every
//! channel (time-aligned), every metric and the run status of a result are
//! compared with a baseline run, and the deviations are collected worst
//! first. It reads and copies results files but knows nothing of the physics
//! that produced them, nor of how the report is printed (the `check`
//! command does that).
//!
//! # Tolerance rule
//!
//! A sample `a` of the result passes against the baseline sample `b` when
//!
//! ```text
//! |a − b| ≤ atol + rtol·|b|
//! ```
//!
//! the asymmetric "allclose" rule of numerical array libraries (common
//! practice; e.g. NumPy's `allclose`). Two NaNs at the same sample count as
//! equal, as do two infinities of the same sign; a NaN against a number
//! fails. The defaults, `rtol` = 1e-6 and `atol` = 1e-9 (see
//! [`Tolerance::default`]), accept the round-off of a rebuilt binary or a
//! reordered sum but catch any physical change of a parameter: the model is
//! integrated with adaptive tolerances near 1e-6, so a relative change below
//! 1e-6 is within the noise the solver itself allows, while a 0.1 %
//! parameter change moves most channels by far more. `atol` keeps channels
//! that pass through zero from failing on values near 1e-12.
//!
//! # Time alignment
//!
//! When the two time vectors are identical, samples are compared one to one.
//! Otherwise every result channel is interpolated linearly onto the baseline
//! times inside the common time range (baseline samples outside it are
//! skipped), and [`Comparison::alignment`] says so. Start and end times are
//! themselves compared with the tolerance rule: a result covering a
//! different time span than its baseline is a difference.
//!
//! ```no_run
//! use std::path::Path;
//! use yawdyn::check::{Tolerance, compare_files};
//!
//! let cmp = compare_files(Path::new("run.h5"), Path::new("baseline.h5"), Tolerance::default())?;
//! println!("{}", if cmp.passed() { "pass" } else { "fail" });
//! # Ok::<(), yawdyn::check::CheckError>(())
//! ```

pub mod junit;

use std::fs;
use std::path::{Path, PathBuf};

use serde::Serialize;

use crate::results::{ResultsError, RunRecord, RunStatus, read_hdf5};

/// Relative and absolute tolerance of the comparison rule
/// `|a − b| ≤ atol + rtol·|b|`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Tolerance {
    /// Relative tolerance, dimensionless (fraction of |baseline|). Default 1e-6.
    pub rtol: f64,
    /// Absolute tolerance, in the unit of each channel or metric. Default 1e-9.
    pub atol: f64,
}

impl Default for Tolerance {
    /// rtol 1e-6, atol 1e-9: round-off passes, physical changes fail (see
    /// the module documentation).
    fn default() -> Self {
        Tolerance {
            rtol: 1e-6,
            atol: 1e-9,
        }
    }
}

impl Tolerance {
    /// Allowed deviation from the baseline value `b`: atol + rtol·|b|.
    pub fn allowed(&self, b: f64) -> f64 {
        self.atol + self.rtol * b.abs()
    }

    /// Whether result value `a` passes against baseline value `b` (rule in
    /// the module documentation; NaN equals NaN).
    pub fn accepts(&self, a: f64, b: f64) -> bool {
        if a.is_nan() || b.is_nan() {
            return a.is_nan() && b.is_nan();
        }
        if a.is_infinite() || b.is_infinite() {
            return a == b;
        }
        (a - b).abs() <= self.allowed(b)
    }

    /// A tolerance that can be used: both finite and not negative.
    pub fn validate(&self) -> Result<(), String> {
        for (name, v) in [("rtol", self.rtol), ("atol", self.atol)] {
            if !(v.is_finite() && v >= 0.0) {
                return Err(format!("{name} must be finite and ≥ 0, got {v}"));
            }
        }
        Ok(())
    }
}

/// What a [`Deviation`] compares.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ItemKind {
    /// A sampled channel.
    Channel,
    /// A scalar metric.
    Metric,
    /// Start or end of the time vector.
    Time,
}

/// The comparison of one channel, metric or time bound.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Deviation {
    /// Channel, metric or time bound.
    pub kind: ItemKind,
    /// Name (`yaw_rate`, `time_end`, ...).
    pub name: String,
    /// Unit of the values, as stored in the baseline.
    pub unit: String,
    /// Largest |result − baseline| over the compared samples, in `unit`
    /// (infinite when one side is NaN and the other is not).
    pub max_abs_deviation: f64,
    /// Time of the worst sample, s: the one with the largest ratio of
    /// deviation to allowed deviation (`None` for metrics).
    pub time_s: Option<f64>,
    /// Baseline value at the worst sample, in `unit`.
    pub baseline: f64,
    /// Result value at the worst sample, in `unit`.
    pub result: f64,
    /// Allowed deviation at the worst sample, atol + rtol·|baseline|, in `unit`.
    pub allowed: f64,
    /// Ratio of deviation to allowed deviation at the worst sample
    /// (> 1 means outside tolerance; infinite for a NaN mismatch or a zero
    /// allowance with a non-zero deviation).
    pub worst_ratio: f64,
    /// Samples outside tolerance.
    pub failed_samples: usize,
    /// Samples compared.
    pub samples: usize,
    /// True when every sample is within tolerance (and the units agree).
    pub passed: bool,
    /// Further remark, e.g. "unit differs: result m/s, baseline km/h".
    pub note: Option<String>,
}

/// How the result's samples were lined up with the baseline's.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Alignment {
    /// Identical time vectors: compared sample by sample.
    Identical,
    /// The result was interpolated linearly onto the baseline times over the
    /// common range.
    Interpolated {
        /// Start of the common range, s.
        start_s: f64,
        /// End of the common range, s.
        end_s: f64,
        /// Baseline samples inside the common range (the ones compared).
        samples: usize,
        /// Baseline samples outside it (skipped).
        skipped: usize,
    },
    /// The time ranges do not overlap (or one file has no samples): no
    /// channel could be compared.
    NoOverlap,
}

/// The result of comparing a result record with a baseline record.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Comparison {
    /// Tolerance used.
    pub tolerance: Tolerance,
    /// How the time vectors were lined up.
    pub alignment: Alignment,
    /// Status of the result run (`completed` or `failed: message`).
    pub result_status: String,
    /// Status of the baseline run.
    pub baseline_status: String,
    /// Channels in the baseline but not in the result.
    pub missing_channels: Vec<String>,
    /// Channels in the result but not in the baseline.
    pub extra_channels: Vec<String>,
    /// Metrics in the baseline but not in the result.
    pub missing_metrics: Vec<String>,
    /// Metrics in the result but not in the baseline.
    pub extra_metrics: Vec<String>,
    /// Every compared item, worst first (by `worst_ratio`, then name).
    pub deviations: Vec<Deviation>,
}

impl Comparison {
    /// True when the statuses agree, no channel or metric is missing or
    /// extra, the time ranges overlap and every item is within tolerance.
    pub fn passed(&self) -> bool {
        self.status_matches()
            && self.missing_channels.is_empty()
            && self.extra_channels.is_empty()
            && self.missing_metrics.is_empty()
            && self.extra_metrics.is_empty()
            && self.alignment != Alignment::NoOverlap
            && self.deviations.iter().all(|d| d.passed)
    }

    /// True when result and baseline ended the same way (same status and,
    /// for failed runs, the same message).
    pub fn status_matches(&self) -> bool {
        self.result_status == self.baseline_status
    }

    /// The items outside tolerance, worst first.
    pub fn failures(&self) -> impl Iterator<Item = &Deviation> {
        self.deviations.iter().filter(|d| !d.passed)
    }
}

/// Why a check could not be carried out.
#[derive(Debug, thiserror::Error)]
pub enum CheckError {
    /// The result or baseline file could not be read as a results file.
    #[error("cannot read {role} file: {source}")]
    Read {
        /// `result` or `baseline`.
        role: &'static str,
        /// The results-file error (names the file).
        #[source]
        source: ResultsError,
    },
    /// The tolerance is unusable.
    #[error("bad tolerance: {0}")]
    Tolerance(String),
    /// The baseline path is refused or cannot be written (see [`crate::output`]).
    #[error(transparent)]
    Output(#[from] crate::output::OutputError),
    /// Copying the result over the baseline failed.
    #[error("{}: {action}: {source}", path.display())]
    Io {
        /// File concerned.
        path: PathBuf,
        /// What was being done.
        action: String,
        /// Operating-system error.
        #[source]
        source: std::io::Error,
    },
}

impl crate::error::Classify for CheckError {
    /// A file that cannot be read as a results file has the kind of its
    /// results error (bad input for a missing, foreign or damaged file); an
    /// unusable tolerance is bad input; replacing the baseline fails by its
    /// file-system cause.
    fn kind(&self) -> crate::error::ErrorKind {
        match self {
            CheckError::Read { source, .. } => source.kind(),
            CheckError::Tolerance(_) => crate::error::ErrorKind::BadInput,
            CheckError::Io { source, .. } => crate::error::io_kind(source),
            CheckError::Output(e) => e.kind(),
        }
    }
}

/// Reads both files and compares them ([`compare`]).
pub fn compare_files(
    result: &Path,
    baseline: &Path,
    tolerance: Tolerance,
) -> Result<Comparison, CheckError> {
    tolerance.validate().map_err(CheckError::Tolerance)?;
    let r = read_hdf5(result).map_err(|source| CheckError::Read {
        role: "result",
        source,
    })?;
    let b = read_hdf5(baseline).map_err(|source| CheckError::Read {
        role: "baseline",
        source,
    })?;
    Ok(compare(&r, &b, tolerance))
}

fn status_text(status: &RunStatus) -> String {
    match status {
        RunStatus::Completed => "completed".to_string(),
        RunStatus::Failed { message, .. } => format!("failed: {message}"),
    }
}

/// Compares `result` with `baseline` under `tolerance` (rule and time
/// alignment in the module documentation). Channels and metrics present on
/// one side only are listed, not compared.
pub fn compare(result: &RunRecord, baseline: &RunRecord, tolerance: Tolerance) -> Comparison {
    let alignment = align(&result.time, &baseline.time);
    let mut deviations = Vec::new();

    // Time bounds.
    if let (Some(&r0), Some(&b0), Some(&r1), Some(&b1)) = (
        result.time.first(),
        baseline.time.first(),
        result.time.last(),
        baseline.time.last(),
    ) {
        for (name, a, b) in [("time_start", r0, b0), ("time_end", r1, b1)] {
            deviations.push(scalar(ItemKind::Time, name, "s", a, b, Some(b), tolerance));
        }
    }

    let mut missing_channels = Vec::new();
    for bc in &baseline.channels {
        let Some(rc) = result.channel(&bc.name) else {
            missing_channels.push(bc.name.clone());
            continue;
        };
        let resampled;
        let (times, a, b): (&[f64], &[f64], &[f64]) = match &alignment {
            Alignment::Identical => (&baseline.time, &rc.data, &bc.data),
            Alignment::Interpolated { .. } => {
                let (lo, hi) = common_range(&result.time, &baseline.time);
                let range = inside(&baseline.time, lo, hi);
                resampled = interpolate(&result.time, &rc.data, &baseline.time[range.clone()]);
                (&baseline.time[range.clone()], &resampled, &bc.data[range])
            }
            Alignment::NoOverlap => continue,
        };
        let mut d = channel_deviation(&bc.name, &bc.unit, times, a, b, tolerance);
        if rc.unit != bc.unit {
            d.passed = false;
            d.note = Some(format!(
                "unit differs: result {}, baseline {}",
                rc.unit, bc.unit
            ));
        }
        deviations.push(d);
    }
    let extra_channels = result
        .channels
        .iter()
        .filter(|c| baseline.channel(&c.name).is_none())
        .map(|c| c.name.clone())
        .collect();

    let mut missing_metrics = Vec::new();
    for bm in &baseline.metrics {
        let Some(rm) = result.metrics.iter().find(|m| m.name == bm.name) else {
            missing_metrics.push(bm.name.clone());
            continue;
        };
        let mut d = scalar(
            ItemKind::Metric,
            &bm.name,
            &bm.unit,
            rm.value,
            bm.value,
            None,
            tolerance,
        );
        if rm.unit != bm.unit {
            d.passed = false;
            d.note = Some(format!(
                "unit differs: result {}, baseline {}",
                rm.unit, bm.unit
            ));
        }
        deviations.push(d);
    }
    let extra_metrics = result
        .metrics
        .iter()
        .filter(|m| !baseline.metrics.iter().any(|b| b.name == m.name))
        .map(|m| m.name.clone())
        .collect();

    // Worst first; ties (e.g. all zero) keep a stable, name-ordered list.
    deviations.sort_by(|x, y| {
        y.worst_ratio
            .total_cmp(&x.worst_ratio)
            .then_with(|| x.name.cmp(&y.name))
    });

    Comparison {
        tolerance,
        alignment,
        result_status: status_text(&result.status),
        baseline_status: status_text(&baseline.status),
        missing_channels,
        extra_channels,
        missing_metrics,
        extra_metrics,
        deviations,
    }
}

/// Deviation of `a` from `b` and its ratio to the allowance.
fn deviation_and_ratio(a: f64, b: f64, tolerance: Tolerance) -> (f64, f64) {
    if tolerance.accepts(a, b) {
        let dev = if a == b || (a.is_nan() && b.is_nan()) {
            0.0
        } else {
            (a - b).abs()
        };
        let allowed = tolerance.allowed(b);
        let ratio = if dev == 0.0 { 0.0 } else { dev / allowed };
        (dev, ratio)
    } else {
        let dev = (a - b).abs();
        let dev = if dev.is_nan() { f64::INFINITY } else { dev };
        let allowed = tolerance.allowed(b);
        let ratio = if allowed > 0.0 && allowed.is_finite() {
            dev / allowed
        } else {
            f64::INFINITY
        };
        (dev, ratio)
    }
}

fn scalar(
    kind: ItemKind,
    name: &str,
    unit: &str,
    a: f64,
    b: f64,
    time_s: Option<f64>,
    tolerance: Tolerance,
) -> Deviation {
    let (dev, ratio) = deviation_and_ratio(a, b, tolerance);
    let passed = tolerance.accepts(a, b);
    Deviation {
        kind,
        name: name.to_string(),
        unit: unit.to_string(),
        max_abs_deviation: dev,
        time_s,
        baseline: b,
        result: a,
        allowed: tolerance.allowed(b),
        worst_ratio: ratio,
        failed_samples: usize::from(!passed),
        samples: 1,
        passed,
        note: None,
    }
}

fn channel_deviation(
    name: &str,
    unit: &str,
    times: &[f64],
    a: &[f64],
    b: &[f64],
    tolerance: Tolerance,
) -> Deviation {
    let mut max_dev = 0.0_f64;
    let mut worst = (0.0_f64, 0usize);
    let mut failed = 0;
    for (i, (&ai, &bi)) in a.iter().zip(b).enumerate() {
        let (dev, ratio) = deviation_and_ratio(ai, bi, tolerance);
        if !tolerance.accepts(ai, bi) {
            failed += 1;
        }
        max_dev = max_dev.max(dev);
        if ratio > worst.0 {
            worst = (ratio, i);
        }
    }
    let (worst_ratio, i) = worst;
    let at = |v: &[f64]| v.get(i).copied().unwrap_or(f64::NAN);
    Deviation {
        kind: ItemKind::Channel,
        name: name.to_string(),
        unit: unit.to_string(),
        max_abs_deviation: max_dev,
        time_s: times.get(i).copied(),
        baseline: at(b),
        result: at(a),
        allowed: tolerance.allowed(at(b)),
        worst_ratio,
        failed_samples: failed,
        samples: a.len().min(b.len()),
        passed: failed == 0,
        note: None,
    }
}

/// Overlap of two time ranges (first to last sample).
fn common_range(a: &[f64], b: &[f64]) -> (f64, f64) {
    match (a.first(), a.last(), b.first(), b.last()) {
        (Some(&a0), Some(&a1), Some(&b0), Some(&b1)) => (a0.max(b0), a1.min(b1)),
        _ => (f64::NAN, f64::NAN),
    }
}

/// Index range of the samples of `t` inside [lo, hi].
fn inside(t: &[f64], lo: f64, hi: f64) -> std::ops::Range<usize> {
    let start = t.partition_point(|&x| x < lo);
    let end = t.partition_point(|&x| x <= hi);
    start..end.max(start)
}

fn align(result: &[f64], baseline: &[f64]) -> Alignment {
    if result.len() == baseline.len()
        && result
            .iter()
            .zip(baseline)
            .all(|(a, b)| a.to_bits() == b.to_bits())
    {
        return Alignment::Identical;
    }
    let (lo, hi) = common_range(result, baseline);
    if lo.is_nan() || hi.is_nan() || lo > hi {
        return Alignment::NoOverlap;
    }
    let range = inside(baseline, lo, hi);
    if range.is_empty() {
        return Alignment::NoOverlap;
    }
    Alignment::Interpolated {
        start_s: lo,
        end_s: hi,
        samples: range.len(),
        skipped: baseline.len() - range.len(),
    }
}

/// Linear interpolation of (t, y) at the times `at`, all inside [t₀, tₙ]
/// (strictly increasing `t`). A single-sample `t` gives its one value.
pub fn interpolate(t: &[f64], y: &[f64], at: &[f64]) -> Vec<f64> {
    at.iter()
        .map(|&x| {
            let k = t.partition_point(|&ti| ti <= x);
            match k {
                0 => y.first().copied().unwrap_or(f64::NAN),
                k if k >= t.len() => y.last().copied().unwrap_or(f64::NAN),
                k => {
                    let (t0, t1, y0, y1) = (t[k - 1], t[k], y[k - 1], y[k]);
                    if x == t0 {
                        y0
                    } else {
                        y0 + (y1 - y0) * (x - t0) / (t1 - t0)
                    }
                }
            }
        })
        .collect()
}

/// Replaces `baseline` with a copy of `result`, atomically: the copy is
/// written under a hidden temporary name beside the baseline, flushed and
/// renamed into place, so a crash leaves either the old or the new baseline.
/// The result is read first and must be a valid results file.
pub fn update_baseline(result: &Path, baseline: &Path) -> Result<(), CheckError> {
    read_hdf5(result).map_err(|source| CheckError::Read {
        role: "result",
        source,
    })?;
    let io = |path: &Path, action: &str| {
        let path = path.to_path_buf();
        let action = action.to_string();
        move |source| CheckError::Io {
            path,
            action,
            source,
        }
    };
    crate::output::write_atomically(baseline, |temp| {
        let mut from = fs::File::open(result).map_err(io(result, "opening the result"))?;
        let mut to = fs::OpenOptions::new()
            .write(true)
            .open(temp)
            .map_err(io(temp, "opening the copy"))?;
        std::io::copy(&mut from, &mut to).map_err(io(temp, "copying the result"))?;
        Ok(())
    })
}

#[cfg(test)]
mod tests;
