//! Writing and reading the HDF5 results file (layout: see the module
//! documentation of [`crate::results`]).

use std::path::{Path, PathBuf};
use std::str::FromStr;

use hdf5::types::VarLenUnicode;
use hdf5::{Dataset, File, Group, Location};

use super::atomic::write_atomically;
use super::{
    Channel, Criterion, FORMAT_NAME, FORMAT_VERSION, Metric, Provenance, ResultsError, RunRecord,
    RunStatus,
};

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
        let out = Out {
            path: path.to_path_buf(),
        };
        let file = unlocked_file()
            .create(temp)
            .map_err(out.h5("creating the HDF5 file"))?;
        out.write_all(&file, record)?;
        file.close().map_err(out.h5("closing the HDF5 file"))
    })
}

/// Read a yawdyn HDF5 results file back into a [`RunRecord`].
///
/// Fails with [`ResultsError::NotResultsFile`] when the file is HDF5 but its
/// root `format` attribute is not `yawdyn-results`, and with another
/// [`ResultsError`] (never a panic) when the file is missing, not HDF5, or
/// inconsistent.
pub fn read_hdf5(path: &Path) -> Result<RunRecord, ResultsError> {
    let inp = Out {
        path: path.to_path_buf(),
    };
    let file = unlocked_file()
        .open(path)
        .map_err(inp.h5("opening the file as HDF5"))?;
    inp.check_format(&file)?;
    inp.read_all(&file)
}

/// Open or create HDF5 files without HDF5's own `flock` locking.
///
/// The lock guards against a reader opening a file that is being written in
/// place; our files never are (they are written under a private temporary
/// name and renamed into place whole). With the lock on, HDF5 1.10 keeps its
/// file descriptors open across `fork`, so a child process spawned by another
/// thread can inherit the lock and make a later open fail with `EAGAIN`; and
/// locking fails outright on some network file systems (common practice is to
/// disable it there too).
fn unlocked_file() -> hdf5::file::FileBuilder {
    let mut builder = File::with_options();
    builder.with_fapl(|fapl| fapl.file_locking(false));
    builder
}

/// Context for one file: turns HDF5 errors into [`ResultsError`]s naming it.
struct Out {
    path: PathBuf,
}

impl Out {
    fn h5(&self, action: impl Into<String>) -> impl FnOnce(hdf5::Error) -> ResultsError {
        let path = self.path.clone();
        let action = action.into();
        move |source| ResultsError::Hdf5 {
            path,
            action,
            source,
        }
    }

    fn invalid(&self, reason: impl Into<String>) -> ResultsError {
        ResultsError::Invalid {
            path: self.path.clone(),
            reason: reason.into(),
        }
    }

    // ----- writing -------------------------------------------------------

    fn write_all(&self, file: &File, record: &RunRecord) -> Result<(), ResultsError> {
        let root: &Group = file;
        let prov = &record.provenance;
        self.attr_str(root, "format", FORMAT_NAME)?;
        self.attr_i64(root, "format_version", FORMAT_VERSION)?;
        let (status, message, failure_time_s) = match &record.status {
            RunStatus::Completed => ("completed", "", f64::NAN),
            RunStatus::Failed { message, time_s } => ("failed", message.as_str(), *time_s),
        };
        self.attr_str(root, "status", status)?;
        self.attr_str(root, "status_message", message)?;
        self.attr_f64(root, "failure_time_s", failure_time_s)?;
        self.attr_str(root, "yawdyn_version", &prov.yawdyn_version)?;
        self.attr_str(root, "created_utc", &prov.created_utc)?;

        let time = self.dataset_f64(root, "time", &record.time)?;
        self.attr_str(&time, "units", "s")?;
        self.attr_str(
            &time,
            "description",
            "simulation time of each output sample",
        )?;

        let names: Vec<&str> = record.channels.iter().map(|c| c.name.as_str()).collect();
        self.dataset_strs(root, "channel_order", &names)?;
        let channels = self.group(root, "channels")?;
        for channel in &record.channels {
            let ds = self.dataset_f64(&channels, &channel.name, &channel.data)?;
            self.attr_str(&ds, "units", &channel.unit)?;
            self.attr_str(&ds, "description", &channel.description)?;
        }

        let names: Vec<&str> = record.metrics.iter().map(|m| m.name.as_str()).collect();
        self.dataset_strs(root, "metric_order", &names)?;
        let metrics = self.group(root, "metrics")?;
        for metric in &record.metrics {
            let ds = metrics
                .new_dataset::<f64>()
                .shape(())
                .create(metric.name.as_str())
                .and_then(|ds| ds.write_scalar(&metric.value).map(|()| ds))
                .map_err(self.h5(format!("writing dataset /metrics/{}", metric.name)))?;
            self.attr_str(&ds, "units", &metric.unit)?;
        }

        let criteria = self.group(root, "criteria")?;
        let list = &record.criteria;
        let names: Vec<&str> = list.iter().map(|c| c.name.as_str()).collect();
        let values: Vec<f64> = list.iter().map(|c| c.value).collect();
        let lower: Vec<f64> = list.iter().map(|c| c.lower.unwrap_or(f64::NAN)).collect();
        let upper: Vec<f64> = list.iter().map(|c| c.upper.unwrap_or(f64::NAN)).collect();
        let passed: Vec<u8> = list.iter().map(|c| u8::from(c.passed)).collect();
        self.dataset_strs(&criteria, "name", &names)?;
        self.dataset_f64(&criteria, "value", &values)?;
        self.dataset_f64(&criteria, "lower", &lower)?;
        self.dataset_f64(&criteria, "upper", &upper)?;
        let ds = criteria
            .new_dataset_builder()
            .with_data(&passed[..])
            .create("passed")
            .map_err(self.h5("writing dataset /criteria/passed"))?;
        self.attr_str(&ds, "description", "1 = passed, 0 = failed")?;

        self.write_provenance(root, prov)
    }

