//! Errors between Rhai and the script layer: script positions, Rhai errors
//! turned into [`ScriptError`]s, and the error values the glue raises.

use std::path::Path;
use std::sync::Arc;

use rhai::{Dynamic, Engine, EvalAltResult, Position};

use super::evaluate::missing_key;
use crate::params::ParamError;
use crate::script::budget::Exceeded;
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

/// The value of the error that unwinds the script when a budget is spent
/// (raised by the engine's operation hook; a script cannot catch it).
#[derive(Debug, Clone)]
pub(crate) struct BudgetStop(pub Exceeded);

/// The error that unwinds the script after the runner stopped the run (not
/// bad input; a script cannot catch it).
pub(crate) fn terminated() -> Box<EvalAltResult> {
    Box::new(EvalAltResult::ErrorTerminated(
        Dynamic::from("run stopped"),
        Position::NONE,
    ))
}

/// `err`, or the uncatchable error inside it: a spent budget or a stopped
/// run raised in a script function (a controller) comes back wrapped in the
/// function call, which `try`/`catch` could catch; unwrapped, the whole
/// script stops.
pub(crate) fn uncatchable(err: Box<EvalAltResult>) -> Box<EvalAltResult> {
    let mut inner = &*err;
    while let EvalAltResult::ErrorInFunctionCall(_, _, e, _) = inner {
        inner = e;
    }
    match inner {
        EvalAltResult::ErrorTerminated(value, pos) => {
            Box::new(EvalAltResult::ErrorTerminated(value.clone(), *pos))
        }
        _ => err,
    }
}

/// The innermost script position of `err` (through the calls of script
/// functions), as [`located`] finds it.
pub(crate) fn innermost_position(path: &Path, err: &EvalAltResult) -> ScriptPosition {
    let mut err = err;
    let mut outer = Position::NONE;
    while let EvalAltResult::ErrorInFunctionCall(_, _, inner, pos) = err {
        if outer.is_none() {
            outer = *pos;
        }
        err = inner;
    }
    match err.position() {
        pos if pos.is_none() => position(path, outer),
        pos => position(path, pos),
    }
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
        EvalAltResult::ErrorTerminated(value, _) => match value.clone().try_cast::<BudgetStop>() {
            Some(BudgetStop(exceeded)) => exceeded.to_string(),
            None => value.to_string(),
        },
        EvalAltResult::ErrorStackOverflow(_) => format!(
            "more than {} nested function calls (endless recursion?)",
            engine.max_call_levels()
        ),
        EvalAltResult::ErrorRuntime(value, _) => value.to_string(),
        EvalAltResult::ErrorPropertyNotFound(key, _) => missing_key(key),
        EvalAltResult::ErrorDataTooLarge(what, _) => too_large(what, engine),
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
        // Closures have generated names (`anon$…`).
        let names: Vec<&str> = calls
            .iter()
            .map(|c| match c.starts_with("anon$") {
                true => "a closure",
                false => c.as_str(),
            })
            .collect();
        message.push_str(&format!(" (in function {})", names.join(" <- ")));
    }
    Located::Message {
        at: position(path, pos),
        message,
    }
}

/// Rhai's "… too large" with the limit that was passed.
fn too_large(what: &str, engine: &Engine) -> String {
    match what {
        "Length of string" => format!(
            "string too long: the strings in one value hold at most {} bytes",
            engine.max_string_size()
        ),
        "Size of object map" => format!(
            "map too large: one map (with the maps inside it) holds at most {} entries",
            engine.max_map_size()
        ),
        _ => format!(
            "array too long: one array (with the arrays inside it) holds at most {} elements",
            engine.max_array_size()
        ),
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
