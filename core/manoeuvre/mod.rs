//! Manoeuvre inputs: open-loop signals (steering, throttle, brake against
//! time) and closed-loop driver helpers (speed control, path following).
//!
//! Everything here is a pure function of numbers: signals are functions of
//! time, and drivers see a small [`driver::DriverView`] of the vehicle and
//! return commands, so none of it depends on the vehicle model. Running a
//! manoeuvre (scripts, the tick loop) is [`crate::script`]'s business.
//!
//! - [`signals`]: the [`signals::Signal`] building blocks, including the
//!   FMVSS 126 sine with dwell.
//! - [`driver`]: [`driver::SpeedController`], [`driver::Path`] and
//!   [`driver::PathFollower`].

pub mod driver;
pub mod signals;

pub use driver::{DriverView, Path, PathFollower, PathPoint, SpeedController};
pub use signals::{Signal, SignalError};

/// Turn or steer direction. Left = anticlockwise seen from above (positive
/// yaw, positive steering-wheel angle, ISO 8855).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TurnDirection {
    /// Anticlockwise seen from above.
    Left,
    /// Clockwise seen from above.
    Right,
}

impl TurnDirection {
    /// +1.0 for left, −1.0 for right.
    pub fn sign(self) -> f64 {
        match self {
            TurnDirection::Left => 1.0,
            TurnDirection::Right => -1.0,
        }
    }
}
