//! Writing sweep files (layout: see the documentation of [`crate::sweep`]).
//! One writer serves both `sweep` and `merge`, so a merged file is built by
//! exactly the same calls, in the same order, as an unsharded one.
//!
//! The writer keeps the summary of every case written in memory (it is the
//! report of the sweep) and the samples of the current block only. A block
//! ends after [`BLOCK_CASES`] cases or [`BLOCK_VALUES`] sample values,
//! counted from the first case written, so block boundaries depend only on
//! the cases, never on thread timing; each block is appended with one write
//! per dataset: samples first, then the summary columns, `case_index` last.
//!
//! After each block the file is flushed to disk (HDF5 `H5Fflush`), then the
//! root attribute `unfinished` records how much of it is complete (rows,
//! samples, metric and criterion columns, and a checksum of all that was
//! written: [`ResumePoint`]) and the file is flushed again. A process killed
//! after that leaves a file whose first `rows` cases can be read back and
//! taken up by `sweep --resume`, whatever it was doing when killed: the
//! attribute reaches the file only after the data it counts. The attribute
//! is removed when the file is complete. Every file, sweep or merge, is
//! written this way, so their bytes stay equal.

use std::path::{Path, PathBuf};

use hdf5::{Dataset, File, Group};

use crate::output::TempFile;
use crate::results::h5::{H5Context, TrackTimes, str_refs};

use super::case::{Summary, SweepCase};
pub(crate) use super::checksum::Checksum;
use super::layout::*;
use super::{CaseStatus, FORMAT_NAME, FORMAT_VERSION, Shard, SweepError, SweepSpec};

/// Root attributes that are not part of the spec.
pub(crate) struct Stamp<'a> {
    pub created_utc: &'a str,
    pub yawdyn_version: &'a str,
    pub shard: Shard,
}

/// Name, unit and description of a stored channel.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct ChannelInfo {
    pub name: String,
    pub unit: String,
    pub description: String,
}

/// The open summary columns.
struct SummaryColumns {
    case_index: Dataset,
    status: Dataset,
    message: Dataset,
    failure_time: Dataset,
    sample_start: Dataset,
    sample_count: Dataset,
    parameters: Vec<Dataset>,
    metric_order: Dataset,
    metrics_group: Group,
    metrics: Vec<Dataset>,
    criterion_order: Dataset,
    criteria_group: Group,
    /// Per criterion: value, lower, upper, passed.
    criteria: Vec<[Dataset; 4]>,
}

/// The open sample datasets: `/time`, then the channels in order.
struct SampleColumns {
    time: Dataset,
    channels: Vec<Dataset>,
}

/// Samples of the cases of the current block, concatenated per dataset.
#[derive(Default)]
struct Block {
    cases: usize,
    time: Vec<f64>,
    channels: Vec<Vec<f64>>,
}

/// How a sweep's temporary file is created and treated on a signal.
#[derive(Debug, Default)]
pub(crate) struct TempOptions<'a> {
    /// Unfinished files of the same output not to remove (they are being
    /// taken up).
    pub keep: &'a [PathBuf],
    /// When set, once the first block is in the file a terminating signal
    /// keeps the file and prints this note (see
    /// [`TempFile::keep_on_signal`]).
    pub note_on_signal: Option<&'a str>,
}

