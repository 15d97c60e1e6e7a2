//! The three kinds of yawdyn data file side by side: which kind a path holds
//! (its root `format` attribute), their summaries (`yawdyn show`) and their
//! CSV tables (`yawdyn export`).
//!
//! This module reads files through [`crate::results`], [`crate::sweep`] and
//! [`crate::stability`] and writes text; it owns no file layout.
//!
//! # CSV tables
//!
//! Every table has a row of column names, then (unless
//! [`ExportOptions::unit_row`] is off) a row of units in the ASCII spelling
//! of [`crate::units`] (empty for text columns), then one row per record.
//! Numbers are in Rust's shortest round-trip form (`NaN`, `inf`); text cells
//! holding a comma, quote or line break are quoted (RFC 4180).
//!
//! | file | table | one row per | columns |
//! |---|---|---|---|
//! | results | channels | sample | `time`, every channel |
//! | sweep | `summary` | case | `case`, `status`, varied parameters, metrics, `<criterion>.passed` (1, 0, −1 = not evaluated), `failure_time_s`, `message` |
//! | sweep | `channels` | sample of a case | `case`, varied parameters, `time`, the channels (tidy: stack of every case's samples) |
//! | stability map | points | grid point | axis 0, axis 1, the fixed conditions, `trim_found`, `stable`, `yaw_damping_ratio`, `yaw_frequency_hz`, `max_real_part`, `lat_accel` (axis 0 varies fastest) |

mod csv;
mod show;

use std::path::{Path, PathBuf};

use thiserror::Error;

use crate::error::{Classify, ErrorKind, io_kind};
use crate::results::ResultsError;
use crate::stability::map::{MAP_FORMAT, MapError};
use crate::sweep::SweepError;

pub use csv::{ExportOptions, SweepTable, export_csv, export_csv_to_file, parse_case_list};
pub use show::{show_json, show_text};

/// The kinds of file `show` and `export` read.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FileKind {
    /// `yawdyn run`: one run's channels, metrics and criteria.
    Results,
    /// `yawdyn sweep` or `merge`: a table of cases and their channels.
    Sweep,
    /// `yawdyn stability --vary --out`: a grid of stability results.
    StabilityMap,
}

impl FileKind {
    /// The root `format` attribute of this kind.
    pub fn format_name(self) -> &'static str {
        match self {
            FileKind::Results => crate::results::FORMAT_NAME,
            FileKind::Sweep => crate::sweep::FORMAT_NAME,
            FileKind::StabilityMap => MAP_FORMAT,
        }
    }
}

/// What went wrong reading or exporting a file.
#[derive(Debug, Error)]
pub enum FileError {
    /// The file is HDF5 but not of a kind `show` and `export` read.
    #[error(
        "{}: not a yawdyn results, sweep or stability-map file ({found}); \
         `show` and `export` read files whose root attribute `format` is {}, {} or {}",
        path.display(), crate::results::FORMAT_NAME, crate::sweep::FORMAT_NAME, MAP_FORMAT
    )]
    UnknownKind {
        /// The file.
        path: PathBuf,
        /// What the `format` attribute holds, or that it is missing.
        found: String,
    },
    /// An option does not fit the file (a channel it does not store, a case
    /// it does not hold, a sweep table asked of a results file).
    #[error("{0}")]
    Option(String),
    /// Reading a results file, or writing the CSV file.
    #[error(transparent)]
    Results(#[from] ResultsError),
    /// Reading a sweep file.
    #[error(transparent)]
    Sweep(#[from] SweepError),
    /// Reading a stability map.
    #[error(transparent)]
    Map(#[from] MapError),
    /// Writing the table to standard output.
    #[error("writing the table: {0}")]
    Write(#[source] std::io::Error),
}

impl Classify for FileError {
    /// A file of another kind and an option that does not fit are bad input;
    /// the readers' errors keep their own kind; a failed write is the
    /// environment's.
    fn kind(&self) -> ErrorKind {
        match self {
            FileError::UnknownKind { .. } | FileError::Option(_) => ErrorKind::BadInput,
            FileError::Results(e) => e.kind(),
            FileError::Sweep(e) => e.kind(),
            FileError::Map(e) => e.kind(),
            FileError::Write(e) => io_kind(e),
        }
    }
}

/// The kind of yawdyn file at `path`, from its root `format` attribute.
///
/// ```no_run
/// use yawdyn::files::{FileKind, file_kind};
/// let kind = file_kind(std::path::Path::new("results/step_steer.h5"))?;
/// assert_eq!(kind, FileKind::Results);
/// # Ok::<(), yawdyn::files::FileError>(())
/// ```
pub fn file_kind(path: &Path) -> Result<FileKind, FileError> {
    let format = crate::results::read_format(path)?;
    [FileKind::Results, FileKind::Sweep, FileKind::StabilityMap]
        .into_iter()
        .find(|k| format.as_deref() == Some(k.format_name()))
        .ok_or_else(|| FileError::UnknownKind {
            path: path.to_path_buf(),
            found: format.map_or_else(
                || "no text attribute `format` at its root".to_string(),
                |f| format!("format is {f:?}"),
            ),
        })
}
