//! Open-loop input signals: functions of time used for steering-wheel angle,
//! throttle, brake or any other command.
//!
//! [`Signal`] owns the shapes (constant, rate-limited step, ramp, sine,
//! FMVSS 126 sine with dwell, linear chirp, interpolated table) and their
//! combinations (sum, sequence, scale, offset). [`Signal::value`] allocates
//! nothing and never panics, so it can be called inside the ODE right-hand
//! side. Constructors validate their input and return a [`SignalError`];
//! building the enum variants directly skips that check. Units are those of
//! the quantity the signal drives (rad for steering, 0..1 for pedals); time
//! is in s.

use std::f64::consts::PI;

use thiserror::Error;

use super::TurnDirection;

/// Default sine-with-dwell frequency, Hz (FMVSS 126, 49 CFR 571.126 S7.9,
/// clause number from memory).
pub const SINE_WITH_DWELL_FREQUENCY: f64 = 0.7;
/// Default sine-with-dwell dwell time at the second peak, s (FMVSS 126).
pub const SINE_WITH_DWELL_DWELL: f64 = 0.5;

/// A signal definition that makes no sense.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum SignalError {
    /// A parameter is out of range or not finite.
    #[error("{signal}: `{parameter}` = {value} is invalid: {expected}")]
    InvalidParameter {
        /// Kind of signal.
        signal: &'static str,
        /// Parameter name.
        parameter: &'static str,
        /// Value given.
        value: f64,
        /// What is expected.
        expected: &'static str,
    },
    /// A table or combination has no entries.
    #[error("{signal}: no entries")]
    Empty {
        /// Kind of signal.
        signal: &'static str,
    },
    /// A table's time and value columns differ in length.
    #[error("table: {times} times but {values} values")]
    TableLengthMismatch {
        /// Number of times.
        times: usize,
        /// Number of values.
        values: usize,
    },
    /// Times are not strictly increasing.
    #[error(
        "{signal}: times must be strictly increasing; entry {index} at t = {time} s follows t = {previous} s"
    )]
    NotIncreasing {
        /// Kind of signal.
        signal: &'static str,
        /// Index of the offending entry.
        index: usize,
        /// Previous time, s.
        previous: f64,
        /// Offending time, s.
        time: f64,
    },
    /// A sequence needs one switch time fewer than it has signals.
    #[error("sequence: {signals} signals need {expected} switch times, got {switch_times}")]
    SequenceLength {
        /// Number of signals.
        signals: usize,
        /// Number of switch times needed.
        expected: usize,
        /// Number of switch times given.
        switch_times: usize,
    },
}

impl crate::error::Classify for SignalError {
    /// A signal definition that makes no sense is bad input.
    fn kind(&self) -> crate::error::ErrorKind {
        crate::error::ErrorKind::BadInput
    }
}

