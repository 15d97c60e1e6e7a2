//! The parallel sweep engine and the shard merge.

use std::panic::{AssertUnwindSafe, catch_unwind};
use std::path::{Path, PathBuf};
use std::time::Instant;

use rayon::prelude::*;

use crate::params::Override;
use crate::results::{RunRecord, RunStatus};

use super::file::{Stamp, SweepWriter, for_each_case, read_sweep};
use super::{CaseStatus, Shard, Summary, SweepCase, SweepError, SweepSpec};

/// A case runner: runs one case with the given overrides (base `--set`s, then
/// the varied parameters). `Ok` with a `Failed` record when the run diverged,
/// `Err` with a message when it could not run at all. Must be callable from
/// several threads at once.
pub type CaseRunner<'a> = dyn Fn(&[Override]) -> Result<RunRecord, String> + Sync + 'a;

/// How to run a sweep.
pub struct SweepOptions<'a> {
    /// Worker threads, ≥ 1 (the pool has exactly this many).
    pub jobs: usize,
    /// Which slice of the case list to run ([`Shard::WHOLE`] for all).
    pub shard: Shard,
    /// Called once per finished case, from the worker threads (e.g. to advance a progress bar).
    pub progress: Option<&'a (dyn Fn() + Sync)>,
}

/// What a sweep or merge produced.
#[derive(Debug, Clone)]
pub struct SweepReport {
    /// The file written.
    pub out: PathBuf,
    /// The summary written to it.
    pub summary: Summary,
    /// Wall-clock time of the whole sweep, s.
    pub wall_time_s: f64,
}

impl SweepReport {
    /// Number of cases that did not complete and pass.
    pub fn failed(&self) -> usize {
        self.summary
            .status
            .iter()
            .filter(|&&s| s != CaseStatus::Completed)
            .count()
    }
}

/// Cases in flight per worker thread: each chunk holds `CHUNK_PER_JOB × jobs` cases.
const CHUNK_PER_JOB: usize = 4;

/// Runs the cases of `options.shard` of `spec` with `runner` on `options.jobs`
/// threads and writes the sweep file `out` (see the [module
/// documentation](crate::sweep) for order and layout). Case failures are
/// recorded, not returned; `Err` means the sweep itself could not be done
/// (bad options, file errors).
///
/// ```no_run
/// use yawdyn::sweep::{Grid, Shard, SweepOptions, SweepSpec, VaryAxis, run_sweep};
/// # fn demo(runner: &yawdyn::sweep::CaseRunner) -> Result<(), yawdyn::sweep::SweepError> {
/// let spec = SweepSpec {
///     script_path: "scripts/power_on_exit.rhai".into(),
///     script_text: std::fs::read_to_string("scripts/power_on_exit.rhai").unwrap_or_default(),
///     vehicle_path: String::new(),
///     base_overrides: vec![],
///     grid: Grid::new(vec![VaryAxis::parse("drive.front_share=0:1:11")?])?,
///     channels: None,
/// };
/// let options = SweepOptions { jobs: 2, shard: Shard::WHOLE, progress: None };
/// let report = run_sweep(&spec, &options, runner, std::path::Path::new("out/sweep.h5"))?;
/// println!("{} of {} cases failed", report.failed(), report.summary.len());
/// # Ok(()) }
/// ```
pub fn run_sweep(
    spec: &SweepSpec,
    options: &SweepOptions<'_>,
    runner: &CaseRunner<'_>,
    out: &Path,
) -> Result<SweepReport, SweepError> {
    let started = Instant::now();
    if options.jobs == 0 {
        return Err(SweepError::Option("--jobs must be at least 1".to_string()));
    }
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(options.jobs)
        .build()
        .map_err(|e| SweepError::Option(format!("cannot start {} threads: {e}", options.jobs)))?;
    let created = utc_now();
    let version = yawdyn_version();
    let stamp = Stamp {
        created_utc: &created,
        yawdyn_version: &version,
        shard: options.shard,
    };
    let mut writer = SweepWriter::create(out, spec, &stamp)?;
    let range = options.shard.range(spec.grid.len());
    let chunk = CHUNK_PER_JOB * options.jobs;
    let compute = |first: usize, last: usize| -> Vec<SweepCase> {
        pool.install(|| {
            (first..last)
                .into_par_iter()
                .map(|index| {
                    let case = run_case(spec, runner, index);
                    if let Some(progress) = options.progress {
                        progress();
                    }
                    case
                })
                .collect()
        })
    };
    // Pipeline: while the pool computes chunk k+1, this thread writes chunk k
    // (in case-index order), so at most two chunks are in memory and the
    // workers do not wait for the file.
    let mut written: Vec<SweepCase> = Vec::new();
    let mut first = range.start;
    while first < range.end {
        let last = (first + chunk).min(range.end);
        let done = std::mem::take(&mut written);
        let (next, wrote) = std::thread::scope(|scope| {
            let worker = scope.spawn(|| compute(first, last));
            let wrote = done.iter().try_for_each(|case| writer.write_case(case));
            (worker.join(), wrote)
        });
        wrote?;
        written = next.map_err(|_| SweepError::Option("a sweep worker thread panicked".into()))?;
        first = last;
    }
    for case in &written {
        writer.write_case(case)?;
    }
    let summary = writer.finish()?;
    Ok(SweepReport {
        out: out.to_path_buf(),
        summary,
        wall_time_s: started.elapsed().as_secs_f64(),
    })
}

