//! Stage 2, wheel loads: statics, aero loads, the elastic pitch and roll
//! moments of the suspension and the roll-centre (geometric) lateral transfer.

use super::aero::AeroForces;
use super::prepared::ChassisConstants;
use super::state::{AY_GEOMETRIC, PITCH, PITCH_RATE, ROLL, ROLL_RATE, State};
use crate::params::{Aero, Chassis, FRONT, GRAVITY, REAR};

/// Static axle loads [front, rear], N: m·g·b/L and m·g·a/L (statics).
#[inline]
pub fn static_axle_loads(c: &Chassis) -> [f64; 2] {
    let w = c.mass * GRAVITY;
    [w * c.b / c.wheelbase, w * c.a / c.wheelbase]
}

/// Vertical wheel loads (FL, FR, RL, RR), N, each ≥ 0 (a lifted wheel carries none).
///
/// Axle loads: static + downforce split at its centre of pressure + the drag
/// moment about the ground + the elastic pitch moment Kθ·θ + Cθ·θ̇ over the
/// wheelbase (pitch centre at the ground). Lateral transfer per axle:
/// elastic KΦᵢ·φ + CΦᵢ·φ̇ plus roll-centre transfer m·ayg·(b/L)·z_rf (front),
/// m·ayg·(a/L)·z_rr (rear), over the track (Milliken & Milliken, *Race Car
/// Vehicle Dynamics*, ch. 18), with ayg the filtered acceleration state so
/// that loads never depend algebraically on the accelerations they produce.
/// In steady cornering φ = m·ay·H/(KΦ − m·g·H) (small angles; see
/// [`chassis_equations`](super::chassis_equations)), so the elastic transfer
/// is larger than Milliken & Milliken's m·ay·H·KΦᵢ/KΦ by KΦ/(KΦ − m·g·H).
#[inline(always)]
pub fn wheel_loads(
    c: &Chassis,
    k: &ChassisConstants,
    aero: &Aero,
    forces: &AeroForces,
    x: &State,
) -> [f64; 4] {
    // Moments about each axle's contact line, over the wheelbase (its reciprocal prepared).
    let (l, inv_l) = (c.wheelbase, k.inv_wheelbase);
    let x_cp = aero.pressure_centre_to_front_axle;
    let weight = c.mass * GRAVITY;
    let pitch_moment = c.pitch_stiffness * x[PITCH] + c.pitch_damping * x[PITCH_RATE];
    let drag_moment = forces.drag_force * aero.drag_height;
    let axle_load = [
        (weight * c.b + forces.downforce * (l - x_cp) + drag_moment + pitch_moment) * inv_l,
        (weight * c.a + forces.downforce * x_cp - drag_moment - pitch_moment) * inv_l,
    ];
    // Lateral transfer per axle (positive moves load to the right wheel).
    let geometric_moment = c.mass * x[AY_GEOMETRIC] * inv_l;
    let lever = [c.b, c.a];
    let mut fz = [0.0; 4];
    for axle in [FRONT, REAR] {
        // A body rolled right side down (φ > 0, ISO 8855) loads the right wheels.
        let elastic = c.roll_stiffness[axle] * x[ROLL] + c.roll_damping[axle] * x[ROLL_RATE];
        let geometric = geometric_moment * lever[axle] * c.roll_centre_height[axle];
        let transfer = (elastic + geometric) * k.inv_track[axle];
        fz[2 * axle] = (0.5 * axle_load[axle] - transfer).max(0.0);
        fz[2 * axle + 1] = (0.5 * axle_load[axle] + transfer).max(0.0);
    }
    fz
}
