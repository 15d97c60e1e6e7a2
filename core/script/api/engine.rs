//! The sandboxed Rhai engine and the registration of the whole API on the
//! parts of one run.

use std::path::Path;

use rhai::{AST, Engine};

use super::errors::position;
use super::parts::Parts;
use super::{analysis, evaluate, inputs, phases, setup, signals, state, units};
use crate::script::error::ScriptError;

/// Operations one script run (top level, phases and controllers) may use.
pub const MAX_OPERATIONS: u64 = 20_000_000;

/// An engine with the sandbox limits and no API: `eval` disabled, limits on
/// operations, call depth, string, array and map sizes and expression depth.
pub(crate) fn sandbox() -> Engine {
    let mut engine = Engine::new();
    engine
        .set_max_operations(MAX_OPERATIONS)
        .set_max_call_levels(64)
        .set_max_string_size(1_000_000)
        .set_max_array_size(2_000_000)
        .set_max_map_size(10_000)
        .set_max_expr_depths(64, 64);
    engine.disable_symbol("eval");
    engine
}

/// The sandboxed engine with the whole script API registered on `parts`.
pub(crate) fn engine(parts: &Parts) -> Engine {
    let mut engine = sandbox();
    units::register(&mut engine);
    signals::register(&mut engine);
    state::register(&mut engine);
    analysis::register(&mut engine);
    setup::register(&mut engine, parts);
    inputs::register(&mut engine, parts);
    phases::register(&mut engine, parts);
    evaluate::register(&mut engine, parts);
    engine
}

/// Compiles `text`; a syntax error names `path:line:column`.
pub(crate) fn compile(engine: &Engine, text: &str, path: &Path) -> Result<AST, ScriptError> {
    engine.compile(text).map_err(|e| ScriptError::Syntax {
        at: position(path, e.1),
        message: e.0.to_string(),
    })
}
