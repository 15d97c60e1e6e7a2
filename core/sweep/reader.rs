//! Reading sweep files (layout: see the documentation of [`crate::sweep`]).
//!
//! [`read_sweep`] reads the spec and the whole summary table and checks that
//! the columns fit together; the samples are read on demand, a case
//! ([`SweepFile::read_case`]) or a block of rows at a time
//! ([`for_each_case`], one read per dataset per block).

use std::ops::Range;
use std::path::{Path, PathBuf};

use hdf5::{File, Group};

use crate::params::Override;
use crate::results::h5::{H5Context, H5Error};
use crate::results::{Channel, Metric, ResultsError};

use super::case::{Summary, SummaryCriterion, SummaryMetric, SweepCase};
use super::grid::{Grid, Shard, VaryAxis};
use super::layout::*;
use super::writer::ChannelInfo;
use super::{CaseStatus, FORMAT_NAME, FORMAT_VERSION, SweepError, SweepSpec};

/// An opened sweep file: its spec, shard and summary; the samples of a case
/// are read on demand with [`SweepFile::read_case`].
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
    /// The stored channels, in order.
    channels: Vec<ChannelInfo>,
    /// First sample of each row.
    sample_start: Vec<usize>,
    /// Samples of each row.
    sample_count: Vec<usize>,
}

/// Whether a case read back lists every metric of the file (for users) or
/// exactly the metrics that rebuild the file's columns in a merge.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum MetricList {
    /// Every metric of the file, NaN where the case reported none.
    All,
    /// Those with a value, and those first reported by this case: fed to the
    /// writer in file order they give the same columns, created in the same
    /// block, as the cases that were written.
    Replay,
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

    /// Names of the stored channels, in order.
    pub fn channel_names(&self) -> Vec<&str> {
        self.channels.iter().map(|c| c.name.as_str()).collect()
    }

    /// Units of the stored channels, in the order of [`SweepFile::channel_names`].
    pub fn channel_units(&self) -> Vec<&str> {
        self.channels.iter().map(|c| c.unit.as_str()).collect()
    }

    /// Reads case `index` (global index) with all its stored channels.
    pub fn read_case(&self, index: usize) -> Result<SweepCase, SweepError> {
        let row = self
            .summary
            .row_of(index)
            .ok_or_else(|| SweepError::Format {
                path: self.path.clone(),
                reason: format!("no case {index} in this file"),
            })?;
        let ctx = H5Context::reader(&self.path);
        let file = ctx.open_file()?;
        let mut cases = self.read_rows(&ctx, &file, row..row + 1, MetricList::All)?;
        Ok(cases.remove(0))
    }

    /// Reads the cases of summary rows `rows`, with one read per sample
    /// dataset for all of them.
    fn read_rows(
        &self,
        ctx: &H5Context,
        file: &File,
        rows: Range<usize>,
        metrics: MetricList,
    ) -> Result<Vec<SweepCase>, SweepError> {
        let first = self.sample_start[rows.start];
        let last = rows.end - 1;
        let samples = first..self.sample_start[last] + self.sample_count[last];
        let time: Vec<f64> = ctx.read_range(&ctx.open_dataset(file, TIME)?, samples.clone())?;
        let group = ctx.open_group(file, CHANNELS)?;
        let mut data = Vec::with_capacity(self.channels.len());
        for info in &self.channels {
            let ds = ctx.open_dataset(&group, &info.name)?;
            data.push(ctx.read_range::<f64>(&ds, samples.clone())?);
        }
        let cases = rows
            .map(|row| {
                let span = self.sample_start[row] - first
                    ..self.sample_start[row] - first + self.sample_count[row];
                self.case_at(row, &time[span.clone()], &data, span, metrics)
            })
            .collect();
        Ok(cases)
    }

    /// The case of summary row `row`, its samples at `span` of `data`.
    fn case_at(
        &self,
        row: usize,
        time: &[f64],
        data: &[Vec<f64>],
        span: Range<usize>,
        metric_list: MetricList,
    ) -> SweepCase {
        let s = &self.summary;
        let index = s.case_index[row];
        let mut overrides: Vec<String> = self
            .spec
            .base_overrides
            .iter()
            .map(Override::to_text)
            .collect();
        overrides.extend(
            self.spec
                .grid
                .overrides(index)
                .iter()
                .map(Override::to_text),
        );
        let status = s.status[row];
        let channels = if status == CaseStatus::Error {
            Vec::new()
        } else {
            self.channels
                .iter()
                .zip(data)
                .map(|(info, values)| Channel {
                    name: info.name.clone(),
                    unit: info.unit.clone(),
                    description: info.description.clone(),
                    data: values[span.clone()].to_vec(),
                })
                .collect()
        };
        let metrics = s
            .metrics
            .iter()
            .filter(|m| {
                metric_list == MetricList::All || !m.values[row].is_nan() || m.first_case == index
            })
            .map(|m| Metric {
                name: m.name.clone(),
                value: m.values[row],
                unit: m.unit.clone(),
            })
            .collect();
        SweepCase {
            index,
            parameters: s.parameters.iter().map(|(_, v)| v[row]).collect(),
            overrides,
            status,
            message: s.message[row].clone(),
            failure_time_s: s.failure_time_s[row],
            time: time.to_vec(),
            channels,
            metrics,
            criteria: s.criteria.iter().filter_map(|c| c.at(row)).collect(),
        }
    }
}

