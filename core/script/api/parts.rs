//! The parts of a run as the registered functions share them.
//!
//! Each part (setup, stage, log, controller, phase bookkeeping) sits behind
//! its own lock and is reached only through [`Part::with`], which holds the
//! lock for the closure it is given. No closure calls script code, so no
//! lock is ever held while the script runs (a controller may call any API
//! function), and locks are never nested: a function that needs two parts
//! takes them one after the other.

use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex, mpsc};

use rhai::FnPtr;

use super::errors::{Res, script_error};
use super::values::setup_error;
use crate::params::Override;
use crate::script::budget::{Budget, Limits};
use crate::script::error::ScriptPosition;
use crate::script::log::RunLog;
use crate::script::runner::{Inputs, Runner};
use crate::script::setup::Setup;

/// One part of a run, shared by the registered functions.
#[derive(Debug, Default)]
pub(crate) struct Part<T>(Arc<Mutex<T>>);

impl<T> Clone for Part<T> {
    fn clone(&self) -> Self {
        Self(Arc::clone(&self.0))
    }
}

impl<T> Part<T> {
    pub(crate) fn new(value: T) -> Self {
        Self(Arc::new(Mutex::new(value)))
    }

    /// Runs `f` on the part; the lock is held for `f` only. A poisoned lock
    /// (a panic elsewhere) still gives the data.
    pub(crate) fn with<R>(&self, f: impl FnOnce(&mut T) -> R) -> R {
        let mut guard = self.0.lock().unwrap_or_else(|p| p.into_inner());
        f(&mut guard)
    }
}

/// Where the simulation is.
pub(crate) enum Stage {
    /// Before the first phase: the inputs declared so far.
    Declaring(Box<Inputs>),
    /// From the first phase (or the first call that needs the state) on.
    Running(Box<Runner>),
    /// The top level has finished; `evaluate` may run.
    Ended {
        /// End time, s.
        time: f64,
        /// The inputs at the end (for read-only queries).
        inputs: Box<Inputs>,
    },
}

/// Bookkeeping of the phase calls.
#[derive(Debug, Default)]
pub(crate) struct Phases {
    /// A `run_for`/`run_until` is under way (a controller must not start one).
    pub(crate) running: bool,
    /// Where the phase call that stopped the run is.
    pub(crate) stopped_at: Option<ScriptPosition>,
}

/// The parts of one run.
#[derive(Clone)]
pub(crate) struct Parts {
    pub(crate) script: Arc<PathBuf>,
    pub(crate) setup: Part<Setup>,
    pub(crate) stage: Part<Stage>,
    pub(crate) log: Part<RunLog>,
    /// The script's per-tick controller.
    pub(crate) controller: Part<Option<FnPtr>>,
    pub(crate) phases: Part<Phases>,
    /// Receives (simulation time, planned end of the phase), s.
    pub(crate) progress: Option<Part<mpsc::Sender<(f64, f64)>>>,
    /// What the run has spent of its budgets (no lock: atomic counters).
    pub(crate) budget: Arc<Budget>,
}

impl Parts {
    /// The parts of a run of the script at `script` with the caller's
    /// choices; the budgets start now, on this thread.
    pub(crate) fn new(
        script: &Path,
        vehicle: Option<PathBuf>,
        overrides: &[Override],
        progress: Option<mpsc::Sender<(f64, f64)>>,
        limits: Limits,
    ) -> Self {
        let budget = Arc::new(Budget::new(limits));
        let setup = Setup::new(script, vehicle, overrides).with_limits(limits, budget.started());
        Self {
            script: Arc::new(script.to_path_buf()),
            setup: Part::new(setup),
            stage: Part::new(Stage::Declaring(Box::default())),
            log: Part::new(RunLog::default()),
            controller: Part::new(None),
            phases: Part::new(Phases::default()),
            progress: progress.map(Part::new),
            budget,
        }
    }

    /// Runs `f` on the runner, starting the simulation first if needed
    /// (which fixes the setup).
    pub(crate) fn runner<R>(&self, f: impl FnOnce(&mut Runner) -> R) -> Res<R> {
        let started = self.stage.with(|s| matches!(s, Stage::Running(_)));
        let config = match started {
            true => None,
            false => Some(self.setup.with(|s| s.config()).map_err(setup_error)?),
        };
        self.stage.with(|stage| {
            if let (Some(config), Stage::Declaring(inputs)) = (config, &mut *stage) {
                let runner = Runner::start(config, *std::mem::take(inputs))
                    .map_err(|e| script_error(e.to_string()))?;
                *stage = Stage::Running(Box::new(runner));
            }
            match stage {
                Stage::Running(runner) => Ok(f(runner)),
                Stage::Ended { .. } => Err(script_error(
                    "the simulation has ended: phases, state() and inputs are not available in evaluate",
                )),
                Stage::Declaring(_) => Err(script_error("internal: the simulation did not start")),
            }
        })
    }

    /// Runs `f` on the inputs, before or during the run.
    pub(crate) fn inputs<R>(&self, f: impl FnOnce(&mut Inputs) -> R) -> Res<R> {
        self.stage.with(|stage| match stage {
            Stage::Declaring(inputs) => Ok(f(inputs)),
            Stage::Running(runner) => Ok(f(runner.inputs_mut())),
            Stage::Ended { .. } => Err(script_error(
                "the simulation has ended: inputs cannot be changed in evaluate",
            )),
        })
    }

    /// Reads the inputs, before, during or after the run.
    pub(crate) fn read_inputs<R>(&self, f: impl FnOnce(&Inputs) -> R) -> R {
        self.stage.with(|stage| match stage {
            Stage::Declaring(inputs) => f(inputs),
            Stage::Running(runner) => f(runner.inputs()),
            Stage::Ended { inputs, .. } => f(inputs),
        })
    }

    /// Current simulation time, s (0 before the first phase).
    pub(crate) fn time(&self) -> f64 {
        self.stage.with(|stage| match stage {
            Stage::Declaring(_) => 0.0,
            Stage::Running(runner) => runner.time(),
            Stage::Ended { time, .. } => *time,
        })
    }

    /// Ends the run: takes the runner out (`None` if no phase ran).
    pub(crate) fn end(&self) -> Option<Runner> {
        self.stage.with(|stage| {
            let (time, inputs) = match stage {
                Stage::Running(runner) => (runner.time(), runner.inputs().clone()),
                _ => (0.0, Inputs::default()),
            };
            let ended = Stage::Ended {
                time,
                inputs: Box::new(inputs),
            };
            match std::mem::replace(stage, ended) {
                Stage::Running(runner) => Some(*runner),
                _ => None,
            }
        })
    }

    /// Reports progress, if anyone listens.
    pub(crate) fn report(&self, time: f64, planned_end: f64) {
        if let Some(tx) = &self.progress {
            // A closed receiver only means nobody listens any more.
            tx.with(|tx| tx.send((time, planned_end)).ok());
        }
    }
}