/// A function of time. See the module documentation.
///
/// ```
/// use yawdyn::manoeuvre::{Signal, TurnDirection};
/// let steer = Signal::sine_with_dwell(1.5, TurnDirection::Left, 1.0).unwrap();
/// assert_eq!(steer.value(0.5), 0.0);
/// assert!((steer.value(1.0 + 0.25 / 0.7) - 1.5).abs() < 1e-12); // first peak
/// ```
#[derive(Debug, Clone, PartialEq)]
pub enum Signal {
    /// Constant value.
    Constant(f64),
    /// `from` until `start` (s), then a linear change at `rate` (units/s,
    /// > 0, magnitude) until `to` is reached, then `to`.
    Step {
        /// Initial value.
        from: f64,
        /// Final value.
        to: f64,
        /// Time the change begins, s.
        start: f64,
        /// Rate of change (magnitude), units/s.
        rate: f64,
    },
    /// 0 until `start`, then `rate`·(t − start), held at `limit` once reached.
    Ramp {
        /// Time the ramp begins, s.
        start: f64,
        /// Slope, units/s (either sign).
        rate: f64,
        /// Optional value at which the ramp stops (same sign as `rate`).
        limit: Option<f64>,
    },
    /// `amplitude`·sin(2π·`frequency`·(t − start)) from `start` for `cycles`
    /// periods (forever if `None`), 0 outside.
    Sine {
        /// Amplitude, units.
        amplitude: f64,
        /// Frequency, Hz.
        frequency: f64,
        /// Start time, s.
        start: f64,
        /// Number of periods (may be fractional), or `None` for no end.
        cycles: Option<f64>,
    },
    /// FMVSS 126 sine with dwell: a sine of `frequency` whose second peak is
    /// held for `dwell` seconds, after which the last quarter period returns
    /// to zero. `direction` is +1 for a first half-cycle anticlockwise, −1
    /// clockwise. Steering ends at start + 1/f + dwell.
    SineWithDwell {
        /// Amplitude, units (e.g. steering-wheel angle, rad).
        amplitude: f64,
        /// Sine frequency, Hz (0.7 in FMVSS 126).
        frequency: f64,
        /// Dwell at the second peak, s (0.5 in FMVSS 126).
        dwell: f64,
        /// +1.0 (first half-cycle positive/anticlockwise) or −1.0.
        direction: f64,
        /// Start time (beginning of the sine), s.
        start: f64,
    },
    /// Linear chirp: `amplitude`·sin(2π(f0·τ + (f1 − f0)·τ²/(2·duration)))
    /// for 0 ≤ τ = t − start ≤ duration, 0 outside; instantaneous frequency
    /// f0 + (f1 − f0)·τ/duration.
    Chirp {
        /// Amplitude, units.
        amplitude: f64,
        /// Frequency at the start, Hz.
        f0: f64,
        /// Frequency at the end, Hz.
        f1: f64,
        /// Start time, s.
        start: f64,
        /// Sweep duration, s.
        duration: f64,
    },
    /// Piecewise-linear table through (time, value) points, holding the end
    /// values outside its range.
    Table {
        /// Times, s, strictly increasing.
        times: Vec<f64>,
        /// Values at those times.
        values: Vec<f64>,
    },
    /// Sum of signals.
    Sum(Vec<Signal>),
    /// `signals[k]` is active from `switch_times[k − 1]` (inclusive) until
    /// `switch_times[k]`; each is evaluated at the global time t.
    Sequence {
        /// Switch times, s, strictly increasing; one fewer than `signals`.
        switch_times: Vec<f64>,
        /// The signals, in order.
        signals: Vec<Signal>,
    },
    /// `gain`·signal.
    Scale {
        /// Gain, dimensionless.
        gain: f64,
        /// The signal scaled.
        signal: Box<Signal>,
    },
    /// signal + `offset`.
    Offset {
        /// Offset, units.
        offset: f64,
        /// The signal offset.
        signal: Box<Signal>,
    },
}

fn finite(signal: &'static str, parameter: &'static str, value: f64) -> Result<f64, SignalError> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(SignalError::InvalidParameter {
            signal,
            parameter,
            value,
            expected: "a finite number",
        })
    }
}

fn positive(signal: &'static str, parameter: &'static str, value: f64) -> Result<f64, SignalError> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(SignalError::InvalidParameter {
            signal,
            parameter,
            value,
            expected: "finite and > 0",
        })
    }
}

fn non_negative(
    signal: &'static str,
    parameter: &'static str,
    value: f64,
) -> Result<f64, SignalError> {
    if value.is_finite() && value >= 0.0 {
        Ok(value)
    } else {
        Err(SignalError::InvalidParameter {
            signal,
            parameter,
            value,
            expected: "finite and >= 0",
        })
    }
}

fn strictly_increasing(signal: &'static str, times: &[f64]) -> Result<(), SignalError> {
    for (index, &time) in times.iter().enumerate() {
        finite(signal, "time", time)?;
        if index > 0 && time <= times[index - 1] {
            return Err(SignalError::NotIncreasing {
                signal,
                index,
                previous: times[index - 1],
                time,
            });
        }
    }
    Ok(())
}

impl Signal {
    /// A constant `value`.
    pub fn constant(value: f64) -> Result<Self, SignalError> {
        Ok(Signal::Constant(finite("constant", "value", value)?))
    }

    /// Step from `from` to `to` beginning at `start` (s) with a finite
    /// `rate` (units/s, > 0).
    pub fn step(from: f64, to: f64, start: f64, rate: f64) -> Result<Self, SignalError> {
        Ok(Signal::Step {
            from: finite("step", "from", from)?,
            to: finite("step", "to", to)?,
            start: finite("step", "start", start)?,
            rate: positive("step", "rate", rate)?,
        })
    }

