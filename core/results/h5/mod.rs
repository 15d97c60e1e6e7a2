//! Writing and reading the HDF5 results file (layout: see the module
//! documentation of [`crate::results`]); `context` is the one HDF5 layer of
//! the crate ([`H5Context`]), which sweep files use too.

mod context;
mod header;
pub(crate) mod heap;
mod read;

use std::path::Path;

use hdf5::types::VarLenUnicode;
use hdf5::{File, Group};

pub(crate) use context::{H5Context, H5Error, TrackTimes, check_before_read, utf8_text};
pub(crate) use header::StoredText;

use super::{
    Channel, Criterion, FORMAT_NAME, FORMAT_VERSION, Metric, Provenance, ResultsError, RunRecord,
    RunStatus,
};
use crate::output::write_atomically;

/// Write `record` to `path` as a yawdyn HDF5 results file.
///
/// The file is written under a temporary name in the same directory and
/// renamed over `path` only when complete; parent directories are created.
/// An existing file at `path` is replaced.
///
/// ```no_run
/// # fn demo(record: &yawdyn::results::RunRecord) -> Result<(), yawdyn::results::ResultsError> {
/// yawdyn::results::write_hdf5(record, std::path::Path::new("out/step_steer.h5"))?;
/// # Ok(()) }
/// ```
pub fn write_hdf5(record: &RunRecord, path: &Path) -> Result<(), ResultsError> {
    record.validate().map_err(|reason| ResultsError::Invalid {
        path: path.to_path_buf(),
        reason,
    })?;
    write_atomically(path, |temp| {
        let ctx = H5Context::writer(path, TrackTimes::On);
        let file = ctx.create_file(temp)?;
        write_all(&ctx, &file, record)?;
        file.close().map_err(ctx.h5("closing the HDF5 file"))?;
        Ok(())
    })
}

/// Read a yawdyn HDF5 results file back into a [`RunRecord`].
///
/// Fails with [`ResultsError::NotResultsFile`] when the file is HDF5 but its
/// root `format` attribute is not `yawdyn-results`, and with another
/// [`ResultsError`] (never a panic) when the file is missing, not HDF5, or
/// inconsistent.
pub fn read_hdf5(path: &Path) -> Result<RunRecord, ResultsError> {
    let ctx = H5Context::reader(path);
    let file = ctx.open_file()?;
    check_format(&ctx, &file)?;
    read_all(&ctx, &file)
}

/// The root `format` attribute of the HDF5 file at `path`, which names the
/// kind of yawdyn file it is (`yawdyn-results`, `yawdyn-sweep`,
/// `yawdyn-stability-map`, ...); `None` for an HDF5 file without one.
/// Errors when the file cannot be opened as HDF5.
pub fn read_format(path: &Path) -> Result<Option<String>, ResultsError> {
    let ctx = H5Context::reader(path);
    let file = ctx.open_file()?;
    Ok(ctx.read_attr_str(&file, "format").ok())
}

// ----- the results file ---------------------------------------------------

fn write_all(ctx: &H5Context, file: &File, record: &RunRecord) -> Result<(), ResultsError> {
    let root: &Group = file;
    let prov = &record.provenance;
    ctx.attr_str(root, "format", FORMAT_NAME)?;
    ctx.attr_i64(root, "format_version", FORMAT_VERSION)?;
    let (status, message, failure_time_s) = match &record.status {
        RunStatus::Completed => ("completed", "", f64::NAN),
        RunStatus::Failed { message, time_s } => ("failed", message.as_str(), *time_s),
    };
    ctx.attr_str(root, "status", status)?;
    ctx.attr_str(root, "status_message", message)?;
    ctx.attr_f64(root, "failure_time_s", failure_time_s)?;
    ctx.attr_str(root, "yawdyn_version", &prov.yawdyn_version)?;
    ctx.attr_str(root, "created_utc", &prov.created_utc)?;
    let samples = Samples {
        time: &record.time,
        channels: &record.channels,
        metrics: &record.metrics,
        criteria: &record.criteria,
    };
    ctx.write_samples(root, &samples)?;
    write_provenance(ctx, root, prov)
}

