//! The parallel sweep engine and the shard merge.
//!
//! ```text
//! workers (jobs threads)                      calling thread (writer)
//!   loop:                                       for each finished case:
//!     i = next index, if i < written + window     hold it until its turn
//!     case = run_case(i)  (panics caught)         write cases in index order
//!     send case ──────────────────────────────▶   written = i + 1, wake workers
//! ```

use std::collections::BTreeMap;
use std::panic::{AssertUnwindSafe, catch_unwind};
use std::path::{Path, PathBuf};
use std::sync::mpsc;
use std::sync::{Condvar, Mutex, MutexGuard};
use std::time::Instant;

use crate::params::Override;
use crate::results::{RunRecord, RunStatus};

use super::reader::for_each_case;
use super::resume::UnfinishedSweep;
use super::stamp::{utc_now, yawdyn_version};
use super::writer::{Stamp, SweepWriter, TempOptions};
use super::{CaseStatus, Shard, Summary, SweepCase, SweepError, SweepSpec};

/// A case runner: runs one case with the given overrides (base `--set`s, then
/// the varied parameters). `Ok` with a `Failed` record when the run diverged,
/// `Err` with a message when it could not run at all. Must be callable from
/// several threads at once.
pub type CaseRunner<'a> = dyn Fn(&[Override]) -> Result<RunRecord, String> + Sync + 'a;

/// A numbered list of cases the engine can run: what each case overrides
/// and which values it stores. A sweep's grid is one ([`SweepSpec`]); the
/// perturbations of a sensitivity ranking are another
/// ([`crate::sensitivity::Plan`]).
pub trait CaseList: Sync {
    /// Number of cases (indices `0..len`).
    fn len(&self) -> usize;

    /// True when there is no case.
    fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Every override case `index` runs with, in the order they apply (a
    /// later override of the same key wins).
    fn overrides(&self, index: usize) -> Vec<Override>;

    /// The values that define case `index` (stored in
    /// [`SweepCase::parameters`]).
    fn values(&self, index: usize) -> Vec<f64>;

    /// Channels each case keeps (`None`: all the runner returns; an empty
    /// list keeps none, so finished cases hold only their summary).
    fn channels(&self) -> Option<&[String]>;
}

impl CaseList for SweepSpec {
    /// The grid's size.
    fn len(&self) -> usize {
        self.grid.len()
    }

    /// The base overrides (`--set`, in order), then one per varied key.
    fn overrides(&self, index: usize) -> Vec<Override> {
        let mut overrides = self.base_overrides.clone();
        overrides.extend(self.grid.overrides(index));
        overrides
    }

    /// The varied parameters' values, `--vary` order.
    fn values(&self, index: usize) -> Vec<f64> {
        self.grid.values(index)
    }

    /// The `--channels` selection.
    fn channels(&self) -> Option<&[String]> {
        self.channels.as_deref()
    }
}

/// How to run a sweep.
pub struct SweepOptions<'a> {
    /// Worker threads, ≥ 1 (exactly this many, or the number of cases when
    /// that is smaller).
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
    /// Cases taken from the unfinished file of a stopped sweep (0 unless
    /// resumed; these were not run again).
    pub resumed: usize,
    /// Wall-clock time of the whole sweep, s.
    pub wall_time_s: f64,
    /// CPU time of the calling thread from the first case handed out to the
    /// closed file, s: writing, ordering and handing out cases, the sweep's
    /// serial share (for a merge: reading the shards and writing). NaN where
    /// the platform does not tell it.
    pub writer_cpu_s: f64,
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

/// Cases a worker may run ahead of the next case to be written, per worker
/// thread: bounds the finished cases held in memory to `IN_FLIGHT_PER_JOB × jobs`.
const IN_FLIGHT_PER_JOB: usize = 4;

/// Runs the cases of `options.shard` of `spec` with `runner` on `options.jobs`
/// threads and writes the sweep file `out` (see the [module
/// documentation](crate::sweep) for order and layout). Case failures are
/// recorded, not returned; `Err` means the sweep itself could not be done
/// (bad options, an unwritable output path, file errors). The output path is
/// checked before any case runs.
///
/// ```no_run
/// use yawdyn::sweep::{Grid, Shard, SweepOptions, SweepSpec, VaryAxis, run_sweep};
/// # fn demo(runner: &yawdyn::sweep::CaseRunner) -> Result<(), yawdyn::sweep::SweepError> {
/// let spec = SweepSpec {
///     script_path: "scripts/power_on_exit.rhai".into(),
///     script_text: std::fs::read_to_string("scripts/power_on_exit.rhai").unwrap_or_default(),
///     vehicle_path: String::new(),
///     vehicle_toml: String::new(),
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
    resume_sweep(spec, options, runner, out, &Resume::default())
}