    /// Ramp from 0 at `start` (s) with slope `rate` (units/s), stopping at
    /// `limit` if given (which must lie on the side of zero the ramp moves to).
    pub fn ramp(start: f64, rate: f64, limit: Option<f64>) -> Result<Self, SignalError> {
        let start = finite("ramp", "start", start)?;
        let rate = finite("ramp", "rate", rate)?;
        if let Some(l) = limit {
            finite("ramp", "limit", l)?;
            if l * rate < 0.0 {
                return Err(SignalError::InvalidParameter {
                    signal: "ramp",
                    parameter: "limit",
                    value: l,
                    expected: "the same sign as `rate`",
                });
            }
        }
        Ok(Signal::Ramp { start, rate, limit })
    }

    /// Sine of `amplitude`, `frequency` (Hz, > 0) from `start` (s) for
    /// `cycles` periods (> 0) or forever.
    pub fn sine(
        amplitude: f64,
        frequency: f64,
        start: f64,
        cycles: Option<f64>,
    ) -> Result<Self, SignalError> {
        if let Some(c) = cycles {
            positive("sine", "cycles", c)?;
        }
        Ok(Signal::Sine {
            amplitude: finite("sine", "amplitude", amplitude)?,
            frequency: positive("sine", "frequency", frequency)?,
            start: finite("sine", "start", start)?,
            cycles,
        })
    }

    /// FMVSS 126 sine with dwell with the regulation's 0.7 Hz and 0.5 s
    /// dwell (49 CFR 571.126 S7.9, clause number from memory), first
    /// half-cycle in `direction`, beginning at `start` (s). `amplitude` ≥ 0
    /// in the units of the signal (rad for steering-wheel angle).
    pub fn sine_with_dwell(
        amplitude: f64,
        direction: TurnDirection,
        start: f64,
    ) -> Result<Self, SignalError> {
        Self::sine_with_dwell_custom(
            amplitude,
            SINE_WITH_DWELL_FREQUENCY,
            SINE_WITH_DWELL_DWELL,
            direction,
            start,
        )
    }

    /// Sine with dwell with a chosen `frequency` (Hz, > 0) and `dwell`
    /// (s, ≥ 0).
    pub fn sine_with_dwell_custom(
        amplitude: f64,
        frequency: f64,
        dwell: f64,
        direction: TurnDirection,
        start: f64,
    ) -> Result<Self, SignalError> {
        Ok(Signal::SineWithDwell {
            amplitude: non_negative("sine with dwell", "amplitude", amplitude)?,
            frequency: positive("sine with dwell", "frequency", frequency)?,
            dwell: non_negative("sine with dwell", "dwell", dwell)?,
            direction: direction.sign(),
            start: finite("sine with dwell", "start", start)?,
        })
    }

    /// Linear chirp of `amplitude` from `f0` to `f1` (Hz, ≥ 0) over
    /// `duration` (s, > 0) beginning at `start` (s).
    pub fn chirp(
        amplitude: f64,
        f0: f64,
        f1: f64,
        start: f64,
        duration: f64,
    ) -> Result<Self, SignalError> {
        Ok(Signal::Chirp {
            amplitude: finite("chirp", "amplitude", amplitude)?,
            f0: non_negative("chirp", "f0", f0)?,
            f1: non_negative("chirp", "f1", f1)?,
            start: finite("chirp", "start", start)?,
            duration: positive("chirp", "duration", duration)?,
        })
    }

    /// Piecewise-linear table; `times` strictly increasing, both columns
    /// finite, same length, not empty.
    pub fn table(times: Vec<f64>, values: Vec<f64>) -> Result<Self, SignalError> {
        if times.is_empty() {
            return Err(SignalError::Empty { signal: "table" });
        }
        if times.len() != values.len() {
            return Err(SignalError::TableLengthMismatch {
                times: times.len(),
                values: values.len(),
            });
        }
        strictly_increasing("table", &times)?;
        for &v in &values {
            finite("table", "value", v)?;
        }
        Ok(Signal::Table { times, values })
    }

    /// Sum of `signals` (at least one).
    pub fn sum(signals: Vec<Signal>) -> Result<Self, SignalError> {
        if signals.is_empty() {
            return Err(SignalError::Empty { signal: "sum" });
        }
        Ok(Signal::Sum(signals))
    }

