//! Joining the shard files of one sweep into the file an unsharded run gives.

use std::path::{Path, PathBuf};
use std::time::Instant;

use super::engine::thread_cpu_time_s;
use super::reader::{SweepFile, for_each_case, read_sweep};
use super::stamp::utc_now;
use super::writer::{Stamp, SweepWriter, TempOptions};
use super::{CaseStatus, Shard, SweepError, SweepReport, SweepSpec};
use crate::params::Override;

/// Joins shard files into `out`, the file one unsharded run would have
/// written (same summary bit for bit; only `created_utc` differs unless
/// `SOURCE_DATE_EPOCH` is set).
///
/// Refuses ([`SweepError::Mismatch`]) shards whose script text, vary spec,
/// base overrides, channel selection or stored channels differ from the
/// first one's, and sets of shards in which a case is missing or appears
/// twice; nothing is written then. Memory holds one read block of cases at a
/// time besides the summary.
pub fn merge_sweeps(out: &Path, shards: &[PathBuf]) -> Result<SweepReport, SweepError> {
    let started = Instant::now();
    if shards.is_empty() {
        return Err(SweepError::Option(
            "give at least one shard file".to_string(),
        ));
    }
    let mut files = shards
        .iter()
        .map(|p| read_sweep(p))
        .collect::<Result<Vec<_>, _>>()?;
    check_shards_match(&files)?;
    files.sort_by_key(|f| f.summary.case_index.first().copied().unwrap_or(usize::MAX));
    check_shards_cover(&files)?;
    let created = utc_now();
    let stamp = Stamp {
        created_utc: &created,
        yawdyn_version: &files[0].yawdyn_version,
        shard: Shard::WHOLE,
    };
    let cpu_at_start = thread_cpu_time_s();
    let mut writer = SweepWriter::create(out, &files[0].spec, &stamp, &TempOptions::default())?;
    for f in &files {
        for_each_case(f, |case| writer.write_case(case))?;
    }
    let summary = writer.finish()?;
    Ok(SweepReport {
        out: out.to_path_buf(),
        summary,
        resumed: 0,
        wall_time_s: started.elapsed().as_secs_f64(),
        writer_cpu_s: thread_cpu_time_s() - cpu_at_start,
    })
}

/// Refuses shards whose inputs or stored channels differ from the first one's.
fn check_shards_match(files: &[SweepFile]) -> Result<(), SweepError> {
    let first = &files[0];
    let base_text = |spec: &SweepSpec| -> Vec<String> {
        spec.base_overrides.iter().map(Override::to_text).collect()
    };
    let ran = |f: &SweepFile| f.summary.status.iter().any(|&s| s != CaseStatus::Error);
    for f in &files[1..] {
        let mismatch = |what: &str| SweepError::Mismatch {
            path: f.path.clone(),
            reason: format!("{what} differs from that of {}", first.path.display()),
        };
        if f.spec.script_text != first.spec.script_text {
            return Err(mismatch("the script text"));
        }
        if f.spec.vehicle_toml != first.spec.vehicle_toml {
            return Err(mismatch("the vehicle file"));
        }
        if f.spec.grid != first.spec.grid {
            return Err(mismatch("the --vary spec"));
        }
        if base_text(&f.spec) != base_text(&first.spec) {
            return Err(mismatch("the base overrides (--set)"));
        }
        if f.spec.channels != first.spec.channels {
            return Err(mismatch("the --channels selection"));
        }
        if ran(f) && ran(first) && f.channel_names() != first.channel_names() {
            return Err(mismatch("the set of stored channels"));
        }
    }
    Ok(())
}

/// Refuses shards (sorted by first case) in which a case is missing or
/// appears twice.
fn check_shards_cover(files: &[SweepFile]) -> Result<(), SweepError> {
    let total = files[0].case_total;
    let mut expected = 0usize;
    for f in files {
        for &index in &f.summary.case_index {
            let problem = if index < expected {
                Some(format!("case {index} appears in more than one shard"))
            } else if index > expected {
                Some(format!("cases {expected}..{index} are in no shard given"))
            } else {
                None
            };
            if let Some(reason) = problem {
                return Err(SweepError::Mismatch {
                    path: f.path.clone(),
                    reason,
                });
            }
            expected += 1;
        }
    }
    if expected != total {
        return Err(SweepError::Mismatch {
            path: files[files.len() - 1].path.clone(),
            reason: format!("cases {expected}..{total} are in no shard given"),
        });
    }
    Ok(())
}