/// Streams cases into a new sweep file under a temporary name;
/// [`SweepWriter::finish`] writes the last block and renames the file into
/// place. Dropped unfinished, it removes the temporary file.
pub(crate) struct SweepWriter {
    ctx: H5Context,
    temp: Option<TempFile>,
    /// Set once the file is under its final name; until then dropping the
    /// writer removes the temporary file.
    finished: bool,
    file: Option<File>,
    columns: Option<SummaryColumns>,
    samples: Option<SampleColumns>,
    /// The channels every case that ran stores, fixed by the first such
    /// case, with the HDF5 chunk of the sample datasets.
    channels: Option<(Vec<ChannelInfo>, usize)>,
    /// The `--channels` selection, for a sweep in which no case ran.
    wanted: Option<Vec<String>>,
    summary: Summary,
    sample_start: Vec<i64>,
    sample_count: Vec<i64>,
    samples_total: usize,
    rows_written: usize,
    samples_written: usize,
    block: Block,
    /// Of everything written so far.
    checksum: Checksum,
    /// The root attribute `unfinished`, once the first block is written.
    unfinished: Option<hdf5::Attribute>,
    /// The note for [`TempFile::keep_on_signal`], given once the first
    /// block is in the file.
    note_on_signal: Option<String>,
}

impl SweepWriter {
    /// Checks the output path, creates the temporary file beside it and
    /// writes the root attributes, `/spec` and the empty summary columns.
    pub(crate) fn create(
        path: &Path,
        spec: &SweepSpec,
        stamp: &Stamp<'_>,
        options: &TempOptions<'_>,
    ) -> Result<SweepWriter, SweepError> {
        let ctx = H5Context::writer(path, TrackTimes::Off);
        let temp = TempFile::create_keeping(path, options.keep)?;
        let temp_path = temp.path().to_path_buf();
        let mut writer = SweepWriter {
            finished: false,
            file: None,
            columns: None,
            samples: None,
            channels: None,
            wanted: spec.channels.clone(),
            summary: Summary::with_keys(&spec.grid.keys()),
            sample_start: Vec::new(),
            sample_count: Vec::new(),
            samples_total: 0,
            rows_written: 0,
            samples_written: 0,
            block: Block::default(),
            checksum: Checksum::new(),
            unfinished: None,
            note_on_signal: options.note_on_signal.map(str::to_string),
            temp: Some(temp),
            ctx,
        };
        let file = writer.ctx.create_file(&temp_path)?;
        write_head(&writer.ctx, &file, spec, stamp)?;
        writer.columns = Some(create_columns(&writer.ctx, &file, &spec.grid.axes)?);
        writer.file = Some(file);
        Ok(writer)
    }

    /// Appends one case (callers pass cases in increasing index order). A
    /// case that ran but stores other channels than the first case that ran
    /// is recorded as `error`.
    pub(crate) fn write_case(&mut self, mut case: SweepCase) -> Result<(), SweepError> {
        if case.ran() {
            let names: Vec<&str> = case.channels.iter().map(|c| c.name.as_str()).collect();
            match &self.channels {
                None => {
                    let list = case
                        .channels
                        .iter()
                        .map(|c| ChannelInfo {
                            name: c.name.clone(),
                            unit: c.unit.clone(),
                            description: c.description.clone(),
                        })
                        .collect::<Vec<_>>();
                    self.block.channels = vec![Vec::new(); list.len()];
                    self.channels = Some((list, sample_chunk(case.time.len())));
                }
                Some((list, _)) if !list.iter().map(|c| c.name.as_str()).eq(names.clone()) => {
                    let first: Vec<&str> = list.iter().map(|c| c.name.as_str()).collect();
                    let message = format!(
                        "the case stores the channels [{}] but the sweep's first case stored [{}]",
                        names.join(", "),
                        first.join(", ")
                    );
                    case = not_stored(case, message);
                }
                Some(_) => {}
            }
        }
        if !case.ran() {
            case.time.clear();
            case.channels.clear();
        }
        self.sample_start.push(self.samples_total as i64);
        self.sample_count.push(case.time.len() as i64);
        self.samples_total += case.time.len();
        self.summary.push(&case);
        self.block.time.extend_from_slice(&case.time);
        for (buffer, channel) in self.block.channels.iter_mut().zip(&case.channels) {
            buffer.extend_from_slice(&channel.data);
        }
        self.block.cases += 1;
        let values = self.block.time.len() * (1 + self.block.channels.len());
        if self.block.cases >= BLOCK_CASES || values >= BLOCK_VALUES {
            self.flush()?;
        }
        Ok(())
    }

