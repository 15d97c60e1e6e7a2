//! The whole vehicle: the file as written ([`VehicleFile`]) and the checked
//! [`Vehicle`] the physics uses, one group per file section, each group
//! checked and built by the function beside its own type.

use serde::{Deserialize, Serialize};

use super::aero::{Aero, AeroFile};
use super::brakes::{Brakes, BrakesFile};
use super::chassis::{Chassis, ChassisFile};
#[cfg(doc)]
use super::chassis::{FRONT, REAR};
use super::checks::Checks;
use super::drive::{DriveFile, Powertrain};
use super::issue::ParamIssue;
use super::road::{Road, RoadFile};
use super::steering::{Steering, SteeringFile};
use super::tyres::{AxlePair, AxleTyre, TyreFile};

/// Standard gravity, m/s² (ISO 80000-3 conventional value).
pub const GRAVITY: f64 = 9.80665;

/// A whole vehicle file: the raw schema, mirrored one to one by serde
/// (unknown keys rejected). SI units; a key ending in `_deg` is in degrees.
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

/// A vehicle checked and ready for the physics: one group per file section.
/// SI units, angles in radians. The model reads the groups only.
#[derive(Debug, Clone)]
pub struct Vehicle {
    /// Name from the file.
    pub name: String,
    /// Free-text description from the file.
    pub description: String,
    /// Body mass, inertia, geometry and suspension (`[chassis]`).
    pub chassis: Chassis,
    /// Steering ratio, Ackermann and toe (`[steering]`).
    pub steering: Steering,
    /// Aerodynamics (`[aero]`).
    pub aero: Aero,
    /// Tyres and wheels [front, rear] (`[tyre.front]`, `[tyre.rear]`).
    pub tyres: [AxleTyre; 2],
    /// Drive units and torque split (`[drive]`).
    pub powertrain: Powertrain,
    /// Friction brakes (`[brakes]`).
    pub brakes: Brakes,
    /// Road surface (`[road]`).
    pub road: Road,
    /// The resolved file (after overrides) as TOML text, for provenance only.
    resolved_toml: String,
}

impl Vehicle {
    /// Checks a deserialized file and builds the vehicle; returns every physical problem found.
    pub fn from_file(file: VehicleFile) -> Result<Self, Vec<ParamIssue>> {
        let mut issues = Vec::new();
        let mut checks = Checks::new(&mut issues);
        let chassis = Chassis::build(&file.chassis, &mut checks);
        let steering = Steering::build(&file.steering, &mut checks);
        let aero = Aero::build(&file.aero, &file.chassis, &mut checks);
        let tyres = [
            AxleTyre::build("front", &file.tyre.front, &mut checks),
            AxleTyre::build("rear", &file.tyre.rear, &mut checks),
        ];
        let powertrain = Powertrain::build(&file.drive, &mut checks);
        let brakes = Brakes::build(&file.brakes, &mut checks);
        let road = Road::build(&file.road, &mut checks);
        if !issues.is_empty() {
            return Err(issues);
        }
        let resolved_toml =
            toml::to_string(&file).unwrap_or_else(|e| format!("# cannot serialise: {e}\n"));
        Ok(Self {
            name: file.name,
            description: file.description,
            chassis,
            steering,
            aero,
            tyres,
            powertrain,
            brakes,
            road,
            resolved_toml,
        })
    }

    /// The resolved parameters as TOML text (round-trips to the same vehicle).
    /// Built once from the file; changing a group's fields in code does not change it.
    pub fn to_toml(&self) -> String {
        self.resolved_toml.clone()
    }

    /// The label of the drive unit on `axle` ([`FRONT`] or [`REAR`]; empty when none or unlabelled).
    pub fn unit_label(&self, axle: usize) -> &str {
        self.powertrain
            .units
            .get(axle)
            .and_then(Option::as_ref)
            .map_or("", |u| u.label.as_str())
    }
}
