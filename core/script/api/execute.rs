//! One script run from text to record: compile, check the manoeuvre
//! parameters, run the top level, call `evaluate(ch)`, complete the record.
//!
//! Anything that goes wrong before the simulation has produced its record is
//! a [`ScriptError`]; a stop of the run (divergence, `fail_on_timeout`, the
//! time limit) and any error in `evaluate` give the record marked failed,
//! with the script position in its message.

use std::path::{Path, PathBuf};
use std::sync::mpsc;

use rhai::{AST, CallFnOptions, Dynamic, Engine, Position, Scope};

use super::engine::{compile, engine, sandbox};
use super::errors::{Located, located, position, runtime_error};
use super::evaluate::channel_map;
use super::params::{check_given, parameter_names};
use super::parts::{Parts, Stage};
use crate::params::Override;
use crate::results::{Provenance, RunRecord};
use crate::script::error::ScriptError;
use crate::script::record::{LateFailure, ScriptSource, finish};
use crate::script::setup::MANOEUVRE_PREFIX;

/// What to run.
pub(crate) struct Request<'a> {
    /// The script text.
    pub text: &'a str,
    /// The script file (messages, provenance, the folder of its vehicle file).
    pub path: &'a Path,
    /// A vehicle file that replaces the script's own.
    pub vehicle: Option<PathBuf>,
    /// Overrides after the script's own; `manoeuvre.*` keys are parameters.
    pub overrides: &'a [Override],
    /// Receives (simulation time, planned end of the phase), s.
    pub progress: Option<mpsc::Sender<(f64, f64)>>,
}

/// Runs the script to its end and builds the record.
pub(crate) fn execute(request: Request<'_>) -> Result<RunRecord, ScriptError> {
    let Request {
        text,
        path,
        vehicle,
        overrides,
        progress,
    } = request;
    let parts = Parts::new(path, vehicle, overrides, progress);
    let engine = engine(&parts);
    let ast = compile(&engine, text, path)?;
    let given = parts.setup.with(|s| s.given_parameters().to_vec());
    if !given.is_empty() {
        let names = given.iter().map(|g| g.name.as_str());
        check_given(path, parameter_names(&ast, path)?, names)?;
    }
    // The top level: setup and phases.
    if let Err(err) = engine.run_ast(&ast) {
        let stopped = parts
            .stage
            .with(|s| matches!(s, Stage::Running(r) if r.stopped().is_some()));
        if !stopped {
            return Err(runtime_error(path, *err, &engine));
        }
    }
    let runner = parts.end().ok_or_else(|| ScriptError::Runtime {
        at: position(path, Position::NONE),
        message: "the script ran no phase (call run_for or run_until)".into(),
    })?;
    let stopped = runner.stopped().is_some();
    let config = runner.config().clone();
    let stopped_at = parts.phases.with(|p| p.stopped_at.take());
    let context = stopped_at.map(|at| at.to_string());
    let record = runner.into_record(Provenance::default(), context.as_deref());
    // The evaluation, unless the run stopped.
    let late = match stopped {
        false => evaluate(&engine, &ast, &record, path).err(),
        true => None,
    };
    let log = parts.log.with(std::mem::take);
    let source = ScriptSource { path, text };
    Ok(parts
        .setup
        .with(|setup| finish(record, &config, setup, log, source, late)))
}

/// Calls `evaluate(ch)` if the script defines it.
fn evaluate(
    engine: &Engine,
    ast: &AST,
    record: &RunRecord,
    path: &Path,
) -> Result<(), LateFailure> {
    let defined = ast
        .iter_functions()
        .any(|f| f.name == "evaluate" && f.params.len() == 1);
    if !defined {
        return Ok(());
    }
    let mut scope = Scope::new();
    let options = CallFnOptions::new().eval_ast(false);
    let channels = channel_map(record);
    let result =
        engine.call_fn_with_options::<Dynamic>(options, &mut scope, ast, "evaluate", (channels,));
    match result {
        Ok(_) => Ok(()),
        Err(err) => Err(match located(path, *err, engine) {
            Located::Message { at, message } => LateFailure {
                at,
                message: format!("in evaluate(ch): {message}"),
            },
            Located::Vehicle(e) => LateFailure {
                at: position(path, Position::NONE),
                message: format!("in evaluate(ch): {e}"),
            },
        }),
    }
}

/// The manoeuvre parameters the script in `text` reads with
/// `param("name", default)`, found without running it; `path` names the
/// script in messages. Errors: a syntax error, or a `param` call whose name
/// is not a literal string.
pub fn manoeuvre_parameters(text: &str, path: &Path) -> Result<Vec<String>, ScriptError> {
    let ast = compile(&sandbox(), text, path)?;
    parameter_names(&ast, path)
}

/// Error unless every `manoeuvre.<name>` key among `keys` (dotted
/// parameter keys as given to `--set` or `--vary`; other keys are ignored)
/// is a parameter the script in `text` reads, checked without running it.
pub fn check_manoeuvre_keys<'a>(
    text: &str,
    path: &Path,
    keys: impl IntoIterator<Item = &'a str>,
) -> Result<(), ScriptError> {
    let names: Vec<&str> = keys
        .into_iter()
        .filter_map(|k| k.strip_prefix(MANOEUVRE_PREFIX))
        .collect();
    if names.is_empty() {
        return Ok(());
    }
    check_given(path, manoeuvre_parameters(text, path)?, names)
}
