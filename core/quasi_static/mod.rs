//! Quasi-static analysis of the whole nonlinear vehicle: the yaw-moment
//! diagram (the moment method) on and off power, and the g-g-V envelope.
//!
//! Both put the full model ([`crate::model::evaluate`]: load transfer through
//! roll and pitch, aero, combined slip, drive and brake limits, the torque
//! split) into quasi-static equilibrium at a forward speed, with the shared
//! Newton solver of [`crate::stability`]:
//!
//! - [`equilibrium`]: one operating point with every state but yaw in
//!   equilibrium, the yaw moment left over or balanced, and continuation of a
//!   family of points to its limit;
//! - [`yaw_moment`]: a grid of sideslip and steer, the residual yaw moment
//!   against lateral acceleration, the trim line and the figures derived from
//!   it (Milliken & Milliken, *Race Car Vehicle Dynamics*, SAE 1995, ch. 8);
//! - [`mod@envelope`]: the boundary of quasi-steady (a_x, a_y) with zero yaw
//!   moment at a set of speeds;
//! - [`mod@file`]: their HDF5 files.
//!
//! It does not integrate in time, run scripts or draw plots. The vehicle's
//! parameters are read in one place ([`chassis`]) besides the model itself and
//! the solver's scaling.

pub mod envelope;
pub mod equilibrium;
pub mod file;
pub mod yaw_moment;

pub use envelope::{
    Envelope, EnvelopePoint, EnvelopeSettings, LimitKind, envelope_at_speed, envelope_directions,
};
pub use equilibrium::{
    Condition, Lateral, Longitudinal, MarchSettings, Point, Problem, SolveSettings, march_to_limit,
};
pub use file::{write_envelope, write_yaw_moment};
pub use yaw_moment::{
    DiagramSettings, LimitPoint, TrimLimit, TrimPoint, YawMomentDiagram, yaw_moment_diagram,
};

use crate::error::{Classify, ErrorKind};
use crate::params::{FRONT, GRAVITY, REAR, Vehicle};
use crate::results::ResultsError;

/// The vehicle quantities the quasi-static methods read (besides the model
/// and the solver's scaling): the one adapter to [`Vehicle`]'s fields.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Chassis {
    /// Total mass m, kg.
    pub mass: f64,
    /// Wheelbase L, m.
    pub wheelbase: f64,
    /// Yaw inertia Iz, kg·m².
    pub yaw_inertia: f64,
    /// Steering ratio (steering-wheel over road-wheel angle), 1.
    pub steering_ratio: f64,
    /// The vehicle's own front torque share, 1.
    pub front_share: f64,
    /// Total brake torque at full request, N·m.
    pub brake_max_torque: f64,
    /// Which axles have a drive unit [front, rear].
    pub driven: [bool; 2],
}

impl Chassis {
    /// The reference moment m·g·L of the yaw-moment coefficient C_N = N/(m·g·L), N·m.
    pub fn moment_reference(&self) -> f64 {
        self.mass * GRAVITY * self.wheelbase
    }
}

/// Reads the [`Chassis`] quantities of a vehicle.
pub fn chassis(v: &Vehicle) -> Chassis {
    Chassis {
        mass: v.chassis.mass,
        wheelbase: v.chassis.wheelbase,
        yaw_inertia: v.chassis.yaw_inertia,
        steering_ratio: v.steering.ratio,
        front_share: v.powertrain.front_share,
        brake_max_torque: v.brakes.max_torque,
        driven: [
            v.powertrain.units[FRONT].is_some(),
            v.powertrain.units[REAR].is_some(),
        ],
    }
}

/// Errors of the quasi-static methods.
#[derive(Debug, thiserror::Error)]
pub enum QuasiStaticError {
    /// A setting is out of range (bad input).
    #[error("{name} = {value} is not valid: expected {expected}")]
    InvalidInput {
        /// Quantity name.
        name: &'static str,
        /// Value given (SI).
        value: f64,
        /// What is allowed.
        expected: &'static str,
    },
    /// A grid is unusable (bad input).
    #[error("{what}: {why}")]
    InvalidGrid {
        /// Which grid.
        what: &'static str,
        /// What is wrong.
        why: String,
    },
    /// Not even the starting point (straight running) could be solved: the
    /// condition is beyond the vehicle (e.g. more drive than it can give).
    #[error("no quasi-static equilibrium even straight ahead: {what}")]
    NoStart {
        /// Which condition.
        what: String,
    },
    /// Writing the file failed.
    #[error("writing {what}")]
    File {
        /// Which file kind.
        what: &'static str,
        /// The results-layer error (names the file).
        #[source]
        source: ResultsError,
    },
}

impl Classify for QuasiStaticError {
    fn kind(&self) -> ErrorKind {
        match self {
            Self::InvalidInput { .. } | Self::InvalidGrid { .. } => ErrorKind::BadInput,
            Self::NoStart { .. } => ErrorKind::Failed,
            Self::File { source, .. } => match source {
                ResultsError::Invalid { .. } => ErrorKind::BadInput,
                _ => ErrorKind::Environment,
            },
        }
    }
}

/// Checks a grid of values: non-empty, finite, strictly increasing.
pub(crate) fn check_grid(what: &'static str, values: &[f64]) -> Result<(), QuasiStaticError> {
    let bad = |why: String| Err(QuasiStaticError::InvalidGrid { what, why });
    if values.is_empty() {
        return bad("no values".to_string());
    }
    if let Some(v) = values.iter().find(|v| !v.is_finite()) {
        return bad(format!("value {v} is not finite"));
    }
    if values.windows(2).any(|w| w[1] <= w[0]) {
        return bad("values must be strictly increasing".to_string());
    }
    Ok(())
}

#[cfg(test)]
mod test;
