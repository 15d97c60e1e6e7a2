//! Writing and reading sweep files (layout: see the documentation of
//! [`crate::sweep`]). One writer serves both `sweep` and `merge`, so a merged
//! file is built by exactly the same calls, in the same order, as an
//! unsharded one.
//!
//! Each case group holds the sample block of a results file (`time`,
//! channels, metrics, criteria); it is written and read by the HDF5 layer of
//! [`crate::results`] (`H5Context::write_samples`/`read_samples`), with object
//! time tracking off, and its errors are converted into [`SweepError`]s.

use std::path::{Path, PathBuf};

use hdf5::{File, Group};

use crate::results::h5::{Descriptions, H5Context, H5Error, Samples, TrackTimes, str_refs};
use crate::results::{Channel, Criterion, Metric};

use super::grid::{Grid, Shard, VaryAxis};
use super::{CaseStatus, FORMAT_NAME, FORMAT_VERSION, SweepError, SweepSpec};

/// One finished case as stored in `/cases/<index>`.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepCase {
    /// Global case index (0-based, grid order).
    pub index: usize,
    /// Values of the varied parameters, in `--vary` order.
    pub parameters: Vec<f64>,
    /// Every override the case ran with (base `--set`s, then the varied ones), `key=value`.
    pub overrides: Vec<String>,
    /// How the case ended.
    pub status: CaseStatus,
    /// Why it did not complete or pass; empty when completed.
    pub message: String,
    /// Simulation time of a run failure, s; NaN otherwise.
    pub failure_time_s: f64,
    /// Sample times, s (empty when the case could not run).
    pub time: Vec<f64>,
    /// The stored channels (all, or the `--channels` selection).
    pub channels: Vec<Channel>,
    /// Metrics of the run, in the order returned.
    pub metrics: Vec<Metric>,
    /// Pass/fail criteria of the run.
    pub criteria: Vec<Criterion>,
}

impl SweepCase {
    /// The channel called `name`, if stored.
    pub fn channel(&self, name: &str) -> Option<&Channel> {
        self.channels.iter().find(|c| c.name == name)
    }
}

/// One metric column of the summary.
#[derive(Debug, Clone, PartialEq)]
pub struct SummaryMetric {
    /// Metric name.
    pub name: String,
    /// Unit as text.
    pub unit: String,
    /// One value per summary row; NaN where the case has no such metric.
    pub values: Vec<f64>,
}

/// The `/summary` table: one row per case in the file, in case-index order.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Summary {
    /// Global case index of each row.
    pub case_index: Vec<usize>,
    /// One column per varied parameter, `(key, values)` in `--vary` order.
    pub parameters: Vec<(String, Vec<f64>)>,
    /// One column per metric, in order of first appearance over the cases.
    pub metrics: Vec<SummaryMetric>,
    /// Status of each row.
    pub status: Vec<CaseStatus>,
    /// Message of each row (empty when completed).
    pub message: Vec<String>,
}

impl Summary {
    /// Number of rows.
    pub fn len(&self) -> usize {
        self.case_index.len()
    }

    /// True when there are no rows.
    pub fn is_empty(&self) -> bool {
        self.case_index.is_empty()
    }

    /// The column of varied parameter `key`.
    pub fn parameter(&self, key: &str) -> Option<&[f64]> {
        self.parameters
            .iter()
            .find(|(k, _)| k == key)
            .map(|(_, v)| v.as_slice())
    }

    /// The column of metric `name`.
    pub fn metric(&self, name: &str) -> Option<&SummaryMetric> {
        self.metrics.iter().find(|m| m.name == name)
    }

    /// Adds one case as a row; new metric names become new columns (NaN in earlier rows).
    pub(crate) fn push(&mut self, keys: &[String], case: &SweepCase) {
        if self.parameters.is_empty() {
            self.parameters = keys.iter().map(|k| (k.clone(), Vec::new())).collect();
        }
        let row = self.case_index.len();
        self.case_index.push(case.index);
        for ((_, column), v) in self.parameters.iter_mut().zip(&case.parameters) {
            column.push(*v);
        }
        for metric in &case.metrics {
            if !self.metrics.iter().any(|m| m.name == metric.name) {
                self.metrics.push(SummaryMetric {
                    name: metric.name.clone(),
                    unit: metric.unit.clone(),
                    values: vec![f64::NAN; row],
                });
            }
        }
        for column in &mut self.metrics {
            let value = case
                .metrics
                .iter()
                .find(|m| m.name == column.name)
                .map_or(f64::NAN, |m| m.value);
            column.values.push(value);
        }
        self.status.push(case.status);
        self.message.push(case.message.clone());
    }
}

