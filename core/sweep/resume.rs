//! Taking up a stopped sweep (`sweep --resume`).
//!
//! The writer records after each block how much of its temporary file is
//! complete (see [`super::writer`]). A sweep stopped by a signal keeps that
//! file; one killed with SIGKILL leaves it. [`find_unfinished`] finds such
//! files of an output path (of processes that no longer run) and reads the
//! complete part of the one that holds the most cases;
//! [`UnfinishedSweep::check_matches`] refuses it unless it is the same sweep
//! (every field of the spec, the shard and the yawdyn version equal).
//! [`super::resume_sweep`] then feeds its cases to a new writer, runs the
//! others and writes the file an uninterrupted sweep writes.

use std::path::{Path, PathBuf};

use crate::params::Override;

use super::layout::ResumePoint;
use super::reader::read_unfinished;
use super::stamp::yawdyn_version;
use super::{FORMAT_NAME, Shard, SweepError, SweepFile, SweepSpec};

/// The complete part of a stopped sweep's temporary file.
#[derive(Debug, Clone)]
pub struct UnfinishedSweep {
    /// The temporary file the cases are taken from.
    pub path: PathBuf,
    /// Cases it holds (the first ones of its shard, in case order).
    pub cases: usize,
    /// Its spec, shard, stamps and the summary of those cases.
    pub(crate) file: SweepFile,
    /// What the writer recorded.
    pub(crate) point: ResumePoint,
    /// Every unfinished file of the same output (this one included),
    /// removed once the sweep is complete.
    pub(crate) leftovers: Vec<PathBuf>,
}

/// Finds the unfinished temporary files of the output `out` left by
/// processes that no longer run and reads the one with the most finished
/// cases. `Ok(None)` when there is none (or none holds a finished block of
/// cases; files of other commands are passed over). A sweep file among them
/// that cannot be read is an error (bad input) when no other can be.
pub fn find_unfinished(out: &Path) -> Result<Option<UnfinishedSweep>, SweepError> {
    let leftovers = crate::output::unfinished_outputs(out)?;
    let mut best: Option<(SweepFile, ResumePoint, PathBuf)> = None;
    let mut first_error = None;
    for path in &leftovers {
        match read_unfinished(path) {
            Ok(Some((file, point))) => {
                if best.as_ref().is_none_or(|(_, p, _)| point.rows > p.rows) {
                    best = Some((file, point, path.clone()));
                }
            }
            Ok(None) => {}
            Err(e) => {
                let is_sweep = crate::results::read_format(path)
                    .is_ok_and(|f| f.as_deref() == Some(FORMAT_NAME));
                if is_sweep && first_error.is_none() {
                    first_error = Some(SweepError::Format {
                        path: path.clone(),
                        reason: format!(
                            "the unfinished sweep file cannot be taken up ({e}); leave out \
                             --resume to run the sweep from its first case"
                        ),
                    });
                }
            }
        }
    }
    match (best, first_error) {
        (Some((file, point, path)), _) => Ok(Some(UnfinishedSweep {
            path,
            cases: point.rows,
            file,
            point,
            leftovers,
        })),
        (None, Some(e)) => Err(e),
        (None, None) => Ok(None),
    }
}

impl UnfinishedSweep {
    /// Refuses ([`SweepError::Mismatch`], bad input) to take up this file
    /// for a sweep of `spec` and `shard` unless every input is the same:
    /// script path and text, vehicle path and file, `--set` overrides,
    /// `--vary` axes (keys, values, units), `--channels`, the shard and the
    /// yawdyn version that wrote it. The message names what differs.
    pub fn check_matches(&self, spec: &SweepSpec, shard: Shard) -> Result<(), SweepError> {
        let old = &self.file.spec;
        let texts = |o: &[Override]| -> Vec<String> { o.iter().map(Override::to_text).collect() };
        let axes = |s: &SweepSpec| -> Vec<String> {
            s.grid
                .axes
                .iter()
                .map(|a| format!("{}={}:{}:{} [{}]", a.key, a.start, a.stop, a.count, a.unit))
                .collect()
        };
        let version = yawdyn_version();
        let difference = if self.file.yawdyn_version != version {
            Some(format!(
                "the yawdyn version (file: {}; now: {version})",
                self.file.yawdyn_version
            ))
        } else if self.file.shard != shard {
            Some(format!(
                "the --shard (file: {}; now: {shard})",
                self.file.shard
            ))
        } else if old.script_path != spec.script_path {
            Some(format!(
                "the script path (file: {}; now: {})",
                old.script_path, spec.script_path
            ))
        } else if old.script_text != spec.script_text {
            Some("the script's text".to_string())
        } else if old.vehicle_path != spec.vehicle_path {
            Some(format!(
                "the --vehicle (file: {:?}; now: {:?})",
                old.vehicle_path, spec.vehicle_path
            ))
        } else if old.vehicle_toml != spec.vehicle_toml {
            Some("the vehicle file's text".to_string())
        } else if texts(&old.base_overrides) != texts(&spec.base_overrides) {
            Some(format!(
                "the --set overrides (file: [{}]; now: [{}])",
                texts(&old.base_overrides).join(", "),
                texts(&spec.base_overrides).join(", ")
            ))
        } else if old.grid != spec.grid {
            Some(format!(
                "the --vary axes (file: {}; now: {})",
                axes(old).join(" "),
                axes(spec).join(" ")
            ))
        } else if old.channels != spec.channels {
            let list = |c: &Option<Vec<String>>| {
                c.as_ref()
                    .map_or_else(|| "all".to_string(), |c| c.join(","))
            };
            Some(format!(
                "the --channels (file: {}; now: {})",
                list(&old.channels),
                list(&spec.channels)
            ))
        } else {
            None
        };
        match difference {
            None => Ok(()),
            Some(what) => Err(SweepError::Mismatch {
                path: self.path.clone(),
                reason: format!(
                    "cannot resume: {what} differs from the stopped sweep's; give the same \
                     options as the stopped sweep, or leave out --resume to start again \
                     (the unfinished file is kept until then)"
                ),
            }),
        }
    }
}

#[cfg(test)]
#[path = "resume_tests.rs"]
mod tests;
