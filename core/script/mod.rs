//! Manoeuvre scripts: the orchestration of one run, from a Rhai script (or
//! Rust) to a [`RunRecord`](crate::results::RunRecord).
//!
//! A script's top level declares the setup (vehicle, overrides, rates,
//! solver, start speed) and then runs phases imperatively (`run_for`,
//! `run_until`). Inputs are evaluated in Rust: open-loop
//! [`Signal`](crate::manoeuvre::Signal)s at the solver's time, closed-loop
//! drivers and the script's per-tick controller at controller ticks, held
//! between ticks (zero-order hold). No script code runs inside the
//! derivative. After the run, the script's `evaluate(ch)` function (if any)
//! receives the channels and records metrics and criteria.
//!
//! Three parts whose imports run one way, and thin glue over them:
//!
//! - [`setup`]: what the run declares before its first phase, checked once
//!   into a [`RunConfig`];
//! - [`runner`]: owns the simulation, the drivers, the held commands and the
//!   tick loop; knows nothing of the script engine ([`Runner`]);
//! - [`log`]: phases, remembered values, notes, metrics and criteria ([`RunLog`]);
//! - [`budget`]: the budgets of a run (operations, wall time, memory) and
//!   what it has spent ([`Budget`]); `memory`: the per-thread memory count
//!   behind the script memory budget ([`CountingAllocator`]);
//! - `record`: the record from the runner, the setup and the log;
//! - `api`: the Rhai engine and the script API, one file per topic, over the
//!   three parts; `run`: the entry points ([`run_script`]).
//!
//! ```text
//! run ─▶ api ─▶ record ─▶ runner ─▶ setup ─▶ facts
//!         │        └────▶ log        │
//!         └─────────────────────────-┴─▶ manoeuvre (signals, drivers), sim, model
//! ```
//!
//! Owns: the orchestration of a run. Does not own the signals and drivers
//! ([`crate::manoeuvre`]), the model, the integrator or the results file.
//! The API is documented for script authors in `scripts/README.md`.
//!
//! ```no_run
//! use std::path::Path;
//! use yawdyn::script::{RunOptions, run_script};
//! let record = run_script(Path::new("scripts/step_steer.rhai"), &RunOptions::default())?;
//! println!("{} samples", record.samples());
//! # Ok::<(), yawdyn::script::ScriptError>(())
//! ```

mod api;
pub mod budget;
mod error;
mod facts;
pub mod log;
mod memory;
mod record;
mod run;
pub mod runner;
pub mod setup;

pub use api::{check_manoeuvre_keys, manoeuvre_parameter_units, manoeuvre_parameters};
pub use budget::{
    Budget, DEFAULT_MAX_OPERATIONS, DEFAULT_MAX_SAMPLE_BYTES, DEFAULT_MAX_WALL_S, Exceeded, Limits,
    MAX_SCRIPT_BYTES,
};
pub use error::{ScriptError, ScriptPosition};
pub use facts::VehicleFacts;
pub use log::{LogError, RunLog};
pub use memory::{CountingAllocator, live_bytes};
pub use run::{MAX_SCRIPT_FILE_BYTES, RunOptions, run_script, run_script_text};
pub use runner::{
    Conditions, Held, Inputs, OpenInput, RunStop, Runner, TickState, TickStep, Until,
};
pub use setup::{
    DEFAULT_SAMPLE_RATE_HZ, DEFAULT_TICK_RATE_HZ, MANOEUVRE_PREFIX, MAX_SIM_TIME_S, RunConfig,
    Setup, SetupError,
};