/// Reads a sweep file's spec and summary, checking that its columns fit
/// together. A file of another layout version gives
/// [`SweepError::UnsupportedVersion`]; the unfinished file of a sweep that
/// was stopped is refused (it is read by `sweep --resume`).
pub fn read_sweep(path: &Path) -> Result<SweepFile, SweepError> {
    let (file, point) = read_file(path, Part::Complete)?;
    match point {
        None => Ok(file),
        Some(point) => Err(SweepError::Format {
            path: path.to_path_buf(),
            reason: format!(
                "an unfinished sweep file ({} of its {} cases written): take it up with \
                 `yawdyn sweep --resume`",
                point.rows,
                file.shard.range(file.case_total).len()
            ),
        }),
    }
}

/// Reads the unfinished file of a stopped sweep: the cases up to its
/// [`ResumePoint`] (rows beyond it, written in part when the sweep was
/// stopped, are not read), with every check of [`read_sweep`]. `None` when
/// the file records no finished block.
pub(crate) fn read_unfinished(path: &Path) -> Result<Option<(SweepFile, ResumePoint)>, SweepError> {
    let (file, point) = read_file(path, Part::Unfinished)?;
    Ok(point.map(|point| (file, point)))
}

/// Which part of a file to read.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Part {
    /// Every row: a complete file.
    Complete,
    /// The rows of its resume point: an unfinished file.
    Unfinished,
}

/// Reads a sweep file (all of it, or the part up to its resume point) and
/// its resume point, if it has one.
fn read_file(path: &Path, part: Part) -> Result<(SweepFile, Option<ResumePoint>), SweepError> {
    let ctx = H5Context::reader(path);
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
        return Err(SweepError::UnsupportedVersion {
            path: path.to_path_buf(),
            found: version,
            supported: FORMAT_VERSION,
            writer: ctx
                .read_attr_str(&file, "yawdyn_version")
                .unwrap_or_else(|_| "unknown".to_string()),
        });
    }
    let spec = read_spec(&ctx, &file)?;
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
    let point = match ctx.read_attr_i64s(&file, UNFINISHED)? {
        Some(values) => Some(
            ResumePoint::from_values(&values)
                .ok_or_else(|| ctx.invalid(format!("attribute {UNFINISHED} is damaged")))?,
        ),
        None => None,
    };
    let limit = match part {
        Part::Unfinished => point,
        Part::Complete => None,
    };
    let (summary, sample_start, sample_count) = read_summary(&ctx, &file, &spec.grid, limit)?;
    let channels = read_channels(&ctx, &file, &sample_start, &sample_count, limit)?;
    let sweep = SweepFile {
        path: path.to_path_buf(),
        created_utc: ctx.read_attr_str(&file, "created_utc")?,
        yawdyn_version: ctx.read_attr_str(&file, "yawdyn_version")?,
        spec,
        shard,
        case_total,
        summary,
        channels,
        sample_start,
        sample_count,
    };
    Ok((sweep, point))
}

