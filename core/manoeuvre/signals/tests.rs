//! Tests of the signals.

use super::*;
use approx::assert_relative_eq;

#[test]
fn sine_with_dwell_matches_fmvss_126_definition() {
    // 49 CFR 571.126 S7.9 (clause from memory): 0.7 Hz sine, 500 ms dwell
    // beginning at the second peak (0.75/f = 1.0714 s after start), then
    // back to zero at 1/0.7 + 0.5 = 1.9286 s.
    let (amp, start) = (1.7, 0.3);
    let s = Signal::sine_with_dwell(amp, TurnDirection::Left, start).unwrap();
    let f = 0.7;
    assert_relative_eq!(0.75 / f, 1.0714, epsilon = 1e-4);
    assert_relative_eq!(1.0 / f + 0.5, 1.9286, epsilon = 1e-4);
    assert_eq!(s.value(start - 1e-9), 0.0);
    assert_relative_eq!(s.value(start + 0.25 / f), amp, epsilon = 1e-12); // first peak
    assert!(s.value(start + 0.5 / f - 1e-6) > 0.0 && s.value(start + 0.5 / f + 1e-6) < 0.0);
    // Dwell: exactly −A from 0.75/f for 0.5 s, measured on a 0.1 ms grid.
    let dt = 1e-4;
    let grid: Vec<f64> = (0..30_000).map(|i| start + i as f64 * dt).collect();
    let at_peak: Vec<f64> = grid
        .iter()
        .copied()
        .filter(|&t| (s.value(t) + amp).abs() < 1e-9)
        .collect();
    let (first, last) = (at_peak[0] - start, at_peak[at_peak.len() - 1] - start);
    assert_relative_eq!(first, 0.75 / f, epsilon = 2.0 * dt);
    assert_relative_eq!(last - first, 0.5, epsilon = 2.0 * dt);
    // Last quarter period back to zero; zero from 1/f + dwell on.
    assert_relative_eq!(
        s.value(start + 0.75 / f + 0.5 + 0.125 / f),
        -amp * (0.5f64).sqrt(),
        epsilon = 1e-12
    );
    let end = start + 1.0 / f + 0.5;
    assert!(s.value(end - 1e-3) < 0.0);
    assert_eq!(s.value(end), 0.0);
    assert_eq!(s.value(end + 1.0), 0.0);
    // Continuous everywhere (largest jump on the grid ≤ A·2πf·dt).
    let max_jump = grid
        .windows(2)
        .map(|w| (s.value(w[1]) - s.value(w[0])).abs())
        .fold(0.0, f64::max);
    assert!(max_jump <= amp * 2.0 * PI * f * dt * 1.0001);
    // Clockwise is the mirror image.
    let r = Signal::sine_with_dwell(amp, TurnDirection::Right, start).unwrap();
    for &t in grid.iter().step_by(97) {
        assert_eq!(r.value(t), -s.value(t));
    }
}

#[test]
fn step_changes_at_its_rate() {
    let up = Signal::step(1.0, 3.0, 2.0, 4.0).unwrap();
    assert_eq!(up.value(1.0), 1.0);
    assert_relative_eq!(up.value(2.25), 2.0, epsilon = 1e-12);
    assert_eq!(up.value(2.5), 3.0);
    assert_eq!(up.value(10.0), 3.0);
    let down = Signal::step(3.0, 1.0, 2.0, 4.0).unwrap();
    assert_relative_eq!(down.value(2.25), 2.0, epsilon = 1e-12);
    assert_eq!(down.value(2.6), 1.0);
    assert!(Signal::step(0.0, 1.0, 0.0, 0.0).is_err());
    assert!(Signal::step(0.0, 1.0, 0.0, f64::INFINITY).is_err());
}

#[test]
fn ramp_and_sine_limits() {
    let r = Signal::ramp(1.0, -2.0, Some(-3.0)).unwrap();
    assert_eq!(r.value(0.5), 0.0);
    assert_relative_eq!(r.value(2.0), -2.0);
    assert_eq!(r.value(5.0), -3.0);
    assert!(Signal::ramp(0.0, 1.0, Some(-1.0)).is_err());
    let s = Signal::sine(2.0, 0.5, 1.0, Some(1.5)).unwrap();
    assert_relative_eq!(s.value(1.5), 2.0, epsilon = 1e-12);
    assert_eq!(s.value(0.9), 0.0);
    assert_eq!(s.value(4.0), 0.0); // ended after 1.5 periods = 3 s
    assert!(Signal::sine(1.0, -0.5, 0.0, None).is_err());
    assert!(Signal::sine(1.0, 0.5, f64::NAN, None).is_err());
}

