//! What kind of failure an error is, carried from the library to the exit code.
//!
//! Every library error type says which [`ErrorKind`] it is through
//! [`Classify`]; the command line only adds context and reads the exit code
//! from the first classified error in the chain (ripgrep's habit of walking
//! `err.chain()`), never from message text.
//!
//! | kind | exit code | meaning |
//! | --- | --- | --- |
//! | [`ErrorKind::BadInput`] | 2 | options, vehicle file, script, input file, output path: the user must change the input |
//! | [`ErrorKind::Failed`] | 1 | the input was valid but the run, a criterion or a check failed |
//! | [`ErrorKind::Environment`] | 1 | the machine got in the way (disk full, I/O error, HDF5 library failure while writing) |
//!
//! The user-facing wording of the exit codes is [`EXIT_CODES`]: the
//! command's `--help` prints [`exit_codes_help`], and the README's table is
//! [`exit_codes_markdown`] (a test keeps the README equal to it).

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

/// The kind of a file-system error met on a path the user named (an input
/// file, an output file or its directory): a missing file or directory, a
/// permission refused, a directory where a file is wanted (or the reverse)
/// and a read-only file system are bad input; anything else (disk full,
/// device or network errors) is the environment.
pub fn io_kind(error: &std::io::Error) -> ErrorKind {
    use std::io::ErrorKind as Io;
    match error.kind() {
        Io::NotFound
        | Io::PermissionDenied
        | Io::AlreadyExists
        | Io::NotADirectory
        | Io::IsADirectory
        | Io::DirectoryNotEmpty
        | Io::ReadOnlyFilesystem
        | Io::InvalidInput
        | Io::InvalidData => ErrorKind::BadInput,
        _ => ErrorKind::Environment,
    }
}

/// The exit codes of the `yawdyn` command and what each means, in the one
/// wording used by `--help` and the README.
pub const EXIT_CODES: [(u8, &str); 3] = [
    (
        0,
        "success: every run completed, every criterion and check passed",
    ),
    (
        1,
        "failed: a run failed (diverged, solver gave up, the simulated-time limit or a script \
         budget spent, an error in the script's evaluate after the simulation; the results file is still written, status \
         failed), a criterion or regression check failed, no trim exists, or the machine got \
         in the way (disk full, I/O error)",
    ),
    (
        2,
        "bad input: options, vehicle file, script, a manoeuvre.* key the script does not read, \
         input file (missing, damaged or foreign) or output path (read-only or missing \
         directory; a directory, device, FIFO or socket where a file is wanted; one of the \
         command's own inputs); the message names the file, line or key",
    ),
];

/// The exit codes as plain text for `--help`: a heading and one line per code.
pub fn exit_codes_help() -> String {
    let mut text = String::from("Exit codes:");
    for (code, meaning) in EXIT_CODES {
        text.push_str(&format!("\n  {code}  {meaning}"));
    }
    text
}

/// The exit codes as the Markdown table of the README.
pub fn exit_codes_markdown() -> String {
    let mut text = String::from("| code | meaning |\n| --- | --- |\n");
    for (code, meaning) in EXIT_CODES {
        text.push_str(&format!("| {code} | {meaning} |\n"));
    }
    text
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
        let codes: Vec<u8> = EXIT_CODES.iter().map(|(c, _)| *c).collect();
        assert_eq!(codes, vec![0, 1, 2]);
    }

    /// Path problems are the user's; a full disk is the machine's.
    #[test]
    fn io_errors_are_classified_by_what_went_wrong() {
        use std::io::{Error, ErrorKind as Io};
        for kind in [
            Io::NotFound,
            Io::PermissionDenied,
            Io::IsADirectory,
            Io::NotADirectory,
            Io::ReadOnlyFilesystem,
        ] {
            assert_eq!(io_kind(&Error::from(kind)), ErrorKind::BadInput, "{kind:?}");
        }
        for kind in [Io::StorageFull, Io::Interrupted, Io::Other] {
            assert_eq!(
                io_kind(&Error::from(kind)),
                ErrorKind::Environment,
                "{kind:?}"
            );
        }
    }

    #[test]
    fn help_and_markdown_carry_the_same_wording() {
        let help = exit_codes_help();
        let table = exit_codes_markdown();
        for (code, meaning) in EXIT_CODES {
            assert!(help.contains(&format!("{code}  {meaning}")));
            assert!(table.contains(&format!("| {code} | {meaning} |")));
        }
    }
}