    /// Writes the cases given since the last block as a block of their own
    /// (as [`SweepWriter::finish`] does with the last one).
    pub(crate) fn end_block(&mut self) -> Result<(), SweepError> {
        self.flush()
    }

    /// How much of the file is written (the cases given so far up to the
    /// last complete block) and its checksum.
    pub(crate) fn resume_point(&self) -> ResumePoint {
        ResumePoint {
            rows: self.rows_written,
            samples: self.samples_written,
            metrics: self.columns.as_ref().map_or(0, |c| c.metrics.len()),
            criteria: self.columns.as_ref().map_or(0, |c| c.criteria.len()),
            checksum: self.checksum.0,
        }
    }

    /// Writes the block: its samples, then its summary rows; then records
    /// the [`ResumePoint`] in the file, flushed to disk before and after.
    fn flush(&mut self) -> Result<(), SweepError> {
        let block = std::mem::take(&mut self.block);
        if block.cases == 0 {
            return Ok(());
        }
        self.block.channels = vec![Vec::new(); block.channels.len()];
        if self.samples.is_none()
            && let Some((list, chunk)) = &self.channels
        {
            self.samples = Some(self.create_samples(list, *chunk)?);
        }
        if let Some(samples) = &self.samples {
            let ctx = &self.ctx;
            ctx.write_at(&samples.time, self.samples_written, &block.time)?;
            self.checksum.f64s(&block.time);
            for (ds, data) in samples.channels.iter().zip(&block.channels) {
                ctx.write_at(ds, self.samples_written, data)?;
                self.checksum.f64s(data);
            }
            self.samples_written += block.time.len();
        }
        let rows = self.rows_written..self.summary.len();
        self.write_rows(rows.clone())?;
        self.rows_written = rows.end;
        self.mark_complete()
    }

    /// Flushes the file to disk, records the [`ResumePoint`] in the root
    /// attribute `unfinished` and flushes again, so the attribute never
    /// counts data that is not in the file. After the first block, marks
    /// the temporary file to be kept on a signal (when asked to).
    fn mark_complete(&mut self) -> Result<(), SweepError> {
        let values = self.resume_point().to_values();
        let ctx = &self.ctx;
        let file = self
            .file
            .as_ref()
            .ok_or_else(|| ctx.invalid("writer already finished"))?;
        file.flush().map_err(ctx.h5("flushing the file to disk"))?;
        if self.unfinished.is_none() {
            self.unfinished = Some(ctx.attr_i64s(file, UNFINISHED, values.len())?);
        }
        if let Some(attr) = &self.unfinished {
            ctx.write_attr_i64s(attr, &values)?;
        }
        file.flush().map_err(ctx.h5("flushing the file to disk"))?;
        if let (Some(note), Some(temp)) = (self.note_on_signal.take(), &self.temp) {
            temp.keep_on_signal(&note);
        }
        Ok(())
    }

    /// Creates `/time`, `/channel_order` and the channel datasets.
    fn create_samples(
        &self,
        list: &[ChannelInfo],
        chunk: usize,
    ) -> Result<SampleColumns, SweepError> {
        let ctx = &self.ctx;
        let file = self.open_file()?;
        let time = ctx.growing::<f64>(file, TIME, chunk, None)?;
        ctx.attr_str(&time, "units", "s")?;
        let names: Vec<&str> = list.iter().map(|c| c.name.as_str()).collect();
        ctx.dataset_strs(file, CHANNEL_ORDER, &names)?;
        let group = ctx.group(file, CHANNELS)?;
        let mut channels = Vec::with_capacity(list.len());
        for info in list {
            let ds = ctx.growing::<f64>(&group, &info.name, chunk, None)?;
            ctx.attr_str(&ds, "units", &info.unit)?;
            ctx.attr_str(&ds, "description", &info.description)?;
            channels.push(ds);
        }
        Ok(SampleColumns { time, channels })
    }

