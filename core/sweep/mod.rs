//! Parameter sweeps: one manoeuvre run over a full-factorial grid of vehicle
//! parameters, in parallel, into one HDF5 sweep file; shards of a sweep for a
//! cluster, and merging them back.
//!
//! This module owns the case list ([`Grid`], [`Shard`]), the parallel engine
//! ([`run_sweep`]; under it [`run_cases`], which runs any [`CaseList`] and
//! hands the cases to a sink in index order, as the sensitivity ranking
//! does), the sweep-file layout ([`read_sweep`], [`merge_sweeps`]).
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
//! Cases run on exactly `jobs` worker threads (fewer when the shard has fewer
//! cases), which take case indices in increasing order from a shared counter
//! and hand finished cases to the calling thread. That thread writes them in
//! case-index order, holding early arrivals until their turn; a worker does
//! not start a case more than `4 × jobs` ahead of the next one to write, so
//! memory holds at most that many finished cases besides one write block.
//! The writer gathers cases into blocks of at most 64 cases (or 2²⁰ sample
//! values, whichever comes first), counted from the first case it writes,
//! and writes each block with one append per dataset, so the file's bytes do
//! not depend on thread timing or on `--jobs`.
//!
//! Object modification times are switched off on the file's root and every
//! group and dataset (HDF5 `obj_track_times`; `h5ls -v` shows no stored
//! times), so two sweeps of the same inputs give byte-identical files
//! **except** for the root attribute `created_utc`; set the environment
//! variable `SOURCE_DATE_EPOCH` (seconds since 1970, common practice for
//! reproducible builds) to fix that stamp too, and the files are
//! byte-identical. `yawdyn merge` builds its output with the same writer from
//! the same cases in the same order, so a merged file equals the unsharded
//! one the same way.
//!
//! # Sweep file layout (`format_version` 2)
//!
//! Few objects per file, none per case: every per-case quantity is one
//! column (a one-dimensional dataset with one row per case, rows in
//! case-index order), and every channel is one dataset holding the samples
//! of all cases one after the other. The samples of row `i` are elements
//! `sample_start[i] .. sample_start[i] + sample_count[i]` of `/time` and of
//! every `/channels/<name>`. All text is variable-length UTF-8; numbers are
//! f64 unless stated. `docs/file-formats.md` shows how to read it from
//! Python and MATLAB.
//!
//! | Path | Kind | Contents |
//! |------|------|----------|
//! | `/` attribute `format` | text | always `yawdyn-sweep` |
//! | `/` attribute `format_version` | i64 | `2` |
//! | `/` attributes `script_path`, `vehicle_path` | text | as given (`vehicle_path` empty when the script names its vehicle) |
//! | `/` attributes `yawdyn_version`, `created_utc` | text | writer version; ISO 8601 UTC creation time |
//! | `/` attribute `varied_keys` | text\[p\] | the varied parameter keys, `--vary` order |
//! | `/` attributes `case_total`, `shard_index`, `shard_count`, `case_first`, `case_end` | i64 | grid size; this file's shard K/N (1/1 for whole and merged sweeps) and its case range `first..end` |
//! | `/spec/script_text` | text scalar | the full manoeuvre script |
//! | `/spec/base_overrides` | text\[o\] | `--set` overrides, `key=value`, in order |
//! | `/spec/vary_keys`, `/spec/vary_start`, `/spec/vary_stop`, `/spec/vary_count` | text/f64/f64/i64 \[p\] | the grid |
//! | `/spec/vary_units` | text\[p\] | unit of each varied parameter (empty when unknown) |
//! | `/spec/vehicle_toml` | text scalar | the vehicle file the cases start from, before overrides |
//! | `/spec/channels` (attribute `channels_selected`) | text\[c\] (i64) | the `--channels` selection (1) or empty for all channels (0) |
//! | `/summary/case_index` | i64\[r\] | global case index of each row |
//! | `/summary/status` | text\[r\] | `completed`, `criteria_failed`, `failed` or `error` (see [`CaseStatus`]) |
//! | `/summary/message` | text\[r\] | why a case did not complete or pass; empty otherwise |
//! | `/summary/failure_time_s` | f64\[r\] | simulation time of a run failure, s; NaN otherwise |
//! | `/summary/sample_start`, `/summary/sample_count` | i64\[r\] | where the row's samples are in `/time` and the channels (count 0 for `error` rows) |
//! | `/summary/parameter_order` | text\[p\] | the varied keys |
//! | `/summary/parameters/<key>` | f64\[r\] | value of each varied parameter; attribute `units` |
//! | `/summary/metric_order` | text\[m\] | metric names, in order of first report over the cases |
//! | `/summary/metrics/<name>` | f64\[r\] | the metric; NaN where the case reported none; attributes `units`, `first_case` (index of the first case that reported it) |
//! | `/summary/criterion_order` | text\[k\] | criterion names, in order of first report |
//! | `/summary/criteria/<name>/value`, `lower`, `upper` | f64\[r\] | value checked and inclusive limits (NaN = no limit, or not evaluated) |
//! | `/summary/criteria/<name>/passed` | i8\[r\] | 1 passed, 0 failed, −1 not evaluated in this case |
//! | `/time` | f64\[N\] | sample times of all rows, concatenated; attribute `units` = `s` |
//! | `/channel_order` | text\[c\] | stored channel names, in order |
//! | `/channels/<name>` | f64\[N\] | one channel, all rows concatenated; attributes `units`, `description` |
//!
//! The case's full override list is `/spec/base_overrides` followed by
//! `key=value` for each varied key (the value in Rust's shortest round-trip
//! form), as [`SweepCase::overrides`] gives it. A case that could not run
//! (`error`) has no samples, metrics or criteria; a `failed` case keeps the
//! samples computed up to the failure. Every case that ran stores the same
//! channels (a case that returns another set is recorded as `error`).
//!
//! Every `[r]`, `[N]` and growing text dataset is chunked and extendable
//! along its one dimension: the writer appends one block of rows at a time,
//! samples first and `/summary/case_index` last, so the rows covered by
//! `case_index` are complete. Files of layout version 1 (one group per case)
//! are refused with a message naming both versions.
//!
//! # Unfinished files and `--resume`
//!
//! After each block the writer flushes the file to disk, records in the
//! root attribute `unfinished` how much of it is complete (rows, samples,
//! metric and criterion names, a checksum of all written:
//! `layout::ResumePoint`) and flushes again; the attribute is removed when
//! the file is complete, and [`read_sweep`] refuses a file that has it. A
//! sweep stopped by a signal (with [`Resume::note_on_signal`]) keeps its
//! temporary file once a block is in it; SIGKILL leaves it.
//! [`find_unfinished`] reads the complete part of such a file (of a process
//! that no longer runs) and [`resume_sweep`] feeds its cases to a new writer
//! in case order, checks the checksum, runs the remaining cases and writes
//! the file under its final name: the same bytes as an uninterrupted sweep
//! (the stopped sweep's `created_utc` is kept), since the writer's blocks
//! and every call to the HDF5 library are the same. The cases after the last
//! complete block (fewer than 64 written ones, and those still running or
//! waiting for their turn) run again.