/// How [`resume_sweep`] treats unfinished sweeps.
#[derive(Debug, Default, Clone, Copy)]
pub struct Resume<'a> {
    /// The stopped sweep to take up ([`crate::sweep::find_unfinished`]);
    /// `None` runs every case.
    pub from: Option<&'a UnfinishedSweep>,
    /// When set, a terminating signal (SIGINT, SIGTERM, SIGHUP) after the
    /// first block of cases is written keeps the temporary file, to be
    /// taken up later, and prints this note on standard error (see
    /// [`crate::output::TempFile::keep_on_signal`]); otherwise the file is
    /// removed.
    pub note_on_signal: Option<&'a str>,
}

/// [`run_sweep`], taking up the finished cases of a stopped sweep
/// (`resume.from`): refused ([`SweepError::Mismatch`]) unless it is the
/// same sweep ([`UnfinishedSweep::check_matches`]). Its cases are fed to a
/// new writer in case order and checked to read back as they were written
/// (else [`SweepError::Format`]); the other cases run as in [`run_sweep`].
/// The file written equals the one an uninterrupted sweep writes, byte for
/// byte when both ran with the same `created_utc`: the stopped sweep's is
/// kept. Once the file is in place, the unfinished files of the output are
/// removed; on any error they are left as they were.
pub fn resume_sweep(
    spec: &SweepSpec,
    options: &SweepOptions<'_>,
    runner: &CaseRunner<'_>,
    out: &Path,
    resume: &Resume<'_>,
) -> Result<SweepReport, SweepError> {
    let started = Instant::now();
    if options.jobs == 0 {
        return Err(SweepError::Option("--jobs must be at least 1".to_string()));
    }
    if let Some(from) = resume.from {
        from.check_matches(spec, options.shard)?;
    }
    // The output file first: a bad output path costs no case.
    let created = resume
        .from
        .map_or_else(utc_now, |from| from.file.created_utc.clone());
    let version = yawdyn_version();
    let stamp = Stamp {
        created_utc: &created,
        yawdyn_version: &version,
        shard: options.shard,
    };
    let temp = TempOptions {
        keep: resume.from.map_or(&[][..], |from| &from.leftovers[..]),
        note_on_signal: resume.note_on_signal,
    };
    let mut writer = SweepWriter::create(out, spec, &stamp, &temp)?;
    let range = options.shard.range(spec.grid.len());
    let cpu_at_start = thread_cpu_time_s();
    // The finished cases of the stopped sweep, as it wrote them.
    let mut resumed = 0;
    if let Some(from) = resume.from {
        for_each_case(&from.file, |case| writer.write_case(case))?;
        // A file stopped while being closed holds every case, its last
        // block written short, as at the end of every sweep.
        if from.cases >= range.len() {
            writer.end_block()?;
        }
        if writer.resume_point() != from.point {
            return Err(SweepError::Format {
                path: from.path.clone(),
                reason: "its finished cases do not read back as they were written (damaged \
                         when the sweep stopped); leave out --resume to start again"
                    .to_string(),
            });
        }
        resumed = from.cases;
    }
    let rest = (range.start + resumed).min(range.end)..range.end;
    run_cases(spec, rest, options, runner, |case| writer.write_case(case))?;
    // The last block, then the file under its final name.
    let summary = writer.finish()?;
    if let Some(from) = resume.from {
        for leftover in &from.leftovers {
            // Best effort: another resume of the same output may have removed it.
            let _ = std::fs::remove_file(leftover);
        }
    }
    Ok(SweepReport {
        out: out.to_path_buf(),
        summary,
        resumed,
        wall_time_s: started.elapsed().as_secs_f64(),
        writer_cpu_s: thread_cpu_time_s() - cpu_at_start,
    })
}