#[test]
fn table_interpolates_and_holds_ends() {
    let t = Signal::table(vec![0.0, 1.0, 3.0], vec![0.0, 2.0, -2.0]).unwrap();
    assert_eq!(t.value(-1.0), 0.0);
    assert_relative_eq!(t.value(0.5), 1.0);
    assert_eq!(t.value(1.0), 2.0);
    assert_relative_eq!(t.value(2.0), 0.0);
    assert_relative_eq!(t.value(2.5), -1.0);
    assert_eq!(t.value(5.0), -2.0);
    assert!(matches!(
        Signal::table(vec![0.0, 1.0, 1.0], vec![0.0; 3]),
        Err(SignalError::NotIncreasing { index: 2, .. })
    ));
    assert_eq!(
        Signal::table(vec![], vec![]),
        Err(SignalError::Empty { signal: "table" })
    );
    assert!(matches!(
        Signal::table(vec![0.0], vec![]),
        Err(SignalError::TableLengthMismatch { .. })
    ));
    assert!(Signal::table(vec![0.0, 1.0], vec![0.0, f64::NAN]).is_err());
}

#[test]
fn chirp_instantaneous_frequency_is_linear() {
    // Phase 2π(f0τ + (f1 − f0)τ²/2D) is quadratic, so between two
    // successive zero crossings (phase step π) the mean frequency
    // 1/(2Δt) equals the instantaneous frequency at the midpoint exactly.
    let (f0, f1, start, dur) = (0.2, 3.0, 0.5, 10.0);
    let c = Signal::chirp(1.0, f0, f1, start, dur).unwrap();
    let phase = |t: f64| f0 * (t - start) + 0.5 * (f1 - f0) * (t - start).powi(2) / dur;
    // Zero crossings where the phase (in cycles) is k/2: solve the quadratic.
    let crossing = |k: f64| {
        let (a, b, cc) = (0.5 * (f1 - f0) / dur, f0, -0.5 * k);
        start + (-b + (b * b - 4.0 * a * cc).sqrt()) / (2.0 * a)
    };
    let mut checked = 0;
    for k in 1..25 {
        let (ta, tb) = (crossing(k as f64), crossing(k as f64 + 1.0));
        if tb > start + dur {
            break;
        }
        // The signal really crosses zero there.
        assert!(c.value(ta).abs() < 1e-9, "k = {k}: {}", c.value(ta));
        assert!(c.value(ta - 1e-4) * c.value(ta + 1e-4) < 0.0);
        let mid = 0.5 * (ta + tb);
        let f_inst = f0 + (f1 - f0) * (mid - start) / dur;
        assert_relative_eq!(1.0 / (2.0 * (tb - ta)), f_inst, max_relative = 1e-9);
        assert_relative_eq!(phase(tb) - phase(ta), 0.5, epsilon = 1e-12);
        checked += 1;
    }
    assert!(checked > 10);
    assert_eq!(c.value(start + dur + 0.1), 0.0);
    assert!(Signal::chirp(1.0, -1.0, 1.0, 0.0, 1.0).is_err());
    assert!(Signal::chirp(1.0, 1.0, 1.0, 0.0, 0.0).is_err());
}

#[test]
fn combinations() {
    let a = Signal::constant(1.0).unwrap();
    let b = Signal::ramp(0.0, 1.0, None).unwrap();
    let sum = Signal::sum(vec![a.clone(), b.clone()]).unwrap();
    assert_relative_eq!(sum.value(2.0), 3.0);
    let seq = Signal::sequence(
        vec![a.clone(), b.clone(), Signal::Constant(-5.0)],
        vec![1.0, 4.0],
    )
    .unwrap();
    assert_eq!(seq.value(0.5), 1.0);
    assert_eq!(seq.value(1.0), 1.0); // b at t = 1
    assert_eq!(seq.value(3.0), 3.0);
    assert_eq!(seq.value(4.0), -5.0);
    let scaled = b.clone().scaled(2.0).unwrap().offset(0.5).unwrap();
    assert_relative_eq!(scaled.value(1.5), 3.5);
    assert!(matches!(
        Signal::sequence(vec![a.clone(), b.clone()], vec![]),
        Err(SignalError::SequenceLength { expected: 1, .. })
    ));
    assert!(Signal::sequence(vec![a.clone(), b.clone(), a], vec![2.0, 1.0]).is_err());
    assert!(Signal::sum(vec![]).is_err());
    assert!(b.scaled(f64::NAN).is_err());
}
