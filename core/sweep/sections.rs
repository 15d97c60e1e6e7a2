//! Reading the sections of a sweep file for [`super::reader`]: the spec, the
//! summary table with its metrics and criteria, and the channel list.

use hdf5::{File, Group};

use crate::params::Override;
use crate::results::h5::{H5Context, H5Error};

use super::case::{Summary, SummaryCriterion, SummaryMetric};
use super::grid::{Grid, VaryAxis};
use super::layout::*;
use super::writer::ChannelInfo;
use super::{CaseStatus, SweepError, SweepSpec};

/// Reads `/spec` and the root attributes that belong to it.
pub(super) fn read_spec(ctx: &H5Context, file: &File) -> Result<SweepSpec, SweepError> {
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
pub(super) fn read_column<T: hdf5::H5Type>(
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
pub(super) fn read_texts(
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
pub(super) fn read_summary(
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
pub(super) fn read_metrics(
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
pub(super) fn read_criteria(
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
pub(super) fn read_channels(
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
