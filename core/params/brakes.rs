//! The `[brakes]` group: the friction brakes' capacity and front/rear bias.

use serde::{Deserialize, Serialize};

use super::checks::Checks;

/// Service brakes, as in the file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BrakesFile {
    /// Total brake torque at the wheels at full brake request, N·m (all four wheels).
    pub max_torque: f64,
    /// Front share of the brake torque, 0..1.
    pub front_bias: f64,
}

/// The checked friction brakes.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Brakes {
    /// Total brake torque at the wheels at full request, N·m (≥ 0).
    pub max_torque: f64,
    /// Front share of the brake torque, 1 (0..1).
    pub front_bias: f64,
}

impl Brakes {
    /// Checks `[brakes]` and builds the group.
    pub(crate) fn build(b: &BrakesFile, checks: &mut Checks) -> Self {
        checks.non_negative("brakes.max_torque", b.max_torque);
        checks.within("brakes.front_bias", b.front_bias, 0.0, 1.0);
        Self {
            max_torque: b.max_torque,
            front_bias: b.front_bias,
        }
    }
}
