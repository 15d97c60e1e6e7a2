//! What kind of failure an error is, carried from the library to the exit code.
//!
//! Every library error type says which [`ErrorKind`] it is through
//! [`Classify`]; the command line only adds context and reads the exit code
//! from the first classified error in the chain (ripgrep's habit of walking
//! `err.chain()`), never from message text.
//!
//! | kind | exit code | meaning |
//! | --- | --- | --- |
//! | [`ErrorKind::BadInput`] | 2 | options, vehicle file, script, output path: the user must change the input |
//! | [`ErrorKind::Failed`] | 1 | the input was valid but the run, a criterion or a check failed |
//! | [`ErrorKind::Environment`] | 1 | the machine got in the way (disk full, I/O error, HDF5 library failure) |

/// The kind of a failure, which decides the process exit code.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ErrorKind {
    /// The input is wrong (exit code 2).
    BadInput,
    /// A valid run, criterion or check failed (exit code 1).
    Failed,
    /// An I/O or environment problem outside the user's input (exit code 1).
    Environment,
}

impl ErrorKind {
    /// The process exit code of this kind: 2 for bad input, 1 otherwise.
    pub fn exit_code(self) -> u8 {
        match self {
            Self::BadInput => 2,
            Self::Failed | Self::Environment => 1,
        }
    }
}

/// An error that knows its [`ErrorKind`].
pub trait Classify {
    /// The kind of this error.
    fn kind(&self) -> ErrorKind;
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The documented table: bad input 2, failed run 1, environment 1.
    #[test]
    fn exit_codes_follow_the_documented_table() {
        assert_eq!(ErrorKind::BadInput.exit_code(), 2);
        assert_eq!(ErrorKind::Failed.exit_code(), 1);
        assert_eq!(ErrorKind::Environment.exit_code(), 1);
    }
}
