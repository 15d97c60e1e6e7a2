//! Closed-loop driver helpers: a PI speed controller and a pure-pursuit path
//! follower with integral correction, plus the reference paths they follow
//! (straight line, circle, ISO 3888-1 double lane change).
//!
//! The helpers see only a [`DriverView`] — position, heading, speed and two
//! geometric constants — and return commands (pedal demands, steering-wheel
//! angle), so they work with any vehicle model, including the toy models in
//! the tests. They do not model driver lag, preview learning or limits of
//! human performance.

use thiserror::Error;

mod follow;
mod path;
mod speed;

pub use follow::PathFollower;
pub use path::{
    DOUBLE_LANE_CHANGE_OFFSET, DOUBLE_LANE_CHANGE_SECTIONS, DoubleLaneChange, Path, PathPoint,
};
pub use speed::SpeedController;

/// What a driver helper sees of the vehicle. Positions in the ground frame
/// (ISO 8855 earth-fixed axes, y left), SI units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DriverView {
    /// Reference-point position x, m. For pure pursuit the rear-axle centre is
    /// the exact reference of the kinematic bicycle; the CG is common practice.
    pub x: f64,
    /// Reference-point position y, m.
    pub y: f64,
    /// Heading (yaw angle), rad, positive anticlockwise from the x axis.
    pub yaw: f64,
    /// Forward speed, m/s.
    pub speed: f64,
    /// Wheelbase L, m.
    pub wheelbase: f64,
    /// Overall steering ratio, steering-wheel angle per road-wheel angle.
    pub steering_ratio: f64,
}

/// A driver-helper definition that makes no sense.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum DriverError {
    /// A parameter is out of range or not finite.
    #[error("{item}: `{parameter}` = {value} is invalid: {expected}")]
    InvalidParameter {
        /// Path or controller kind.
        item: &'static str,
        /// Parameter name.
        parameter: &'static str,
        /// Value given.
        value: f64,
        /// What is expected.
        expected: &'static str,
    },
}

impl crate::error::Classify for DriverError {
    /// A driver-helper definition that makes no sense is bad input.
    fn kind(&self) -> crate::error::ErrorKind {
        crate::error::ErrorKind::BadInput
    }
}

fn check(
    item: &'static str,
    parameter: &'static str,
    value: f64,
    ok: bool,
    expected: &'static str,
) -> Result<f64, DriverError> {
    if value.is_finite() && ok {
        Ok(value)
    } else {
        Err(DriverError::InvalidParameter {
            item,
            parameter,
            value,
            expected,
        })
    }
}

#[cfg(test)]
mod tests;