/// An opened sweep file: its spec, shard and summary; cases are read on demand
/// with [`SweepFile::read_case`].
#[derive(Debug, Clone)]
pub struct SweepFile {
    /// The file.
    pub path: PathBuf,
    /// What was swept.
    pub spec: SweepSpec,
    /// Which shard this file holds (`1/1` for a whole or merged sweep).
    pub shard: Shard,
    /// Number of cases of the whole grid.
    pub case_total: usize,
    /// Creation time, ISO 8601 UTC.
    pub created_utc: String,
    /// yawdyn version that wrote the file.
    pub yawdyn_version: String,
    /// The summary table.
    pub summary: Summary,
}

impl SweepFile {
    /// Varied keys, in `--vary` order.
    pub fn varied_keys(&self) -> Vec<String> {
        self.spec.grid.keys()
    }

    /// Number of cases held by this file.
    pub fn case_count(&self) -> usize {
        self.summary.len()
    }

    /// Reads case `index` (global index) with all its stored channels.
    pub fn read_case(&self, index: usize) -> Result<SweepCase, SweepError> {
        let ctx = H5Context::new(&self.path, TrackTimes::Off);
        let file = ctx.open_file()?;
        let cases = ctx.open_group(&file, "cases")?;
        let name = case_name(index, self.case_total);
        let group = cases
            .group(&name)
            .map_err(|_| ctx.invalid(format!("no case {index} in this file (/cases/{name})")))?;
        read_case(&ctx, &group)
    }
}

/// Reads a sweep file's spec and summary.
pub fn read_sweep(path: &Path) -> Result<SweepFile, SweepError> {
    let ctx = H5Context::new(path, TrackTimes::Off);
    let file = ctx.open_file()?;
    let format = ctx
        .read_attr_str(&file, "format")
        .map_err(|_| ctx.invalid("not a yawdyn sweep file (no `format` attribute)"))?;
    if format != FORMAT_NAME {
        return Err(ctx
            .invalid(format!(
                "not a yawdyn sweep file (format is {format:?}, expected {FORMAT_NAME:?})"
            ))
            .into());
    }
    let version = ctx.read_attr_i64(&file, "format_version")?;
    if version != FORMAT_VERSION {
        return Err(ctx.invalid(format!(
            "sweep format version {version} is not supported (this yawdyn reads {FORMAT_VERSION})"
        )).into());
    }
    let spec_group = ctx.open_group(&file, "spec")?;
    let keys = ctx.read_strs(&spec_group, "vary_keys")?;
    let start = ctx.read_f64s(&spec_group, "vary_start")?;
    let stop = ctx.read_f64s(&spec_group, "vary_stop")?;
    let count = ctx.read_1d::<i64>(&spec_group, "vary_count")?;
    if [start.len(), stop.len(), count.len()] != [keys.len(); 3] {
        return Err(ctx
            .invalid("the /spec/vary_* datasets differ in length")
            .into());
    }
    let mut axes = Vec::new();
    for i in 0..keys.len() {
        let count = usize::try_from(count[i])
            .ok()
            .filter(|&c| c >= 1)
            .ok_or_else(|| ctx.invalid("a /spec/vary_count is below 1"))?;
        axes.push(VaryAxis {
            key: keys[i].clone(),
            start: start[i],
            stop: stop[i],
            count,
        });
    }
    let grid = Grid::new(axes).map_err(|e| ctx.invalid(format!("/spec: {e}")))?;
    let channels = ctx.read_strs(&spec_group, "channels")?;
    let base = ctx.read_strs(&spec_group, "base_overrides")?;
    let base_overrides = base
        .iter()
        .map(|text| {
            crate::params::Override::parse(text)
                .map_err(|e| ctx.invalid(format!("/spec/base_overrides: {e}")))
        })
        .collect::<Result<Vec<_>, _>>()?;
    let spec = SweepSpec {
        script_path: ctx.read_attr_str(&file, "script_path")?,
        script_text: ctx.read_str(&spec_group, "script_text")?,
        vehicle_path: ctx.read_attr_str(&file, "vehicle_path")?,
        base_overrides,
        grid,
        channels: if ctx.read_attr_i64(&spec_group, "channels_selected")? != 0 {
            Some(channels)
        } else {
            None
        },
    };
    let as_usize = |v: i64, what: &str| {
        usize::try_from(v).map_err(|_| ctx.invalid(format!("attribute {what} is negative")))
    };
    let shard = Shard {
        index: as_usize(ctx.read_attr_i64(&file, "shard_index")?, "shard_index")?,
        count: as_usize(ctx.read_attr_i64(&file, "shard_count")?, "shard_count")?,
    };
    if shard.index == 0 || shard.index > shard.count {
        return Err(ctx.invalid(format!("impossible shard {shard}")).into());
    }
    let case_total = as_usize(ctx.read_attr_i64(&file, "case_total")?, "case_total")?;
    if case_total != spec.grid.len() {
        return Err(ctx
            .invalid("case_total does not match the vary spec")
            .into());
    }
    let summary = read_summary(&ctx, &file, &spec.grid)?;
    Ok(SweepFile {
        path: path.to_path_buf(),
        created_utc: ctx.read_attr_str(&file, "created_utc")?,
        yawdyn_version: ctx.read_attr_str(&file, "yawdyn_version")?,
        spec,
        shard,
        case_total,
        summary,
    })
}

