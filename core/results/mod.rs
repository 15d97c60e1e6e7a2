//! Results of a run: the in-memory [`RunRecord`] and its files (HDF5, CSV).
//!
//! This module owns the file layout; it knows nothing of the physics that
//! produced the channels.

mod record;

pub use record::{Channel, Criterion, Metric, Provenance, RunRecord, RunStatus};
