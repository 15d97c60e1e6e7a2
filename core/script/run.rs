//! The entry points: run a script file or text with the caller's options.

use std::path::{Path, PathBuf};
use std::sync::mpsc;

use super::api::{Request, execute};
use super::error::ScriptError;
use crate::params::Override;
use crate::results::RunRecord;

/// Options of one script run given by the caller (command line, sweeps).
#[derive(Default)]
pub struct RunOptions {
    /// Vehicle file that replaces the script's own choice.
    pub vehicle: Option<PathBuf>,
    /// Overrides applied after the script's own `set(...)` calls; keys
    /// `manoeuvre.<name>` are manoeuvre parameters read with `param`.
    pub overrides: Vec<Override>,
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

/// Runs the script in the file `path`.
///
/// Returns the record whenever the simulation ran: status `completed`, or
/// `failed` with the channels up to the failure when the integration
/// diverged, a `run_until` with `fail_on_timeout` timed out, the simulated
/// time limit was reached or `evaluate(ch)` raised an error (the message
/// names the script position). Returns a [`ScriptError`] when the input is
/// wrong before any record exists (unreadable or invalid script, vehicle
/// file, unknown manoeuvre parameters).
pub fn run_script(path: &Path, options: &RunOptions) -> Result<RunRecord, ScriptError> {
    let text = std::fs::read_to_string(path).map_err(|source| ScriptError::Read {
        path: path.to_path_buf(),
        source,
    })?;
    run_script_text(&text, path, options)
}

/// Runs the script `text`; `path` names it in messages and provenance, and
/// the vehicle file it names is resolved relative to `path`'s directory.
pub fn run_script_text(
    text: &str,
    path: &Path,
    options: &RunOptions,
) -> Result<RunRecord, ScriptError> {
    let request = |progress| Request {
        text,
        path,
        vehicle: options.vehicle.clone(),
        overrides: &options.overrides,
        progress,
    };
    let Some(callback) = &options.progress else {
        return execute(request(None));
    };
    // The run goes on a worker thread; progress comes back on a channel
    // whose sender lives in the run and drops with it.
    let (tx, rx) = mpsc::channel::<(f64, f64)>();
    let request = request(Some(tx));
    std::thread::scope(|scope| {
        let worker = scope.spawn(move || execute(request));
        while let Ok((t, end)) = rx.recv() {
            callback(t, end);
        }
        worker.join().unwrap_or_else(|_| {
            Err(ScriptError::Panicked {
                script: path.to_path_buf(),
            })
        })
    })
}