/// Reads `/spec` and the root attributes that belong to it.
fn read_spec(ctx: &H5Context, file: &File) -> Result<SweepSpec, SweepError> {
    let spec_group = ctx.open_group(file, SPEC)?;
    let keys = ctx.read_strs(&spec_group, "vary_keys")?;
    let start = ctx.read_f64s(&spec_group, "vary_start")?;
    let stop = ctx.read_f64s(&spec_group, "vary_stop")?;
    let count = ctx.read_1d::<i64>(&spec_group, "vary_count")?;
    if [start.len(), stop.len(), count.len()] != [keys.len(); 3] {
        return Err(ctx
            .invalid("the /spec/vary_* datasets differ in length")
            .into());
    }
    // Units and the vehicle text were added within layout 2: empty when absent.
    let units = if spec_group.link_exists("vary_units") {
        ctx.read_strs(&spec_group, "vary_units")?
    } else {
        vec![String::new(); keys.len()]
    };
    if units.len() != keys.len() {
        return Err(ctx
            .invalid("/spec/vary_units differs in length from /spec/vary_keys")
            .into());
    }
    let vehicle_toml = if spec_group.link_exists("vehicle_toml") {
        ctx.read_str(&spec_group, "vehicle_toml")?
    } else {
        String::new()
    };
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
            unit: units[i].clone(),
        });
    }
    let grid = Grid::new(axes).map_err(|e| ctx.invalid(format!("/spec: {e}")))?;
    let channels = ctx.read_strs(&spec_group, "channels")?;
    let base = ctx.read_strs(&spec_group, "base_overrides")?;
    let base_overrides = base
        .iter()
        .map(|text| {
            Override::parse(text).map_err(|e| ctx.invalid(format!("/spec/base_overrides: {e}")))
        })
        .collect::<Result<Vec<_>, _>>()?;
    Ok(SweepSpec {
        script_path: ctx.read_attr_str(file, "script_path")?,
        script_text: ctx.read_str(&spec_group, "script_text")?,
        vehicle_path: ctx.read_attr_str(file, "vehicle_path")?,
        vehicle_toml,
        base_overrides,
        grid,
        channels: if ctx.read_attr_i64(&spec_group, "channels_selected")? != 0 {
            Some(channels)
        } else {
            None
        },
    })
}

/// The summary table, with the sample start and count of each row.
type SummaryRead = (Summary, Vec<usize>, Vec<usize>);

/// Reads a column (all of it, or its first `rows` elements).
fn read_column<T: hdf5::H5Type>(
    ctx: &H5Context,
    group: &Group,
    name: &str,
    rows: Option<usize>,
) -> Result<Vec<T>, H5Error> {
    let ds = ctx.open_dataset(group, name)?;
    match rows {
        Some(rows) => ctx.read_range(&ds, 0..rows),
        None => ctx.read_1d_from(&ds),
    }
}

/// Reads a text column (all of it, or its first `rows` elements).
fn read_texts(
    ctx: &H5Context,
    group: &Group,
    name: &str,
    rows: Option<usize>,
) -> Result<Vec<String>, H5Error> {
    let ds = ctx.open_dataset(group, name)?;
    match rows {
        Some(rows) => ctx.read_strs_head(&ds, rows),
        None => ctx.read_strs_from(&ds),
    }
}

