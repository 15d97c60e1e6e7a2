//! The error type of the results-file boundary.

use std::path::PathBuf;

use thiserror::Error;

use crate::error::{Classify, ErrorKind, io_kind};

/// Whether an HDF5 failure happened while reading a file or while writing one.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Access {
    /// Reading a file the user named: a failure means the file is missing,
    /// not HDF5, damaged or not laid out as expected (bad input).
    Read,
    /// Writing an output file whose directory and temporary file were already
    /// created: a failure is the machine's (disk full, I/O error).
    Write,
}

impl Access {
    /// The kind of an HDF5 failure during this access.
    pub fn kind(self) -> ErrorKind {
        match self {
            Access::Read => ErrorKind::BadInput,
            Access::Write => ErrorKind::Environment,
        }
    }
}

/// What went wrong reading or writing a results file; always names the file.
#[derive(Debug, Error)]
pub enum ResultsError {
    /// A file-system operation failed (creating a directory, renaming, writing CSV).
    #[error("{}: {action}", path.display())]
    Io {
        /// The file or directory concerned.
        path: PathBuf,
        /// What was being done, e.g. `creating directory`.
        action: String,
        /// The operating-system error.
        #[source]
        source: std::io::Error,
    },
    /// The HDF5 library reported an error (unreadable file, missing object,
    /// wrong type).
    #[error("{}: {action}", path.display())]
    Hdf5 {
        /// The results file.
        path: PathBuf,
        /// What was being done, e.g. `reading dataset /channels/yaw_rate`.
        action: String,
        /// Reading or writing.
        access: Access,
        /// The HDF5 error.
        #[source]
        source: hdf5::Error,
    },
    /// The file is HDF5 but was not written by yawdyn.
    #[error("{}: not a yawdyn results file ({found})", path.display())]
    NotResultsFile {
        /// The file.
        path: PathBuf,
        /// What was found instead of `format = "yawdyn-results"`.
        found: String,
    },
    /// The file was written by a newer yawdyn with a layout this one does not know.
    #[error(
        "{}: results format version {found} is not supported (this yawdyn reads version {supported})",
        path.display()
    )]
    UnsupportedVersion {
        /// The file.
        path: PathBuf,
        /// `format_version` found in the file.
        found: i64,
        /// The version this build reads and writes.
        supported: i64,
    },
    /// The output path is refused or cannot be written (see [`crate::output`]).
    #[error(transparent)]
    Output(#[from] crate::output::OutputError),
    /// The record cannot be stored, or the file's contents do not fit together
    /// (e.g. a channel shorter than `/time`, a missing listed channel).
    #[error("{}: {reason}", path.display())]
    Invalid {
        /// The file.
        path: PathBuf,
        /// What is inconsistent.
        reason: String,
    },
}

impl Classify for ResultsError {
    /// File-system errors by their cause ([`io_kind`]: path problems are bad
    /// input, a full disk is the environment); HDF5 errors by [`Access`]; a
    /// file that is not a results file, of an unknown version, or with
    /// contents that do not fit together is bad input, as is a record whose
    /// names cannot be stored.
    fn kind(&self) -> ErrorKind {
        match self {
            ResultsError::Io { source, .. } => io_kind(source),
            ResultsError::Hdf5 { access, .. } => access.kind(),
            ResultsError::Output(e) => e.kind(),
            ResultsError::NotResultsFile { .. }
            | ResultsError::UnsupportedVersion { .. }
            | ResultsError::Invalid { .. } => ErrorKind::BadInput,
        }
    }
}