fn write_provenance(ctx: &H5Context, root: &Group, prov: &Provenance) -> Result<(), ResultsError> {
    let group = ctx.group(root, "provenance")?;
    ctx.attr_str(&group, "script_path", &prov.script_path)?;
    ctx.attr_str(&group, "vehicle_path", &prov.vehicle_path)?;
    ctx.attr_str(&group, "solver", &prov.solver)?;
    ctx.attr_f64(&group, "rtol", prov.rtol)?;
    ctx.attr_f64(&group, "atol", prov.atol)?;
    ctx.attr_f64(&group, "fixed_step_s", prov.fixed_step_s)?;
    ctx.attr_f64(&group, "sample_rate_hz", prov.sample_rate_hz)?;
    ctx.attr_f64(&group, "tick_rate_hz", prov.tick_rate_hz)?;
    ctx.dataset_str(&group, "script_text", &prov.script_text)?;
    ctx.dataset_str(&group, "vehicle_toml", &prov.vehicle_toml)?;
    ctx.dataset_strs(&group, "overrides", &str_refs(&prov.overrides))?;
    let keys: Vec<&str> = prov.extra.iter().map(|(k, _)| k.as_str()).collect();
    let values: Vec<&str> = prov.extra.iter().map(|(_, v)| v.as_str()).collect();
    ctx.dataset_strs(&group, "extra_keys", &keys)?;
    ctx.dataset_strs(&group, "extra_values", &values)?;
    Ok(())
}

fn check_format(ctx: &H5Context, file: &File) -> Result<(), ResultsError> {
    let not_ours = |found: String| ResultsError::NotResultsFile {
        path: ctx.path.clone(),
        found,
    };
    let attr = file
        .attr("format")
        .map_err(|_| not_ours("no `format` attribute on the root group".to_string()))?;
    context::check_before_read::<VarLenUnicode, _>(&attr, &ctx.path)
        .map_err(|why| not_ours(format!("the `format` attribute {why}")))?;
    if attr.ndim() != 0 {
        return Err(not_ours(
            "the `format` attribute is not a single text".to_string(),
        ));
    }
    let format: VarLenUnicode = attr
        .read_scalar()
        .map_err(|_| not_ours("the `format` attribute is not a text scalar".to_string()))?;
    let format = context::utf8_text(&format).map_err(|why| not_ours(format!("format: {why}")))?;
    if format != FORMAT_NAME {
        return Err(not_ours(format!("format is {format:?}")));
    }
    let version = ctx.read_attr_i64(file, "format_version")?;
    if version != FORMAT_VERSION {
        return Err(ResultsError::UnsupportedVersion {
            path: ctx.path.clone(),
            found: version,
            supported: FORMAT_VERSION,
        });
    }
    Ok(())
}

fn read_all(ctx: &H5Context, file: &File) -> Result<RunRecord, ResultsError> {
    let root: &Group = file;
    let status = match ctx.read_attr_str(root, "status")?.as_str() {
        "completed" => RunStatus::Completed,
        "failed" => RunStatus::Failed {
            message: ctx.read_attr_str(root, "status_message")?,
            time_s: ctx.read_attr_f64(root, "failure_time_s")?,
        },
        other => return Err(ctx.invalid(format!("unknown status {other:?}")).into()),
    };
    let samples = ctx.read_samples(root)?;
    let provenance = read_provenance(ctx, root)?;
    Ok(RunRecord {
        time: samples.time,
        channels: samples.channels,
        provenance,
        status,
        metrics: samples.metrics,
        criteria: samples.criteria,
    })
}