/// Runs one case, turning every way it can go wrong into a recorded status.
fn run_case(spec: &SweepSpec, runner: &CaseRunner<'_>, index: usize) -> SweepCase {
    let mut overrides = spec.base_overrides.clone();
    overrides.extend(spec.grid.overrides(index));
    let mut case = SweepCase {
        index,
        parameters: spec.grid.values(index),
        overrides: overrides.iter().map(Override::to_text).collect(),
        status: CaseStatus::Error,
        message: String::new(),
        failure_time_s: f64::NAN,
        time: Vec::new(),
        channels: Vec::new(),
        metrics: Vec::new(),
        criteria: Vec::new(),
    };
    let record = match catch_unwind(AssertUnwindSafe(|| runner(&overrides))) {
        Ok(Ok(record)) => record,
        Ok(Err(message)) => {
            case.message = message;
            return case;
        }
        Err(panic) => {
            let what = panic
                .downcast_ref::<&str>()
                .map(|s| s.to_string())
                .or_else(|| panic.downcast_ref::<String>().cloned())
                .unwrap_or_else(|| "unknown cause".to_string());
            case.message = format!("the case runner panicked: {what}");
            return case;
        }
    };
    if let Err(reason) = record.validate() {
        case.message = format!("the run's record cannot be stored: {reason}");
        return case;
    }
    let passed = record.passed();
    let RunRecord {
        time,
        mut channels,
        status,
        metrics,
        criteria,
        ..
    } = record;
    if let Some(wanted) = &spec.channels {
        let mut kept = Vec::with_capacity(wanted.len());
        for name in wanted {
            match channels.iter().position(|c| &c.name == name) {
                Some(i) => kept.push(channels.swap_remove(i)),
                None => {
                    case.message = format!("channel `{name}` is not in the run's output");
                    return case;
                }
            }
        }
        channels = kept;
    }
    match status {
        RunStatus::Failed { message, time_s } => {
            case.status = CaseStatus::Failed;
            case.message = message;
            case.failure_time_s = time_s;
        }
        RunStatus::Completed if passed => case.status = CaseStatus::Completed,
        RunStatus::Completed => {
            let failed: Vec<&str> = criteria
                .iter()
                .filter(|c| !c.passed)
                .map(|c| c.name.as_str())
                .collect();
            case.status = CaseStatus::CriteriaFailed;
            case.message = format!("criteria failed: {}", failed.join(", "));
        }
    }
    case.time = time;
    case.channels = channels;
    case.metrics = metrics;
    case.criteria = criteria;
    case
}

