//! The equilibrium solver shared by the steady-state trim ([`super::trim`])
//! and the quasi-static methods ([`crate::quasi_static`]): Newton's method on a
//! scaled residual, and the scale that turns each state derivative of the
//! model into a residual of order one.
//!
//! It knows nothing of which unknowns or equations a caller picks: the caller
//! passes a residual closure and the typical magnitude of each unknown.

use nalgebra::{DMatrix, DVector};

use crate::model::{
    AY_GEOMETRIC, AY_GEOMETRIC_TIME_CONSTANT, PITCH, PITCH_RATE, ROLL, ROLL_RATE, SLIP_ANGLE,
    SLIP_RATIO, VX, VY, WHEEL_SPEED, YAW_RATE,
};
use crate::params::{GRAVITY, Vehicle};

/// Sufficient-decrease constant of the backtracking line search (Armijo
/// condition ‖F(z + t·s)‖ ≤ (1 − c·t)·‖F(z)‖; Dennis & Schnabel, *Numerical
/// Methods for Unconstrained Optimization and Nonlinear Equations*, ch. 6,
/// from memory for the value 1e-4).
pub const ARMIJO_DECREASE: f64 = 1e-4;

/// Smallest line-search step fraction before Newton gives up, 1.
pub const MIN_STEP_FRACTION: f64 = 1.0 / 1024.0;

/// Multiplier that makes the derivative of model state `state` a residual of
/// order one for a gross error, at forward speed `speed` (m/s).
///
/// Each derivative is multiplied by a mass, inertia or relaxation length to
/// make it a force, moment or speed, then divided by a reference force m·g
/// (moment m·g·L or m·g·h, speed V): v̇y and v̇x by 1/g, ṙ by Iz/(m·g·L),
/// the roll and pitch angle rates by 1, their accelerations by I/(m·g·h),
/// wheel spin by Iw/(R·m·g/4), the relaxed slips by σ/V and the filtered
/// lateral acceleration by its time constant over g.
pub fn derivative_scale(vehicle: &Vehicle, state: usize, speed: f64) -> f64 {
    let g = GRAVITY;
    let mg = vehicle.chassis.mass * g;
    match state {
        VX | VY => 1.0 / g,
        YAW_RATE => vehicle.chassis.yaw_inertia / (mg * vehicle.chassis.wheelbase),
        ROLL | PITCH => 1.0,
        ROLL_RATE => vehicle.chassis.roll_inertia / (mg * vehicle.chassis.cg_height),
        PITCH_RATE => vehicle.chassis.pitch_inertia / (mg * vehicle.chassis.cg_height),
        AY_GEOMETRIC => AY_GEOMETRIC_TIME_CONSTANT / g,
        _ if state >= SLIP_RATIO => {
            vehicle.tyres[(state - SLIP_RATIO) / 2].relaxation_longitudinal / speed
        }
        _ if state >= SLIP_ANGLE => {
            vehicle.tyres[(state - SLIP_ANGLE) / 2].relaxation_lateral / speed
        }
        _ => {
            let t = &vehicle.tyres[(state - WHEEL_SPEED) / 2];
            t.wheel_inertia / (t.rolling_radius * 0.25 * mg)
        }
    }
}

/// Typical magnitude of model state `state` as an unknown of an equilibrium
/// at forward speed `speed` (m/s), in the state's unit: the floor of the
/// finite-difference steps of [`newton`]. Wheel speeds V/R, lateral velocity
/// and the rates 0.1, the filtered lateral acceleration 1, everything else
/// (angles, slips) 0.01.
pub fn typical_unknown(vehicle: &Vehicle, state: usize, speed: f64) -> f64 {
    match state {
        VY | YAW_RATE | ROLL_RATE | PITCH_RATE => 0.1,
        AY_GEOMETRIC => 1.0,
        _ if (WHEEL_SPEED..WHEEL_SPEED + 4).contains(&state) => {
            speed / vehicle.tyres[(state - WHEEL_SPEED) / 2].rolling_radius
        }
        _ => 0.01,
    }
}

/// Largest absolute entry; infinite when any entry is NaN.
pub fn max_abs(f: &DVector<f64>) -> f64 {
    f.iter().fold(0.0_f64, |m, v| {
        if v.is_nan() {
            f64::INFINITY
        } else {
            m.max(v.abs())
        }
    })
}

/// Newton's method for `residual(z) = 0` with a forward-difference Jacobian
/// (h_j = sqrt(ε)·max(|z_j|, typical_j)) and backtracking on ‖F‖₂ (Dennis &
/// Schnabel, *Numerical Methods for Unconstrained Optimization and Nonlinear
/// Equations*, ch. 5–6, from memory).
///
/// Stops when the largest residual entry is below `tolerance`. Returns the
/// solution and its largest residual entry, or `None` when the residual is not
/// finite at the start, the Jacobian is singular, the line search fails or
/// `max_iterations` pass without convergence.
///
/// ```
/// use nalgebra::DVector;
/// use yawdyn::stability::newton;
/// // x² = 2, started at 1.
/// let root = newton(
///     |z: &DVector<f64>| DVector::from_element(1, z[0] * z[0] - 2.0),
///     &DVector::from_element(1, 1.0),
///     &DVector::from_element(1, 1.0),
///     1e-12,
///     20,
/// )
/// .unwrap();
/// assert!((root.0[0] - 2f64.sqrt()).abs() < 1e-12);
/// ```
pub fn newton<F>(
    mut residual: F,
    start: &DVector<f64>,
    typical: &DVector<f64>,
    tolerance: f64,
    max_iterations: usize,
) -> Option<(DVector<f64>, f64)>
where
    F: FnMut(&DVector<f64>) -> DVector<f64>,
{
    let n = start.len();
    let mut z = start.clone();
    let mut f = residual(&z);
    let mut norm = f.norm();
    if !norm.is_finite() {
        return None;
    }
    let sqrt_eps = f64::EPSILON.sqrt();
    for _ in 0..max_iterations {
        if max_abs(&f) < tolerance {
            return Some((z, max_abs(&f)));
        }
        // Forward-difference Jacobian, one column per unknown.
        let mut jac = DMatrix::zeros(f.len(), n);
        for j in 0..n {
            let zj = z[j];
            z[j] = zj + sqrt_eps * zj.abs().max(typical[j]);
            let h = z[j] - zj;
            let fp = residual(&z);
            z[j] = zj;
            jac.set_column(j, &((fp - &f) / h));
        }
        // Newton step, then backtracking until the residual norm decreases enough.
        let step = jac.lu().solve(&(-&f))?;
        if !step.iter().all(|s| s.is_finite()) {
            return None;
        }
        let mut t = 1.0;
        loop {
            let trial = &z + &step * t;
            let ft = residual(&trial);
            let nt = ft.norm();
            if nt.is_finite() && nt <= (1.0 - ARMIJO_DECREASE * t) * norm {
                z = trial;
                f = ft;
                norm = nt;
                break;
            }
            t *= 0.5;
            if t < MIN_STEP_FRACTION {
                return None;
            }
        }
    }
    let r = max_abs(&f);
    (r < tolerance).then_some((z, r))
}
