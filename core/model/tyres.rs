//! Stage 5, tyres: the velocity of each contact patch in wheel axes and the
//! tyre forces from the relaxed slips, the wheel loads and the camber. The
//! four wheels are held side by side in arrays (one entry per wheel, FL, FR,
//! RL, RR) so that the force evaluation can be batched.

use super::state::{SLIP_ANGLE, SLIP_RATIO, State, VX, VY, YAW_RATE};
use crate::params::{AxleTyre, Road};

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
/// the relaxed slips κ′, tan α′ of the state ([`crate::tyre`]); the left
/// wheel's static camber as given, the right wheel's mirrored (tyre axes).
#[inline(always)]
pub fn contact_patches(
    tyres: &[AxleTyre; 2],
    road: &Road,
    positions: &[(f64, f64); 4],
    steer: &[f64; 4],
    fz: &[f64; 4],
    x: &State,
) -> ContactPatches {
    let (vx, vy, r) = (x[VX], x[VY], x[YAW_RATE]);
    let mut p = ContactPatches::default();
    for i in 0..4 {
        let tyre = &tyres[i / 2];
        let (px, py) = positions[i];
        let (sin_d, cos_d) = steer[i].sin_cos();
        // Contact-patch velocity: body velocity plus r × position, rotated into wheel axes.
        let (bx, by) = (vx - r * py, vy + r * px);
        p.sin_steer[i] = sin_d;
        p.cos_steer[i] = cos_d;
        p.vcx[i] = bx * cos_d + by * sin_d;
        p.vcy[i] = -bx * sin_d + by * cos_d;
        // Camber in tyre axes: the left wheel's static camber as given, the right mirrored.
        let gamma = if i % 2 == 0 {
            tyre.camber
        } else {
            -tyre.camber
        };
        let force = tyre.model.combined_tan(
            x[SLIP_RATIO + i],
            x[SLIP_ANGLE + i],
            gamma,
            fz[i],
            road.friction,
            tyre.combined_slip,
        );
        p.fx[i] = force.fx;
        p.fy[i] = force.fy;
    }
    p
}