    fn write_provenance(&self, root: &Group, prov: &Provenance) -> Result<(), ResultsError> {
        let group = self.group(root, "provenance")?;
        self.attr_str(&group, "script_path", &prov.script_path)?;
        self.attr_str(&group, "vehicle_path", &prov.vehicle_path)?;
        self.attr_str(&group, "solver", &prov.solver)?;
        self.attr_f64(&group, "rtol", prov.rtol)?;
        self.attr_f64(&group, "atol", prov.atol)?;
        self.attr_f64(&group, "fixed_step_s", prov.fixed_step_s)?;
        self.attr_f64(&group, "sample_rate_hz", prov.sample_rate_hz)?;
        self.attr_f64(&group, "tick_rate_hz", prov.tick_rate_hz)?;
        self.dataset_str(&group, "script_text", &prov.script_text)?;
        self.dataset_str(&group, "vehicle_toml", &prov.vehicle_toml)?;
        let overrides: Vec<&str> = prov.overrides.iter().map(String::as_str).collect();
        self.dataset_strs(&group, "overrides", &overrides)?;
        let keys: Vec<&str> = prov.extra.iter().map(|(k, _)| k.as_str()).collect();
        let values: Vec<&str> = prov.extra.iter().map(|(_, v)| v.as_str()).collect();
        self.dataset_strs(&group, "extra_keys", &keys)?;
        self.dataset_strs(&group, "extra_values", &values)?;
        Ok(())
    }

    fn group(&self, parent: &Group, name: &str) -> Result<Group, ResultsError> {
        parent
            .create_group(name)
            .map_err(self.h5(format!("creating group /{name}")))
    }

    fn unicode(&self, what: &str, text: &str) -> Result<VarLenUnicode, ResultsError> {
        VarLenUnicode::from_str(text)
            .map_err(|_| self.invalid(format!("{what} contains a NUL character")))
    }

    fn attr_str(&self, loc: &Location, name: &str, text: &str) -> Result<(), ResultsError> {
        let what = format!("attribute {name} of {}", loc.name());
        let value = self.unicode(&what, text)?;
        loc.new_attr::<VarLenUnicode>()
            .shape(())
            .create(name)
            .and_then(|attr| attr.write_scalar(&value))
            .map_err(self.h5(format!("writing {what}")))
    }

    fn attr_f64(&self, loc: &Location, name: &str, value: f64) -> Result<(), ResultsError> {
        loc.new_attr::<f64>()
            .shape(())
            .create(name)
            .and_then(|attr| attr.write_scalar(&value))
            .map_err(self.h5(format!("writing attribute {name} of {}", loc.name())))
    }

    fn attr_i64(&self, loc: &Location, name: &str, value: i64) -> Result<(), ResultsError> {
        loc.new_attr::<i64>()
            .shape(())
            .create(name)
            .and_then(|attr| attr.write_scalar(&value))
            .map_err(self.h5(format!("writing attribute {name} of {}", loc.name())))
    }

