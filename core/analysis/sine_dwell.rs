//! FMVSS No. 126 (49 CFR 571.126) sine-with-dwell evaluation: lateral
//! stability (yaw-rate ratios) and responsiveness (lateral displacement).
//!
//! Definitions as summarised in the project's reference notes (clause
//! numbers from memory: S5.2 criteria, S7.9 manoeuvre, S7.11 data
//! processing):
//! - beginning of steer (BOS): first instant the zeroed steering-wheel angle
//!   passes 5° in the direction of the first half-cycle;
//! - completion of steer (COS): the return to zero of the steering-wheel
//!   angle after the dwell;
//! - the yaw-rate peak is the first peak recorded after the steering-wheel
//!   angle changes sign (the peak produced by the steering reversal);
//! - yaw rate at COS + 1.00 s ≤ 35 % and at COS + 1.75 s ≤ 20 % of that peak;
//! - lateral displacement of the CG at BOS + 1.07 s ≥ 1.83 m for a gross
//!   vehicle mass ≤ 3,500 kg, ≥ 1.52 m above (applies to runs with amplitude
//!   ≥ 5·A; the caller decides whether it applies).
//!
//! The peak search takes the first local maximum in the sampled data, so
//! measured data must be filtered first (simulation output is smooth). This
//! module evaluates records; the input itself is
//! [`crate::manoeuvre::signals::Signal::sine_with_dwell`].

use super::{AnalysisError, check_record, first_rising_crossing, interpolate};

/// Beginning-of-steer threshold, 5° in rad.
pub const BEGINNING_OF_STEER_THRESHOLD: f64 = 5.0 * std::f64::consts::PI / 180.0;
/// Limit on yaw rate at COS + 1.00 s as a fraction of the peak (35 %).
pub const YAW_RATE_RATIO_LIMIT_1_00: f64 = 0.35;
/// Limit on yaw rate at COS + 1.75 s as a fraction of the peak (20 %).
pub const YAW_RATE_RATIO_LIMIT_1_75: f64 = 0.20;
/// Minimum lateral displacement at BOS + 1.07 s, gross mass ≤ 3,500 kg, m.
pub const LATERAL_DISPLACEMENT_LIMIT_LIGHT: f64 = 1.83;
/// Minimum lateral displacement at BOS + 1.07 s, gross mass > 3,500 kg, m.
pub const LATERAL_DISPLACEMENT_LIMIT_HEAVY: f64 = 1.52;
/// Gross vehicle mass separating the two displacement limits, kg.
pub const DISPLACEMENT_MASS_THRESHOLD: f64 = 3500.0;

/// One sine-with-dwell run, sampled on a common time base.
#[derive(Debug, Clone, Copy)]
pub struct SineDwellTrace<'a> {
    /// Time, s, strictly increasing.
    pub time: &'a [f64],
    /// Zeroed steering-wheel angle, rad, positive anticlockwise.
    pub steer_wheel_angle: &'a [f64],
    /// Yaw rate, rad/s, positive anticlockwise seen from above.
    pub yaw_rate: &'a [f64],
    /// Lateral displacement of the CG from its path at the start, in the
    /// initial heading frame (y left), m.
    pub lateral_displacement: &'a [f64],
}

