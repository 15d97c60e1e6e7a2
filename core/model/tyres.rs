//! Stage 5, tyres: the velocity of each contact patch in wheel axes and the
//! tyre forces from the relaxed slips, the wheel loads and the camber. The
//! four wheels are held side by side in arrays (one entry per wheel, FL, FR,
//! RL, RR) and their tyre forces are evaluated together in vector lanes
//! ([`TyreLanes`]).

use super::prepared::WheelConstants;
use super::state::{SLIP_ANGLE, SLIP_RATIO, State, VX, VY, YAW_RATE};
use super::steering::SteerAngles;
use crate::tyre::TyreLanes;

/// Contact-patch kinematics and tyre forces of the four wheels.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct ContactPatches {
    /// sin of each road-wheel steer angle, 1.
    pub sin_steer: [f64; 4],
    /// cos of each road-wheel steer angle, 1.
    pub cos_steer: [f64; 4],
    /// Longitudinal contact-patch speed in wheel axes Vcx, m/s.
    pub vcx: [f64; 4],
    /// Lateral contact-patch speed in wheel axes Vcy, m/s.
    pub vcy: [f64; 4],
    /// Longitudinal tyre force in wheel axes, N.
    pub fx: [f64; 4],
    /// Lateral tyre force in wheel axes, N.
    pub fy: [f64; 4],
}

/// Contact-patch velocities and tyre forces.
///
/// Contact-patch velocity: body velocity plus r × position, rotated into
/// wheel axes by the steer angle (rigid-body kinematics; Milliken & Milliken,
/// *Race Car Vehicle Dynamics*, ch. 5). Forces from the Magic Formula with
/// the relaxed slips κ′, tan α′ of the state ([`crate::tyre`]; the four
/// wheels together, [`TyreLanes::forces`], which equals the scalar
/// [`TyreModel::combined_tan`](crate::tyre::TyreModel::combined_tan) to
/// rounding); the left wheel's static camber as given, the right wheel's
/// mirrored (tyre axes, folded into the lanes).
#[inline(always)]
pub fn contact_patches(
    tyres: &TyreLanes,
    wheels: &WheelConstants,
    steer: &SteerAngles,
    fz: &[f64; 4],
    x: &State,
) -> ContactPatches {
    let (vx, vy, r) = (x[VX], x[VY], x[YAW_RATE]);
    let mut p = ContactPatches {
        sin_steer: steer.sin,
        cos_steer: steer.cos,
        ..ContactPatches::default()
    };
    for i in 0..4 {
        // Contact-patch velocity: body velocity plus r × position, rotated into wheel axes.
        let (bx, by) = (vx - r * wheels.py[i], vy + r * wheels.px[i]);
        let (sin_d, cos_d) = (steer.sin[i], steer.cos[i]);
        p.vcx[i] = bx * cos_d + by * sin_d;
        p.vcy[i] = -bx * sin_d + by * cos_d;
    }
    let kappa: [f64; 4] = std::array::from_fn(|i| x[SLIP_RATIO + i]);
    let tan_alpha: [f64; 4] = std::array::from_fn(|i| x[SLIP_ANGLE + i]);
    (p.fx, p.fy) = tyres.forces(&kappa, &tan_alpha, fz);
    p
}