    /// Appends summary rows `rows` to the columns, creating the columns of
    /// metrics and criteria first reported in them.
    fn write_rows(&mut self, rows: std::ops::Range<usize>) -> Result<(), SweepError> {
        let ctx = &self.ctx;
        let s = &self.summary;
        let cols = self
            .columns
            .as_mut()
            .ok_or_else(|| ctx.invalid("writer already finished"))?;
        let sum = &mut self.checksum;
        let r0 = rows.start;
        for (ds, (_, values)) in cols.parameters.iter().zip(&s.parameters) {
            ctx.write_at(ds, r0, &values[rows.clone()])?;
            sum.f64s(&values[rows.clone()]);
        }
        let new_metrics = &s.metrics[cols.metrics.len()..];
        let names: Vec<&str> = new_metrics.iter().map(|m| m.name.as_str()).collect();
        ctx.write_text_at(&cols.metric_order, cols.metrics.len(), &names)?;
        sum.texts(&names);
        for metric in new_metrics {
            sum.text(&metric.unit);
            sum.i64s(&[metric.first_case as i64]);
            let ds = ctx.growing(
                &cols.metrics_group,
                &metric.name,
                SUMMARY_CHUNK,
                Some(f64::NAN),
            )?;
            ctx.attr_str(&ds, "units", &metric.unit)?;
            ctx.attr_i64(&ds, FIRST_CASE, metric.first_case as i64)?;
            cols.metrics.push(ds);
        }
        for (ds, metric) in cols.metrics.iter().zip(&s.metrics) {
            ctx.write_at(ds, r0, &metric.values[rows.clone()])?;
            sum.f64s(&metric.values[rows.clone()]);
        }
        let new_criteria = &s.criteria[cols.criteria.len()..];
        let names: Vec<&str> = new_criteria.iter().map(|c| c.name.as_str()).collect();
        ctx.write_text_at(&cols.criterion_order, cols.criteria.len(), &names)?;
        sum.texts(&names);
        for criterion in new_criteria {
            let g = ctx.group(&cols.criteria_group, &criterion.name)?;
            let real = |name| ctx.growing(&g, name, SUMMARY_CHUNK, Some(f64::NAN));
            let passed = ctx.growing::<i8>(&g, CRITERION_PASSED, SUMMARY_CHUNK, Some(-1))?;
            ctx.attr_str(
                &passed,
                "description",
                "1 passed, 0 failed, -1 not evaluated",
            )?;
            let value = real(CRITERION_VALUE)?;
            let lower = real(CRITERION_LOWER)?;
            let upper = real(CRITERION_UPPER)?;
            cols.criteria.push([value, lower, upper, passed]);
        }
        for ([value, lower, upper, passed], c) in cols.criteria.iter().zip(&s.criteria) {
            ctx.write_at(value, r0, &c.value[rows.clone()])?;
            ctx.write_at(lower, r0, &c.lower[rows.clone()])?;
            ctx.write_at(upper, r0, &c.upper[rows.clone()])?;
            ctx.write_at(passed, r0, &c.passed[rows.clone()])?;
            for column in [&c.value, &c.lower, &c.upper] {
                sum.f64s(&column[rows.clone()]);
            }
            let passed: Vec<i64> = c.passed[rows.clone()].iter().map(|&p| p.into()).collect();
            sum.i64s(&passed);
        }
        ctx.write_at(&cols.failure_time, r0, &s.failure_time_s[rows.clone()])?;
        sum.f64s(&s.failure_time_s[rows.clone()]);
        let status: Vec<&str> = s.status[rows.clone()].iter().map(|x| x.name()).collect();
        ctx.write_text_at(&cols.status, r0, &status)?;
        sum.texts(&status);
        ctx.write_text_at(&cols.message, r0, &str_refs(&s.message[rows.clone()]))?;
        sum.texts(&s.message[rows.clone()]);
        ctx.write_at(&cols.sample_start, r0, &self.sample_start[rows.clone()])?;
        ctx.write_at(&cols.sample_count, r0, &self.sample_count[rows.clone()])?;
        sum.i64s(&self.sample_start[rows.clone()]);
        sum.i64s(&self.sample_count[rows.clone()]);
        let index: Vec<i64> = s.case_index[rows].iter().map(|&i| i as i64).collect();
        ctx.write_at(&cols.case_index, r0, &index)?;
        sum.i64s(&index);
        Ok(())
    }