/// Reads `/summary` (all rows, or those up to `limit`), checking its case
/// indices against `grid`, the lengths of its columns and that the rows'
/// samples follow one another.
fn read_summary(
    ctx: &H5Context,
    file: &File,
    grid: &Grid,
    limit: Option<ResumePoint>,
) -> Result<SummaryRead, SweepError> {
    let g = ctx.open_group(file, SUMMARY)?;
    let rows = limit.map(|p| p.rows);
    let index = read_column::<i64>(ctx, &g, CASE_INDEX, rows)?;
    let n = index.len();
    let mut case_index = Vec::with_capacity(n);
    for (row, &i) in index.iter().enumerate() {
        let i = usize::try_from(i)
            .ok()
            .filter(|&i| i < grid.len() && case_index.last().is_none_or(|&p| p < i))
            .ok_or_else(|| ctx.invalid(format!("row {row}: case index {i} out of order")))?;
        case_index.push(i);
    }
    let status = read_texts(ctx, &g, STATUS, rows)?
        .iter()
        .map(|text| {
            CaseStatus::from_name(text)
                .ok_or_else(|| ctx.invalid(format!("unknown status {text:?}")))
        })
        .collect::<Result<Vec<_>, _>>()?;
    let counts = |name| -> Result<Vec<usize>, H5Error> {
        read_column::<i64>(ctx, &g, name, rows)?
            .into_iter()
            .map(|v| usize::try_from(v).map_err(|_| ctx.invalid(format!("negative {name}"))))
            .collect()
    };
    let sample_start = counts(SAMPLE_START)?;
    let sample_count = counts(SAMPLE_COUNT)?;
    let pg = ctx.open_group(&g, PARAMETERS)?;
    let mut parameters = Vec::new();
    for key in grid.keys() {
        let values = read_column(ctx, &pg, &key, rows)?;
        parameters.push((key, values));
    }
    let summary = Summary {
        case_index,
        parameters,
        metrics: read_metrics(ctx, &g, limit)?,
        criteria: read_criteria(ctx, &g, limit)?,
        status,
        message: read_texts(ctx, &g, MESSAGE, rows)?,
        failure_time_s: read_column(ctx, &g, FAILURE_TIME, rows)?,
    };
    let s = &summary;
    let lengths_ok = [
        s.status.len(),
        s.message.len(),
        s.failure_time_s.len(),
        sample_start.len(),
        sample_count.len(),
    ] == [n; 5]
        && s.parameters.iter().all(|(_, v)| v.len() == n)
        && s.metrics.iter().all(|m| m.values.len() == n)
        && s.criteria
            .iter()
            .all(|c| [c.value.len(), c.lower.len(), c.upper.len(), c.passed.len()] == [n; 4]);
    if !lengths_ok {
        return Err(ctx.invalid("the /summary columns differ in length").into());
    }
    let mut next = 0;
    for row in 0..n {
        let error_with_samples = s.status[row] == CaseStatus::Error && sample_count[row] != 0;
        if sample_start[row] != next || error_with_samples {
            return Err(ctx
                .invalid(format!(
                    "row {row}: sample_start/sample_count do not follow on"
                ))
                .into());
        }
        next += sample_count[row];
    }
    Ok((summary, sample_start, sample_count))
}

/// Reads the metric columns in `metric_order` (those of the rows up to
/// `limit`).
fn read_metrics(
    ctx: &H5Context,
    summary: &Group,
    limit: Option<ResumePoint>,
) -> Result<Vec<SummaryMetric>, SweepError> {
    let group = ctx.open_group(summary, METRICS)?;
    let mut metrics = Vec::new();
    let names = read_texts(ctx, summary, METRIC_ORDER, limit.map(|p| p.metrics))?;
    for name in names {
        let ds = ctx.open_dataset(&group, &name)?;
        let first_case = usize::try_from(ctx.read_attr_i64(&ds, FIRST_CASE)?)
            .map_err(|_| ctx.invalid(format!("negative {FIRST_CASE} of metric {name}")))?;
        metrics.push(SummaryMetric {
            unit: ctx.read_attr_str(&ds, "units")?,
            values: match limit {
                Some(p) => ctx.read_range(&ds, 0..p.rows)?,
                None => ctx.read_1d_from(&ds)?,
            },
            first_case,
            name,
        });
    }
    Ok(metrics)
}

/// Reads the criterion groups in `criterion_order` (those of the rows up
/// to `limit`).
fn read_criteria(
    ctx: &H5Context,
    summary: &Group,
    limit: Option<ResumePoint>,
) -> Result<Vec<SummaryCriterion>, SweepError> {
    let group = ctx.open_group(summary, CRITERIA)?;
    let mut criteria = Vec::new();
    let rows = limit.map(|p| p.rows);
    let names = read_texts(ctx, summary, CRITERION_ORDER, limit.map(|p| p.criteria))?;
    for name in names {
        let g = ctx.open_group(&group, &name)?;
        let passed: Vec<i8> = read_column(ctx, &g, CRITERION_PASSED, rows)?;
        if passed.iter().any(|p| !(-1..=1).contains(p)) {
            return Err(ctx
                .invalid(format!("criterion {name}: `passed` is not 1, 0 or -1"))
                .into());
        }
        criteria.push(SummaryCriterion {
            value: read_column(ctx, &g, CRITERION_VALUE, rows)?,
            lower: read_column(ctx, &g, CRITERION_LOWER, rows)?,
            upper: read_column(ctx, &g, CRITERION_UPPER, rows)?,
            passed,
            name,
        });
    }
    Ok(criteria)
}

