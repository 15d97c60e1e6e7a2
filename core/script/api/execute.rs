//! One script run from text to record: compile, check the manoeuvre
//! parameters, run the top level, call `evaluate(ch)`, complete the record.
//!
//! Anything that goes wrong before the simulation has produced its record is
//! a [`ScriptError`]; a stop of the run (divergence, `fail_on_timeout`, the
//! time limit) and any error in `evaluate` give the record marked failed,
//! with the script position in its message.

use std::path::{Path, PathBuf};
use std::sync::mpsc;

use rhai::{AST, CallFnOptions, Dynamic, Engine, EvalAltResult, Position, Scope};

use super::engine::{MAX_ARRAY_LEN, compile, engine, sandbox};
use super::errors::{Located, innermost_position, located, position, runtime_error};
use super::evaluate::channel_map;
use super::params::{check_given, parameter_names, parameter_units};
use super::parts::{Parts, Stage};
use crate::params::Override;
use crate::results::{Provenance, RunRecord, RunStatus};
use crate::script::budget::Limits;
use crate::script::error::{ScriptError, ScriptPosition};
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
    /// The run's budgets.
    pub limits: Limits,
}

/// Runs the script to its end and builds the record.
pub(crate) fn execute(request: Request<'_>) -> Result<RunRecord, ScriptError> {
    let Request {
        text,
        path,
        vehicle,
        overrides,
        progress,
        limits,
    } = request;
    let parts = Parts::new(path, vehicle, overrides, progress, limits);
    let mut engine = engine(&parts);
    let ast = compile(&engine, text, path)?;
    let given = parts.setup.with(|s| s.given_parameters().to_vec());
    if !given.is_empty() {
        let names = given.iter().map(|g| g.name.as_str());
        check_given(path, parameter_names(&ast, path)?, names)?;
    }
    // The top level: setup and phases. A spent budget stops the run, also
    // when the script caught the error.
    let outcome = engine.run_ast(&ast).map_err(|e| *e);
    let spent = budget_failure(&parts, path, outcome.as_ref().err());
    if let (Err(err), None) = (outcome, &spent) {
        let stopped = parts
            .stage
            .with(|s| matches!(s, Stage::Running(r) if r.stopped().is_some()));
        if !stopped {
            return Err(runtime_error(path, err, &engine));
        }
    }
    let no_record = |spent: Option<LateFailure>| match spent {
        Some(LateFailure { at, message }) => ScriptError::Budget { at, message },
        None => ScriptError::Runtime {
            at: position(path, Position::NONE),
            message: "the script ran no phase (call run_for or run_until)".into(),
        },
    };
    let Some(runner) = parts.end() else {
        return Err(no_record(spent));
    };
    let stopped = runner.stopped().is_some();
    let config = runner.config().clone();
    let stopped_at = parts.phases.with(|p| p.stopped_at.take());
    let context = stopped_at.as_ref().map(ToString::to_string);
    let record = runner.into_record(Provenance::default(), context.as_deref());
    if record.samples() == 0 && (stopped || spent.is_some()) {
        let message = match &record.status {
            RunStatus::Failed { message, .. } if spent.is_none() => message.clone(),
            _ => String::new(),
        };
        return Err(match message.split_once(": ") {
            Some((_, m)) if spent.is_none() => ScriptError::Budget {
                at: stopped_at.unwrap_or_else(|| position(path, Position::NONE)),
                message: m.to_string(),
            },
            _ => no_record(spent),
        });
    }
    // The evaluation, unless the run stopped.
    let late = match (stopped, spent) {
        (false, None) => evaluate(
            &mut engine,
            &parts,
            &ast,
            &record,
            ScriptSource { path, text },
        )
        .err(),
        (_, spent) => spent,
    };
    let log = parts.log.with(std::mem::take);
    let source = ScriptSource { path, text };
    Ok(parts
        .setup
        .with(|setup| finish(record, &config, setup, log, source, late)))
}

/// The spent budget, if any, located at the script position of `err` (the
/// operation that found it), else at `file:0:0`.
fn budget_failure(parts: &Parts, path: &Path, err: Option<&EvalAltResult>) -> Option<LateFailure> {
    let exceeded = parts.budget.exceeded()?;
    let at = match err {
        Some(e) => innermost_position(path, e),
        None => position(path, Position::NONE),
    };
    let time = parts.time();
    Some(LateFailure {
        at,
        message: format!("{exceeded} (at t = {time} s)"),
    })
}

/// Calls `evaluate(ch)` if the script defines it. The channels it receives
/// are not charged to the script's memory, and its arrays may be as long
/// as they need.
fn evaluate(
    engine: &mut Engine,
    parts: &Parts,
    ast: &AST,
    record: &RunRecord,
    source: ScriptSource<'_>,
) -> Result<(), LateFailure> {
    let path = source.path;
    let defined = ast
        .iter_functions()
        .any(|f| f.name == "evaluate" && f.params.len() == 1);
    if !defined {
        return Ok(());
    }
    let mut scope = Scope::new();
    let options = CallFnOptions::new().eval_ast(false);
    let channels = channel_map(record);
    let values = (record.channels.len() + 1) * record.samples();
    engine.set_max_array_size(MAX_ARRAY_LEN.saturating_add(values));
    // A misspelt channel (or key) is an error here, not `()`.
    engine.set_fail_on_invalid_map_property(true);
    parts.budget.allow_current();
    let result =
        engine.call_fn_with_options::<Dynamic>(options, &mut scope, ast, "evaluate", (channels,));
    // Rhai places a spent budget or a recursion too deep at the call, and
    // evaluate has no call in the script: name its definition instead.
    let known = |at: ScriptPosition| match at.line {
        0 => definition_of_evaluate(source),
        _ => at,
    };
    let spent = budget_failure(parts, path, result.as_ref().err().map(|e| &**e));
    if let Some(spent) = spent {
        return Err(LateFailure {
            at: known(spent.at),
            message: format!("in evaluate(ch): {}", spent.message),
        });
    }
    match result {
        Ok(_) => Ok(()),
        Err(err) => Err(match located(path, *err, engine) {
            Located::Message { at, message } => LateFailure {
                at: known(at),
                message: format!("in evaluate(ch): {message}"),
            },
            Located::Vehicle(e) => LateFailure {
                at: definition_of_evaluate(source),
                message: format!("in evaluate(ch): {e}"),
            },
        }),
    }
}

/// Where `fn evaluate(` is written in the script (`file:0:0` if not found).
fn definition_of_evaluate(source: ScriptSource<'_>) -> ScriptPosition {
    let found = source.text.lines().enumerate().find_map(|(i, line)| {
        let column = line.find("fn evaluate")?;
        let rest = line[column + "fn evaluate".len()..].trim_start();
        rest.starts_with('(').then_some((i + 1, column + 1))
    });
    let (line, column) = found.unwrap_or((0, 0));
    ScriptPosition {
        file: source.path.to_path_buf(),
        line,
        column,
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

/// The units the script in `text` declares for its manoeuvre parameters
/// (`param("name", default, "unit")`), `(name, unit)`, found without running
/// it. Parameters read without a unit are not listed.
pub fn manoeuvre_parameter_units(
    text: &str,
    path: &Path,
) -> Result<Vec<(String, String)>, ScriptError> {
    let ast = compile(&sandbox(), text, path)?;
    Ok(parameter_units(&ast))
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
