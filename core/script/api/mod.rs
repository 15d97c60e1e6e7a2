//! The script API: thin Rhai glue over [`setup`](crate::script::setup),
//! [`runner`](crate::script::runner) and [`log`](crate::script::log), one
//! file per topic. Each function is documented for script authors in
//! `scripts/README.md`.
//!
//! - [`engine`](self::engine): the sandboxed engine and the registration of every topic;
//! - `units`, `signals`, `setup`, `inputs`, `phases`, `state`, `evaluate`,
//!   `analysis`: the functions of one topic each;
//! - `parts`: the parts of a run as the functions share them (one lock per
//!   part, held only inside a closure that runs no script code);
//! - `ranges`: the documented ranges of the commands and the size of signals;
//! - `values`, `errors`: conversions between script values, Rust values and errors;
//! - `params`: the manoeuvre parameters a script reads, from its syntax tree;
//! - `execute`: one run from text to record.

mod analysis;
mod engine;
mod errors;
mod evaluate;
mod execute;
mod inputs;
mod params;
mod parts;
mod phases;
mod ranges;
mod setup;
mod signals;
mod state;
mod units;
mod values;

pub(crate) use execute::{Request, execute};
pub use execute::{check_manoeuvre_keys, manoeuvre_parameter_units, manoeuvre_parameters};