/// Runs cases `range` of `cases` with `runner` on `options.jobs` threads
/// (`options.shard` is not read: the caller chooses the range) and hands
/// each finished case to `sink` on the calling thread, in increasing index
/// order, whatever the thread timing. This is the engine under
/// [`run_sweep`]; other commands that run many cases (the sensitivity
/// ranking) pass their own case list and sink.
///
/// Case failures are recorded in the cases, not returned. `Err` comes from
/// `sink` (the first error stops handing out cases), from threads that
/// cannot start, or from a case lost by a worker.
pub fn run_cases<F>(
    cases: &dyn CaseList,
    range: std::ops::Range<usize>,
    options: &SweepOptions<'_>,
    runner: &CaseRunner<'_>,
    mut sink: F,
) -> Result<(), SweepError>
where
    F: FnMut(SweepCase) -> Result<(), SweepError>,
{
    if options.jobs == 0 {
        return Err(SweepError::Option("--jobs must be at least 1".to_string()));
    }
    // Workers run the cases; this thread hands them to the sink in index order.
    let queue = CaseQueue::new(range.clone(), IN_FLIGHT_PER_JOB * options.jobs);
    let threads = options.jobs.min(range.len());
    let workers = Workers {
        cases,
        runner,
        options,
        queue: &queue,
    };
    std::thread::scope(|scope| -> Result<(), SweepError> {
        let (tx, rx) = mpsc::channel::<SweepCase>();
        let handles = workers.spawn(scope, threads, &tx)?;
        drop(tx);
        let written = deliver_in_order(&rx, &mut sink, &queue, range.start);
        queue.stop();
        drop(rx);
        for handle in handles {
            // A worker's panic is reported as the lost case below.
            let _ = handle.join();
        }
        match written? {
            next if next < range.end => Err(SweepError::Worker { index: next }),
            _ => Ok(()),
        }
    })
}

/// What every worker thread shares.
struct Workers<'a> {
    cases: &'a dyn CaseList,
    runner: &'a CaseRunner<'a>,
    options: &'a SweepOptions<'a>,
    queue: &'a CaseQueue,
}

impl<'a> Workers<'a> {
    /// Starts `threads` workers that run the cases the queue hands out and
    /// send them on `tx`. On failure the queue is stopped (the workers
    /// already started then end) and the error returned.
    fn spawn<'scope>(
        &'scope self,
        scope: &'scope std::thread::Scope<'scope, '_>,
        threads: usize,
        tx: &mpsc::Sender<SweepCase>,
    ) -> Result<Vec<std::thread::ScopedJoinHandle<'scope, ()>>, SweepError>
    where
        'a: 'scope,
    {
        let mut handles = Vec::with_capacity(threads);
        for n in 0..threads {
            let tx = tx.clone();
            let spawned = std::thread::Builder::new()
                .name(format!("sweep-worker-{n}"))
                .spawn_scoped(scope, move || self.work(&tx));
            match spawned {
                Ok(handle) => handles.push(handle),
                Err(source) => {
                    self.queue.stop();
                    return Err(SweepError::Threads {
                        jobs: self.options.jobs,
                        source,
                    });
                }
            }
        }
        Ok(handles)
    }

    /// One worker: runs cases (panics caught and recorded) until the queue
    /// is empty or stopped, or the writer has gone.
    fn work(&self, tx: &mpsc::Sender<SweepCase>) {
        let _stop_on_panic = StopOnPanic(self.queue);
        while let Some(index) = self.queue.take() {
            let case = catch_unwind(AssertUnwindSafe(|| {
                run_case(self.cases, self.runner, index)
            }))
            .unwrap_or_else(|panic| {
                let message = format!("the case panicked: {}", panic_text(&panic));
                error_case(self.cases, index, message)
            });
            if let Some(progress) = self.options.progress {
                progress();
            }
            if tx.send(case).is_err() {
                break;
            }
        }
    }
}

/// Receives finished cases and hands them to `sink` in index order from
/// `first`; returns the index after the last one delivered (the loop ends
/// when every worker has stopped).
fn deliver_in_order<F>(
    rx: &mpsc::Receiver<SweepCase>,
    sink: &mut F,
    queue: &CaseQueue,
    first: usize,
) -> Result<usize, SweepError>
where
    F: FnMut(SweepCase) -> Result<(), SweepError>,
{
    let mut waiting = BTreeMap::new();
    let mut next = first;
    for case in rx {
        waiting.insert(case.index, case);
        while let Some(case) = waiting.remove(&next) {
            sink(case)?;
            next += 1;
            queue.written(next);
        }
    }
    Ok(next)
}

/// The shared case counter of the workers: hands out case indices in
/// increasing order, at most `window` ahead of the next case to write.
struct CaseQueue {
    state: Mutex<QueueState>,
    turn: Condvar,
    end: usize,
    window: usize,
}

struct QueueState {
    /// Next case index to hand out.
    next: usize,
    /// Next case index the writer needs.
    written: usize,
    /// No more cases are handed out (done, or the writer failed).
    stopped: bool,
}

