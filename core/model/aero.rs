//! Stage 1, aerodynamics: drag and downforce from the forward speed.

use crate::params::Aero;

/// Aerodynamic forces of one evaluation.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct AeroForces {
    /// Drag along body x, N (negative when moving forward).
    pub drag_force: f64,
    /// Total downforce, N (negative = lift).
    pub downforce: f64,
}

/// Drag and downforce at forward speed `vx` (m/s): F = ½·ρ·C·A·V², drag
/// opposing vx (Gillespie, *Fundamentals of Vehicle Dynamics*, ch. 4, road
/// loads: aerodynamic drag and lift, from memory for the chapter). Body-axis
/// vx stands in for the airspeed (no wind, sideslip neglected).
#[inline(always)]
pub fn aero_forces(aero: &Aero, vx: f64) -> AeroForces {
    let q = 0.5 * aero.air_density * vx * vx;
    AeroForces {
        drag_force: -0.5 * aero.air_density * aero.drag_area * vx * vx.abs(),
        downforce: q * aero.downforce_area,
    }
}
