//! Reading sweep files (layout: see the documentation of [`crate::sweep`]).
//!
//! [`read_sweep`] reads the spec and the whole summary table and checks that
//! the columns fit together; the samples are read on demand, a case
//! ([`SweepFile::read_case`]) or a block of rows at a time
//! ([`for_each_case`], one read per dataset per block).

use std::ops::Range;
use std::path::{Path, PathBuf};

use hdf5::File;

use crate::params::Override;
use crate::results::h5::{H5Context, H5Error};
use crate::results::{Channel, Metric, ResultsError};

use super::case::{Summary, SweepCase};
use super::grid::Shard;
use super::layout::*;
use super::sections::*;
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
