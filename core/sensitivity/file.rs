//! The HDF5 file of a sensitivity ranking, written through the HDF5 layer of
//! [`crate::results`] under a temporary name and renamed into place. No
//! object modification times are stored, so equal inputs give equal bytes
//! but for the root `created_utc` (fixed too when `SOURCE_DATE_EPOCH` is
//! set, as for sweep files).
//!
//! # Layout (`format` = `yawdyn-sensitivity`, version 1)
//!
//! | path | content |
//! | --- | --- |
//! | `/` attributes | `format`, `format_version`; `status` (`completed`, or `failed` when a perturbation failed) and `status_message`; `yawdyn_version`, `created_utc`; `step` (relative step h, 1); `source` (`script` or `vehicle`); `speed` (m/s) and `lat_accel` (m/s²) of the operating point (NaN without one) |
//! | `/parameters/key` | text\[p\]: dotted keys perturbed, in plan order |
//! | `/parameters/value`, `value_up`, `value_down` | f64\[p\]: p₀, p₀(1+h), p₀(1−h), in each key's file unit (attribute `units` says so) |
//! | `/metric_order` | text\[k\]: metric names |
//! | `/metrics/<name>/` attributes | `units`; `base_value` m₀ |
//! | `/metrics/<name>/metric_up`, `metric_down` | f64\[p\]: the metric at p₊, p₋ (its unit; NaN where the case failed) |
//! | `/metrics/<name>/elasticity`, `elasticity_up`, `elasticity_down`, `asymmetry` | f64\[p\], unit 1 |
//! | `/metrics/<name>/derivative` | f64\[p\]: ∂m/∂p, metric unit per parameter unit |
//! | `/metrics/<name>/rank` | i64\[p\]: 1 = largest \|e\|; 0 = no estimate |
//! | `/skipped/key`, `/skipped/value`, `/skipped/reason` | keys not perturbed and why |
//! | `/cases/key`, `direction`, `value`, `status`, `message` | one row per perturbed case, case order (`2i` up, `2i+1` down) |
//! | `/provenance` | attributes `script_path`, `vehicle_path`; datasets `script_text`, `vehicle_toml` (resolved base parameters), `overrides` (`--set`, `key=value`) |

use std::path::Path;

use hdf5::Group;

use super::plan::Plan;
use super::rank::Ranking;
use super::{OperatingPoint, SensitivityError};
use crate::results::h5::{H5Context, H5Error, TrackTimes};
use crate::results::write_atomically;

/// Root `format` of a sensitivity file.
pub const FORMAT_NAME: &str = "yawdyn-sensitivity";
/// Layout version.
pub const FORMAT_VERSION: i64 = 1;

/// What the file records besides the rankings.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct FileInfo {
    /// Script as given (empty for vehicle and stability quantities).
    pub script_path: String,
    /// Full script text (empty without a script).
    pub script_text: String,
    /// Vehicle file as given (empty when the script chooses it).
    pub vehicle_path: String,
    /// Resolved base parameters as TOML.
    pub vehicle_toml: String,
    /// The operating point of stability quantities.
    pub point: Option<OperatingPoint>,
    /// Per case of the plan: `completed` or the failure message.
    pub case_status: Vec<Result<(), String>>,
}

/// Writes the rankings of `plan` to `path`.
pub fn write_sensitivity(
    path: &Path,
    plan: &Plan,
    rankings: &[Ranking],
    info: &FileInfo,
) -> Result<(), SensitivityError> {
    write_atomically(path, |temp| {
        let ctx = H5Context::writer(path, TrackTimes::Off);
        let file = ctx.create_file(temp)?;
        let root: &Group = &file;
        stamp(&ctx, root, plan, info)?;
        parameters(&ctx, root, plan)?;
        let names: Vec<&str> = rankings.iter().map(|r| r.metric.as_str()).collect();
        ctx.dataset_strs(root, "metric_order", &names)?;
        let metrics = ctx.group(root, "metrics")?;
        for r in rankings {
            ranking(&ctx, &ctx.group(&metrics, &r.metric)?, r)?;
        }
        skipped(&ctx, root, plan)?;
        cases(&ctx, root, plan, info)?;
        provenance(&ctx, root, plan, info)?;
        file.close().map_err(ctx.h5("closing the HDF5 file"))?;
        Ok(())
    })
    .map_err(SensitivityError::File)
}

