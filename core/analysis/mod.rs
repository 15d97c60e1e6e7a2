//! Analysis of handling results: the linear single-track reference model and
//! the evaluation of standard test manoeuvres from sampled time histories.
//!
//! Everything here is a pure function of numbers and slices; nothing depends
//! on the nonlinear vehicle model, so the same code evaluates simulated and
//! measured data.
//!
//! - [`bicycle`]: linear single-track (bicycle) model — understeer gradient,
//!   characteristic and critical speed, steady-state gains, state matrix and
//!   eigenvalues (Gillespie ch. 6, Rajamani ch. 2).
//! - [`step_response`](mod@step_response): ISO 7401 step-steer metrics.
//! - [`handling`]: ISO 4138 constant-radius understeer gradient and a
//!   least-squares line fit.
//! - [`sine_dwell`]: FMVSS 126 sine-with-dwell evaluation.
//!
//! This module does not run simulations, read results files or draw plots.

pub mod bicycle;
pub mod handling;
pub mod sine_dwell;
pub mod step_response;

pub use bicycle::BicycleModel;
pub use handling::{LineFit, UndersteerFit, fit_line, understeer_gradient};
pub use sine_dwell::{SineDwellResult, SineDwellTrace, evaluate_sine_with_dwell};
pub use step_response::{StepResponse, StepResponseOptions, step_response};

/// Problems found while evaluating a time history. Each variant names the
/// channel, sample or event so the user can find the fault in the record.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum AnalysisError {
    /// Two channels that must be sampled together have different lengths.
    #[error("channel `{channel}` has {len} samples but `time` has {time_len}")]
    LengthMismatch {
        /// The offending channel.
        channel: &'static str,
        /// Its number of samples.
        len: usize,
        /// Number of time samples.
        time_len: usize,
    },
    /// Not enough samples to evaluate anything.
    #[error("too few samples: {got}, need at least {need}")]
    TooFewSamples {
        /// Samples given.
        got: usize,
        /// Samples needed.
        need: usize,
    },
    /// The time channel is not strictly increasing.
    #[error(
        "time must be strictly increasing: sample {index} at t = {time} s follows t = {previous} s"
    )]
    TimeNotIncreasing {
        /// Index of the offending sample.
        index: usize,
        /// Previous time, s.
        previous: f64,
        /// Offending time, s.
        time: f64,
    },
    /// A sample is NaN or infinite.
    #[error("non-finite value in channel `{channel}` at sample {index}")]
    NonFinite {
        /// The channel.
        channel: &'static str,
        /// Index of the sample.
        index: usize,
    },
    /// A channel is not steady over the final averaging window.
    #[error(
        "channel `{channel}` is not steady over the final {window} s: spread {spread} exceeds {limit}"
    )]
    NoSteadyState {
        /// The channel.
        channel: &'static str,
        /// Length of the averaging window, s.
        window: f64,
        /// Max − min over the window (channel units).
        spread: f64,
        /// Allowed spread (channel units).
        limit: f64,
    },
    /// A channel settles at exactly zero, so no ratio to it can be formed.
    #[error("channel `{channel}` settles at zero; nothing to evaluate")]
    ZeroSteadyState {
        /// The channel.
        channel: &'static str,
    },
    /// An event the evaluation needs does not occur in the record.
    #[error("{event} not found in the record")]
    EventNotFound {
        /// Description of the event.
        event: &'static str,
    },
    /// The record ends before a time the evaluation needs.
    #[error("record ends at t = {end} s, before {event} at t = {needed} s")]
    RecordTooShort {
        /// The evaluation instant.
        event: &'static str,
        /// Time needed, s.
        needed: f64,
        /// Last time in the record, s.
        end: f64,
    },
    /// A parameter is out of range.
    #[error("parameter `{name}` = {value} is invalid: {expected}")]
    InvalidParameter {
        /// Parameter name.
        name: &'static str,
        /// Value given.
        value: f64,
        /// What is expected.
        expected: &'static str,
    },
}

impl crate::error::Classify for AnalysisError {
    /// Arguments that make no sense (lengths, time order, parameters) are bad
    /// input; a record that does not show what the evaluation needs (too
    /// short, not steady, non-finite, no such event) is a failed run.
    fn kind(&self) -> crate::error::ErrorKind {
        use crate::error::ErrorKind;
        match self {
            AnalysisError::LengthMismatch { .. }
            | AnalysisError::TimeNotIncreasing { .. }
            | AnalysisError::InvalidParameter { .. } => ErrorKind::BadInput,
            _ => ErrorKind::Failed,
        }
    }
}

/// Check that `time` is finite and strictly increasing, that it has at least
/// `min_len` samples, and that every channel has the same length and finite
/// values.
pub(crate) fn check_record(
    time: &[f64],
    channels: &[(&'static str, &[f64])],
    min_len: usize,
) -> Result<(), AnalysisError> {
    if time.len() < min_len {
        return Err(AnalysisError::TooFewSamples {
            got: time.len(),
            need: min_len,
        });
    }
    for (index, t) in time.iter().enumerate() {
        if !t.is_finite() {
            return Err(AnalysisError::NonFinite {
                channel: "time",
                index,
            });
        }
        if index > 0 && *t <= time[index - 1] {
            return Err(AnalysisError::TimeNotIncreasing {
                index,
                previous: time[index - 1],
                time: *t,
            });
        }
    }
    for (channel, values) in channels {
        if values.len() != time.len() {
            return Err(AnalysisError::LengthMismatch {
                channel,
                len: values.len(),
                time_len: time.len(),
            });
        }
        if let Some(index) = values.iter().position(|v| !v.is_finite()) {
            return Err(AnalysisError::NonFinite { channel, index });
        }
    }
    Ok(())
}

/// Linear interpolation of `values(time)` at `t`; `None` outside the record.
/// `time` must be strictly increasing (checked by [`check_record`]).
pub(crate) fn interpolate(time: &[f64], values: &[f64], t: f64) -> Option<f64> {
    let (first, last) = (*time.first()?, *time.last()?);
    if !(first..=last).contains(&t) {
        return None;
    }
    let i = time.partition_point(|&ti| ti <= t);
    if i >= time.len() {
        return values.last().copied();
    }
    if i == 0 {
        return values.first().copied();
    }
    let (t0, t1) = (time[i - 1], time[i]);
    let w = (t - t0) / (t1 - t0);
    Some(values[i - 1] + w * (values[i] - values[i - 1]))
}

/// Time at which `sign·values` first reaches `level` at or after sample
/// `from`, linearly interpolated between samples; `None` if it never does.
pub(crate) fn first_rising_crossing(
    time: &[f64],
    values: &[f64],
    sign: f64,
    level: f64,
    from: usize,
) -> Option<f64> {
    let n = time.len().min(values.len());
    if from >= n {
        return None;
    }
    if sign * values[from] >= level {
        return Some(time[from]);
    }
    for i in (from + 1)..n {
        let (v0, v1) = (sign * values[i - 1], sign * values[i]);
        if v1 >= level {
            let w = (level - v0) / (v1 - v0);
            return Some(time[i - 1] + w * (time[i] - time[i - 1]));
        }
    }
    None
}