/// Name of the group of case `index` in a sweep of `total` cases: the index
/// zero-padded to the width of the largest index (`total − 1`).
pub fn case_name(index: usize, total: usize) -> String {
    let width = total.saturating_sub(1).max(1).to_string().len();
    format!("{index:0width$}")
}

/// Streams cases into a new sweep file under a temporary name; [`SweepWriter::finish`]
/// writes the summary and renames the file into place.
pub(crate) struct SweepWriter {
    ctx: H5Context,
    temp: PathBuf,
    file: Option<File>,
    cases: Option<Group>,
    keys: Vec<String>,
    total: usize,
    summary: Summary,
}

/// Root attributes that are not part of the spec.
pub(crate) struct Stamp<'a> {
    pub created_utc: &'a str,
    pub yawdyn_version: &'a str,
    pub shard: Shard,
}

impl SweepWriter {
    /// Creates the temporary file beside `path` and writes the root attributes and `/spec`.
    pub(crate) fn create(
        path: &Path,
        spec: &SweepSpec,
        stamp: &Stamp<'_>,
    ) -> Result<SweepWriter, SweepError> {
        let ctx = H5Context::new(path, TrackTimes::Off);
        let dir = match path.parent() {
            Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
            _ => PathBuf::from("."),
        };
        std::fs::create_dir_all(&dir).map_err(|source| SweepError::Io {
            path: dir.clone(),
            action: "creating the output directory".to_string(),
            source,
        })?;
        let name = path
            .file_name()
            .ok_or_else(|| ctx.invalid("the output path names no file"))?;
        let temp = dir.join(format!(
            ".{}.tmp-{}",
            name.to_string_lossy(),
            std::process::id()
        ));
        let file = ctx.create_file(&temp)?;
        let total = spec.grid.len();
        let range = stamp.shard.range(total);
        let root: &Group = &file;
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
        let key_refs: Vec<&str> = keys.iter().map(String::as_str).collect();
        ctx.attr_strs(root, "varied_keys", &key_refs)?;

        let sg = ctx.group(root, "spec")?;
        ctx.dataset_str(&sg, "script_text", &spec.script_text)?;
        let base: Vec<String> = spec.base_overrides.iter().map(|o| o.to_text()).collect();
        ctx.dataset_strs(&sg, "base_overrides", &str_refs(&base))?;
        ctx.dataset_strs(&sg, "vary_keys", &key_refs)?;
        let axes = &spec.grid.axes;
        ctx.dataset_f64(
            &sg,
            "vary_start",
            &axes.iter().map(|a| a.start).collect::<Vec<_>>(),
        )?;
        ctx.dataset_f64(
            &sg,
            "vary_stop",
            &axes.iter().map(|a| a.stop).collect::<Vec<_>>(),
        )?;
        let counts: Vec<i64> = axes.iter().map(|a| a.count as i64).collect();
        ctx.dataset_1d(&sg, "vary_count", &counts)?;
        let channels = spec.channels.clone().unwrap_or_default();
        ctx.dataset_strs(&sg, "channels", &str_refs(&channels))?;
        ctx.attr_i64(&sg, "channels_selected", i64::from(spec.channels.is_some()))?;
        let cases = ctx.group(root, "cases")?;
        Ok(SweepWriter {
            ctx,
            temp,
            file: Some(file),
            cases: Some(cases),
            keys,
            total,
            summary: Summary::default(),
        })
    }