    fn open_file(&self) -> Result<&File, SweepError> {
        self.file
            .as_ref()
            .ok_or_else(|| self.ctx.invalid("writer already finished").into())
    }

    /// Writes the last block (and the empty sample datasets of a sweep in
    /// which no case ran), closes the file and renames it to its final
    /// name. Returns the summary written.
    pub(crate) fn finish(mut self) -> Result<Summary, SweepError> {
        self.flush()?;
        if self.samples.is_none() {
            let list = match &self.channels {
                Some((list, _)) => list.clone(),
                None => (self.wanted.clone().unwrap_or_default())
                    .into_iter()
                    .map(|name| ChannelInfo {
                        name,
                        unit: String::new(),
                        description: String::new(),
                    })
                    .collect(),
            };
            self.samples = Some(self.create_samples(&list, SAMPLE_CHUNK_RANGE.0)?);
        }
        self.samples = None;
        self.columns = None;
        let file = self
            .file
            .take()
            .ok_or_else(|| self.ctx.invalid("writer already finished"))?;
        // The file is complete: no resume point.
        if self.unfinished.take().is_some() {
            self.ctx.delete_attr(&file, UNFINISHED)?;
        }
        file.close().map_err(self.ctx.h5("closing the HDF5 file"))?;
        let temp = self
            .temp
            .take()
            .ok_or_else(|| self.ctx.invalid("writer already finished"))?;
        temp.commit()?;
        self.finished = true;
        Ok(std::mem::take(&mut self.summary))
    }
}

impl Drop for SweepWriter {
    fn drop(&mut self) {
        // An unfinished writer (error part-way) leaves no temporary file behind.
        if !self.finished {
            self.samples = None;
            self.columns = None;
            self.unfinished = None;
            drop(self.file.take());
            drop(self.temp.take());
        }
    }
}

/// The case turned into an `error` row with `message` (nothing of it stored).
fn not_stored(case: SweepCase, message: String) -> SweepCase {
    SweepCase {
        status: CaseStatus::Error,
        message,
        failure_time_s: f64::NAN,
        time: Vec::new(),
        channels: Vec::new(),
        metrics: Vec::new(),
        criteria: Vec::new(),
        ..case
    }
}

