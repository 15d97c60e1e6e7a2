//! Quantities derived from a state and its evaluation: speed, sideslip, path
//! curvature and lateral offset. Defined once here; output channels,
//! controllers and stability analysis read them from [`derive()`] (or, with
//! only a state at hand, from [`sideslip`] and [`speed`]).

use super::{Evaluation, State, VX, VY, X, Y};

/// Below this speed the path curvature is reported as 0, m/s (the path of a
/// car at rest has no direction; common practice).
pub const CURVATURE_MIN_SPEED: f64 = 1e-3;

/// A point and heading in the ground plane (ISO 8855 earth axes): the line
/// from which [`Derived::lateral_offset`] is measured.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Pose {
    /// x position, m.
    pub x: f64,
    /// y position, m.
    pub y: f64,
    /// Heading, rad (positive anticlockwise from above).
    pub yaw: f64,
}

impl Pose {
    /// The CG position and heading of a state.
    pub fn of(state: &State) -> Self {
        Self {
            x: state[X],
            y: state[Y],
            yaw: state[super::YAW],
        }
    }
}

/// Quantities derived from one evaluation.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Derived {
    /// Magnitude of the CG velocity, m/s.
    pub speed: f64,
    /// Vehicle sideslip angle at the CG, rad; see [`sideslip`].
    pub sideslip: f64,
    /// Curvature of the CG path, 1/m (positive turning left); see [`derive()`].
    pub path_curvature: f64,
    /// Lateral displacement of the CG from the reference line, m (positive
    /// to the left of it).
    pub lateral_offset: f64,
}

/// Speed of the CG, m/s: √(vx² + vy²).
#[inline]
pub fn speed(x: &State) -> f64 {
    x[VX].hypot(x[VY])
}

/// Vehicle sideslip angle at the CG, rad: β = atan(vy/vx) (ISO 8855, angle
/// between the x axis and the velocity, positive when the velocity points
/// left of the x axis). Computed as atan2(vy, |vx|), which equals atan(vy/vx)
/// for vx > 0, stays within ±π/2, and is defined at vx = 0.
#[inline]
pub fn sideslip(x: &State) -> f64 {
    x[VY].atan2(x[VX].abs().max(1e-9))
}

/// Every derived quantity of state `x` with its evaluation `e`; lateral
/// offset from the line through `reference` along its heading.
///
/// Path curvature κ = (vx·ay − vy·ax)/V³, the curvature of a plane path
/// from its velocity and acceleration (κ = (ẋÿ − ẏẍ)/|v|³; e.g. Kreyszig,
/// *Advanced Engineering Mathematics*, §9.5, section from memory), with ax, ay the CG accelerations
/// in body axes, whose rotation drops out of the cross product. 0 below
/// [`CURVATURE_MIN_SPEED`]. Lateral offset: the component of the CG
/// displacement from the reference point along the reference line's left normal.
#[inline]
pub fn derive(x: &State, e: &Evaluation, reference: &Pose) -> Derived {
    let (vx, vy) = (x[VX], x[VY]);
    let v = speed(x);
    let path_curvature = if v > CURVATURE_MIN_SPEED {
        (vx * e.ay - vy * e.ax) / (v * v * v)
    } else {
        0.0
    };
    let (sin0, cos0) = reference.yaw.sin_cos();
    Derived {
        speed: v,
        sideslip: sideslip(x),
        path_curvature,
        lateral_offset: -(x[X] - reference.x) * sin0 + (x[Y] - reference.y) * cos0,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Commands, evaluate, straight_running};
    use crate::params::load_vehicle;

    /// Uniform circular motion (V, r = V/R, no sideslip): ay = V²/R, κ = 1/R;
    /// sideslip atan(vy/vx) for a small slip; offset of a point 3 m left.
    #[test]
    fn closed_forms() {
        let v = load_vehicle("scripts/vehicles/hybrid_crossover.toml".as_ref(), &[]).unwrap();
        let mut x = straight_running(&v, 20.0);
        let mut e = evaluate(&v, &x, &Commands::neutral(&v));
        e.ax = 0.0;
        e.ay = 20.0 * 20.0 / 80.0;
        let d = derive(&x, &e, &Pose::default());
        assert!((d.path_curvature - 1.0 / 80.0).abs() < 1e-15);
        assert_eq!(d.speed, 20.0);
        x[VY] = -0.5;
        assert!((sideslip(&x) - (-0.5_f64 / 20.0).atan()).abs() < 1e-15);
        x[X] = 10.0;
        x[Y] = 3.0;
        let d = derive(&x, &e, &Pose::default());
        assert!((d.lateral_offset - 3.0).abs() < 1e-15);
        let turned = Pose {
            yaw: std::f64::consts::FRAC_PI_2,
            ..Pose::default()
        };
        assert!((derive(&x, &e, &turned).lateral_offset + 10.0).abs() < 1e-12);
    }
}