/// FMVSS 126 metrics and verdicts of one run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SineDwellResult {
    /// Direction of the first half-cycle: +1.0 anticlockwise, −1.0 clockwise.
    pub direction: f64,
    /// Beginning of steer, s (record time base).
    pub beginning_of_steer: f64,
    /// Completion of steer, s.
    pub completion_of_steer: f64,
    /// First yaw-rate peak after the steering-wheel angle changes sign, rad/s
    /// (signed; opposite to `direction`).
    pub peak_yaw_rate: f64,
    /// Time of that peak, s.
    pub peak_yaw_rate_time: f64,
    /// Yaw rate at COS + 1.00 s divided by the peak (dimensionless).
    pub yaw_rate_ratio_1_00: f64,
    /// Yaw rate at COS + 1.75 s divided by the peak (dimensionless).
    pub yaw_rate_ratio_1_75: f64,
    /// Lateral displacement at BOS + 1.07 s in the direction of the first
    /// half-cycle, m (negative if the car moved the other way).
    pub lateral_displacement_1_07: f64,
    /// Applicable displacement limit, m (1.83 or 1.52 by gross mass).
    pub displacement_limit: f64,
    /// Yaw-rate ratio at COS + 1.00 s ≤ 35 %.
    pub passes_yaw_rate_1_00: bool,
    /// Yaw-rate ratio at COS + 1.75 s ≤ 20 %.
    pub passes_yaw_rate_1_75: bool,
    /// Lateral displacement ≥ the limit.
    pub passes_lateral_displacement: bool,
}

