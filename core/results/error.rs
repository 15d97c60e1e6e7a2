//! The error type of the results-file boundary.

use std::path::PathBuf;

use thiserror::Error;

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
