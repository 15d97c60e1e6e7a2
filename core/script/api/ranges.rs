//! The documented ranges of the commands, and the size of signals.
//!
//! One rule for every source of a command: a value outside its documented
//! range is an error, at the call for a number or a signal (`brake(-1.0)`,
//! `drive(step(0.0, 1.5, …))`), at the tick for a controller output (the
//! message names the key, the value and the time). Nothing is clamped
//! silently. A signal is checked on its bounds (exact for constants, steps,
//! ramps, tables, sines; a sum's bounds add up); when those leave the range
//! it is checked at every millisecond up to the simulated-time limit, so
//! that e.g. a pulse built as the sum of two steps passes.
//!
//! Signals built by a script are also limited in size ([`MAX_SIGNAL_POINTS`])
//! and nesting ([`MAX_SIGNAL_DEPTH`]): a signal built up in a loop would
//! otherwise grow without bound, and its evaluation recurses once per level.

use crate::manoeuvre::Signal;
use crate::script::budget::MAX_SIM_TIME_S;
use crate::script::runner::OpenInput;

use super::errors::{Res, script_error};

/// Range of drive, brake and front share requests, 1.
pub(crate) const UNIT_RANGE: (f64, f64) = (0.0, 1.0);
/// Range of a speed target, an extra brake torque and a harvest limit (≥ 0).
pub(crate) const NON_NEGATIVE: (f64, f64) = (0.0, f64::INFINITY);
/// Most parts and table points in one signal.
pub(crate) const MAX_SIGNAL_POINTS: usize = 200_000;
/// Deepest nesting of signals (sums, sequences, offsets, gains).
pub(crate) const MAX_SIGNAL_DEPTH: usize = 32;
/// Rate of the fine check of a signal whose bounds leave its range, Hz
/// (every millisecond).
const FINE_CHECK_RATE_HZ: f64 = 1000.0;
/// Largest signal (parts and table points) given the fine check.
const FINE_CHECK_MAX_POINTS: usize = 1000;

/// The documented range of an open-loop input (`None`: any finite value).
pub(crate) fn range_of(input: OpenInput) -> Option<(f64, f64)> {
    match input {
        OpenInput::Drive | OpenInput::Brake | OpenInput::FrontShare => Some(UNIT_RANGE),
        OpenInput::HarvestLimit => Some(NON_NEGATIVE),
        OpenInput::Steer
        | OpenInput::DriveTorque
        | OpenInput::DeployPower
        | OpenInput::DeployTorque => None,
    }
}

/// `lo…hi` as documented (`≥ lo` for an open upper end).
fn text((lo, hi): (f64, f64)) -> String {
    if hi.is_infinite() {
        format!("≥ {lo}")
    } else {
        format!("{lo}…{hi}")
    }
}

/// Error unless `value` lies in `range`; `what` names the command.
pub(crate) fn check_value(what: &str, value: f64, range: (f64, f64)) -> Res<()> {
    if (range.0..=range.1).contains(&value) {
        return Ok(());
    }
    Err(script_error(format!(
        "{what} = {value} is outside its range {}",
        text(range)
    )))
}

/// Error unless `signal` stays in `range` (see the module doc).
pub(crate) fn check_signal(what: &str, signal: &Signal, range: (f64, f64)) -> Res<()> {
    if let Signal::Constant(v) = signal {
        return check_value(what, *v, range);
    }
    let (lo, hi) = bounds(signal);
    if lo >= range.0 && hi <= range.1 {
        return Ok(());
    }
    if size(signal).0 > FINE_CHECK_MAX_POINTS {
        return Err(script_error(format!(
            "{what}: the signal's bounds [{lo}, {hi}] leave its range {}",
            text(range)
        )));
    }
    let steps = (MAX_SIM_TIME_S * FINE_CHECK_RATE_HZ).round() as u64;
    for k in 0..=steps {
        let t = k as f64 / FINE_CHECK_RATE_HZ;
        let v = signal.value(t);
        if !(range.0..=range.1).contains(&v) {
            return Err(script_error(format!(
                "{what}: the signal is {v} at t = {t} s, outside its range {}",
                text(range)
            )));
        }
    }
    Ok(())
}

