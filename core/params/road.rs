//! The `[road]` group: the road surface.

use serde::{Deserialize, Serialize};

use super::checks::Checks;

/// Road surface, as in the file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RoadFile {
    /// Friction scale applied to the tyres' friction coefficients, 1. Default 1.
    #[serde(default = "one")]
    pub friction: f64,
}

fn one() -> f64 {
    1.0
}

impl Default for RoadFile {
    fn default() -> Self {
        Self { friction: 1.0 }
    }
}

/// The checked road.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Road {
    /// Friction scale on the tyres' friction coefficients, 1 (> 0; 1 = the tyre data's surface).
    pub friction: f64,
}

impl Road {
    /// Checks `[road]` and builds the group.
    pub(crate) fn build(r: &RoadFile, checks: &mut Checks) -> Self {
        checks.positive("road.friction", r.friction);
        Self {
            friction: r.friction,
        }
    }
}