/// Writes the root attributes and `/spec`.
fn write_head(
    ctx: &H5Context,
    file: &File,
    spec: &SweepSpec,
    stamp: &Stamp<'_>,
) -> Result<(), SweepError> {
    let total = spec.grid.len();
    let range = stamp.shard.range(total);
    let root: &Group = file;
    ctx.attr_str(root, "format", FORMAT_NAME)?;
    ctx.attr_i64(root, "format_version", FORMAT_VERSION)?;
    ctx.attr_str(root, "script_path", &spec.script_path)?;
    ctx.attr_str(root, "vehicle_path", &spec.vehicle_path)?;
    ctx.attr_str(root, "yawdyn_version", stamp.yawdyn_version)?;
    ctx.attr_str(root, "created_utc", stamp.created_utc)?;
    ctx.attr_i64(root, "case_total", total as i64)?;
    ctx.attr_i64(root, "shard_index", stamp.shard.index as i64)?;
    ctx.attr_i64(root, "shard_count", stamp.shard.count as i64)?;
    ctx.attr_i64(root, "case_first", range.start as i64)?;
    ctx.attr_i64(root, "case_end", range.end as i64)?;
    let keys = spec.grid.keys();
    ctx.attr_strs(root, "varied_keys", &str_refs(&keys))?;

    let sg = ctx.group(root, SPEC)?;
    ctx.dataset_str(&sg, "script_text", &spec.script_text)?;
    let base: Vec<String> = spec.base_overrides.iter().map(|o| o.to_text()).collect();
    ctx.dataset_strs(&sg, "base_overrides", &str_refs(&base))?;
    ctx.dataset_strs(&sg, "vary_keys", &str_refs(&keys))?;
    let axes = &spec.grid.axes;
    let start: Vec<f64> = axes.iter().map(|a| a.start).collect();
    let stop: Vec<f64> = axes.iter().map(|a| a.stop).collect();
    let counts: Vec<i64> = axes.iter().map(|a| a.count as i64).collect();
    ctx.dataset_f64(&sg, "vary_start", &start)?;
    ctx.dataset_f64(&sg, "vary_stop", &stop)?;
    ctx.dataset_1d(&sg, "vary_count", &counts)?;
    let units: Vec<&str> = axes.iter().map(|a| a.unit.as_str()).collect();
    ctx.dataset_strs(&sg, "vary_units", &units)?;
    ctx.dataset_str(&sg, "vehicle_toml", &spec.vehicle_toml)?;
    let channels = spec.channels.clone().unwrap_or_default();
    ctx.dataset_strs(&sg, "channels", &str_refs(&channels))?;
    ctx.attr_i64(&sg, "channels_selected", i64::from(spec.channels.is_some()))?;
    Ok(())
}

/// Creates `/summary` with its empty columns.
fn create_columns(
    ctx: &H5Context,
    file: &File,
    axes: &[super::VaryAxis],
) -> Result<SummaryColumns, SweepError> {
    let keys: Vec<&str> = axes.iter().map(|a| a.key.as_str()).collect();
    let group = ctx.group(file, SUMMARY)?;
    let number = |name| ctx.growing::<i64>(&group, name, SUMMARY_CHUNK, None);
    let text = |name, chunk| ctx.growing::<hdf5::types::VarLenUnicode>(&group, name, chunk, None);
    let case_index = number(CASE_INDEX)?;
    let status = text(STATUS, SUMMARY_CHUNK)?;
    let message = text(MESSAGE, SUMMARY_CHUNK)?;
    let failure_time = ctx.growing(&group, FAILURE_TIME, SUMMARY_CHUNK, Some(f64::NAN))?;
    ctx.attr_str(&failure_time, "units", "s")?;
    let sample_start = number(SAMPLE_START)?;
    let sample_count = number(SAMPLE_COUNT)?;
    ctx.dataset_strs(&group, PARAMETER_ORDER, &keys)?;
    let pg = ctx.group(&group, PARAMETERS)?;
    let mut parameters = Vec::with_capacity(axes.len());
    for axis in axes {
        let ds = ctx.growing(&pg, &axis.key, SUMMARY_CHUNK, Some(f64::NAN))?;
        ctx.attr_str(&ds, "units", &axis.unit)?;
        parameters.push(ds);
    }
    let metric_order = text(METRIC_ORDER, NAME_CHUNK)?;
    let metrics_group = ctx.group(&group, METRICS)?;
    let criterion_order = text(CRITERION_ORDER, NAME_CHUNK)?;
    let criteria_group = ctx.group(&group, CRITERIA)?;
    Ok(SummaryColumns {
        case_index,
        status,
        message,
        failure_time,
        sample_start,
        sample_count,
        parameters,
        metric_order,
        metrics_group,
        metrics: Vec::new(),
        criterion_order,
        criteria_group,
        criteria: Vec::new(),
    })
}