/// Lower and upper bounds of a signal over all time.
pub(crate) fn bounds(signal: &Signal) -> (f64, f64) {
    let sorted = |a: f64, b: f64| (a.min(b), a.max(b));
    match signal {
        Signal::Constant(v) => (*v, *v),
        Signal::Step { from, to, .. } => sorted(*from, *to),
        Signal::Ramp { rate, limit, .. } => match limit {
            Some(l) => sorted(0.0, *l),
            None if *rate > 0.0 => (0.0, f64::INFINITY),
            None if *rate < 0.0 => (f64::NEG_INFINITY, 0.0),
            None => (0.0, 0.0),
        },
        Signal::Sine { amplitude, .. }
        | Signal::SineWithDwell { amplitude, .. }
        | Signal::Chirp { amplitude, .. } => (-amplitude.abs(), amplitude.abs()),
        Signal::Table { values, .. } => values
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &v| {
                (lo.min(v), hi.max(v))
            }),
        Signal::Sum(parts) => parts
            .iter()
            .map(bounds)
            .fold((0.0, 0.0), |(lo, hi), b| (lo + b.0, hi + b.1)),
        Signal::Sequence { signals, .. } => signals
            .iter()
            .map(bounds)
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), b| {
                (lo.min(b.0), hi.max(b.1))
            }),
        Signal::Scale { gain, signal } => {
            let (lo, hi) = bounds(signal);
            sorted(gain * lo, gain * hi)
        }
        Signal::Offset { offset, signal } => {
            let (lo, hi) = bounds(signal);
            (lo + offset, hi + offset)
        }
    }
}

/// Parts and table points of a signal, and its nesting depth.
fn size(signal: &Signal) -> (usize, usize) {
    let of_all = |signals: &[Signal]| {
        signals
            .iter()
            .map(size)
            .fold((1_usize, 1_usize), |(n, d), (sn, sd)| {
                (n.saturating_add(sn), d.max(sd + 1))
            })
    };
    match signal {
        Signal::Table { times, .. } => (1 + times.len(), 1),
        Signal::Sum(parts) => of_all(parts),
        Signal::Sequence { signals, .. } => of_all(signals),
        Signal::Scale { signal, .. } | Signal::Offset { signal, .. } => {
            let (n, d) = size(signal);
            (n + 1, d + 1)
        }
        _ => (1, 1),
    }
}

/// `signal`, unless it is too large or too deeply nested.
pub(crate) fn sized(signal: Signal) -> Res<Signal> {
    let (points, depth) = size(&signal);
    if points > MAX_SIGNAL_POINTS {
        return Err(script_error(format!(
            "signal too large: {points} parts and table points, at most {MAX_SIGNAL_POINTS}"
        )));
    }
    if depth > MAX_SIGNAL_DEPTH {
        return Err(script_error(format!(
            "signal nested {depth} deep, at most {MAX_SIGNAL_DEPTH} (a signal built up in a loop? use table or sequence)"
        )));
    }
    Ok(signal)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Bounds are exact for single shapes; a pulse made of two steps has
    /// loose bounds but passes the fine check; a real excursion fails with
    /// its time.
    #[test]
    fn signals_are_checked_against_their_range() {
        let step = Signal::step(0.0, 0.5, 1.0, 10.0).unwrap();
        assert_eq!(bounds(&step), (0.0, 0.5));
        assert!(check_signal("brake", &step, UNIT_RANGE).is_ok());
        let down = Signal::step(0.0, -0.5, 3.0, 10.0).unwrap();
        let pulse = Signal::sum(vec![step.clone(), down.clone()]).unwrap();
        assert_eq!(bounds(&pulse), (-0.5, 0.5));
        assert!(check_signal("brake", &pulse, UNIT_RANGE).is_ok());
        let err = check_signal("brake", &down, UNIT_RANGE)
            .unwrap_err()
            .to_string();
        assert!(
            err.contains("brake: the signal is -") && err.contains("outside its range 0…1"),
            "{err}"
        );
        let ramp = Signal::ramp(0.0, 1.0, None).unwrap();
        assert!(check_signal("drive", &ramp, UNIT_RANGE).is_err());
        let err = check_value("brake", -1.0, UNIT_RANGE)
            .unwrap_err()
            .to_string();
        assert!(err.contains("brake = -1 is outside its range 0…1"), "{err}");
        assert!(check_value("target speed", 1e9, NON_NEGATIVE).is_ok());
    }

    /// A signal nested in a loop is refused once too deep.
    #[test]
    fn deep_signals_are_refused() {
        let mut s = Signal::Constant(0.0);
        for _ in 0..MAX_SIGNAL_DEPTH - 1 {
            s = sized(s.offset(1.0).unwrap()).unwrap();
        }
        let err = sized(s.offset(1.0).unwrap()).unwrap_err().to_string();
        assert!(err.contains("nested 33 deep"), "{err}");
    }
}
