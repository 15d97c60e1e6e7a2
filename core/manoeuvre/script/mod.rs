//! Manoeuvre scripts: a sandboxed Rhai engine, the script API and the run
//! loop that ties a script to a [`Simulation`](crate::sim::Simulation).
//!
//! A script's top level declares the setup (vehicle, overrides, rates,
//! solver, start speed) and then runs phases imperatively (`run_for`,
//! `run_until`). Inputs are evaluated in Rust: open-loop [`Signal`](crate::manoeuvre::Signal)s at the
//! solver's time, closed-loop drivers and the script's per-tick controller at
//! controller ticks, held between ticks (zero-order hold). No script code runs
//! inside the derivative. After the run, the script's `evaluate(ch)` function
//! (if any) receives the channels and records metrics and criteria.
//!
//! Owns: the engine, its limits, the API functions and the run loop. Does not
//! own the signals and drivers ([`crate::manoeuvre::signals`],
//! [`crate::manoeuvre::driver`]), the model or the results file.
//!
//! The API is documented for script authors in `scripts/README.md`.
//!
//! ```no_run
//! use std::path::Path;
//! use yawdyn::manoeuvre::script::{RunOptions, run_script};
//! let record = run_script(Path::new("scripts/step_steer.rhai"), &RunOptions::default())?;
//! println!("{} samples", record.samples());
//! # Ok::<(), yawdyn::manoeuvre::script::ScriptError>(())
//! ```

mod api;
mod evaluate;
mod session;

use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex, mpsc};

use crate::params::{self, ParamError};
use crate::results::RunRecord;

pub use session::DEFAULT_TICK_RATE_HZ;

/// Options of one script run given by the caller (command line, sweeps).
#[derive(Default)]
pub struct RunOptions {
    /// Vehicle file that replaces the script's own choice.
    pub vehicle: Option<PathBuf>,
    /// Overrides applied after the script's own `set(...)` calls.
    pub overrides: Vec<params::Override>,
    /// Called while the run goes, with the simulation time (s) and the
    /// planned end of the current phase (s, NaN when unknown).
    #[allow(clippy::type_complexity)]
    pub progress: Option<Box<dyn Fn(f64, f64)>>,
}

impl std::fmt::Debug for RunOptions {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("RunOptions")
            .field("vehicle", &self.vehicle)
            .field("overrides", &self.overrides)
            .field("progress", &self.progress.is_some())
            .finish()
    }
}

/// Where in a script something went wrong.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ScriptPosition {
    /// The script file.
    pub file: PathBuf,
    /// Line, 1-based (0 when unknown).
    pub line: usize,
    /// Column, 1-based (0 when unknown).
    pub column: usize,
}

impl std::fmt::Display for ScriptPosition {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}:{}:{}", self.file.display(), self.line, self.column)
    }
}

/// Bad input to a script run: the run did not produce a record.
#[derive(Debug, thiserror::Error)]
pub enum ScriptError {
    /// The script file could not be read.
    #[error("cannot read script {}: {source}", path.display())]
    Read {
        /// The file.
        path: PathBuf,
        /// The I/O error.
        source: std::io::Error,
    },
    /// The script does not parse.
    #[error("{at}: syntax error: {message}")]
    Syntax {
        /// Where.
        at: ScriptPosition,
        /// Rhai's message.
        message: String,
    },
    /// The script failed while running (a bad argument, a type error, a
    /// limit exceeded, an API misuse).
    #[error("{at}: {message}")]
    Runtime {
        /// Where (the innermost script position known).
        at: ScriptPosition,
        /// What happened.
        message: String,
    },
    /// The vehicle file (or an override) is wrong; the cause lists every problem.
    #[error("bad vehicle parameters")]
    Vehicle {
        /// The parameter problems.
        #[source]
        source: ParamError,
    },
}

