//! Vehicle parameter files: the raw TOML schema ([`VehicleFile`]), loading with
//! located errors ([`load_vehicle`]), dotted-path overrides ([`Override`]) and
//! the checked [`Vehicle`] that the physics uses.
//!
//! ```no_run
//! use yawdyn::params::{load_vehicle, Override};
//! let set = [Override::parse("drive.front_share=0.3").unwrap()];
//! let car = load_vehicle("scripts/vehicles/hybrid_crossover.toml".as_ref(), &set).unwrap();
//! assert_eq!(car.front_share, 0.3);
//! ```

mod file;
mod input_file;
mod issue;
mod load;
mod vehicle;

pub use file::{
    AeroFile, AxlePair, BrakesFile, ChassisFile, DifferentialFile, DifferentialKind, DriveFile,
    DriveUnitFile, RoadFile, SteeringFile, TyreFile, VehicleFile,
};
pub use input_file::{MAX_VEHICLE_FILE_BYTES, read_text_file, read_vehicle_file};
pub use issue::{ParamError, ParamIssue};
pub use load::{OVERRIDE_SOURCE, Override, load_vehicle, load_vehicle_text};
pub use vehicle::{AxleTyre, DriveUnit, FRONT, GRAVITY, REAR, Vehicle};
