//! Vehicle parameter files: the raw TOML schema ([`VehicleFile`] and one
//! `…File` struct per section), loading with located errors
//! ([`load_vehicle`]), dotted-path overrides ([`Override`]) and the checked
//! [`Vehicle`] that the physics uses.
//!
//! Each section has its own file here holding its raw schema, its checked
//! group and the function that checks one and builds the other (`build`):
//! `[chassis]` → [`Chassis`], `[steering]` → [`Steering`], `[aero]` →
//! [`Aero`], `[tyre.*]` → [`AxleTyre`], `[drive]` → [`Powertrain`] (with
//! `[drive.store]` → [`EnergyStore`] and tables → [`Curve`], [`Map`]),
//! `[brakes]` → [`Brakes`], `[road]` → [`Road`]. This module holds data and
//! its checks only; what the numbers do (power limits, load transfer, tyre
//! forces) lives in [`crate::model`].
//!
//! ```no_run
//! use yawdyn::params::{load_vehicle, Override};
//! let set = [Override::parse("drive.front_share=0.3").unwrap()];
//! let car = load_vehicle("scripts/vehicles/hybrid_crossover.toml".as_ref(), &set).unwrap();
//! assert_eq!(car.powertrain.front_share, 0.3);
//! ```

mod aero;
mod brakes;
mod chassis;
mod checks;
mod drive;
mod input_file;
mod issue;
mod load;
mod road;
mod steering;
mod store;
mod tables;
mod tyres;
mod units;
mod vehicle;

pub use aero::{Aero, AeroFile};
pub use brakes::{BlendingRule, Brakes, BrakesFile};
pub use chassis::{Chassis, ChassisFile, FRONT, REAR};
pub use drive::{
    Differential, DifferentialFile, DifferentialKind, DriveFile, DriveUnit, DriveUnitFile, Fuel,
    FuelFile, Machine, MotorGenerator, Powertrain, TorqueLimit, UnitKind,
};
pub use input_file::{MAX_VEHICLE_FILE_BYTES, read_text_file, read_vehicle_file};
pub use issue::{ParamError, ParamIssue};
pub use load::{OVERRIDE_SOURCE, Override, load_vehicle, load_vehicle_text};
pub use road::{Road, RoadFile};
pub use steering::{Steering, SteeringFile};
pub use store::{EnergyStore, StoreFile};
pub use tables::{Curve, Efficiency, EfficiencyMapFile, Map, MapSlice, RPM, TorqueCurveFile};
pub use tyres::{AxlePair, AxleTyre, TyreFile};
pub use units::parameter_unit;
pub use vehicle::{GRAVITY, Vehicle, VehicleFile};
