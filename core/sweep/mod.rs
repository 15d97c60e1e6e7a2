//! Parameter sweeps: one manoeuvre run over a full-factorial grid of vehicle
//! parameters, in parallel, into one HDF5 sweep file; shards of a sweep for a
//! cluster, and merging them back.
//!
//! This module owns the case list ([`Grid`], [`Shard`]), the parallel engine
//! ([`run_sweep`]), the sweep-file layout ([`read_sweep`], [`merge_sweeps`]).
//! It does not know how a case is simulated: the caller passes a *case
//! runner*, a function from the case's overrides to a
//! [`RunRecord`](crate::results::RunRecord) (the command line passes the
//! script runner). A runner returns `Ok` with a record of status `Failed` when
//! the run diverged and `Err` when the case could not run at all; either way
//! the case is recorded with its status and message and the sweep goes on (a
//! panicking runner is caught and recorded as `error` too).
//!
//! # Case order, shards, determinism
//!
//! Cases are numbered 0.. in row-major order of the `--vary` axes, the first
//! axis slowest (see [`Grid`]). A case runs with the base overrides (`--set`,
//! in order) followed by one float override per varied key, so a varied key
//! wins over a `--set` of the same key. `--shard K/N` runs only the K-th of N
//! contiguous slices, cases `floor(total·(K−1)/N) .. floor(total·K/N)`
//! ([`Shard::range`]).
//!
//! Cases run in parallel on a pool of exactly `jobs` threads, in chunks of
//! `4 × jobs` cases; while the pool computes one chunk, the calling thread
//! writes the previous one in case-index order, so memory holds at most two
//! chunks of cases and the file's contents do not depend on thread timing.
//! Object modification times are switched off on the file's root and every
//! group (HDF5 `obj_track_times`; `h5ls -v` shows no stored times, and the
//! byte-identity tests pass), so two
//! sweeps of the same inputs give byte-identical files **except** for the
//! root attribute `created_utc`; set the environment variable
//! `SOURCE_DATE_EPOCH` (seconds since 1970, common practice for reproducible
//! builds) to fix that stamp too, and the files are byte-identical.
//! `yawdyn merge` builds its output with the same writer in the same order,
//! so a merged file equals the unsharded one the same way.
//!
//! # Sweep file layout (`format_version` 1)
//!
//! | Path | Kind | Contents |
//! |------|------|----------|
//! | `/` attribute `format` | text | always `yawdyn-sweep` |
//! | `/` attribute `format_version` | i64 | `1` |
//! | `/` attributes `script_path`, `vehicle_path` | text | as given (`vehicle_path` empty when the script names its vehicle) |
//! | `/` attributes `yawdyn_version`, `created_utc` | text | writer version; ISO 8601 UTC creation time |
//! | `/` attribute `varied_keys` | text\[p\] | the varied parameter keys, `--vary` order |
//! | `/` attributes `case_total`, `shard_index`, `shard_count`, `case_first`, `case_end` | i64 | grid size; this file's shard K/N (1/1 for whole and merged sweeps) and its case range `first..end` |
//! | `/spec/script_text` | text scalar | the full manoeuvre script |
//! | `/spec/base_overrides` | text\[o\] | `--set` overrides, `key=value`, in order |
//! | `/spec/vary_keys`, `/spec/vary_start`, `/spec/vary_stop`, `/spec/vary_count` | text/f64/f64/i64 \[p\] | the grid |
//! | `/spec/channels` (attribute `channels_selected`) | text\[c\] (i64) | the `--channels` selection (1) or empty for all channels (0) |
//! | `/summary/case_index` | i64\[r\] | global case index of each row (rows in index order) |
//! | `/summary/status` | text\[r\] | `completed`, `criteria_failed`, `failed` or `error` (see [`CaseStatus`]) |
//! | `/summary/message` | text\[r\] | why a case did not complete or pass; empty otherwise |
//! | `/summary/parameter_order` | text\[p\] | the varied keys |
//! | `/summary/parameters/<key>` | f64\[r\] | value of each varied parameter per row |
//! | `/summary/metric_order` | text\[m\] | metric names, in order of first appearance over the cases |
//! | `/summary/metrics/<name>` | f64\[r\] | metric per row, NaN where the case has none; attribute `units` |
//! | `/cases/<index>` | group | one case; `<index>` zero-padded to the width of `case_total − 1` |
//! | `/cases/<index>` attributes `case_index`, `status`, `message`, `failure_time_s` | i64, text, text, f64 | how the case ended (failure time in s, NaN if none) |
//! | `/cases/<index>/parameters` | f64\[p\] | the varied values |
//! | `/cases/<index>/overrides` | text\[o+p\] | every override the case ran with |
//! | `/cases/<index>/time` | f64\[n\] | sample times; attribute `units` = `s` |
//! | `/cases/<index>/channel_order`, `/channels/<name>` | text\[c\], f64\[n\] | stored channels; attributes `units`, `description` |
//! | `/cases/<index>/metric_order`, `/metrics/<name>` | text\[m\], f64 scalar | the case's metrics; attribute `units` |
//! | `/cases/<index>/criteria/{name,value,lower,upper,passed}` | as in a results file | pass/fail criteria |
//!
//! A case that could not run (`error`) has empty `time`, channels, metrics
//! and criteria. A `failed` case keeps the samples computed up to the failure.