/// Runs the script in the file `path`.
///
/// A run whose integration fails returns `Ok` with status `Failed` and the
/// channels up to the failure; bad input returns [`ScriptError`].
pub fn run_script(path: &Path, options: &RunOptions) -> Result<RunRecord, ScriptError> {
    let text = std::fs::read_to_string(path).map_err(|source| ScriptError::Read {
        path: path.to_path_buf(),
        source,
    })?;
    run_script_text(&text, path, options)
}

/// Overrides whose key starts with this prefix are manoeuvre parameters read
/// by the script with `param("name", default)`, not vehicle parameters:
/// `--set manoeuvre.exit_torque=3000`.
pub const MANOEUVRE_PREFIX: &str = "manoeuvre.";

/// Runs the script `text`; `path` names it in messages and provenance, and
/// the vehicle file it names is resolved relative to `path`'s directory.
pub fn run_script_text(
    text: &str,
    path: &Path,
    options: &RunOptions,
) -> Result<RunRecord, ScriptError> {
    let (tx, rx) = mpsc::channel::<(f64, f64)>();
    let want_progress = options.progress.is_some();
    let (vehicle, overrides) = (options.vehicle.clone(), options.overrides.clone());
    let run = move || {
        let session = Arc::new(Mutex::new(session::Session::new(
            text,
            path,
            vehicle,
            overrides,
            want_progress.then_some(tx),
        )));
        session::execute(session, text, path)
    };
    match &options.progress {
        None => run(),
        Some(callback) => std::thread::scope(|scope| {
            let worker = scope.spawn(run);
            // The sender lives in the worker's session; the loop ends when it drops.
            while let Ok((t, end)) = rx.recv() {
                callback(t, end);
            }
            worker.join().unwrap_or_else(|_| {
                Err(ScriptError::Runtime {
                    at: ScriptPosition {
                        file: path.to_path_buf(),
                        line: 0,
                        column: 0,
                    },
                    message: "internal error: the script thread panicked".into(),
                })
            })
        }),
    }
}

/// Civil date of a count of days since 1970-01-01 (proleptic Gregorian):
/// (year, month 1..12, day 1..31). Algorithm "civil_from_days" from
/// H. Hinnant, *chrono-Compatible Low-Level Date Algorithms* (2013), written
/// here from its description.
fn civil_from_days(days: i64) -> (i64, u32, u32) {
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097); // [0, 146096]
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365; // [0, 399]
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100); // [0, 365]
    let mp = (5 * doy + 2) / 153; // [0, 11], March = 0
    let day = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let month = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    let year = yoe + era * 400 + i64::from(month <= 2);
    (year, month, day)
}

/// ISO 8601 UTC text (`YYYY-MM-DDThh:mm:ssZ`) of seconds since the Unix epoch.
fn iso8601_utc(unix_seconds: i64) -> String {
    let days = unix_seconds.div_euclid(86_400);
    let secs = unix_seconds.rem_euclid(86_400);
    let (y, m, d) = civil_from_days(days);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}Z",
        secs / 3600,
        (secs / 60) % 60,
        secs % 60
    )
}

/// The current time as ISO 8601 UTC.
pub(crate) fn now_utc() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs() as i64)
        .unwrap_or(0);
    iso8601_utc(secs)
}

/// yawdyn version with the git revision, e.g. `0.1.0 (abc1234)`.
pub(crate) fn version_text() -> String {
    format!(
        "{} ({})",
        env!("CARGO_PKG_VERSION"),
        env!("YAWDYN_GIT_REVISION")
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Known dates: the Unix epoch, the last day of a leap February, and the
    /// start of 2000 (946684800 s, a well-known constant).
    #[test]
    fn iso8601_of_known_instants() {
        assert_eq!(iso8601_utc(0), "1970-01-01T00:00:00Z");
        assert_eq!(iso8601_utc(946_684_800), "2000-01-01T00:00:00Z");
        // 2024-02-29 12:34:56 UTC = 1709210096 s.
        assert_eq!(iso8601_utc(1_709_210_096), "2024-02-29T12:34:56Z");
        assert_eq!(iso8601_utc(-1), "1969-12-31T23:59:59Z");
    }
}
