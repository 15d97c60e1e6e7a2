//! Stage 6a, chassis equations: the planar body motion, roll and pitch, and
//! the filter of the lateral acceleration used by the roll-centre transfer.

use super::prepared::{ChassisConstants, WheelConstants};
use super::state::{
    AY_GEOMETRIC, PITCH, PITCH_RATE, ROLL, ROLL_RATE, State, VX, VY, X, Y, YAW, YAW_RATE,
};
use super::tyres::ContactPatches;
use crate::params::{Chassis, GRAVITY};

/// Time constant of the lateral acceleration used for roll-centre load transfer, s.
pub const AY_GEOMETRIC_TIME_CONSTANT: f64 = 0.02;

/// Accelerations of the CG in body axes, m/s².
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct BodyAcceleration {
    /// Longitudinal acceleration v̇x − r·vy, m/s².
    pub ax: f64,
    /// Lateral acceleration v̇y + r·vx, m/s².
    pub ay: f64,
}

/// Writes the derivatives of pose, body velocities, roll, pitch and the
/// filtered lateral acceleration into `d`; returns the CG accelerations.
///
/// - m·(v̇x − r·vy) = ΣFx + F_drag, m·(v̇y + r·vx) = ΣFy, Iz·ṙ = Σ(xᵢ·Fyᵢ − yᵢ·Fxᵢ)
///   with the tyre forces rotated from wheel to body axes (Newton–Euler in a
///   rotating frame; Milliken & Milliken, *Race Car Vehicle Dynamics*, ch. 5;
///   Gillespie, *Fundamentals of Vehicle Dynamics*, ch. 6);
/// - Ixx·φ̈ = m·ay·H + m·g·H·sin φ − KΦ·φ − CΦ·φ̇ with H the CG height above
///   the roll axis (the inertial force −m·ay at height H rolls the body
///   towards the outside of the turn: right side down, φ > 0, in a left
///   turn; the weight of the body displaced sideways by H·sin φ adds the
///   overturning moment m·g·H·sin φ), so that in steady state the roll
///   gradient is dφ/day = m·H/(KΦ − m·g·H) (Gillespie, *Fundamentals of
///   Vehicle Dynamics*, ch. 8, roll gradient; the whole mass is taken as
///   sprung);
/// - Iyy·θ̈ = −m·ax·h − Kθ·θ − Cθ·θ̇ (pitch centre at the ground), so that in
///   steady state the elastic transfer is m·ax·h/L (Milliken & Milliken,
///   ch. 18); the CG shift due to pitch (m·g·h·θ) is neglected, as in that formula;
/// - τ·ȧyg = ay − ayg, the filter of the roll-centre transfer.
///
/// Divisions by m, Iz, Ixx and Iyy are multiplications by the reciprocals of
/// [`ChassisConstants`].
#[inline(always)]
pub fn chassis_equations(
    c: &Chassis,
    k: &ChassisConstants,
    wheels: &WheelConstants,
    patches: &ContactPatches,
    drag_force: f64,
    x: &State,
    d: &mut State,
) -> BodyAcceleration {
    let (vx, vy, r) = (x[VX], x[VY], x[YAW_RATE]);
    let (roll, roll_rate, pitch, pitch_rate) = (x[ROLL], x[ROLL_RATE], x[PITCH], x[PITCH_RATE]);
    let m = c.mass;
    // Tyre forces in body axes, their sum and their yaw moment about the CG.
    let (mut sum_fx, mut sum_fy, mut yaw_moment) = (0.0, 0.0, 0.0);
    for i in 0..4 {
        let (px, py) = (wheels.px[i], wheels.py[i]);
        let (sin_d, cos_d) = (patches.sin_steer[i], patches.cos_steer[i]);
        let fx_body = patches.fx[i] * cos_d - patches.fy[i] * sin_d;
        let fy_body = patches.fx[i] * sin_d + patches.fy[i] * cos_d;
        sum_fx += fx_body;
        sum_fy += fy_body;
        yaw_moment += px * fy_body - py * fx_body;
    }
    let inv_m = k.inv_mass;
    let ax = (sum_fx + drag_force) * inv_m;
    let ay = sum_fy * inv_m;
    // Planar body motion and pose.
    let (sin_yaw, cos_yaw) = x[YAW].sin_cos();
    d[X] = vx * cos_yaw - vy * sin_yaw;
    d[Y] = vx * sin_yaw + vy * cos_yaw;
    d[YAW] = r;
    d[VX] = ax + r * vy;
    d[VY] = ay - r * vx;
    d[YAW_RATE] = yaw_moment * k.inv_yaw_inertia;
    // Roll about the roll axis and pitch about the ground.
    let arm = k.roll_arm;
    let (roll_stiffness, roll_damping) = (k.roll_stiffness, k.roll_damping);
    d[ROLL] = roll_rate;
    d[ROLL_RATE] = (m * ay * arm + m * GRAVITY * arm * roll.sin()
        - roll_stiffness * roll
        - roll_damping * roll_rate)
        * k.inv_roll_inertia;
    d[PITCH] = pitch_rate;
    d[PITCH_RATE] =
        (-m * ax * c.cg_height - c.pitch_stiffness * pitch - c.pitch_damping * pitch_rate)
            * k.inv_pitch_inertia;
    d[AY_GEOMETRIC] = (ay - x[AY_GEOMETRIC]) / AY_GEOMETRIC_TIME_CONSTANT;
    BodyAcceleration { ax, ay }
}
