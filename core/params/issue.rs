//! Problems found while loading or checking a parameter file.

use std::fmt;
use std::path::PathBuf;

/// One problem in a parameter file, located by key path and (when known) line.
#[derive(Debug, Clone, PartialEq)]
pub struct ParamIssue {
    /// Dotted key path, e.g. `tyre.front.magic_formula.pCx1`.
    pub path: String,
    /// 1-based line in the file, when the key appears in the file.
    pub line: Option<usize>,
    /// What is wrong and, where possible, how to fix it.
    pub message: String,
}

impl ParamIssue {
    /// A problem at `path` with `message`; the line is filled in later from the file text.
    pub fn new(path: impl Into<String>, message: impl Into<String>) -> Self {
        Self {
            path: path.into(),
            line: None,
            message: message.into(),
        }
    }
}

impl fmt::Display for ParamIssue {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.line {
            Some(line) => write!(f, "line {line}: `{}`: {}", self.path, self.message),
            None => write!(f, "`{}`: {}", self.path, self.message),
        }
    }
}

/// Every problem found in one parameter file, reported together.
#[derive(Debug, thiserror::Error)]
pub enum ParamError {
    /// The file could not be read.
    #[error("cannot read vehicle file {}: {source}", path.display())]
    Read {
        /// The file.
        path: PathBuf,
        /// The I/O error.
        source: std::io::Error,
    },
    /// The file was read but has problems; all of them are listed.
    #[error("{} problem(s) in vehicle file {}:\n{}", issues.len(), path.display(), list(issues))]
    Invalid {
        /// The file (or `<override>` for command-line overrides).
        path: PathBuf,
        /// The problems, in file order.
        issues: Vec<ParamIssue>,
    },
}

fn list(issues: &[ParamIssue]) -> String {
    issues
        .iter()
        .map(|i| format!("  {i}"))
        .collect::<Vec<_>>()
        .join("\n")
}

impl std::error::Error for ParamIssue {}

impl crate::error::Classify for ParamIssue {
    /// A problem in a vehicle file or override is bad input.
    fn kind(&self) -> crate::error::ErrorKind {
        crate::error::ErrorKind::BadInput
    }
}

impl crate::error::Classify for ParamError {
    /// A vehicle file that cannot be read (missing, not permitted) or has
    /// problems is bad input.
    fn kind(&self) -> crate::error::ErrorKind {
        crate::error::ErrorKind::BadInput
    }
}