/// Joins shard files into `out`, the file one unsharded run would have
/// written (same summary bit for bit; only `created_utc` differs unless
/// `SOURCE_DATE_EPOCH` is set).
///
/// Refuses ([`SweepError::Mismatch`]) shards whose script text, vary spec,
/// base overrides or channel selection differ from the first one's, and sets
/// of shards in which a case is missing or appears twice; nothing is written
/// then. Memory holds at most 64 cases (one read batch) at a time.
pub fn merge_sweeps(out: &Path, shards: &[PathBuf]) -> Result<SweepReport, SweepError> {
    let started = Instant::now();
    let Some(first_path) = shards.first() else {
        return Err(SweepError::Option(
            "give at least one shard file".to_string(),
        ));
    };
    let mut files = shards
        .iter()
        .map(|p| read_sweep(p))
        .collect::<Result<Vec<_>, _>>()?;
    let reference = files[0].spec.clone();
    let base_text = |spec: &SweepSpec| -> Vec<String> {
        spec.base_overrides.iter().map(Override::to_text).collect()
    };
    for f in &files[1..] {
        let mismatch = |what: &str| SweepError::Mismatch {
            path: f.path.clone(),
            reason: format!("{what} differs from that of {}", first_path.display()),
        };
        if f.spec.script_text != reference.script_text {
            return Err(mismatch("the script text"));
        }
        if f.spec.grid != reference.grid {
            return Err(mismatch("the --vary spec"));
        }
        if base_text(&f.spec) != base_text(&reference) {
            return Err(mismatch("the base overrides (--set)"));
        }
        if f.spec.channels != reference.channels {
            return Err(mismatch("the --channels selection"));
        }
    }
    files.sort_by_key(|f| f.summary.case_index.first().copied().unwrap_or(usize::MAX));
    let total = reference.grid.len();
    let mut expected = 0usize;
    for f in &files {
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
    let created = utc_now();
    let stamp = Stamp {
        created_utc: &created,
        yawdyn_version: &files[0].yawdyn_version,
        shard: Shard::WHOLE,
    };
    let mut spec = reference;
    spec.script_path = files[0].spec.script_path.clone();
    spec.vehicle_path = files[0].spec.vehicle_path.clone();
    let mut writer = SweepWriter::create(out, &spec, &stamp)?;
    for f in &files {
        for_each_case(f, |case| writer.write_case(&case))?;
    }
    let summary = writer.finish()?;
    Ok(SweepReport {
        out: out.to_path_buf(),
        summary,
        wall_time_s: started.elapsed().as_secs_f64(),
    })
}

/// yawdyn version with git revision, as stored in files.
fn yawdyn_version() -> String {
    format!(
        "{} ({})",
        env!("CARGO_PKG_VERSION"),
        option_env!("YAWDYN_GIT_REVISION").unwrap_or("unknown revision")
    )
}

/// The current time as ISO 8601 UTC (`2026-12-01T21:40:00Z`), or the time
/// given in seconds by the environment variable `SOURCE_DATE_EPOCH` when set
/// (common practice for reproducible outputs).
pub fn utc_now() -> String {
    let seconds = std::env::var("SOURCE_DATE_EPOCH")
        .ok()
        .and_then(|s| s.trim().parse::<i64>().ok())
        .unwrap_or_else(|| {
            std::time::SystemTime::now()
                .duration_since(std::time::UNIX_EPOCH)
                .map_or(0, |d| d.as_secs() as i64)
        });
    iso_utc(seconds)
}

/// Seconds since 1970-01-01T00:00:00Z as ISO 8601 text.
///
/// Civil date from a day count: H. Hinnant, "chrono-Compatible Low-Level
/// Date Algorithms", algorithm `civil_from_days` (from memory).
fn iso_utc(seconds: i64) -> String {
    let days = seconds.div_euclid(86_400);
    let secs = seconds.rem_euclid(86_400);
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let day = doy - (153 * mp + 2) / 5 + 1;
    let month = if mp < 10 { mp + 3 } else { mp - 9 };
    let year = yoe + era * 400 + i64::from(month <= 2);
    format!(
        "{year:04}-{month:02}-{day:02}T{:02}:{:02}:{:02}Z",
        secs / 3600,
        secs / 60 % 60,
        secs % 60
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn iso_utc_known_dates() {
        // Known instants: the Unix epoch; 2000-03-01 (day after a leap day of a
        // century leap year); 1e9 s = 2001-09-09T01:46:40Z (widely published).
        assert_eq!(iso_utc(0), "1970-01-01T00:00:00Z");
        assert_eq!(iso_utc(951_868_800), "2000-03-01T00:00:00Z");
        assert_eq!(iso_utc(1_000_000_000), "2001-09-09T01:46:40Z");
        assert_eq!(iso_utc(-1), "1969-12-31T23:59:59Z");
    }
}
