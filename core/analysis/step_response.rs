//! ISO 7401 step-steer evaluation: response time, peak response time,
//! overshoot and steady-state gain from sampled time histories.
//!
//! Definitions (ISO 7401:2011, from memory; summarised in the project's
//! reference notes): time zero is the instant the steering-wheel angle
//! reaches 50 % of its final value; the response time is the time from there
//! until the response first reaches 90 % of its steady-state value; the peak
//! response time is the time from there to the response maximum; overshoot is
//! (peak − steady)/steady. The same evaluation serves yaw rate and lateral
//! acceleration (any response channel).
//!
//! This module only evaluates records; it does not generate the steer input
//! (see [`crate::manoeuvre::signals`]).

use super::{AnalysisError, check_record, first_rising_crossing};

/// Settings of the step-response evaluation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StepResponseOptions {
    /// Length of the final window over which steady-state values are averaged,
    /// s. Default 1.0 s (common practice; ISO 7401 asks for a steady state to
    /// be held, not for a particular window).
    pub steady_window: f64,
    /// Largest allowed (max − min) spread within the final window, as a
    /// fraction of the |mean| there, for a channel to count as steady.
    /// Default 0.02 (common practice).
    pub steady_tolerance: f64,
}

impl Default for StepResponseOptions {
    fn default() -> Self {
        Self {
            steady_window: 1.0,
            steady_tolerance: 0.02,
        }
    }
}

/// ISO 7401 step-steer metrics of one response channel.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StepResponse {
    /// Time zero: steering-wheel angle first reaches 50 % of its final value,
    /// s (record time base, linearly interpolated).
    pub t0: f64,
    /// Steady-state steering-wheel angle (mean over the final window), rad.
    pub steer_steady: f64,
    /// Steady-state response (mean over the final window), response units.
    pub response_steady: f64,
    /// Response time: from t0 to the first instant the response reaches 90 %
    /// of its steady-state value, s.
    pub response_time: f64,
    /// Peak response time: from t0 to the response maximum, s. `None` when the
    /// response has no maximum above its steady-state value before the final
    /// window (no overshoot).
    pub peak_response_time: Option<f64>,
    /// Peak response value (same sign as the steady state), response units;
    /// equals `response_steady` when there is no overshoot.
    pub peak_value: f64,
    /// Overshoot (peak − steady)/steady, dimensionless; 0.0 when there is no
    /// overshoot.
    pub overshoot: f64,
    /// Steady-state gain response/steering-wheel angle, response units per rad.
    pub steady_state_gain: f64,
}