impl CaseQueue {
    fn new(range: std::ops::Range<usize>, window: usize) -> CaseQueue {
        CaseQueue {
            state: Mutex::new(QueueState {
                next: range.start,
                written: range.start,
                stopped: false,
            }),
            turn: Condvar::new(),
            end: range.end,
            window: window.max(1),
        }
    }

    fn lock(&self) -> MutexGuard<'_, QueueState> {
        self.state.lock().unwrap_or_else(|e| e.into_inner())
    }

    /// The next case to run, waiting while it is a full window ahead of the
    /// writer; `None` when every case is handed out or the queue stopped.
    /// (No deadlock: every case below the next one handed out is already
    /// held by a worker, so the writer's next case is always on its way.)
    fn take(&self) -> Option<usize> {
        let mut state = self.lock();
        loop {
            if state.stopped || state.next >= self.end {
                return None;
            }
            if state.next < state.written + self.window {
                state.next += 1;
                return Some(state.next - 1);
            }
            state = self.turn.wait(state).unwrap_or_else(|e| e.into_inner());
        }
    }

    /// The writer has written every case below `next`.
    fn written(&self, next: usize) {
        self.lock().written = next;
        self.turn.notify_all();
    }

    /// Hands out no more cases and wakes every waiting worker.
    fn stop(&self) {
        self.lock().stopped = true;
        self.turn.notify_all();
    }
}

/// Stops the queue when a worker thread unwinds, so that no other worker
/// waits for its case.
struct StopOnPanic<'a>(&'a CaseQueue);

impl Drop for StopOnPanic<'_> {
    fn drop(&mut self) {
        if std::thread::panicking() {
            self.0.stop();
        }
    }
}

/// CPU time the calling thread has used, s: the first field (ns on the CPU)
/// of Linux's `/proc/thread-self/schedstat`; NaN where that is not available.
pub(super) fn thread_cpu_time_s() -> f64 {
    std::fs::read_to_string("/proc/thread-self/schedstat")
        .ok()
        .and_then(|text| text.split_whitespace().next()?.parse::<f64>().ok())
        .map_or(f64::NAN, |ns| ns * 1e-9)
}

/// The text of a caught panic.
fn panic_text(panic: &Box<dyn std::any::Any + Send>) -> String {
    panic
        .downcast_ref::<&str>()
        .map(|s| s.to_string())
        .or_else(|| panic.downcast_ref::<String>().cloned())
        .unwrap_or_else(|| "unknown cause".to_string())
}

/// Case `index` recorded as `error` with `message`.
fn error_case(cases: &dyn CaseList, index: usize, message: String) -> SweepCase {
    let overrides = cases.overrides(index);
    SweepCase {
        index,
        parameters: cases.values(index),
        overrides: overrides.iter().map(Override::to_text).collect(),
        status: CaseStatus::Error,
        message,
        failure_time_s: f64::NAN,
        time: Vec::new(),
        channels: Vec::new(),
        metrics: Vec::new(),
        criteria: Vec::new(),
    }
}

/// Runs one case, turning every way it can go wrong into a recorded status.
fn run_case(cases: &dyn CaseList, runner: &CaseRunner<'_>, index: usize) -> SweepCase {
    let overrides = cases.overrides(index);
    let mut case = error_case(cases, index, String::new());
    let record = match catch_unwind(AssertUnwindSafe(|| runner(&overrides))) {
        Ok(Ok(record)) => record,
        Ok(Err(message)) => {
            case.message = message;
            return case;
        }
        Err(panic) => {
            case.message = format!("the case runner panicked: {}", panic_text(&panic));
            return case;
        }
    };
    if let Err(reason) = record.validate().and_then(|()| storable_criteria(&record)) {
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
    if let Some(wanted) = cases.channels() {
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

/// Criterion names become group names in a sweep file: each must be a plain
/// word (no `/`, not empty, `.` or `..`) and appear once per run.
fn storable_criteria(record: &RunRecord) -> Result<(), String> {
    for (i, c) in record.criteria.iter().enumerate() {
        let name = c.name.as_str();
        if name.is_empty() || name == "." || name == ".." || name.contains(['/', '\0']) {
            return Err(format!(
                "criterion name {name:?} cannot be stored in a sweep file (empty, `.`, `..`, or contains `/` or NUL)"
            ));
        }
        if record.criteria[..i].iter().any(|d| d.name == c.name) {
            return Err(format!("criterion `{name}` appears twice"));
        }
    }
    Ok(())
}