mod case;
mod checksum;
mod engine;
mod grid;
mod layout;
mod merge;
mod reader;
mod resume;
mod sections;
mod stamp;
mod writer;

use std::path::PathBuf;

use thiserror::Error;

use crate::error::{Classify, ErrorKind, io_kind};
use crate::params::Override;
use crate::results::Access;

pub use case::{Summary, SummaryCriterion, SummaryMetric, SweepCase};
pub use engine::{
    CaseList, CaseRunner, Resume, SweepOptions, SweepReport, resume_sweep, run_cases, run_sweep,
};
pub use grid::{Grid, Shard, VaryAxis};
pub use merge::merge_sweeps;
pub(crate) use reader::for_each_case;
pub use reader::{SweepFile, read_sweep};
pub use resume::{UnfinishedSweep, find_unfinished};
pub use stamp::{utc_now, yawdyn_version};

/// Value of the root `format` attribute of a sweep file.
pub const FORMAT_NAME: &str = "yawdyn-sweep";

/// Layout version written to and accepted from the root `format_version`
/// attribute (1 was one HDF5 group per case; 2 is the column layout).
pub const FORMAT_VERSION: i64 = 2;

/// What is swept: the inputs that define the case list and every case's run.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepSpec {
    /// Path of the manoeuvre script, as given.
    pub script_path: String,
    /// Full text of the script.
    pub script_text: String,
    /// Vehicle file, as given (empty when the script chooses its vehicle).
    pub vehicle_path: String,
    /// Text of the vehicle file the cases start from, before any override
    /// (empty when unknown).
    pub vehicle_toml: String,
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
    /// The file is a sweep file of another layout version.
    #[error(
        "{}: sweep file layout version {found} is not supported; this yawdyn reads layout \
         version {supported} (the file was written by yawdyn {writer}: rerun the sweep to get \
         the current layout)",
        path.display()
    )]
    UnsupportedVersion {
        /// The file.
        path: PathBuf,
        /// `format_version` found in the file.
        found: i64,
        /// The version this build reads and writes.
        supported: i64,
        /// The `yawdyn_version` stored in the file (`unknown` when absent).
        writer: String,
    },
    /// The HDF5 library reported an error.
    #[error("{}: {action}", path.display())]
    Hdf5 {
        /// The file.
        path: PathBuf,
        /// What was being done.
        action: String,
        /// Reading or writing.
        access: Access,
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
    /// The output path is refused or cannot be written (see [`crate::output`]).
    #[error(transparent)]
    Output(#[from] crate::output::OutputError),
    /// The worker threads could not be started.
    #[error("cannot start {jobs} worker threads")]
    Threads {
        /// Threads asked for.
        jobs: usize,
        /// The operating-system error.
        #[source]
        source: std::io::Error,
    },
    /// A worker thread stopped without delivering its case (a defect of
    /// yawdyn, not of the input); the file is not written.
    #[error("sweep worker thread stopped without finishing case {index}")]
    Worker {
        /// The case that was lost.
        index: usize,
    },
}

impl Classify for SweepError {
    /// Options, shard sets and foreign or damaged files are bad input; file
    /// errors by their cause; HDF5 errors by [`Access`]; threads that cannot
    /// start are the environment, a lost case a failed run.
    fn kind(&self) -> ErrorKind {
        match self {
            SweepError::Vary { .. }
            | SweepError::Shard { .. }
            | SweepError::Option(_)
            | SweepError::Mismatch { .. }
            | SweepError::Format { .. }
            | SweepError::UnsupportedVersion { .. } => ErrorKind::BadInput,
            SweepError::Hdf5 { access, .. } => access.kind(),
            SweepError::Io { source, .. } => io_kind(source),
            SweepError::Output(e) => e.kind(),
            SweepError::Threads { .. } => ErrorKind::Environment,
            SweepError::Worker { .. } => ErrorKind::Failed,
        }
    }
}
