//! The `[drive]` group: the drive units on each axle, their differentials,
//! and how a drive request is split between the axles.

use serde::{Deserialize, Serialize};

use super::chassis::{FRONT, REAR};
use super::checks::Checks;

/// Drive units on each axle, and how a drive request is split between them, as in the file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DriveFile {
    /// Share of the drive request sent to the front axle: 0 = all rear, 1 = all front.
    pub front_share: f64,
    /// Drive unit on the front axle, if any.
    #[serde(default)]
    pub front: Option<DriveUnitFile>,
    /// Drive unit on the rear axle, if any.
    #[serde(default)]
    pub rear: Option<DriveUnitFile>,
}

/// One drive unit (engine or electric motor with its gearing) and its differential.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DriveUnitFile {
    /// What it is, for reports (e.g. "engine", "electric motor"). Default empty.
    #[serde(default)]
    pub label: String,
    /// Maximum torque at the unit's output shaft, N·m.
    pub max_torque: f64,
    /// Maximum power, W. Available torque is min(max_torque, max_power / shaft speed).
    pub max_power: f64,
    /// Overall reduction from the unit to the wheels (unit speed / wheel speed), 1.
    pub ratio: f64,
    /// Efficiency from the unit to the wheels, 0 < η ≤ 1. Default 1.
    #[serde(default = "one")]
    pub efficiency: f64,
    /// The axle differential. Default open.
    #[serde(default)]
    pub differential: DifferentialFile,
}

fn one() -> f64 {
    1.0
}

/// Kind of axle differential.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DifferentialKind {
    /// Equal torque to both wheels.
    #[default]
    Open,
    /// Both wheels turn at (nearly) the same speed.
    Locked,
    /// Locking torque up to preload + locking × |input torque|.
    LimitedSlip,
}

/// Axle differential, as in the file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DifferentialFile {
    /// Kind: `open` (default), `locked` or `limited_slip`.
    #[serde(default)]
    pub kind: DifferentialKind,
    /// Limited-slip preload torque, N·m. Default 0.
    #[serde(default)]
    pub preload: f64,
    /// Limited-slip torque-sensing locking coefficient, 1 (locking torque per N·m input). Default 0.
    #[serde(default)]
    pub locking: f64,
    /// Viscous coupling that stands in for stiction while locked, N·m·s/rad. Default 500.
    #[serde(default = "default_coupling")]
    pub coupling_damping: f64,
}

fn default_coupling() -> f64 {
    500.0
}

impl Default for DifferentialFile {
    fn default() -> Self {
        Self {
            kind: DifferentialKind::Open,
            preload: 0.0,
            locking: 0.0,
            coupling_damping: default_coupling(),
        }
    }
}

/// A checked axle differential.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Differential {
    /// Kind.
    pub kind: DifferentialKind,
    /// Limited-slip preload, N·m (≥ 0).
    pub preload: f64,
    /// Limited-slip torque-sensing locking coefficient, 1 (≥ 0).
    pub locking: f64,
    /// Viscous stand-in for stiction while locked, N·m·s/rad (≥ 0).
    pub coupling_damping: f64,
}

/// A checked drive unit with its gearing and differential.
#[derive(Debug, Clone, PartialEq)]
pub struct DriveUnit {
    /// Label from the file, for reports.
    pub label: String,
    /// Maximum torque at the unit's shaft, N·m (> 0).
    pub max_torque: f64,
    /// Maximum power, W (> 0).
    pub max_power: f64,
    /// Reduction ratio unit → wheels i, 1 (> 0).
    pub ratio: f64,
    /// Efficiency unit → wheels η, 1 (0 < η ≤ 1).
    pub efficiency: f64,
    /// The axle differential.
    pub differential: Differential,
}

/// The checked powertrain: units per axle and the default torque split.
#[derive(Debug, Clone, PartialEq)]
pub struct Powertrain {
    /// Default front share of the drive request, 1 (0..1).
    pub front_share: f64,
    /// Drive units [front, rear]; at least one is present.
    pub units: [Option<DriveUnit>; 2],
}

impl Powertrain {
    /// Checks `[drive]` and builds the group.
    pub(crate) fn build(d: &DriveFile, checks: &mut Checks) -> Self {
        checks.within("drive.front_share", d.front_share, 0.0, 1.0);
        if d.front.is_none() && d.rear.is_none() {
            checks.push(
                "drive",
                "needs a drive unit on at least one axle ([drive.front] or [drive.rear])",
            );
        }
        let mut units = [None, None];
        for (axle, name, unit) in [(FRONT, "front", &d.front), (REAR, "rear", &d.rear)] {
            units[axle] = unit
                .as_ref()
                .map(|u| DriveUnit::build(&format!("drive.{name}"), u, checks));
        }
        Self {
            front_share: d.front_share,
            units,
        }
    }
}

impl DriveUnit {
    /// Checks `[drive.<axle>]` (key paths under `path`) and builds the unit.
    fn build(path: &str, u: &DriveUnitFile, checks: &mut Checks) -> Self {
        for (k, v) in [
            ("max_torque", u.max_torque),
            ("max_power", u.max_power),
            ("ratio", u.ratio),
        ] {
            checks.positive(&format!("{path}.{k}"), v);
        }
        checks.fraction(&format!("{path}.efficiency"), u.efficiency);
        Self {
            label: u.label.clone(),
            max_torque: u.max_torque,
            max_power: u.max_power,
            ratio: u.ratio,
            efficiency: u.efficiency,
            differential: Differential::build(
                &format!("{path}.differential"),
                &u.differential,
                checks,
            ),
        }
    }
}

impl Differential {
    /// Checks a `differential` table and builds it.
    fn build(path: &str, d: &DifferentialFile, checks: &mut Checks) -> Self {
        checks.non_negative(&format!("{path}.preload"), d.preload);
        checks.non_negative(&format!("{path}.locking"), d.locking);
        checks.non_negative(&format!("{path}.coupling_damping"), d.coupling_damping);
        Self {
            kind: d.kind,
            preload: d.preload,
            locking: d.locking,
            coupling_damping: d.coupling_damping,
        }
    }
}