/// Evaluate one sine-with-dwell run. `gross_vehicle_mass` in kg selects the
/// displacement limit. Errors on inconsistent data, a missing event, or a
/// record that ends before COS + 1.75 s. Never panics.
pub fn evaluate_sine_with_dwell(
    trace: &SineDwellTrace<'_>,
    gross_vehicle_mass: f64,
) -> Result<SineDwellResult, AnalysisError> {
    let time = trace.time;
    let steer = trace.steer_wheel_angle;
    let yaw = trace.yaw_rate;
    check_record(
        time,
        &[
            ("steer_wheel_angle", steer),
            ("yaw_rate", yaw),
            ("lateral_displacement", trace.lateral_displacement),
        ],
        3,
    )?;
    if !(gross_vehicle_mass.is_finite() && gross_vehicle_mass > 0.0) {
        return Err(AnalysisError::InvalidParameter {
            name: "gross_vehicle_mass",
            value: gross_vehicle_mass,
            expected: "finite and > 0 kg",
        });
    }
    let threshold = BEGINNING_OF_STEER_THRESHOLD;
    let first =
        steer
            .iter()
            .position(|d| d.abs() >= threshold)
            .ok_or(AnalysisError::EventNotFound {
                event: "beginning of steer (|steering-wheel angle| ≥ 5°)",
            })?;
    let direction = steer[first].signum();
    let bos = first_rising_crossing(time, steer, direction, threshold, first.saturating_sub(1))
        .ok_or(AnalysisError::EventNotFound {
            event: "beginning of steer",
        })?;

    // Steering reversal: first sign change after BOS.
    let reversal_index = (first..steer.len())
        .find(|&i| direction * steer[i] < 0.0)
        .ok_or(AnalysisError::EventNotFound {
            event: "steering-wheel angle sign change",
        })?;
    // The dwell: the extreme of the second half-cycle.
    let mut dwell_index = reversal_index;
    for i in reversal_index..steer.len() {
        if -direction * steer[i] > -direction * steer[dwell_index] {
            dwell_index = i;
        }
    }
    let cos = first_rising_crossing(time, steer, direction, 0.0, dwell_index).ok_or(
        AnalysisError::EventNotFound {
            event: "completion of steer (return to zero after the dwell)",
        },
    )?;

    // First local maximum of the reversed-direction yaw rate after reversal.
    let peak_index = (reversal_index.max(1)..yaw.len().saturating_sub(1))
        .find(|&i| {
            let v = -direction * yaw[i];
            v > 0.0 && v >= -direction * yaw[i - 1] && v > -direction * yaw[i + 1]
        })
        .ok_or(AnalysisError::EventNotFound {
            event: "yaw-rate peak after the steering reversal",
        })?;
    let peak_yaw_rate = yaw[peak_index];

    let end = time[time.len() - 1];
    let at = |event: &'static str, values: &[f64], t: f64| {
        interpolate(time, values, t).ok_or(AnalysisError::RecordTooShort {
            event,
            needed: t,
            end,
        })
    };
    let yaw_1_00 = at("COS + 1.00 s", yaw, cos + 1.00)?;
    let yaw_1_75 = at("COS + 1.75 s", yaw, cos + 1.75)?;
    let y_1_07 = at("BOS + 1.07 s", trace.lateral_displacement, bos + 1.07)?;

    let ratio_1_00 = yaw_1_00 / peak_yaw_rate;
    let ratio_1_75 = yaw_1_75 / peak_yaw_rate;
    let displacement = direction * y_1_07;
    let displacement_limit = if gross_vehicle_mass <= DISPLACEMENT_MASS_THRESHOLD {
        LATERAL_DISPLACEMENT_LIMIT_LIGHT
    } else {
        LATERAL_DISPLACEMENT_LIMIT_HEAVY
    };
    Ok(SineDwellResult {
        direction,
        beginning_of_steer: bos,
        completion_of_steer: cos,
        peak_yaw_rate,
        peak_yaw_rate_time: time[peak_index],
        yaw_rate_ratio_1_00: ratio_1_00,
        yaw_rate_ratio_1_75: ratio_1_75,
        lateral_displacement_1_07: displacement,
        displacement_limit,
        passes_yaw_rate_1_00: ratio_1_00 <= YAW_RATE_RATIO_LIMIT_1_00,
        passes_yaw_rate_1_75: ratio_1_75 <= YAW_RATE_RATIO_LIMIT_1_75,
        passes_lateral_displacement: displacement >= displacement_limit,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::manoeuvre::TurnDirection;
    use crate::manoeuvre::signals::Signal;
    use approx::assert_relative_eq;

    const DT: f64 = 1e-3;
    const START: f64 = 0.5;
    const AMPLITUDE_DEG: f64 = 100.0;

    struct Run {
        time: Vec<f64>,
        steer: Vec<f64>,
        yaw: Vec<f64>,
        y: Vec<f64>,
    }

    /// Invented trace built so the answers are known: steering from the
    /// sine-with-dwell signal; yaw rate piecewise linear through chosen nodes
    /// (first lobe +20 °/s, reversal peak −30 °/s at START + 1.2 s, then −6 °/s
    /// at COS + 1.00 s and `tail` °/s at COS + 1.75 s); lateral displacement
    /// c·(t − START)².
    fn run(sign: f64, tail_deg: f64, c: f64) -> Run {
        let direction = if sign > 0.0 {
            TurnDirection::Left
        } else {
            TurnDirection::Right
        };
        let steer_sig =
            Signal::sine_with_dwell(AMPLITUDE_DEG.to_radians(), direction, START).unwrap();
        let cos = START + 1.0 / 0.7 + 0.5;
        let yaw_sig = Signal::table(
            vec![
                0.0,
                START,
                START + 0.4,
                START + 1.2,
                cos + 1.0,
                cos + 1.75,
                cos + 3.0,
            ],
            [0.0, 0.0, 20.0, -30.0, -6.0, tail_deg, 0.0]
                .iter()
                .map(|v: &f64| sign * v.to_radians())
                .collect(),
        )
        .unwrap();
        let n = ((cos + 3.0) / DT).round() as usize;
        let time: Vec<f64> = (0..=n).map(|i| i as f64 * DT).collect();
        Run {
            steer: time.iter().map(|&t| steer_sig.value(t)).collect(),
            yaw: time.iter().map(|&t| yaw_sig.value(t)).collect(),
            y: time
                .iter()
                .map(|&t| sign * c * (t - START).max(0.0).powi(2))
                .collect(),
            time,
        }
    }

    fn evaluate(r: &Run, mass: f64) -> Result<SineDwellResult, AnalysisError> {
        let trace = SineDwellTrace {
            time: &r.time,
            steer_wheel_angle: &r.steer,
            yaw_rate: &r.yaw,
            lateral_displacement: &r.y,
        };
        evaluate_sine_with_dwell(&trace, mass)
    }

    #[test]
    fn events_and_ratios_found_as_constructed() {
        for sign in [1.0, -1.0] {
            let r = run(sign, -1.5, 2.0);
            let m = evaluate(&r, 1800.0).unwrap();
            assert_eq!(m.direction, sign);
            // BOS: A·sin(2πf(t − START)) = 5° (49 CFR 571.126 definitions).
            let bos = START + (5.0 / AMPLITUDE_DEG).asin() / (2.0 * std::f64::consts::PI * 0.7);
            assert_relative_eq!(m.beginning_of_steer, bos, epsilon = 1e-6);
            // COS is found on the samples: the steer reaches exactly zero at the
            // first sample after the true end, so it is late by at most DT.
            let cos = START + 1.0 / 0.7 + 0.5;
            assert!((0.0..=DT).contains(&(m.completion_of_steer - cos)));
            assert_relative_eq!(
                m.peak_yaw_rate,
                -sign * 30f64.to_radians(),
                max_relative = 1e-9
            );
            assert_relative_eq!(m.peak_yaw_rate_time, START + 1.2, epsilon = 1e-9);
            // Ratio error from the COS sampling: ≤ DT·|yaw slope|/peak ≈ 2e-4.
            assert_relative_eq!(m.yaw_rate_ratio_1_00, 0.2, epsilon = 5e-4);
            assert_relative_eq!(m.yaw_rate_ratio_1_75, 0.05, epsilon = 5e-4);
            assert_relative_eq!(
                m.lateral_displacement_1_07,
                2.0 * (bos + 1.07 - START).powi(2),
                epsilon = 1e-6
            );
            assert!(
                m.passes_yaw_rate_1_00 && m.passes_yaw_rate_1_75 && m.passes_lateral_displacement
            );
            assert_eq!(m.displacement_limit, 1.83);
        }
    }

    #[test]
    fn failing_runs_are_flagged() {
        // Tail −7.5 °/s at COS + 1.75 s = 25 % > 20 %; c = 0.5 gives ≈ 0.58 m.
        let r = run(1.0, -7.5, 0.5);
        let m = evaluate(&r, 1800.0).unwrap();
        assert_relative_eq!(m.yaw_rate_ratio_1_75, 0.25, epsilon = 5e-4);
        assert!(m.passes_yaw_rate_1_00);
        assert!(!m.passes_yaw_rate_1_75);
        assert!(!m.passes_lateral_displacement);
        // c = 1.4 gives 1.4·1.0814² ≈ 1.64 m: passes 1.52 m (heavy) but fails
        // 1.83 m (light); the limit switches above 3,500 kg.
        let r = run(1.0, -1.5, 1.4);
        let light = evaluate(&r, 3500.0).unwrap();
        let heavy = evaluate(&r, 3500.1).unwrap();
        assert!(light.lateral_displacement_1_07 > 1.52 && light.lateral_displacement_1_07 < 1.83);
        assert!(!light.passes_lateral_displacement);
        assert!(heavy.passes_lateral_displacement);
        assert_eq!(heavy.displacement_limit, 1.52);
    }

    #[test]
    fn short_or_empty_records_give_errors() {
        let r = run(1.0, -1.5, 2.0);
        let cut = r.time.len() - 1500; // ends before COS + 1.75 s
        let trace = SineDwellTrace {
            time: &r.time[..cut],
            steer_wheel_angle: &r.steer[..cut],
            yaw_rate: &r.yaw[..cut],
            lateral_displacement: &r.y[..cut],
        };
        assert!(matches!(
            evaluate_sine_with_dwell(&trace, 1800.0),
            Err(AnalysisError::RecordTooShort {
                event: "COS + 1.75 s",
                ..
            })
        ));
        let zeros = vec![0.0; r.time.len()];
        let trace = SineDwellTrace {
            time: &r.time,
            steer_wheel_angle: &zeros,
            yaw_rate: &r.yaw,
            lateral_displacement: &r.y,
        };
        assert!(matches!(
            evaluate_sine_with_dwell(&trace, 1800.0),
            Err(AnalysisError::EventNotFound { .. })
        ));
    }
}