    fn dataset_f64(
        &self,
        group: &Group,
        name: &str,
        data: &[f64],
    ) -> Result<Dataset, ResultsError> {
        group
            .new_dataset_builder()
            .with_data(data)
            .create(name)
            .map_err(self.h5(format!("writing dataset {name} in {}", group.name())))
    }

    fn dataset_str(&self, group: &Group, name: &str, text: &str) -> Result<(), ResultsError> {
        let what = format!("dataset {name} in {}", group.name());
        let value = self.unicode(&what, text)?;
        group
            .new_dataset::<VarLenUnicode>()
            .shape(())
            .create(name)
            .and_then(|ds| ds.write_scalar(&value))
            .map_err(self.h5(format!("writing {what}")))
    }

    fn dataset_strs(&self, group: &Group, name: &str, items: &[&str]) -> Result<(), ResultsError> {
        let what = format!("dataset {name} in {}", group.name());
        let values = items
            .iter()
            .map(|text| self.unicode(&what, text))
            .collect::<Result<Vec<_>, _>>()?;
        group
            .new_dataset_builder()
            .with_data(&values[..])
            .create(name)
            .map(|_| ())
            .map_err(self.h5(format!("writing {what}")))
    }

    // ----- reading -------------------------------------------------------

    fn check_format(&self, file: &File) -> Result<(), ResultsError> {
        let not_ours = |found: String| ResultsError::NotResultsFile {
            path: self.path.clone(),
            found,
        };
        let attr = file
            .attr("format")
            .map_err(|_| not_ours("no `format` attribute on the root group".to_string()))?;
        let format: VarLenUnicode = attr
            .read_scalar()
            .map_err(|_| not_ours("the `format` attribute is not a text scalar".to_string()))?;
        if format.as_str() != FORMAT_NAME {
            return Err(not_ours(format!("format is {:?}", format.as_str())));
        }
        let version = self.read_attr_i64(file, "format_version")?;
        if version != FORMAT_VERSION {
            return Err(ResultsError::UnsupportedVersion {
                path: self.path.clone(),
                found: version,
                supported: FORMAT_VERSION,
            });
        }
        Ok(())
    }