/// Root attributes.
fn stamp(ctx: &H5Context, root: &Group, plan: &Plan, info: &FileInfo) -> Result<(), H5Error> {
    ctx.attr_str(root, "format", FORMAT_NAME)?;
    ctx.attr_i64(root, "format_version", FORMAT_VERSION)?;
    let failed = info.case_status.iter().filter(|s| s.is_err()).count();
    let (status, message) = if failed == 0 {
        ("completed", String::new())
    } else {
        (
            "failed",
            format!(
                "{failed} of {} perturbed cases failed",
                info.case_status.len()
            ),
        )
    };
    ctx.attr_str(root, "status", status)?;
    ctx.attr_str(root, "status_message", &message)?;
    ctx.attr_str(root, "yawdyn_version", &crate::sweep::yawdyn_version())?;
    ctx.attr_str(root, "created_utc", &crate::sweep::utc_now())?;
    ctx.attr_f64(root, "step", plan.step)?;
    let source = if info.script_path.is_empty() {
        "vehicle"
    } else {
        "script"
    };
    ctx.attr_str(root, "source", source)?;
    let (speed, lat_accel) = info
        .point
        .map_or((f64::NAN, f64::NAN), |p| (p.speed, p.lat_accel));
    ctx.attr_f64(root, "speed", speed)?;
    ctx.attr_f64(root, "lat_accel", lat_accel)
}

/// The `/parameters` group.
fn parameters(ctx: &H5Context, root: &Group, plan: &Plan) -> Result<(), H5Error> {
    use super::Direction::{Down, Up};
    let g = ctx.group(root, "parameters")?;
    let keys: Vec<&str> = plan.parameters.iter().map(|p| p.key.as_str()).collect();
    ctx.dataset_strs(&g, "key", &keys)?;
    let n = plan.parameters.len();
    let base: Vec<f64> = plan.parameters.iter().map(|p| p.value).collect();
    let up: Vec<f64> = (0..n).map(|i| plan.perturbed_value(i, Up)).collect();
    let down: Vec<f64> = (0..n).map(|i| plan.perturbed_value(i, Down)).collect();
    let unit = "the key's unit in the vehicle file (SI; degrees for keys ending in _deg)";
    for (name, values) in [("value", base), ("value_up", up), ("value_down", down)] {
        vector(ctx, &g, name, &values, unit)?;
    }
    Ok(())
}

/// One `/metrics/<name>` group.
fn ranking(ctx: &H5Context, g: &Group, r: &Ranking) -> Result<(), H5Error> {
    ctx.attr_str(g, "units", &r.unit)?;
    ctx.attr_f64(g, "base_value", r.base)?;
    let column =
        |f: fn(&super::Estimate) -> f64| -> Vec<f64> { r.estimates.iter().map(f).collect() };
    let per_unit = if r.unit.is_empty() {
        "metric unit per parameter unit".to_string()
    } else {
        format!("{} per parameter unit", r.unit)
    };
    for (name, values, unit) in [
        ("metric_up", column(|e| e.metric_up), r.unit.as_str()),
        ("metric_down", column(|e| e.metric_down), r.unit.as_str()),
        ("elasticity", column(|e| e.elasticity), "1"),
        ("elasticity_up", column(|e| e.elasticity_up), "1"),
        ("elasticity_down", column(|e| e.elasticity_down), "1"),
        ("asymmetry", column(|e| e.asymmetry), "1"),
        ("derivative", column(|e| e.derivative), per_unit.as_str()),
    ] {
        vector(ctx, g, name, &values, unit)?;
    }
    let ranks: Vec<i64> = r
        .estimates
        .iter()
        .map(|e| e.rank.map_or(0, |k| k as i64))
        .collect();
    let ds = ctx.dataset_1d(g, "rank", &ranks)?;
    ctx.attr_str(&ds, "units", "1")
}

