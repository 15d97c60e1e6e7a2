//! Results of a run: the in-memory [`RunRecord`] and its files (HDF5, CSV),
//! and the summaries `yawdyn show` prints.
//!
//! This module owns the file layout; it knows nothing of the physics that
//! produced the channels.
//!
//! # HDF5 layout (`format_version` 1)
//!
//! A yawdyn results file is an ordinary HDF5 file that any HDF5 reader
//! (`h5dump`, h5py, MATLAB, HDFView) can open. All text is stored as
//! variable-length UTF-8 strings, so the whole script and vehicle TOML fit.
//! All numbers are 64-bit IEEE floats unless stated.
//!
//! | Path | Kind | Contents |
//! |------|------|----------|
//! | `/` attribute `format` | text | always `yawdyn-results` |
//! | `/` attribute `format_version` | integer (i64) | layout version, `1` |
//! | `/` attribute `status` | text | `completed` or `failed` |
//! | `/` attribute `status_message` | text | why the run failed; empty when completed |
//! | `/` attribute `failure_time_s` | f64 | simulation time of the failure, s; NaN when completed |
//! | `/` attribute `yawdyn_version` | text | version of yawdyn that made the run |
//! | `/` attribute `created_utc` | text | creation time, ISO 8601 UTC |
//! | `/time` | f64\[n\] | sample times; attributes `units` = `s`, `description` |
//! | `/channel_order` | text\[c\] | channel names in their original order |
//! | `/channels/<name>` | f64\[n\] | one dataset per channel; attributes `units`, `description` |
//! | `/metric_order` | text\[m\] | metric names in their original order |
//! | `/metrics/<name>` | f64 scalar | one dataset per metric; attribute `units` |
//! | `/criteria/name` | text\[k\] | criterion names, in declared order |
//! | `/criteria/value` | f64\[k\] | value checked |
//! | `/criteria/lower`, `/criteria/upper` | f64\[k\] | inclusive limits; NaN = no limit |
//! | `/criteria/passed` | u8\[k\] | 1 = passed, 0 = failed |
//! | `/provenance` attributes `script_path`, `vehicle_path`, `solver` | text | as given to the run |
//! | `/provenance` attributes `rtol`, `atol` | f64 | adaptive-solver tolerances |
//! | `/provenance` attributes `fixed_step_s`, `sample_rate_hz`, `tick_rate_hz` | f64 | s, Hz, Hz |
//! | `/provenance/script_text` | text scalar | the full manoeuvre script |
//! | `/provenance/vehicle_toml` | text scalar | the resolved vehicle parameters as TOML |
//! | `/provenance/overrides` | text\[o\] | `key=value` overrides, in order |
//! | `/provenance/extra_keys`, `/provenance/extra_values` | text\[e\] | free-form key/value pairs, in order |
//!
//! Every channel has the same length `n` as `/time`. Lists may be empty
//! (zero-length datasets). A reader rejects files whose `format` is not
//! `yawdyn-results` and files with a `format_version` other than 1.
//!
//! Files are written through [`crate::output`]: under a hidden temporary
//! name beside the target, renamed into place when complete, so a crash
//! never leaves a half-written file under the final name. An output path
//! that is a directory, a device, a FIFO, one of the command's inputs, or
//! whose directory cannot be created or written, is refused before anything
//! is written ([`check_output_path`] checks it ahead of a long run); these
//! errors are bad input (exit code 2, see [`crate::error`]).
//!
//! # CSV export
//!
//! [`write_csv`] writes one column per channel, `time` first: row 1 holds the
//! names, row 2 the units, then one row per sample. Numbers use Rust's
//! shortest round-trip form (`NaN`, `inf` for non-finite values).

mod csv;
mod error;
pub(crate) mod h5;
mod record;
mod summary;

pub use crate::output::check_output_path;
pub(crate) use crate::output::write_atomically;
pub(crate) use csv::quote as quote_csv_cell;
pub use csv::write_csv;
pub use error::{Access, ResultsError};
pub use h5::{read_format, read_hdf5, write_hdf5};
pub use record::{Channel, Criterion, Metric, Provenance, RunRecord, RunStatus};
pub use summary::{summary_json, summary_text};

/// Value of the root `format` attribute that marks a yawdyn results file.
pub const FORMAT_NAME: &str = "yawdyn-results";

/// Layout version written to, and accepted from, the root `format_version` attribute.
pub const FORMAT_VERSION: i64 = 1;
