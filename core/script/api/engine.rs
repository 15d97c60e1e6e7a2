//! The sandboxed Rhai engine and the registration of the whole API on the
//! parts of one run.
//!
//! What a script can reach of the outside world, package by package of
//! Rhai 1.27 (checked against its source):
//!
//! | package | in | why |
//! | --- | --- | --- |
//! | arithmetic, logic, bit fields, math, strings (basic and more), iterators, arrays, BLOBs, maps, function pointers | yes | pure functions of their arguments |
//! | time (`timestamp()`, `elapsed`) | no | the wall clock would make results vary between runs |
//! | language core (`sleep`, `exit`, `take`, `tag`, `parse_json`, `get_fn_metadata_list`) | no | `sleep` blocks the thread, `exit` would end a run half way; the rest is not needed |
//! | modules (`import`) | no | a manoeuvre is one self-contained script, stored whole in its results file |
//! | `eval` | no | code built at run time escapes the checks made before the run |
//! | `print`, `debug` | to stderr, at most [`MAX_PRINTED_BYTES`] per run | keeps stdout for the command's own output |
//!
//! Rhai has no file, network, process or environment access of its own;
//! the only file a script reaches is its vehicle file ([`Setup`](crate::script::setup::Setup)).
//! Limits: the run's [`Budget`] at every operation (operations, memory,
//! wall time), call depth [`MAX_CALL_LEVELS`], expression depth 64, and
//! per value [`MAX_STRING_BYTES`], [`MAX_ARRAY_LEN`], [`MAX_MAP_LEN`].

use std::io::Write;
use std::path::Path;
use std::sync::Arc;
use std::sync::atomic::{AtomicU64, Ordering};

use rhai::packages::{
    ArithmeticPackage, BasicArrayPackage, BasicBlobPackage, BasicFnPackage, BasicIteratorPackage,
    BasicMapPackage, BasicMathPackage, BasicStringPackage, BitFieldPackage, LogicPackage,
    MoreStringPackage, Package,
};
use rhai::{
    AST, ASTNode, Dynamic, Engine, EvalAltResult, Module, ModuleResolver, Position, Shared, Stmt,
};

use super::errors::{BudgetStop, Res, position, script_error};
use super::parts::Parts;
use super::{analysis, evaluate, inputs, phases, setup, signals, state, units};
use crate::script::error::ScriptError;

/// Deepest nesting of script function calls.
pub const MAX_CALL_LEVELS: usize = 64;
/// Longest string value, bytes.
pub const MAX_STRING_BYTES: usize = 1_000_000;
/// Most elements in one array value (nested arrays counted), outside
/// `evaluate`; there the limit grows to hold the run's channels.
pub const MAX_ARRAY_LEN: usize = 50_000;
/// Most entries in one map value (nested maps counted).
pub const MAX_MAP_LEN: usize = 10_000;
/// Most bytes a run may print with `print` and `debug`.
pub const MAX_PRINTED_BYTES: u64 = 64 * 1024;

/// An engine with the sandbox's packages and limits and no API (see the
/// module doc): enough to compile a script and read its syntax tree.
pub(crate) fn sandbox() -> Engine {
    let mut engine = Engine::new_raw();
    let packages = [
        ArithmeticPackage::new().as_shared_module(),
        BasicStringPackage::new().as_shared_module(),
        BasicIteratorPackage::new().as_shared_module(),
        BasicFnPackage::new().as_shared_module(),
        BitFieldPackage::new().as_shared_module(),
        LogicPackage::new().as_shared_module(),
        BasicMathPackage::new().as_shared_module(),
        BasicArrayPackage::new().as_shared_module(),
        BasicBlobPackage::new().as_shared_module(),
        BasicMapPackage::new().as_shared_module(),
        MoreStringPackage::new().as_shared_module(),
    ];
    for package in packages {
        engine.register_global_module(package);
    }
    engine
        .set_max_call_levels(MAX_CALL_LEVELS)
        .set_max_string_size(MAX_STRING_BYTES)
        .set_max_array_size(MAX_ARRAY_LEN)
        .set_max_map_size(MAX_MAP_LEN)
        .set_max_expr_depths(64, 64)
        .set_module_resolver(NoImports);
    engine.disable_symbol("eval");
    engine
}