    fn read_all(&self, file: &File) -> Result<RunRecord, ResultsError> {
        let root: &Group = file;
        let status = match self.read_attr_str(root, "status")?.as_str() {
            "completed" => RunStatus::Completed,
            "failed" => RunStatus::Failed {
                message: self.read_attr_str(root, "status_message")?,
                time_s: self.read_attr_f64(root, "failure_time_s")?,
            },
            other => return Err(self.invalid(format!("unknown status {other:?}"))),
        };

        let time = self.read_f64s(root, "time")?;

        let channels_group = self.open_group(root, "channels")?;
        let mut channels = Vec::new();
        for name in self.read_strs(root, "channel_order")? {
            let ds = self.open_dataset(&channels_group, &name)?;
            let data = self.read_f64s_from(&ds)?;
            if data.len() != time.len() {
                return Err(self.invalid(format!(
                    "channel `{name}` has {} samples but /time has {}",
                    data.len(),
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

        let metrics_group = self.open_group(root, "metrics")?;
        let mut metrics = Vec::new();
        for name in self.read_strs(root, "metric_order")? {
            let ds = self.open_dataset(&metrics_group, &name)?;
            let value: f64 = ds
                .read_scalar()
                .map_err(self.h5(format!("reading scalar {}", ds.name())))?;
            metrics.push(Metric {
                unit: self.read_attr_str(&ds, "units")?,
                value,
                name,
            });
        }

        let criteria_group = self.open_group(root, "criteria")?;
        let names = self.read_strs(&criteria_group, "name")?;
        let values = self.read_f64s(&criteria_group, "value")?;
        let lower = self.read_f64s(&criteria_group, "lower")?;
        let upper = self.read_f64s(&criteria_group, "upper")?;
        let passed: Vec<u8> = self
            .open_dataset(&criteria_group, "passed")?
            .read_raw()
            .map_err(self.h5("reading dataset /criteria/passed"))?;
        let n = names.len();
        if [values.len(), lower.len(), upper.len(), passed.len()]
            .iter()
            .any(|&len| len != n)
        {
            return Err(self.invalid("the datasets in /criteria differ in length"));
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

        let provenance = self.read_provenance(root)?;
        Ok(RunRecord {
            time,
            channels,
            provenance,
            status,
            metrics,
            criteria,
        })
    }

    fn read_provenance(&self, root: &Group) -> Result<Provenance, ResultsError> {
        let group = self.open_group(root, "provenance")?;
        let keys = self.read_strs(&group, "extra_keys")?;
        let values = self.read_strs(&group, "extra_values")?;
        if keys.len() != values.len() {
            return Err(self.invalid("/provenance/extra_keys and extra_values differ in length"));
        }
        Ok(Provenance {
            yawdyn_version: self.read_attr_str(root, "yawdyn_version")?,
            created_utc: self.read_attr_str(root, "created_utc")?,
            script_path: self.read_attr_str(&group, "script_path")?,
            script_text: self.read_str(&group, "script_text")?,
            vehicle_path: self.read_attr_str(&group, "vehicle_path")?,
            vehicle_toml: self.read_str(&group, "vehicle_toml")?,
            overrides: self.read_strs(&group, "overrides")?,
            solver: self.read_attr_str(&group, "solver")?,
            rtol: self.read_attr_f64(&group, "rtol")?,
            atol: self.read_attr_f64(&group, "atol")?,
            fixed_step_s: self.read_attr_f64(&group, "fixed_step_s")?,
            sample_rate_hz: self.read_attr_f64(&group, "sample_rate_hz")?,
            tick_rate_hz: self.read_attr_f64(&group, "tick_rate_hz")?,
            extra: keys.into_iter().zip(values).collect(),
        })
    }

    fn open_group(&self, parent: &Group, name: &str) -> Result<Group, ResultsError> {
        parent
            .group(name)
            .map_err(self.h5(format!("opening group {name} in {}", parent.name())))
    }

    fn open_dataset(&self, group: &Group, name: &str) -> Result<Dataset, ResultsError> {
        group
            .dataset(name)
            .map_err(self.h5(format!("opening dataset {name} in {}", group.name())))
    }

    fn read_attr_str(&self, loc: &Location, name: &str) -> Result<String, ResultsError> {
        loc.attr(name)
            .and_then(|attr| attr.read_scalar::<VarLenUnicode>())
            .map(|text| text.as_str().to_string())
            .map_err(self.h5(format!("reading text attribute {name} of {}", loc.name())))
    }

    fn read_attr_f64(&self, loc: &Location, name: &str) -> Result<f64, ResultsError> {
        loc.attr(name)
            .and_then(|attr| attr.read_scalar::<f64>())
            .map_err(self.h5(format!("reading number attribute {name} of {}", loc.name())))
    }

    fn read_attr_i64(&self, loc: &Location, name: &str) -> Result<i64, ResultsError> {
        loc.attr(name)
            .and_then(|attr| attr.read_scalar::<i64>())
            .map_err(self.h5(format!(
                "reading integer attribute {name} of {}",
                loc.name()
            )))
    }

    fn read_f64s(&self, group: &Group, name: &str) -> Result<Vec<f64>, ResultsError> {
        let ds = self.open_dataset(group, name)?;
        self.read_f64s_from(&ds)
    }

    fn read_f64s_from(&self, ds: &Dataset) -> Result<Vec<f64>, ResultsError> {
        if ds.ndim() != 1 {
            return Err(self.invalid(format!("{} is not one-dimensional", ds.name())));
        }
        ds.read_raw()
            .map_err(self.h5(format!("reading numbers from {}", ds.name())))
    }

    fn read_str(&self, group: &Group, name: &str) -> Result<String, ResultsError> {
        let ds = self.open_dataset(group, name)?;
        ds.read_scalar::<VarLenUnicode>()
            .map(|text| text.as_str().to_string())
            .map_err(self.h5(format!("reading text from {}", ds.name())))
    }

    fn read_strs(&self, group: &Group, name: &str) -> Result<Vec<String>, ResultsError> {
        let ds = self.open_dataset(group, name)?;
        if ds.ndim() != 1 {
            return Err(self.invalid(format!("{} is not one-dimensional", ds.name())));
        }
        ds.read_raw::<VarLenUnicode>()
            .map(|items| items.iter().map(|t| t.as_str().to_string()).collect())
            .map_err(self.h5(format!("reading text list from {}", ds.name())))
    }
}
