//! Stage 6b, wheel equations: wheel spin and the first-order relaxation of
//! slip ratio and slip angle.

use super::powertrain::WheelTorques;
use super::prepared::WheelConstants;
use super::state::{SLIP_ANGLE, SLIP_RATIO, State, WHEEL_SPEED};
use super::tyres::ContactPatches;

/// Below this contact-patch speed the slip equations use this speed instead, m/s.
///
/// Low-speed regularisation of the relaxation equations (common practice; see
/// Pacejka, *Tire and Vehicle Dynamics*, ch. 7 on the need for it as Vx → 0):
/// slips stay bounded from a standing start and lateral oscillation at rest is damped.
pub const LOW_SPEED: f64 = 0.5;

/// Wheel speed below which brake and rolling-resistance torques fade linearly to zero, rad/s.
///
/// A viscous regularisation of Coulomb friction near standstill (common
/// practice) so that a held brake does not chatter at zero wheel speed.
pub const STANDSTILL_WHEEL_SPEED: f64 = 1.0;

/// Writes the wheel-spin and slip derivatives of the four wheels into `d`.
///
/// - Iw·ω̇ = T_drive − (T_brake + T_roll)·fade − Fx·R, T_roll = f_r·Fz·R,
///   fade = clamp(ω/[`STANDSTILL_WHEEL_SPEED`], −1, 1);
/// - σκ·κ̇′ = (ω·R − Vcx) − |Vcx|·κ′ and σα·ṫ′ = −Vcy − |Vcx|·t′ with
///   t′ = tan α′ (Pacejka, *Tire and Vehicle Dynamics*, ch. 7, first-order
///   transient slip; |Vcx| floored at [`LOW_SPEED`]).
///
/// The divisions by Iw, σκ and σα are multiplications by the reciprocals of
/// [`WheelConstants`].
#[inline(always)]
pub fn wheel_equations(
    w: &WheelConstants,
    fz: &[f64; 4],
    patches: &ContactPatches,
    torques: &WheelTorques,
    x: &State,
    d: &mut State,
) {
    for i in 0..4 {
        let omega = x[WHEEL_SPEED + i];
        let fade = (omega / STANDSTILL_WHEEL_SPEED).clamp(-1.0, 1.0);
        let rolling = w.rolling_arm[i] * fz[i];
        let radius = w.radius[i];
        d[WHEEL_SPEED + i] =
            (torques.drive[i] - (torques.brake[i] + rolling) * fade - patches.fx[i] * radius)
                * w.inv_inertia[i];
        let vcx = patches.vcx[i];
        let v_ref = vcx.abs().max(LOW_SPEED);
        d[SLIP_RATIO + i] =
            (omega * radius - vcx - v_ref * x[SLIP_RATIO + i]) * w.inv_relaxation_longitudinal[i];
        d[SLIP_ANGLE + i] =
            (-patches.vcy[i] - v_ref * x[SLIP_ANGLE + i]) * w.inv_relaxation_lateral[i];
    }
}