    /// Appends one case (callers pass cases in increasing index order).
    pub(crate) fn write_case(&mut self, case: &SweepCase) -> Result<(), SweepError> {
        let ctx = &self.ctx;
        let Some(cases) = &self.cases else {
            return Err(ctx.invalid("writer already finished").into());
        };
        let g = ctx.group(cases, &case_name(case.index, self.total))?;
        ctx.attr_i64(&g, "case_index", case.index as i64)?;
        ctx.attr_str(&g, "status", case.status.name())?;
        ctx.attr_str(&g, "message", &case.message)?;
        ctx.attr_f64(&g, "failure_time_s", case.failure_time_s)?;
        ctx.dataset_f64(&g, "parameters", &case.parameters)?;
        ctx.dataset_strs(&g, "overrides", &str_refs(&case.overrides))?;
        let samples = Samples {
            time: &case.time,
            channels: &case.channels,
            metrics: &case.metrics,
            criteria: &case.criteria,
        };
        ctx.write_samples(&g, &samples, Descriptions::ChannelsOnly)?;
        self.summary.push(&self.keys, case);
        Ok(())
    }

    /// Writes `/summary`, closes the file and renames it to its final name.
    /// Returns the summary written.
    pub(crate) fn finish(mut self) -> Result<Summary, SweepError> {
        let result = self.finish_inner();
        if result.is_err() {
            let _ = std::fs::remove_file(&self.temp);
        }
        result
    }

    fn finish_inner(&mut self) -> Result<Summary, SweepError> {
        let ctx = &self.ctx;
        let file = self
            .file
            .take()
            .ok_or_else(|| ctx.invalid("writer already finished"))?;
        self.cases = None;
        if self.summary.parameters.is_empty() {
            self.summary.parameters = self.keys.iter().map(|k| (k.clone(), Vec::new())).collect();
        }
        let s = &self.summary;
        let g = ctx.group(&file, "summary")?;
        let index: Vec<i64> = s.case_index.iter().map(|&i| i as i64).collect();
        ctx.dataset_1d(&g, "case_index", &index)?;
        let status: Vec<&str> = s.status.iter().map(|st| st.name()).collect();
        ctx.dataset_strs(&g, "status", &status)?;
        ctx.dataset_strs(&g, "message", &str_refs(&s.message))?;
        ctx.dataset_strs(&g, "parameter_order", &str_refs(&self.keys))?;
        let pg = ctx.group(&g, "parameters")?;
        for (key, values) in &s.parameters {
            ctx.dataset_f64(&pg, key, values)?;
        }
        let names: Vec<&str> = s.metrics.iter().map(|m| m.name.as_str()).collect();
        ctx.dataset_strs(&g, "metric_order", &names)?;
        let mg = ctx.group(&g, "metrics")?;
        for metric in &s.metrics {
            let ds = ctx.dataset_f64(&mg, &metric.name, &metric.values)?;
            ctx.attr_str(&ds, "units", &metric.unit)?;
        }
        drop(g);
        drop(pg);
        drop(mg);
        file.close().map_err(ctx.h5("closing the HDF5 file"))?;
        std::fs::rename(&self.temp, &ctx.path).map_err(|source| SweepError::Io {
            path: ctx.path.clone(),
            action: format!("renaming {} to the final name", self.temp.display()),
            source,
        })?;
        Ok(std::mem::take(&mut self.summary))
    }
}

impl Drop for SweepWriter {
    fn drop(&mut self) {
        // An unfinished writer (error part-way) leaves no temporary file behind.
        if self.file.take().is_some() {
            self.cases = None;
            let _ = std::fs::remove_file(&self.temp);
        }
    }
}

impl From<H5Error> for SweepError {
    fn from(e: H5Error) -> SweepError {
        match e {
            H5Error::Hdf5 {
                path,
                action,
                source,
            } => SweepError::Hdf5 {
                path,
                action,
                source,
            },
            H5Error::Invalid { path, reason } => SweepError::Format { path, reason },
        }
    }
}

