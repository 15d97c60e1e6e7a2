//! The entry points: run a script file or text with the caller's options.

use std::path::{Path, PathBuf};
use std::sync::mpsc;

use super::api::{Request, execute};
use super::budget::Limits;
use super::error::ScriptError;
use crate::params::{Override, read_text_file};
use crate::results::RunRecord;

/// Largest script file read, bytes (1 MiB).
pub const MAX_SCRIPT_FILE_BYTES: u64 = 1 << 20;

/// Stack of the thread a script runs on, bytes (256 MiB of address space,
/// used only as deep as the script's values nest): dropping or printing a
/// deeply nested value recurses once per level, and the script memory
/// budget bounds the levels well below what this stack holds.
const SCRIPT_STACK_BYTES: usize = 256 << 20;

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
    /// The run's budgets (operations, wall-clock time, sample memory).
    pub limits: Limits,
}

impl std::fmt::Debug for RunOptions {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("RunOptions")
            .field("vehicle", &self.vehicle)
            .field("overrides", &self.overrides)
            .field("progress", &self.progress.is_some())
            .field("limits", &self.limits)
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
/// file, unknown manoeuvre parameters) or a budget was spent before any
/// sample was recorded. The script file must be a regular file of at most
/// [`MAX_SCRIPT_FILE_BYTES`].
pub fn run_script(path: &Path, options: &RunOptions) -> Result<RunRecord, ScriptError> {
    let text =
        read_text_file(path, None, MAX_SCRIPT_FILE_BYTES).map_err(|source| ScriptError::Read {
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
        limits: options.limits,
    };
    // The run goes on a thread of its own (a large stack, see
    // SCRIPT_STACK_BYTES); progress comes back on a channel whose sender
    // lives in the run and drops with it.
    let (tx, rx) = mpsc::channel::<(f64, f64)>();
    let request = request(options.progress.as_ref().map(|_| tx));
    std::thread::scope(|scope| {
        let worker = std::thread::Builder::new()
            .name("script".into())
            .stack_size(SCRIPT_STACK_BYTES)
            .spawn_scoped(scope, move || execute(request));
        let worker = worker.map_err(|source| ScriptError::Thread {
            script: path.to_path_buf(),
            source,
        })?;
        while let Ok((t, end)) = rx.recv() {
            if let Some(callback) = &options.progress {
                callback(t, end);
            }
        }
        worker.join().unwrap_or_else(|_| {
            Err(ScriptError::Panicked {
                script: path.to_path_buf(),
            })
        })
    })
}