mod engine;
mod file;
mod grid;

use std::path::PathBuf;

use thiserror::Error;

use crate::params::Override;

pub use engine::{CaseRunner, SweepOptions, SweepReport, merge_sweeps, run_sweep, utc_now};
pub use file::{Summary, SummaryMetric, SweepCase, SweepFile, case_name, read_sweep};
pub use grid::{Grid, Shard, VaryAxis};

/// Value of the root `format` attribute of a sweep file.
pub const FORMAT_NAME: &str = "yawdyn-sweep";

/// Layout version written to and accepted from the root `format_version` attribute.
pub const FORMAT_VERSION: i64 = 1;

/// What is swept: the inputs that define the case list and every case's run.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepSpec {
    /// Path of the manoeuvre script, as given.
    pub script_path: String,
    /// Full text of the script.
    pub script_text: String,
    /// Vehicle file, as given (empty when the script chooses its vehicle).
    pub vehicle_path: String,
    /// `--set` overrides applied to every case before the varied ones.
    pub base_overrides: Vec<Override>,
    /// The varied parameters.
    pub grid: Grid,
    /// Channels to store per case (`None` = all the runner returns).
    pub channels: Option<Vec<String>>,
}

/// How one case ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CaseStatus {
    /// The run reached its end and every criterion passed.
    Completed,
    /// The run reached its end but a criterion failed.
    CriteriaFailed,
    /// The run stopped early (diverged, solver failure).
    Failed,
    /// The case could not run (bad parameter value, script error, panic).
    Error,
}

impl CaseStatus {
    /// Name as stored in the file.
    pub fn name(self) -> &'static str {
        match self {
            CaseStatus::Completed => "completed",
            CaseStatus::CriteriaFailed => "criteria_failed",
            CaseStatus::Failed => "failed",
            CaseStatus::Error => "error",
        }
    }

    /// The status stored as `name`.
    pub fn from_name(name: &str) -> Option<CaseStatus> {
        [
            CaseStatus::Completed,
            CaseStatus::CriteriaFailed,
            CaseStatus::Failed,
            CaseStatus::Error,
        ]
        .into_iter()
        .find(|s| s.name() == name)
    }
}

/// What went wrong in a sweep or merge; input problems name the option.
#[derive(Debug, Error)]
pub enum SweepError {
    /// A `--vary` option is malformed.
    #[error("--vary {text}: {reason}")]
    Vary {
        /// The option's value as given.
        text: String,
        /// What is wrong.
        reason: String,
    },
    /// A `--shard` option is malformed.
    #[error("--shard {text}: {reason}")]
    Shard {
        /// The option's value as given.
        text: String,
        /// What is wrong.
        reason: String,
    },
    /// Another option is out of range (e.g. `--jobs 0`).
    #[error("{0}")]
    Option(String),
    /// Shard files given to `merge` do not belong together or do not cover the sweep.
    #[error("{}: {reason}", path.display())]
    Mismatch {
        /// The offending shard file.
        path: PathBuf,
        /// What differs or is missing.
        reason: String,
    },
    /// The file is not a sweep file, or its contents do not fit together.
    #[error("{}: {reason}", path.display())]
    Format {
        /// The file.
        path: PathBuf,
        /// What is wrong.
        reason: String,
    },
    /// The HDF5 library reported an error.
    #[error("{}: {action}", path.display())]
    Hdf5 {
        /// The file.
        path: PathBuf,
        /// What was being done.
        action: String,
        /// The HDF5 error.
        #[source]
        source: hdf5::Error,
    },
    /// A file-system operation failed.
    #[error("{}: {action}", path.display())]
    Io {
        /// The file or directory.
        path: PathBuf,
        /// What was being done.
        action: String,
        /// The operating-system error.
        #[source]
        source: std::io::Error,
    },
}

impl SweepError {
    /// True for errors caused by the user's input (exit code 2).
    pub fn is_bad_input(&self) -> bool {
        matches!(
            self,
            SweepError::Vary { .. }
                | SweepError::Shard { .. }
                | SweepError::Option(_)
                | SweepError::Mismatch { .. }
                | SweepError::Format { .. }
        )
    }
}
