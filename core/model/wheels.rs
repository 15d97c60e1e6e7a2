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

/// Partial derivatives of each wheel's equations (see [`wheel_equations`])
/// with respect to that wheel's own spin and relaxed slips, at one state: the
/// fast part of the model that the additive Runge–Kutta solver treats
/// implicitly (`sim::ark`). Couplings between wheels (through the
/// differential and the loads) and to the body are left out: they are slow,
/// and any matrix here gives a consistent method; a closer one only allows
/// longer steps.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct WheelJacobian {
    /// ∂ω̇/∂ω, 1/s.
    pub spin_spin: [f64; 4],
    /// ∂ω̇/∂κ′, rad/s².
    pub spin_slip: [f64; 4],
    /// ∂κ̇′/∂ω, 1/rad.
    pub slip_spin: [f64; 4],
    /// ∂κ̇′/∂κ′, 1/s.
    pub slip_slip: [f64; 4],
    /// ∂ṫ′/∂t′ (t′ = tan α′), 1/s.
    pub lateral: [f64; 4],
}

/// Step of the difference quotient for the longitudinal slip stiffness
/// ∂Fx/∂κ′ (dimensionless slip). A forward difference with a step near the
/// square root of the machine epsilon times the slip scale has an error of
/// about 1e-8 relative, far below what the splitting needs (from memory: Press et al.,
/// *Numerical Recipes*, 3rd ed., §5.7, eq. (5.7.5)).
const SLIP_STEP: f64 = 1e-8;

/// The [`WheelJacobian`] at state `x`, from the wheel loads `fz` (N), the
/// contact-patch speeds `vcx` (m/s) and longitudinal forces `fx` (N) and the
/// brake torques (N·m) of the evaluation at `x`. Differentiates the
/// expressions of [`wheel_equations`] term by term; ∂Fx/∂κ′ is a difference
/// quotient of the tyre model at the same loads and slip angles. The drive
/// torque's dependence on wheel speed (engine and motor maps) is left out.
pub fn wheel_jacobian(
    p: &super::Prepared,
    x: &State,
    fz: &[f64; 4],
    vcx: &[f64; 4],
    fx: &[f64; 4],
    brake: &[f64; 4],
) -> WheelJacobian {
    let w = &p.wheels;
    let kappa: [f64; 4] = std::array::from_fn(|i| x[SLIP_RATIO + i] + SLIP_STEP);
    let tan_alpha: [f64; 4] = std::array::from_fn(|i| x[SLIP_ANGLE + i]);
    let (fx_up, _) = p.tyres.forces(&kappa, &tan_alpha, fz);
    let mut j = WheelJacobian::default();
    for i in 0..4 {
        let omega = x[WHEEL_SPEED + i];
        let fade_slope = if omega.abs() < STANDSTILL_WHEEL_SPEED {
            1.0 / STANDSTILL_WHEEL_SPEED
        } else {
            0.0
        };
        let rolling = w.rolling_arm[i] * fz[i];
        let stiffness = (fx_up[i] - fx[i]) / SLIP_STEP;
        j.spin_spin[i] = -(brake[i] + rolling) * fade_slope * w.inv_inertia[i];
        j.spin_slip[i] = -stiffness * w.radius[i] * w.inv_inertia[i];
        let v_ref = vcx[i].abs().max(LOW_SPEED);
        j.slip_spin[i] = w.radius[i] * w.inv_relaxation_longitudinal[i];
        j.slip_slip[i] = -v_ref * w.inv_relaxation_longitudinal[i];
        j.lateral[i] = -v_ref * w.inv_relaxation_lateral[i];
    }
    j
}