/// Reads the channel list and checks that `/time` and every channel hold
/// the samples the summary rows point to (in an unfinished file, read up to
/// `limit`, at least those, as the resume point says).
fn read_channels(
    ctx: &H5Context,
    file: &File,
    sample_start: &[usize],
    sample_count: &[usize],
    limit: Option<ResumePoint>,
) -> Result<Vec<ChannelInfo>, SweepError> {
    let total = match (sample_start.last(), sample_count.last()) {
        (Some(s), Some(c)) => s + c,
        _ => 0,
    };
    if let Some(point) = limit {
        if point.samples != total {
            return Err(ctx
                .invalid(format!(
                    "the rows of the unfinished part point to {total} samples, its resume \
                     point to {}",
                    point.samples
                ))
                .into());
        }
        // No case of the finished part ran: the sample datasets may not exist yet.
        if total == 0 && !file.link_exists(TIME) {
            return Ok(Vec::new());
        }
    }
    let holds = |size: usize| match limit {
        Some(_) => size >= total,
        None => size == total,
    };
    let time = ctx.open_dataset(file, TIME)?;
    let group = ctx.open_group(file, CHANNELS)?;
    let mut list = Vec::new();
    for name in ctx.read_strs(file, CHANNEL_ORDER)? {
        let ds = ctx.open_dataset(&group, &name)?;
        let same_length = match limit {
            Some(_) => holds(ds.size()),
            None => ds.size() == time.size(),
        };
        if !same_length {
            return Err(ctx
                .invalid(format!("channel {name} is not as long as /time"))
                .into());
        }
        list.push(ChannelInfo {
            unit: ctx.read_attr_str(&ds, "units")?,
            description: ctx.read_attr_str(&ds, "description")?,
            name,
        });
    }
    if time.ndim() != 1 || !holds(time.size()) {
        return Err(ctx
            .invalid(format!(
                "/time has {} samples but the summary rows point to {total}",
                time.size()
            ))
            .into());
    }
    Ok(list)
}

/// Cases read per block in [`for_each_case`] (at most; fewer when their
/// samples pass [`BLOCK_VALUES`]).
const READ_BLOCK: usize = BLOCK_CASES;

/// Reads every case of `file` in summary order, in blocks of rows (one read
/// per dataset per block), calling `each` for one case at a time. Metrics
/// are listed as [`MetricList::Replay`], for the writer of a merge.
pub(crate) fn for_each_case(
    file: &SweepFile,
    mut each: impl FnMut(SweepCase) -> Result<(), SweepError>,
) -> Result<(), SweepError> {
    let ctx = H5Context::reader(&file.path);
    let h5 = ctx.open_file()?;
    let per_sample = 1 + file.channels.len();
    let mut row = 0;
    while row < file.case_count() {
        let mut end = row + 1;
        let mut values = file.sample_count[row] * per_sample;
        while end < file.case_count() && end - row < READ_BLOCK {
            values += file.sample_count[end] * per_sample;
            if values > BLOCK_VALUES {
                break;
            }
            end += 1;
        }
        for case in file.read_rows(&ctx, &h5, row..end, MetricList::Replay)? {
            each(case)?;
        }
        row = end;
    }
    Ok(())
}

impl From<H5Error> for SweepError {
    fn from(e: H5Error) -> SweepError {
        match e {
            H5Error::Hdf5 {
                path,
                action,
                access,
                source,
            } => SweepError::Hdf5 {
                path,
                action,
                access,
                source,
            },
            H5Error::Invalid { path, reason } => SweepError::Format { path, reason },
        }
    }
}

impl From<ResultsError> for SweepError {
    fn from(e: ResultsError) -> SweepError {
        match e {
            ResultsError::Io {
                path,
                action,
                source,
            } => SweepError::Io {
                path,
                action,
                source,
            },
            ResultsError::Hdf5 {
                path,
                action,
                access,
                source,
            } => SweepError::Hdf5 {
                path,
                action,
                access,
                source,
            },
            ResultsError::Invalid { path, reason } => SweepError::Format { path, reason },
            ResultsError::Output(e) => SweepError::Output(e),
            other @ (ResultsError::NotResultsFile { .. }
            | ResultsError::UnsupportedVersion { .. }) => SweepError::Format {
                path: PathBuf::new(),
                reason: other.to_string(),
            },
        }
    }
}
