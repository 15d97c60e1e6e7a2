//! The `[brakes]` group: the friction brakes' capacity and front/rear bias,
//! and the rule that blends regenerative braking with them.

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
    /// How a motor-generator's regenerative braking shares the brake request
    /// with the friction brakes. Default `balance_kept`.
    #[serde(default)]
    pub blending: BlendingRule,
}

/// How the brake request is shared between the friction brakes and the
/// motor-generator(s) on the energy store.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum BlendingRule {
    /// Regeneration replaces friction braking on its own axle, up to that
    /// axle's share of the request: the front/rear balance stays at the bias.
    #[default]
    BalanceKept,
    /// The generator takes what it can of the whole request first; the
    /// friction brakes supply the rest at their bias, so the balance moves
    /// towards the generating axle.
    RegenerationFirst,
}

/// The checked friction brakes.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Brakes {
    /// Total brake torque at the wheels at full request, N·m (≥ 0).
    pub max_torque: f64,
    /// Front share of the brake torque, 1 (0..1).
    pub front_bias: f64,
    /// Default blending of regenerative and friction braking.
    pub blending: BlendingRule,
}

impl Brakes {
    /// Checks `[brakes]` and builds the group.
    pub(crate) fn build(b: &BrakesFile, checks: &mut Checks) -> Self {
        checks.non_negative("brakes.max_torque", b.max_torque);
        checks.within("brakes.front_bias", b.front_bias, 0.0, 1.0);
        Self {
            max_torque: b.max_torque,
            front_bias: b.front_bias,
            blending: b.blending,
        }
    }
}
