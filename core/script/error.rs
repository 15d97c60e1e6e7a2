//! The errors of a script run that produced no record, and where in the
//! script they happened.
//!
//! A run that simulated anything never ends here: it returns its record,
//! marked failed when something went wrong after the simulation started
//! (see [`crate::script::run_script`]).

use std::path::PathBuf;

use crate::error::{Classify, ErrorKind};
use crate::params::ParamError;

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

/// A script run that produced no record.
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
    /// The script failed before or during its phases (a bad argument, a type
    /// error, a limit exceeded, an API misuse).
    #[error("{at}: {message}")]
    Runtime {
        /// Where (the innermost script position known).
        at: ScriptPosition,
        /// What happened.
        message: String,
    },
    /// A `param(name, default)` call whose name is not a literal string, so
    /// that the parameters the script reads cannot be known before it runs.
    #[error(
        "{at}: param: the name must be a literal string, e.g. param(\"radius\", 50.0), \
         so that the manoeuvre parameters are known before the run"
    )]
    ParameterName {
        /// Where the call is.
        at: ScriptPosition,
    },
    /// `manoeuvre.<name>` keys that the script never reads with `param`.
    #[error(
        "unknown manoeuvre parameter(s) {} for {}; this script reads: {}",
        quoted(unknown), script.display(), if known.is_empty() { "none".to_string() } else { quoted(known) }
    )]
    UnknownParameters {
        /// The script.
        script: PathBuf,
        /// The names given that the script does not read.
        unknown: Vec<String>,
        /// The names the script reads.
        known: Vec<String>,
    },
    /// The vehicle file (or an override) is wrong; the cause lists every problem.
    #[error("bad vehicle parameters")]
    Vehicle {
        /// The parameter problems.
        #[source]
        source: ParamError,
    },
    /// The script thread panicked (a defect of yawdyn, not of the input).
    #[error("{}: internal error: the script thread panicked", script.display())]
    Panicked {
        /// The script.
        script: PathBuf,
    },
    /// The thread to run the script on could not be started.
    #[error("{}: cannot start a thread to run the script", script.display())]
    Thread {
        /// The script.
        script: PathBuf,
        /// Why.
        source: std::io::Error,
    },
    /// A budget of the run (operations, wall-clock time, memory) was spent
    /// before any sample was recorded.
    #[error("{at}: {message}")]
    Budget {
        /// Where the script was when the budget ran out.
        at: ScriptPosition,
        /// Which budget, its size and how to raise it.
        message: String,
    },
}

/// `` `a`, `b` ``.
fn quoted(names: &[String]) -> String {
    names
        .iter()
        .map(|n| format!("`{n}`"))
        .collect::<Vec<_>>()
        .join(", ")
}

impl Classify for ScriptError {
    /// Everything the user wrote (script, vehicle, parameter names) is bad
    /// input; a spent budget and a panic of the script thread are a failed
    /// run; a thread that cannot start is the machine's.
    fn kind(&self) -> ErrorKind {
        match self {
            Self::Read { .. }
            | Self::Syntax { .. }
            | Self::Runtime { .. }
            | Self::ParameterName { .. }
            | Self::UnknownParameters { .. }
            | Self::Vehicle { .. } => ErrorKind::BadInput,
            Self::Panicked { .. } | Self::Budget { .. } => ErrorKind::Failed,
            Self::Thread { .. } => ErrorKind::Environment,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The kinds follow the contract of `crate::error`: script and vehicle
    /// errors are bad input (exit code 2), a panic a failed run (1).
    #[test]
    fn kinds_follow_the_exit_code_contract() {
        let at = ScriptPosition {
            file: "a.rhai".into(),
            line: 3,
            column: 9,
        };
        let syntax = ScriptError::Syntax {
            at: at.clone(),
            message: "x".into(),
        };
        assert_eq!(syntax.kind().exit_code(), 2);
        assert_eq!(syntax.to_string(), "a.rhai:3:9: syntax error: x");
        let unknown = ScriptError::UnknownParameters {
            script: "a.rhai".into(),
            unknown: vec!["nope".into()],
            known: vec!["radius".into(), "lat_accel".into()],
        };
        assert_eq!(unknown.kind(), ErrorKind::BadInput);
        let text = unknown.to_string();
        assert!(
            text.contains("`nope`") && text.contains("`radius`, `lat_accel`"),
            "{text}"
        );
        let panicked = ScriptError::Panicked {
            script: "a.rhai".into(),
        };
        assert_eq!(panicked.kind().exit_code(), 1);
    }
}