/// The sandboxed engine with the whole script API registered on `parts`,
/// spending `parts.budget` at every operation.
pub(crate) fn engine(parts: &Parts) -> Engine {
    let mut engine = sandbox();
    let budget = parts.budget.clone();
    engine.on_progress(move |_| {
        budget
            .operation()
            .err()
            .map(|exceeded| Dynamic::from(BudgetStop(exceeded)))
    });
    register_output(&mut engine);
    register_unavailable(&mut engine);
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

/// `print` and `debug` write to stderr, at most [`MAX_PRINTED_BYTES`] per run.
fn register_output(engine: &mut Engine) {
    let printed = Arc::new(AtomicU64::new(0));
    let write = move |text: &str| {
        let before = printed.fetch_add(text.len() as u64 + 1, Ordering::Relaxed);
        let mut err = std::io::stderr().lock();
        // A closed stderr only loses the script's output.
        if before + (text.len() as u64) < MAX_PRINTED_BYTES {
            let _ = writeln!(err, "{text}");
        } else if before < MAX_PRINTED_BYTES {
            let _ = writeln!(
                err,
                "[script output past {MAX_PRINTED_BYTES} bytes is not shown]"
            );
        }
    };
    let write = Arc::new(write);
    let w = write.clone();
    engine.on_print(move |text| w(text));
    engine.on_debug(move |text, _, pos| write(&format!("[debug {pos}] {text}")));
}

/// Functions of Rhai's standard library left out of the sandbox, with a
/// message that says why (instead of "function not found").
fn register_unavailable(engine: &mut Engine) {
    const CLOCK: &str = "timestamp() is not available: scripts see simulation time only (now())";
    const SLEEP: &str = "sleep() is not available: a script cannot wait for wall-clock time";
    const EXIT: &str = "exit() is not available: the script ends after its last statement";
    engine.register_fn("timestamp", || -> Res<()> { Err(script_error(CLOCK)) });
    engine.register_fn("sleep", |_: Dynamic| -> Res<()> {
        Err(script_error(SLEEP))
    });
    engine.register_fn("exit", || -> Res<()> { Err(script_error(EXIT)) });
    engine.register_fn("exit", |_: Dynamic| -> Res<()> { Err(script_error(EXIT)) });
}

/// Refuses every `import` (also checked before the run, see [`compile`]).
struct NoImports;

/// Why `import` is refused.
const NO_IMPORT: &str = "import is not available: a manoeuvre is one self-contained script \
                         (its whole text is stored in the results file)";

impl ModuleResolver for NoImports {
    fn resolve(
        &self,
        _: &Engine,
        _: Option<&str>,
        _: &str,
        pos: Position,
    ) -> Result<Shared<Module>, Box<EvalAltResult>> {
        Err(Box::new(EvalAltResult::ErrorRuntime(NO_IMPORT.into(), pos)))
    }
}

/// Compiles `text`; a syntax error names `path:line:column`, and so does
/// an `import` anywhere in the script.
pub(crate) fn compile(engine: &Engine, text: &str, path: &Path) -> Result<AST, ScriptError> {
    let ast = engine.compile(text).map_err(|e| ScriptError::Syntax {
        at: position(path, e.1),
        message: e.0.to_string(),
    })?;
    let mut import = None;
    ast.walk(&mut |nodes: &[ASTNode]| match nodes.last() {
        Some(ASTNode::Stmt(s @ Stmt::Import(..))) => {
            import = Some(s.position());
            false
        }
        _ => true,
    });
    match import {
        Some(pos) => Err(ScriptError::Syntax {
            at: position(path, pos),
            message: NO_IMPORT.into(),
        }),
        None => Ok(ast),
    }
}
