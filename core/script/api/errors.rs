//! Errors between Rhai and the script layer: script positions, Rhai errors
//! turned into [`ScriptError`]s, and the error values the glue raises.

use std::path::Path;
use std::sync::Arc;

use rhai::{Dynamic, Engine, EvalAltResult, Position};

use crate::params::ParamError;
use crate::script::error::{ScriptError, ScriptPosition};

/// A Rhai error result.
pub(crate) type Res<T> = Result<T, Box<EvalAltResult>>;

/// A script-level error (Rhai fills in the call position).
pub(crate) fn script_error(message: impl Into<String>) -> Box<EvalAltResult> {
    Box::new(EvalAltResult::ErrorRuntime(
        Dynamic::from(message.into()),
        Position::NONE,
    ))
}

/// A vehicle-file error travelling through Rhai as an error value.
#[derive(Debug, Clone)]
pub(crate) struct VehicleFailure(pub Arc<ParamError>);

/// The error raised for a vehicle-file problem.
pub(crate) fn vehicle_error(e: Arc<ParamError>) -> Box<EvalAltResult> {
    Box::new(EvalAltResult::ErrorRuntime(
        Dynamic::from(VehicleFailure(e)),
        Position::NONE,
    ))
}

/// The error that unwinds the script after the runner stopped the run (not
/// bad input; a script cannot catch it).
pub(crate) fn terminated() -> Box<EvalAltResult> {
    Box::new(EvalAltResult::ErrorTerminated(
        Dynamic::from("run stopped"),
        Position::NONE,
    ))
}

/// `path:line:column` of a Rhai position.
pub(crate) fn position(path: &Path, pos: Position) -> ScriptPosition {
    ScriptPosition {
        file: path.to_path_buf(),
        line: pos.line().unwrap_or(0),
        column: pos.position().unwrap_or(0),
    }
}

/// A Rhai error as a [`ScriptError`] at the innermost script position, with
/// the chain of script functions it came through.
pub(crate) fn runtime_error(path: &Path, err: EvalAltResult, engine: &Engine) -> ScriptError {
    match located(path, err, engine) {
        Located::Vehicle(source) => ScriptError::Vehicle { source },
        Located::Message { at, message } => ScriptError::Runtime { at, message },
    }
}

/// What a Rhai error says, and where.
pub(crate) enum Located {
    /// A vehicle-file problem.
    Vehicle(ParamError),
    /// Anything else.
    Message {
        /// The innermost script position known.
        at: ScriptPosition,
        /// The message, with " (in function f <- g)" for script functions.
        message: String,
    },
}

/// Unwraps the calls of script functions to the innermost error.
pub(crate) fn located(path: &Path, err: EvalAltResult, engine: &Engine) -> Located {
    let mut err = err;
    let mut calls = Vec::new();
    let mut outer_pos = Position::NONE;
    while let EvalAltResult::ErrorInFunctionCall(name, _, inner, pos) = err {
        if outer_pos.is_none() {
            outer_pos = pos;
        }
        calls.push(name);
        err = *inner;
    }
    let mut pos = err.position();
    if pos.is_none() {
        pos = outer_pos;
    }
    if let EvalAltResult::ErrorRuntime(value, _) = &err {
        if let Some(v) = value.clone().try_cast::<VehicleFailure>() {
            return Located::Vehicle(
                Arc::try_unwrap(v.0).unwrap_or_else(|a| clone_param_error(&a)),
            );
        }
    }
    let mut message = match &err {
        EvalAltResult::ErrorTooManyOperations(_) => format!(
            "operation limit of {} exceeded (an endless loop?); the script was stopped",
            engine.max_operations()
        ),
        EvalAltResult::ErrorRuntime(value, _) => value.to_string(),
        other => {
            let mut text = other.to_string();
            // Rhai appends " (line l, position c)"; the position is given separately.
            if let Some(i) = text.rfind(" (line ") {
                text.truncate(i);
            }
            text
        }
    };
    if !calls.is_empty() {
        message.push_str(&format!(" (in function {})", calls.join(" <- ")));
    }
    Located::Message {
        at: position(path, pos),
        message,
    }
}

/// ParamError is not Clone; rebuild it from its parts.
fn clone_param_error(e: &ParamError) -> ParamError {
    match e {
        ParamError::Read { path, source } => ParamError::Read {
            path: path.clone(),
            source: std::io::Error::new(source.kind(), source.to_string()),
        },
        ParamError::Invalid { path, issues } => ParamError::Invalid {
            path: path.clone(),
            issues: issues.clone(),
        },
    }
}