/// Evaluate a step steer. `time` in s (strictly increasing),
/// `steer_wheel_angle` in rad (either sign: left or right step), `response`
/// in its own units (e.g. yaw rate, rad/s; either sign).
///
/// Errors: inconsistent or non-finite input, a record shorter than the final
/// window, a steer or response that is not steady (or is zero) at the end,
/// no 50 % steer crossing or no 90 % response crossing. Never panics.
///
/// ```
/// use yawdyn::analysis::{step_response, StepResponseOptions};
/// let time: Vec<f64> = (0..=500).map(|i| i as f64 * 0.01).collect();
/// let steer: Vec<f64> = time.iter().map(|&t| if t >= 1.0 { 0.5 } else { 0.0 }).collect();
/// let yaw: Vec<f64> = time.iter().map(|&t| if t >= 1.0 { 0.2 * (1.0 - (-(t - 1.0) / 0.1).exp()) } else { 0.0 }).collect();
/// let m = step_response(&time, &steer, &yaw, StepResponseOptions::default()).unwrap();
/// assert!((m.steady_state_gain - 0.4).abs() < 1e-6);
/// ```
pub fn step_response(
    time: &[f64],
    steer_wheel_angle: &[f64],
    response: &[f64],
    options: StepResponseOptions,
) -> Result<StepResponse, AnalysisError> {
    check_record(
        time,
        &[
            ("steer_wheel_angle", steer_wheel_angle),
            ("response", response),
        ],
        3,
    )?;
    let window = options.steady_window;
    if !(window.is_finite() && window > 0.0) {
        return Err(AnalysisError::InvalidParameter {
            name: "steady_window",
            value: window,
            expected: "finite and > 0 s",
        });
    }
    if !(options.steady_tolerance.is_finite() && options.steady_tolerance >= 0.0) {
        return Err(AnalysisError::InvalidParameter {
            name: "steady_tolerance",
            value: options.steady_tolerance,
            expected: "finite and >= 0",
        });
    }
    let end = time[time.len() - 1];
    let window_start_time = end - window;
    if window_start_time <= time[0] {
        return Err(AnalysisError::RecordTooShort {
            event: "start of the steady-state window",
            needed: time[0] + window,
            end,
        });
    }
    let window_start = time.partition_point(|&t| t < window_start_time);

    let steer_steady = steady_mean(
        "steer_wheel_angle",
        &steer_wheel_angle[window_start..],
        options,
    )?;
    let response_steady = steady_mean("response", &response[window_start..], options)?;

    let steer_sign = steer_steady.signum();
    let t0 = first_rising_crossing(
        time,
        steer_wheel_angle,
        steer_sign,
        0.5 * steer_steady.abs(),
        0,
    )
    .ok_or(AnalysisError::EventNotFound {
        event: "50 % steering-wheel angle crossing",
    })?;
    let start = time.partition_point(|&t| t < t0);

    let sign = response_steady.signum();
    let steady_abs = response_steady.abs();
    let t90 = first_rising_crossing(time, response, sign, 0.9 * steady_abs, start).ok_or(
        AnalysisError::EventNotFound {
            event: "90 % response crossing",
        },
    )?;

    // Maximum of the sign-corrected response from t0 on.
    let mut peak_index = start;
    for i in start..response.len() {
        if sign * response[i] > sign * response[peak_index] {
            peak_index = i;
        }
    }
    let peak_abs = sign * response[peak_index];
    let (peak_response_time, peak_value, overshoot) =
        if peak_index < window_start && peak_abs > steady_abs && peak_index > start {
            let (tp, vp) = refine_peak(time, response, sign, peak_index);
            (Some(tp - t0), sign * vp, (vp - steady_abs) / steady_abs)
        } else {
            (None, response_steady, 0.0)
        };

    Ok(StepResponse {
        t0,
        steer_steady,
        response_steady,
        response_time: t90 - t0,
        peak_response_time,
        peak_value,
        overshoot,
        steady_state_gain: response_steady / steer_steady,
    })
}

/// Mean of a final-window slice, checked for steadiness and non-zero value.
fn steady_mean(
    channel: &'static str,
    values: &[f64],
    options: StepResponseOptions,
) -> Result<f64, AnalysisError> {
    if values.is_empty() {
        return Err(AnalysisError::TooFewSamples { got: 0, need: 1 });
    }
    let mean = values.iter().sum::<f64>() / values.len() as f64;
    let max = values.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let min = values.iter().copied().fold(f64::INFINITY, f64::min);
    let limit = options.steady_tolerance * mean.abs();
    if mean == 0.0 {
        return Err(AnalysisError::ZeroSteadyState { channel });
    }
    if max - min > limit {
        return Err(AnalysisError::NoSteadyState {
            channel,
            window: options.steady_window,
            spread: max - min,
            limit,
        });
    }
    Ok(mean)
}