fn read_provenance(ctx: &H5Context, root: &Group) -> Result<Provenance, ResultsError> {
    let group = ctx.open_group(root, "provenance")?;
    let keys = ctx.read_strs(&group, "extra_keys")?;
    let values = ctx.read_strs(&group, "extra_values")?;
    if keys.len() != values.len() {
        return Err(ctx
            .invalid("/provenance/extra_keys and extra_values differ in length")
            .into());
    }
    Ok(Provenance {
        yawdyn_version: ctx.read_attr_str(root, "yawdyn_version")?,
        created_utc: ctx.read_attr_str(root, "created_utc")?,
        script_path: ctx.read_attr_str(&group, "script_path")?,
        script_text: ctx.read_str(&group, "script_text")?,
        vehicle_path: ctx.read_attr_str(&group, "vehicle_path")?,
        vehicle_toml: ctx.read_str(&group, "vehicle_toml")?,
        overrides: ctx.read_strs(&group, "overrides")?,
        solver: ctx.read_attr_str(&group, "solver")?,
        rtol: ctx.read_attr_f64(&group, "rtol")?,
        atol: ctx.read_attr_f64(&group, "atol")?,
        fixed_step_s: ctx.read_attr_f64(&group, "fixed_step_s")?,
        sample_rate_hz: ctx.read_attr_f64(&group, "sample_rate_hz")?,
        tick_rate_hz: ctx.read_attr_f64(&group, "tick_rate_hz")?,
        extra: keys.into_iter().zip(values).collect(),
    })
}

/// The items of `items` as `&str`s, for the text-list writers.
pub(crate) fn str_refs(items: &[String]) -> Vec<&str> {
    items.iter().map(String::as_str).collect()
}

// ----- the sample block of a results file ----------------------------------

/// The block written by [`H5Context::write_samples`]: sample times, channels,
/// metrics and criteria of one run (the root of a results file).
pub(crate) struct Samples<'a> {
    /// Sample times, s.
    pub(crate) time: &'a [f64],
    /// Channels, each as long as `time`.
    pub(crate) channels: &'a [Channel],
    /// Metrics, in the order returned by the run.
    pub(crate) metrics: &'a [Metric],
    /// Criteria, in declared order.
    pub(crate) criteria: &'a [Criterion],
}

/// The block read by [`H5Context::read_samples`] (owned form of [`Samples`]).
pub(crate) struct SamplesRead {
    /// Sample times, s.
    pub(crate) time: Vec<f64>,
    /// Channels in `channel_order`, each as long as `time`.
    pub(crate) channels: Vec<Channel>,
    /// Metrics in `metric_order`.
    pub(crate) metrics: Vec<Metric>,
    /// Criteria in stored order.
    pub(crate) criteria: Vec<Criterion>,
}

impl H5Context {
    /// Writes `samples` into `group` (the root of a results file) in the
    /// layout of [`crate::results`].
    pub(crate) fn write_samples(
        &self,
        group: &Group,
        samples: &Samples<'_>,
    ) -> Result<(), H5Error> {
        let time = self.dataset_f64(group, "time", samples.time)?;
        self.attr_str(&time, "units", "s")?;
        self.attr_str(
            &time,
            "description",
            "simulation time of each output sample",
        )?;

        let names: Vec<&str> = samples.channels.iter().map(|c| c.name.as_str()).collect();
        self.dataset_strs(group, "channel_order", &names)?;
        let channels = self.group(group, "channels")?;
        for channel in samples.channels {
            let ds = self.dataset_f64(&channels, &channel.name, &channel.data)?;
            self.attr_str(&ds, "units", &channel.unit)?;
            self.attr_str(&ds, "description", &channel.description)?;
        }

        let names: Vec<&str> = samples.metrics.iter().map(|m| m.name.as_str()).collect();
        self.dataset_strs(group, "metric_order", &names)?;
        let metrics = self.group(group, "metrics")?;
        for metric in samples.metrics {
            let ds = metrics
                .new_dataset::<f64>()
                .shape(())
                .create(metric.name.as_str())
                .and_then(|ds| ds.write_scalar(&metric.value).map(|()| ds))
                .map_err(self.h5(format!(
                    "writing dataset {} in {}",
                    metric.name,
                    metrics.name()
                )))?;
            self.attr_str(&ds, "units", &metric.unit)?;
        }

        let criteria = self.group(group, "criteria")?;
        let list = samples.criteria;
        let names: Vec<&str> = list.iter().map(|c| c.name.as_str()).collect();
        let values: Vec<f64> = list.iter().map(|c| c.value).collect();
        let lower: Vec<f64> = list.iter().map(|c| c.lower.unwrap_or(f64::NAN)).collect();
        let upper: Vec<f64> = list.iter().map(|c| c.upper.unwrap_or(f64::NAN)).collect();
        let passed: Vec<u8> = list.iter().map(|c| u8::from(c.passed)).collect();
        self.dataset_strs(&criteria, "name", &names)?;
        self.dataset_f64(&criteria, "value", &values)?;
        self.dataset_f64(&criteria, "lower", &lower)?;
        self.dataset_f64(&criteria, "upper", &upper)?;
        let ds = self.dataset_1d(&criteria, "passed", &passed)?;
        self.attr_str(&ds, "description", "1 = passed, 0 = failed")
    }

