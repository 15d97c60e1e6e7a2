//! The raw vehicle file schema: what a user writes in TOML.
//!
//! These structs mirror the file one to one (serde, unknown keys rejected).
//! They are checked and converted into a [`Vehicle`](super::Vehicle) before
//! the physics sees them. SI units throughout; a key ending in `_deg` is in
//! degrees.

use serde::{Deserialize, Serialize};

use crate::tyre::{CombinedSlip, MagicFormulaCoefficients};

/// A whole vehicle file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct VehicleFile {
    /// Human-readable name of the vehicle.
    pub name: String,
    /// Free text: where the data comes from (say "invented" for demo data).
    #[serde(default)]
    pub description: String,
    /// Mass, inertia, geometry and suspension of the body.
    pub chassis: ChassisFile,
    /// Steering and wheel alignment.
    pub steering: SteeringFile,
    /// Aerodynamic drag and downforce.
    #[serde(default)]
    pub aero: AeroFile,
    /// Tyre and wheel data per axle.
    pub tyre: AxlePair<TyreFile>,
    /// Drive units, their split and differentials.
    pub drive: DriveFile,
    /// Service brakes.
    pub brakes: BrakesFile,
    /// Road surface.
    #[serde(default)]
    pub road: RoadFile,
}

/// A value given separately for the front and the rear axle.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AxlePair<T> {
    /// Front axle.
    pub front: T,
    /// Rear axle.
    pub rear: T,
}

/// Body mass, inertia, geometry and suspension (roll and pitch).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ChassisFile {
    /// Total vehicle mass, kg (treated as sprung mass for roll and pitch).
    pub mass: f64,
    /// Yaw moment of inertia about the CG, kg·m².
    pub yaw_inertia: f64,
    /// Roll moment of inertia of the body about the roll axis, kg·m².
    pub roll_inertia: f64,
    /// Pitch moment of inertia of the body about the CG, kg·m².
    pub pitch_inertia: f64,
    /// Wheelbase, m.
    pub wheelbase: f64,
    /// Horizontal distance from the front axle back to the CG, m (0 < a < wheelbase).
    pub cg_to_front_axle: f64,
    /// CG height above the ground, m.
    pub cg_height: f64,
    /// Front track width, m.
    pub track_front: f64,
    /// Rear track width, m.
    pub track_rear: f64,
    /// Front roll-centre height above the ground, m.
    pub roll_centre_height_front: f64,
    /// Rear roll-centre height above the ground, m.
    pub roll_centre_height_rear: f64,
    /// Front roll stiffness (springs and anti-roll bar), N·m/rad.
    pub roll_stiffness_front: f64,
    /// Rear roll stiffness, N·m/rad.
    pub roll_stiffness_rear: f64,
    /// Front roll damping, N·m·s/rad.
    pub roll_damping_front: f64,
    /// Rear roll damping, N·m·s/rad.
    pub roll_damping_rear: f64,
    /// Pitch stiffness of the suspension, N·m/rad.
    pub pitch_stiffness: f64,
    /// Pitch damping of the suspension, N·m·s/rad.
    pub pitch_damping: f64,
}

/// Steering system and static alignment.
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

/// Aerodynamics. Defaults: no drag, no downforce.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AeroFile {
    /// Air density, kg/m³. Default 1.2 (sea level, about 20 °C).
    #[serde(default = "default_air_density")]
    pub air_density: f64,
    /// Drag coefficient times frontal area, Cd·A, m². Default 0.
    #[serde(default)]
    pub drag_area: f64,
    /// Downforce coefficient times area, Cl·A, m² (positive pushes the car down). Default 0.
    #[serde(default)]
    pub downforce_area: f64,
    /// Centre of pressure of the downforce: distance behind the front axle, m. Default: at the CG.
    #[serde(default)]
    pub pressure_centre_to_front_axle: Option<f64>,
    /// Height at which drag acts, m. Default: at the CG height.
    #[serde(default)]
    pub drag_height: Option<f64>,
}

fn default_air_density() -> f64 {
    1.2
}

impl Default for AeroFile {
    fn default() -> Self {
        Self {
            air_density: default_air_density(),
            drag_area: 0.0,
            downforce_area: 0.0,
            pressure_centre_to_front_axle: None,
            drag_height: None,
        }
    }
}

/// Tyre and wheel data for the wheels of one axle.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TyreFile {
    /// Effective rolling radius, m.
    pub rolling_radius: f64,
    /// Spin inertia of one wheel with its tyre, brake and driveline share, kg·m².
    pub wheel_inertia: f64,
    /// Lateral relaxation length, m.
    pub relaxation_length_lateral: f64,
    /// Longitudinal relaxation length, m.
    pub relaxation_length_longitudinal: f64,
    /// Rolling-resistance coefficient (force / load), 1. Default 0.
    #[serde(default)]
    pub rolling_resistance: f64,
    /// Static camber, deg; negative = top of the wheel leans towards the car. Default 0.
    #[serde(default)]
    pub camber_deg: f64,
    /// Combined-slip method. Default `friction_ellipse`.
    #[serde(default)]
    pub combined_slip: CombinedSlip,
    /// Magic Formula coefficients.
    pub magic_formula: MagicFormulaCoefficients,
}

/// Drive units on each axle, and how a drive request is split between them.
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

/// Axle differential.
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

/// Service brakes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BrakesFile {
    /// Total brake torque at the wheels at full brake request, N·m (all four wheels).
    pub max_torque: f64,
    /// Front share of the brake torque, 0..1.
    pub front_bias: f64,
}

/// Road surface.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RoadFile {
    /// Friction scale applied to the tyres' friction coefficients, 1. Default 1.
    #[serde(default = "one")]
    pub friction: f64,
}

impl Default for RoadFile {
    fn default() -> Self {
        Self { friction: 1.0 }
    }
}
