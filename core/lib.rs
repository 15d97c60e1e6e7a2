//! # yawdyn
//!
//! A vehicle-handling simulator for chassis and vehicle-dynamics engineers:
//! a nonlinear two-track model with Magic Formula tyres, driveline torque
//! split, differentials, brakes and aero, driven by manoeuvres written as Rhai
//! scripts, with results in self-describing HDF5 files.
//!
//! The modules follow the data flow:
//! parameters ([`params`]) → tyre ([`tyre`]) → vehicle model ([`model`]) →
//! integration ([`sim`]) → signals and drivers ([`manoeuvre`]) → runs of
//! manoeuvre scripts ([`script`]) →
//! results files ([`results`]) → analysis ([`analysis`]) → plots ([`plot`]).
//! Beside integration, [`stability`] and [`quasi_static`] (yaw-moment
//! diagrams, the g-g-V envelope) solve equilibria of the same model.
//!
//! Axes follow ISO 8855: x forward, y left, z up; all quantities are SI unless
//! a name says otherwise (`_deg`, `_kph`).
#![warn(missing_docs)]

pub mod analysis;
pub mod assets;
pub mod bench;
pub mod check;
pub mod error;
pub mod files;
pub mod manoeuvre;
pub mod model;
pub mod output;
pub mod params;
pub mod plot;
pub mod quasi_static;
pub mod results;
pub mod script;
pub mod sensitivity;
pub mod sim;
pub mod stability;
pub mod sweep;
pub mod table;
pub mod tyre;
pub mod units;