    /// Reads the block written by [`H5Context::write_samples`] from `group`.
    pub(crate) fn read_samples(&self, group: &Group) -> Result<SamplesRead, H5Error> {
        let time_ds = self.open_dataset(group, "time")?;
        let time = self.read_1d_from(&time_ds)?;

        let channels_group = self.open_group(group, "channels")?;
        let mut channels = Vec::new();
        for name in self.read_strs(group, "channel_order")? {
            let ds = self.open_dataset(&channels_group, &name)?;
            let data = self.read_1d_from(&ds)?;
            if data.len() != time.len() {
                return Err(self.invalid(format!(
                    "channel `{name}` has {} samples but {} has {}",
                    data.len(),
                    time_ds.name(),
                    time.len()
                )));
            }
            channels.push(Channel {
                unit: self.read_attr_str(&ds, "units")?,
                description: self.read_attr_str(&ds, "description")?,
                data,
                name,
            });
        }

        let metrics_group = self.open_group(group, "metrics")?;
        let mut metrics = Vec::new();
        for name in self.read_strs(group, "metric_order")? {
            let ds = self.open_dataset(&metrics_group, &name)?;
            self.check_object::<f64, _>(&ds, &ds.name())?;
            if ds.ndim() != 0 {
                return Err(self.invalid(format!("{} is not a single number", ds.name())));
            }
            let value: f64 = ds
                .read_scalar()
                .map_err(self.h5(format!("reading scalar {}", ds.name())))?;
            metrics.push(Metric {
                unit: self.read_attr_str(&ds, "units")?,
                value,
                name,
            });
        }

        let criteria_group = self.open_group(group, "criteria")?;
        let names = self.read_strs(&criteria_group, "name")?;
        let values = self.read_f64s(&criteria_group, "value")?;
        let lower = self.read_f64s(&criteria_group, "lower")?;
        let upper = self.read_f64s(&criteria_group, "upper")?;
        let passed: Vec<u8> = self.read_1d(&criteria_group, "passed")?;
        let n = names.len();
        if [values.len(), lower.len(), upper.len(), passed.len()] != [n; 4] {
            return Err(self.invalid(format!(
                "the datasets in {} differ in length",
                criteria_group.name()
            )));
        }
        let limit = |x: f64| if x.is_nan() { None } else { Some(x) };
        let criteria = (0..n)
            .map(|i| Criterion {
                name: names[i].clone(),
                value: values[i],
                lower: limit(lower[i]),
                upper: limit(upper[i]),
                passed: passed[i] != 0,
            })
            .collect();
        Ok(SamplesRead {
            time,
            channels,
            metrics,
            criteria,
        })
    }
}