/// Vertex of the parabola through the sign-corrected samples around
/// `index`; falls back to the sample itself on uneven or degenerate data.
/// Returns (time, sign-corrected value).
fn refine_peak(time: &[f64], values: &[f64], sign: f64, index: usize) -> (f64, f64) {
    let sample = (time[index], sign * values[index]);
    if index == 0 || index + 1 >= values.len() {
        return sample;
    }
    let (t0, t1, t2) = (time[index - 1], time[index], time[index + 1]);
    let (y0, y1, y2) = (
        sign * values[index - 1],
        sign * values[index],
        sign * values[index + 1],
    );
    // Lagrange parabola through three (possibly unevenly spaced) points.
    let d0 = (t0 - t1) * (t0 - t2);
    let d1 = (t1 - t0) * (t1 - t2);
    let d2 = (t2 - t0) * (t2 - t1);
    let a = y0 / d0 + y1 / d1 + y2 / d2;
    let b = -(y0 * (t1 + t2) / d0 + y1 * (t0 + t2) / d1 + y2 * (t0 + t1) / d2);
    let c = y0 * t1 * t2 / d0 + y1 * t0 * t2 / d1 + y2 * t0 * t1 / d2;
    // Not a downward parabola (or NaN): keep the sample.
    if a.is_nan() || a >= 0.0 {
        return sample;
    }
    let tv = -b / (2.0 * a);
    if !(t0..=t2).contains(&tv) {
        return sample;
    }
    (tv, (a * tv + b) * tv + c)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use std::f64::consts::PI;

    const DT: f64 = 1e-3;

    fn time_base(end: f64) -> Vec<f64> {
        let n = (end / DT).round() as usize;
        (0..=n).map(|i| i as f64 * DT).collect()
    }

    /// Unit-step response of ωn²/(s² + 2ζωn s + ωn²), ζ < 1 (any control text,
    /// e.g. Ogata, *Modern Control Engineering*, ch. 5).
    fn second_order_step(t: f64, zeta: f64, wn: f64) -> f64 {
        if t <= 0.0 {
            return 0.0;
        }
        let wd = wn * (1.0 - zeta * zeta).sqrt();
        let sigma = zeta * wn;
        1.0 - (-sigma * t).exp() * ((wd * t).cos() + sigma / wd * (wd * t).sin())
    }

    /// Unit-ramp response of the same system (integral of the step response):
    /// t − 2ζ/ωn + e^(−σt)·[(2ζ/ωn)·cos ωd t + ((2ζ² − 1)/ωd)·sin ωd t]
    /// (derived here by integrating the step response; checked: value and slope
    /// vanish at t = 0 and its derivative is the step response).
    fn second_order_ramp(t: f64, zeta: f64, wn: f64) -> f64 {
        if t <= 0.0 {
            return 0.0;
        }
        let wd = wn * (1.0 - zeta * zeta).sqrt();
        let sigma = zeta * wn;
        t - 2.0 * zeta / wn
            + (-sigma * t).exp()
                * (2.0 * zeta / wn * (wd * t).cos()
                    + (2.0 * zeta * zeta - 1.0) / wd * (wd * t).sin())
    }

    fn bisect(mut lo: f64, mut hi: f64, f: impl Fn(f64) -> f64) -> f64 {
        assert!(f(lo) < 0.0 && f(hi) > 0.0);
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if f(mid) < 0.0 { lo = mid } else { hi = mid }
        }
        0.5 * (lo + hi)
    }

    #[test]
    fn first_order_lag_response_time_is_tau_ln10() {
        // y = G·A·(1 − e^(−t/τ)) reaches 90 % at τ·ln 10; no overshoot.
        let (tau, gain, amp, t_step) = (0.15, 0.3, 0.8, 1.0);
        let time = time_base(6.0);
        let steer: Vec<f64> = time
            .iter()
            .map(|&t| if t >= t_step { amp } else { 0.0 })
            .collect();
        let yaw: Vec<f64> = time
            .iter()
            .map(|&t| {
                if t >= t_step {
                    gain * amp * (1.0 - (-(t - t_step) / tau).exp())
                } else {
                    0.0
                }
            })
            .collect();
        let m = step_response(&time, &steer, &yaw, StepResponseOptions::default()).unwrap();
        // The sampled ideal step passes 50 % half a sample before t_step.
        assert_relative_eq!(m.t0, t_step - 0.5 * DT, epsilon = 1e-12);
        assert_relative_eq!(m.response_time, tau * 10f64.ln() + 0.5 * DT, epsilon = 2e-5);
        assert_eq!(m.peak_response_time, None);
        assert_eq!(m.overshoot, 0.0);
        assert_relative_eq!(m.steady_state_gain, gain, max_relative = 1e-9);
    }

    #[test]
    fn second_order_ideal_step_matches_closed_forms() {
        // Peak time π/ωd, overshoot exp(−ζπ/√(1−ζ²)) (Ogata ch. 5); 90 % rise
        // time by bisection of the analytic response.
        let (zeta, wn, gain, amp, t_step): (f64, f64, f64, f64, f64) = (0.4, 9.0, 0.25, 1.2, 0.5);
        let wd = wn * (1.0 - zeta * zeta).sqrt();
        let time = time_base(6.0);
        let steer: Vec<f64> = time
            .iter()
            .map(|&t| if t >= t_step { amp } else { 0.0 })
            .collect();
        let yaw: Vec<f64> = time
            .iter()
            .map(|&t| gain * amp * second_order_step(t - t_step, zeta, wn))
            .collect();
        let m = step_response(&time, &steer, &yaw, StepResponseOptions::default()).unwrap();
        let t0 = t_step - 0.5 * DT;
        assert_relative_eq!(m.t0, t0, epsilon = 1e-12);
        let t_peak = PI / wd;
        let overshoot = (-zeta * PI / (1.0 - zeta * zeta).sqrt()).exp();
        let t90 = bisect(0.0, t_peak, |t| second_order_step(t, zeta, wn) - 0.9);
        println!(
            "ideal step: peak time {:.6} s (expected {:.6}); overshoot {:.6} (expected {overshoot:.6}); response time {:.6} s (expected {:.6})",
            m.peak_response_time.unwrap(),
            t_peak + t_step - t0,
            m.overshoot,
            m.response_time,
            t90 + t_step - t0
        );
        assert_relative_eq!(
            m.peak_response_time.unwrap(),
            t_peak + t_step - t0,
            epsilon = 1e-5
        );
        assert_relative_eq!(m.overshoot, overshoot, epsilon = 1e-6);
        assert_relative_eq!(m.response_time, t90 + t_step - t0, epsilon = 1e-5);
        assert_relative_eq!(m.steady_state_gain, gain, max_relative = 1e-6);
    }

    #[test]
    fn second_order_ramp_steer_shifts_t0_to_half_ramp() {
        // Steer ramps 0 → A over Tr from ts, so t0 = ts + Tr/2. The response is
        // y(t) = G·A·[S(t − ts) − S(t − ts − Tr)]/Tr with S the unit-ramp
        // response. Its first maximum (y' = 0, t' = t − ts > Tr) solves
        // e^(−σt') sin(ωd t' + φ) = e^(−σ(t'−Tr)) sin(ωd(t' − Tr) + φ), φ = acos ζ,
        // i.e. tan u = e^(σTr) sin θ / (e^(σTr) cos θ − 1), u = ωd t' + φ,
        // θ = ωd·Tr, taking u = atan2(...) + π (→ t' = π/ωd as Tr → 0).
        let (zeta, wn, gain, amp, ts, tr): (f64, f64, f64, f64, f64, f64) =
            (0.5, 8.0, 0.3, -1.5, 0.7, 0.15);
        let wd = wn * (1.0 - zeta * zeta).sqrt();
        let sigma = zeta * wn;
        let response = |t: f64| {
            gain * amp
                * (second_order_ramp(t - ts, zeta, wn) - second_order_ramp(t - ts - tr, zeta, wn))
                / tr
        };
        let time = time_base(6.0);
        let steer: Vec<f64> = time
            .iter()
            .map(|&t| amp * ((t - ts) / tr).clamp(0.0, 1.0))
            .collect();
        let yaw: Vec<f64> = time.iter().map(|&t| response(t)).collect();
        let m = step_response(&time, &steer, &yaw, StepResponseOptions::default()).unwrap();

        let t0 = ts + 0.5 * tr;
        let e = (sigma * tr).exp();
        let theta = wd * tr;
        let u = (e * theta.sin()).atan2(e * theta.cos() - 1.0) + PI;
        let t_peak = (u - zeta.acos()) / wd; // after ts
        assert!(t_peak > tr);
        let peak = response(ts + t_peak);
        let steady = gain * amp;
        let overshoot = (peak - steady) / steady;
        let t90 = bisect(ts, ts + t_peak, |t| response(t) / steady - 0.9);

        assert_relative_eq!(m.t0, t0, epsilon = 1e-9);
        println!(
            "ramp steer: t0 {t0:.4} s; peak time {:.6} s (expected {:.6}); overshoot {:.6} (expected {overshoot:.6}); response time {:.6} s (expected {:.6})",
            m.peak_response_time.unwrap(),
            ts + t_peak - t0,
            m.overshoot,
            m.response_time,
            t90 - t0
        );
        assert_relative_eq!(
            m.peak_response_time.unwrap(),
            ts + t_peak - t0,
            epsilon = 1e-5
        );
        assert_relative_eq!(m.overshoot, overshoot, epsilon = 1e-6);
        assert_relative_eq!(m.peak_value, peak, max_relative = 1e-6);
        assert_relative_eq!(m.response_time, t90 - t0, epsilon = 1e-5);
        assert_relative_eq!(m.steady_state_gain, gain, max_relative = 1e-6);
        // A finite ramp is slower and overshoots less than the ideal step.
        assert!(overshoot < (-zeta * PI / (1.0 - zeta * zeta).sqrt()).exp());
    }

    #[test]
    fn sign_of_the_step_does_not_change_the_metrics() {
        let time = time_base(5.0);
        let make = |sign: f64| -> (Vec<f64>, Vec<f64>) {
            let steer = time
                .iter()
                .map(|&t| if t >= 1.0 { sign * 0.5 } else { 0.0 })
                .collect();
            let yaw = time
                .iter()
                .map(|&t| sign * 0.2 * second_order_step(t - 1.0, 0.6, 10.0))
                .collect();
            (steer, yaw)
        };
        let (sl, yl) = make(1.0);
        let (sr, yr) = make(-1.0);
        let left = step_response(&time, &sl, &yl, StepResponseOptions::default()).unwrap();
        let right = step_response(&time, &sr, &yr, StepResponseOptions::default()).unwrap();
        assert_eq!(left.t0, right.t0);
        assert_eq!(left.response_time, right.response_time);
        assert_eq!(left.peak_response_time, right.peak_response_time);
        assert_eq!(left.overshoot, right.overshoot);
        assert_eq!(left.steady_state_gain, right.steady_state_gain);
        assert_eq!(left.peak_value, -right.peak_value);
        assert!(left.overshoot > 0.0);
    }

    #[test]
    fn bad_records_give_errors_not_panics() {
        let time = time_base(5.0);
        let opts = StepResponseOptions::default();
        let steer: Vec<f64> = time
            .iter()
            .map(|&t| if t >= 1.0 { 0.5 } else { 0.0 })
            .collect();
        // Lightly damped: still ringing at the end.
        let ringing: Vec<f64> = time
            .iter()
            .map(|&t| second_order_step(t - 1.0, 0.01, 10.0))
            .collect();
        assert!(matches!(
            step_response(&time, &steer, &ringing, opts),
            Err(AnalysisError::NoSteadyState {
                channel: "response",
                ..
            })
        ));
        // Steer still ramping at the end.
        let ramp: Vec<f64> = time.iter().map(|&t| 0.1 * t).collect();
        assert!(matches!(
            step_response(&time, &ramp, &ringing, opts),
            Err(AnalysisError::NoSteadyState {
                channel: "steer_wheel_angle",
                ..
            })
        ));
        // No steer at all.
        let zero = vec![0.0; time.len()];
        assert_eq!(
            step_response(&time, &zero, &zero, opts),
            Err(AnalysisError::ZeroSteadyState {
                channel: "steer_wheel_angle"
            })
        );
        // Mismatched lengths, NaN, non-increasing time, too short.
        assert!(matches!(
            step_response(&time, &steer[1..], &steer, opts),
            Err(AnalysisError::LengthMismatch { .. })
        ));
        let mut nan = steer.clone();
        nan[10] = f64::NAN;
        assert!(matches!(
            step_response(&time, &nan, &steer, opts),
            Err(AnalysisError::NonFinite { index: 10, .. })
        ));
        let mut back = time.clone();
        back[5] = back[4];
        assert!(matches!(
            step_response(&back, &steer, &steer, opts),
            Err(AnalysisError::TimeNotIncreasing { index: 5, .. })
        ));
        let short = &time[..500];
        assert!(matches!(
            step_response(short, &steer[..500], &steer[..500], opts),
            Err(AnalysisError::RecordTooShort { .. })
        ));
    }
}