/// The case status named `text` in the file.
fn status(ctx: &H5Context, text: &str) -> Result<CaseStatus, SweepError> {
    CaseStatus::from_name(text)
        .ok_or_else(|| ctx.invalid(format!("unknown status {text:?}")).into())
}

/// Reads `/summary`, checking its case indices against `grid`.
fn read_summary(ctx: &H5Context, file: &File, grid: &Grid) -> Result<Summary, SweepError> {
    let g = ctx.open_group(file, "summary")?;
    let index = ctx.read_1d::<i64>(&g, "case_index")?;
    let n = index.len();
    let case_index = index
        .iter()
        .map(|&i| {
            usize::try_from(i)
                .ok()
                .filter(|&i| i < grid.len())
                .ok_or_else(|| ctx.invalid(format!("case index {i} out of range")))
        })
        .collect::<Result<Vec<_>, _>>()?;
    let status = ctx
        .read_strs(&g, "status")?
        .iter()
        .map(|s| status(ctx, s))
        .collect::<Result<Vec<_>, _>>()?;
    let message = ctx.read_strs(&g, "message")?;
    let pg = ctx.open_group(&g, "parameters")?;
    let mut parameters = Vec::new();
    for key in grid.keys() {
        let values = ctx.read_f64s(&pg, &key)?;
        parameters.push((key, values));
    }
    let mg = ctx.open_group(&g, "metrics")?;
    let mut metrics = Vec::new();
    for name in ctx.read_strs(&g, "metric_order")? {
        let ds = ctx.open_dataset(&mg, &name)?;
        let values = ctx.read_1d_from(&ds)?;
        metrics.push(SummaryMetric {
            unit: ctx.read_attr_str(&ds, "units")?,
            values,
            name,
        });
    }
    let lengths_ok = status.len() == n
        && message.len() == n
        && parameters.iter().all(|(_, v)| v.len() == n)
        && metrics.iter().all(|m| m.values.len() == n);
    if !lengths_ok {
        return Err(ctx.invalid("the /summary datasets differ in length").into());
    }
    Ok(Summary {
        case_index,
        parameters,
        metrics,
        status,
        message,
    })
}

/// Reads one case group `/cases/<n>`.
fn read_case(ctx: &H5Context, g: &Group) -> Result<SweepCase, SweepError> {
    let index = usize::try_from(ctx.read_attr_i64(g, "case_index")?)
        .map_err(|_| ctx.invalid(format!("negative case_index in {}", g.name())))?;
    let samples = ctx.read_samples(g)?;
    Ok(SweepCase {
        index,
        parameters: ctx.read_f64s(g, "parameters")?,
        overrides: ctx.read_strs(g, "overrides")?,
        status: status(ctx, &ctx.read_attr_str(g, "status")?)?,
        message: ctx.read_attr_str(g, "message")?,
        failure_time_s: ctx.read_attr_f64(g, "failure_time_s")?,
        time: samples.time,
        channels: samples.channels,
        metrics: samples.metrics,
        criteria: samples.criteria,
    })
}

/// Cases read per opening of a shard file in [`for_each_case`].
const READ_BATCH: usize = 64;

/// Reads every case of `file` in summary order, calling `each` for one at a
/// time. The file is reopened every [`READ_BATCH`] cases: HDF5's caches of an
/// open file grow with the objects visited, and closing it keeps the memory
/// of a merge flat.
pub(crate) fn for_each_case(
    file: &SweepFile,
    mut each: impl FnMut(SweepCase) -> Result<(), SweepError>,
) -> Result<(), SweepError> {
    let ctx = H5Context::new(&file.path, TrackTimes::Off);
    for batch in file.summary.case_index.chunks(READ_BATCH) {
        let mut cases = Vec::with_capacity(batch.len());
        {
            let h5 = ctx.open_file()?;
            let group_of_cases = ctx.open_group(&h5, "cases")?;
            for &index in batch {
                let name = case_name(index, file.case_total);
                let group = group_of_cases.group(&name).map_err(|_| {
                    ctx.invalid(format!(
                        "summary lists case {index} but /cases/{name} is missing"
                    ))
                })?;
                let case = read_case(&ctx, &group)?;
                if case.index != index {
                    return Err(ctx
                        .invalid(format!("/cases/{name} holds case {}", case.index))
                        .into());
                }
                cases.push(case);
            }
        }
        for case in cases {
            each(case)?;
        }
    }
    Ok(())
}
