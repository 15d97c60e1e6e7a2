//! The `[steering]` group: steering ratio, Ackermann fraction and static toe.

use serde::{Deserialize, Serialize};

use super::checks::Checks;

/// Steering system and static alignment, as in the file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SteeringFile {
    /// Overall steering ratio: steering-wheel angle / mean front road-wheel angle, 1.
    pub ratio: f64,
    /// Ackermann fraction: 0 = parallel steer, 1 = full geometric Ackermann. Default 0.
    #[serde(default)]
    pub ackermann: f64,
    /// Static toe of each front wheel, deg; positive = toe-in. Default 0.
    #[serde(default)]
    pub toe_front_deg: f64,
    /// Static toe of each rear wheel, deg; positive = toe-in. Default 0.
    #[serde(default)]
    pub toe_rear_deg: f64,
}

/// The checked steering. Angles in radians.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Steering {
    /// Overall steering ratio, 1 (> 0).
    pub ratio: f64,
    /// Ackermann fraction, 1 (0 = parallel, 1 = full geometric Ackermann).
    pub ackermann: f64,
    /// Static toe per wheel [front, rear], rad, positive toe-in (|toe| ≤ 5°).
    pub toe: [f64; 2],
}

impl Steering {
    /// Checks `[steering]` and builds the group.
    pub(crate) fn build(s: &SteeringFile, checks: &mut Checks) -> Self {
        checks.positive("steering.ratio", s.ratio);
        checks.within("steering.ackermann", s.ackermann, 0.0, 1.0);
        checks.within("steering.toe_front_deg", s.toe_front_deg, -5.0, 5.0);
        checks.within("steering.toe_rear_deg", s.toe_rear_deg, -5.0, 5.0);
        Self {
            ratio: s.ratio,
            ackermann: s.ackermann,
            toe: [s.toe_front_deg.to_radians(), s.toe_rear_deg.to_radians()],
        }
    }
}