/// The `/skipped` group.
fn skipped(ctx: &H5Context, root: &Group, plan: &Plan) -> Result<(), H5Error> {
    let g = ctx.group(root, "skipped")?;
    let keys: Vec<&str> = plan.skipped.iter().map(|s| s.key.as_str()).collect();
    let values: Vec<f64> = plan.skipped.iter().map(|s| s.value).collect();
    let reasons: Vec<&str> = plan.skipped.iter().map(|s| s.reason.as_str()).collect();
    ctx.dataset_strs(&g, "key", &keys)?;
    vector(
        ctx,
        &g,
        "value",
        &values,
        "the key's unit in the vehicle file",
    )?;
    ctx.dataset_strs(&g, "reason", &reasons)
}

/// The `/cases` group: one row per perturbed case.
fn cases(ctx: &H5Context, root: &Group, plan: &Plan, info: &FileInfo) -> Result<(), H5Error> {
    let g = ctx.group(root, "cases")?;
    let n = 2 * plan.parameters.len();
    let rows: Vec<(usize, super::Direction)> = (0..n).map(|c| plan.case(c)).collect();
    let keys: Vec<&str> = rows
        .iter()
        .map(|(i, _)| plan.parameters[*i].key.as_str())
        .collect();
    let directions: Vec<&str> = rows.iter().map(|(_, d)| d.name()).collect();
    let values: Vec<f64> = rows
        .iter()
        .map(|(i, d)| plan.perturbed_value(*i, *d))
        .collect();
    let status: Vec<&str> = (0..n)
        .map(|c| match info.case_status.get(c) {
            Some(Ok(())) => "completed",
            _ => "failed",
        })
        .collect();
    let messages: Vec<&str> = (0..n)
        .map(|c| match info.case_status.get(c) {
            Some(Ok(())) => "",
            Some(Err(m)) => m.as_str(),
            None => "the case did not run",
        })
        .collect();
    ctx.dataset_strs(&g, "key", &keys)?;
    ctx.dataset_strs(&g, "direction", &directions)?;
    vector(
        ctx,
        &g,
        "value",
        &values,
        "the key's unit in the vehicle file",
    )?;
    ctx.dataset_strs(&g, "status", &status)?;
    ctx.dataset_strs(&g, "message", &messages)
}

/// The `/provenance` group.
fn provenance(ctx: &H5Context, root: &Group, plan: &Plan, info: &FileInfo) -> Result<(), H5Error> {
    let g = ctx.group(root, "provenance")?;
    ctx.attr_str(&g, "script_path", &info.script_path)?;
    ctx.attr_str(&g, "vehicle_path", &info.vehicle_path)?;
    ctx.dataset_str(&g, "script_text", &info.script_text)?;
    ctx.dataset_str(&g, "vehicle_toml", &info.vehicle_toml)?;
    let overrides: Vec<String> = plan
        .base_overrides
        .iter()
        .map(crate::params::Override::to_text)
        .collect();
    let overrides: Vec<&str> = overrides.iter().map(String::as_str).collect();
    ctx.dataset_strs(&g, "overrides", &overrides)
}

/// A one-dimensional f64 dataset with its unit.
fn vector(
    ctx: &H5Context,
    group: &Group,
    name: &str,
    data: &[f64],
    unit: &str,
) -> Result<(), H5Error> {
    let ds = ctx.dataset_f64(group, name, data)?;
    ctx.attr_str(&ds, "units", unit)
}