    /// Switch between `signals` at `switch_times` (s, strictly increasing,
    /// exactly one fewer than the signals).
    pub fn sequence(signals: Vec<Signal>, switch_times: Vec<f64>) -> Result<Self, SignalError> {
        if signals.is_empty() {
            return Err(SignalError::Empty { signal: "sequence" });
        }
        if switch_times.len() + 1 != signals.len() {
            return Err(SignalError::SequenceLength {
                signals: signals.len(),
                expected: signals.len() - 1,
                switch_times: switch_times.len(),
            });
        }
        strictly_increasing("sequence", &switch_times)?;
        Ok(Signal::Sequence {
            switch_times,
            signals,
        })
    }

    /// This signal multiplied by `gain` (finite).
    pub fn scaled(self, gain: f64) -> Result<Self, SignalError> {
        Ok(Signal::Scale {
            gain: finite("scale", "gain", gain)?,
            signal: Box::new(self),
        })
    }

    /// This signal plus `offset` (finite).
    pub fn offset(self, offset: f64) -> Result<Self, SignalError> {
        Ok(Signal::Offset {
            offset: finite("offset", "offset", offset)?,
            signal: Box::new(self),
        })
    }

    /// Value at time `t` (s). Allocates nothing; never panics (a hand-built
    /// empty table or sequence gives 0.0).
    pub fn value(&self, t: f64) -> f64 {
        match self {
            Signal::Constant(v) => *v,
            Signal::Step {
                from,
                to,
                start,
                rate,
            } => {
                if t <= *start {
                    *from
                } else {
                    let change = rate * (t - start);
                    let span = to - from;
                    if change >= span.abs() {
                        *to
                    } else {
                        from + span.signum() * change
                    }
                }
            }
            Signal::Ramp { start, rate, limit } => {
                if t <= *start {
                    return 0.0;
                }
                let v = rate * (t - start);
                match limit {
                    Some(l) if *rate >= 0.0 => v.min(*l),
                    Some(l) => v.max(*l),
                    None => v,
                }
            }
            Signal::Sine {
                amplitude,
                frequency,
                start,
                cycles,
            } => {
                let tau = t - start;
                let ended = cycles.is_some_and(|c| tau * frequency >= c);
                if tau < 0.0 || ended {
                    0.0
                } else {
                    amplitude * (2.0 * PI * frequency * tau).sin()
                }
            }
            Signal::SineWithDwell {
                amplitude,
                frequency,
                dwell,
                direction,
                start,
            } => {
                let tau = t - start;
                let period = 1.0 / frequency;
                let dwell_start = 0.75 * period;
                let a = direction * amplitude;
                if tau < 0.0 || tau >= period + dwell {
                    0.0
                } else if tau < dwell_start {
                    a * (2.0 * PI * frequency * tau).sin()
                } else if tau < dwell_start + dwell {
                    -a
                } else {
                    a * (2.0 * PI * frequency * (tau - dwell)).sin()
                }
            }
            Signal::Chirp {
                amplitude,
                f0,
                f1,
                start,
                duration,
            } => {
                let tau = t - start;
                if tau < 0.0 || tau > *duration {
                    0.0
                } else {
                    let cycles = f0 * tau + 0.5 * (f1 - f0) * tau * tau / duration;
                    amplitude * (2.0 * PI * cycles).sin()
                }
            }
            Signal::Table { times, values } => table_value(times, values, t),
            Signal::Sum(signals) => signals.iter().map(|s| s.value(t)).sum(),
            Signal::Sequence {
                switch_times,
                signals,
            } => {
                let k = switch_times.partition_point(|&s| s <= t);
                signals
                    .get(k)
                    .or(signals.last())
                    .map_or(0.0, |s| s.value(t))
            }
            Signal::Scale { gain, signal } => gain * signal.value(t),
            Signal::Offset { offset, signal } => signal.value(t) + offset,
        }
    }
}

/// Linear interpolation with end hold; 0.0 for an empty table.
fn table_value(times: &[f64], values: &[f64], t: f64) -> f64 {
    let n = times.len().min(values.len());
    if n == 0 {
        return 0.0;
    }
    if t <= times[0] {
        return values[0];
    }
    if t >= times[n - 1] {
        return values[n - 1];
    }
    let i = times[..n].partition_point(|&x| x <= t);
    let (t0, t1) = (times[i - 1], times[i]);
    let w = (t - t0) / (t1 - t0);
    values[i - 1] + w * (values[i] - values[i - 1])
}

#[cfg(test)]
mod tests;
