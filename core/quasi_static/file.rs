//! HDF5 files of the quasi-static methods, written through the HDF5 layer of
//! [`crate::results`] with the conventions of a results file: root
//! attributes `format`, `format_version`, `status` (`completed`/`failed`),
//! `status_message`, `yawdyn_version`, `created_utc`; a `/provenance` group
//! with the attribute `vehicle_path` and the datasets `vehicle_toml` (the
//! resolved parameters) and `overrides`; every dataset with a `units`
//! attribute; SI units, angles in radians; written under a temporary name and
//! renamed into place.
//!
//! # Yaw-moment file (`format` = `yawdyn-yaw-moment`, version 1)
//!
//! | path | content |
//! | --- | --- |
//! | `/` attributes | `vehicle_name`; `speed` (m/s); `longitudinal` (`free_rolling`, `drive_torque` or `long_accel`) and `longitudinal_value` (N·m or m/s², NaN for free rolling); `moment_reference` m·g·L (N·m) |
//! | `/sideslip`, `/steer` | grid values, rad (road-wheel steer) |
//! | `/front_share` | one value per diagram, 1 |
//! | `/diagrams/<k>/` | attributes `front_share`, `turn` (+1 left, −1 right); datasets of shape [n_steer, n_sideslip]: `lat_accel` (m/s²), `yaw_moment` (N·m), `yaw_moment_coefficient` (1), `long_accel` (m/s²), `yaw_rate` (rad/s), `drive_torque`, `brake_torque` (N·m), `solved` (u8); NaN where not solved |
//! | `/diagrams/<k>/trim/` | per trim point: `lat_accel` (m/s²), `steer`, `sideslip` (rad), `yaw_moment_per_sideslip`, `yaw_moment_per_steer` (N·m/rad), `lat_accel_per_sideslip`, `lat_accel_per_steer` (m/s² per rad) |
//! | `/diagrams/<k>/` attributes | `trim_limit_lat_accel` (m/s²), `trim_limit_steer`, `trim_limit_sideslip` (rad), `limit_lat_accel` (m/s²), `limit_yaw_moment`, `limit_balance` (N·m, positive = oversteer), `limit_balance_coefficient` (1), `limit_steer`, `limit_sideslip` (rad), `limit_on_grid_edge` (0/1); NaN when not found |
//! | `/summary/` | per diagram: `front_share`, `trim_limit_lat_accel`, `limit_lat_accel`, `limit_balance`, `limit_balance_coefficient` |
//!
//! # Envelope file (`format` = `yawdyn-gg-envelope`, version 1)
//!
//! | path | content |
//! | --- | --- |
//! | `/` attributes | `vehicle_name`; `front_share` (1) |
//! | `/speed` | forward speeds, m/s |
//! | `/direction` | ray directions θ from +a_x towards +a_y, rad |
//! | `/long_accel`, `/lat_accel` | boundary, m/s², shape [n_speed, n_direction] |
//! | `/steer`, `/sideslip` | at the boundary, rad |
//! | `/drive_torque`, `/brake_torque` | at the boundary, N·m |
//! | `/limit` | u8: 0 unsolved, 1 grip, 2 drive, 3 brake, 4 search ceiling |

use std::path::Path;

use hdf5::{File, Group, H5Type, Location};

use super::QuasiStaticError;
use super::envelope::Envelope;
use super::equilibrium::Longitudinal;
use super::yaw_moment::YawMomentDiagram;
use crate::results::h5::{H5Context, H5Error, TrackTimes};
use crate::results::{ResultsError, write_atomically};

/// Root `format` of a yaw-moment file.
pub const YAW_MOMENT_FORMAT: &str = "yawdyn-yaw-moment";
/// Root `format` of a g-g-V envelope file.
pub const ENVELOPE_FORMAT: &str = "yawdyn-gg-envelope";
/// Layout version of both files.
pub const FORMAT_VERSION: i64 = 1;

/// Where the numbers came from, and whether anything went wrong.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct FileInfo {
    /// Vehicle name.
    pub vehicle_name: String,
    /// Vehicle file as given.
    pub vehicle_path: String,
    /// Resolved vehicle parameters as TOML.
    pub vehicle_toml: String,
    /// Overrides applied, `key=value`.
    pub overrides: Vec<String>,
    /// `None` when completed, else why the result is incomplete (status `failed`).
    pub failure: Option<String>,
}

/// Writes one or more yaw-moment diagrams of the same grids and condition
/// (e.g. one per front share) to `path`.
pub fn write_yaw_moment(
    path: &Path,
    diagrams: &[YawMomentDiagram],
    info: &FileInfo,
) -> Result<(), QuasiStaticError> {
    let file_error = |source| QuasiStaticError::File {
        what: "the yaw-moment file",
        source,
    };
    let Some(first) = diagrams.first() else {
        return Err(file_error(ResultsError::Invalid {
            path: path.to_path_buf(),
            reason: "no diagram to write".to_string(),
        }));
    };
    write_atomically(path, |temp| {
        let ctx = H5Context::writer(path, TrackTimes::On);
        let file = ctx.create_file(temp)?;
        let root: &Group = &file;
        stamp(&ctx, root, YAW_MOMENT_FORMAT, info)?;
        let c = &first.condition;
        ctx.attr_f64(root, "speed", c.speed)?;
        let (case, value) = match c.longitudinal {
            Longitudinal::FreeRolling => ("free_rolling", f64::NAN),
            Longitudinal::DriveTorque(t) => ("drive_torque", t),
            Longitudinal::Accel(a) => ("long_accel", a),
        };
        ctx.attr_str(root, "longitudinal", case)?;
        ctx.attr_f64(root, "longitudinal_value", value)?;
        ctx.attr_f64(root, "moment_reference", first.moment_reference)?;
        vector(&ctx, root, "sideslip", &first.sideslip, "rad")?;
        vector(&ctx, root, "steer", &first.steer, "rad")?;
        let shares: Vec<f64> = diagrams.iter().map(|d| d.condition.front_share).collect();
        vector(&ctx, root, "front_share", &shares, "1")?;
        let group = ctx.group(root, "diagrams")?;
        for (k, d) in diagrams.iter().enumerate() {
            diagram(&ctx, &ctx.group(&group, &k.to_string())?, d)?;
        }
        summary(&ctx, root, diagrams)?;
        provenance(&ctx, root, info)?;
        file.close().map_err(ctx.h5("closing the HDF5 file"))?;
        Ok(())
    })
    .map_err(file_error)
}

/// Writes g-g-V envelopes (one per speed, same directions and split) to `path`.
pub fn write_envelope(
    path: &Path,
    envelopes: &[Envelope],
    info: &FileInfo,
) -> Result<(), QuasiStaticError> {
    let file_error = |source| QuasiStaticError::File {
        what: "the g-g-V envelope file",
        source,
    };
    let Some(first) = envelopes.first() else {
        return Err(file_error(ResultsError::Invalid {
            path: path.to_path_buf(),
            reason: "no envelope to write".to_string(),
        }));
    };
    write_atomically(path, |temp| {
        let ctx = H5Context::writer(path, TrackTimes::On);
        let file = ctx.create_file(temp)?;
        let root: &Group = &file;
        stamp(&ctx, root, ENVELOPE_FORMAT, info)?;
        ctx.attr_f64(root, "front_share", first.front_share)?;
        let speeds: Vec<f64> = envelopes.iter().map(|e| e.speed).collect();
        vector(&ctx, root, "speed", &speeds, "m/s")?;
        let directions: Vec<f64> = first.points.iter().map(|p| p.direction).collect();
        vector(&ctx, root, "direction", &directions, "rad")?;
        let shape = [envelopes.len(), directions.len()];
        let field = |f: fn(&super::EnvelopePoint) -> f64| -> Vec<f64> {
            envelopes
                .iter()
                .flat_map(|e| e.points.iter().map(f))
                .collect()
        };
        for (name, values, unit) in [
            ("long_accel", field(|p| p.long_accel), "m/s^2"),
            ("lat_accel", field(|p| p.lat_accel), "m/s^2"),
            ("steer", field(|p| p.steer), "rad"),
            ("sideslip", field(|p| p.sideslip), "rad"),
            ("drive_torque", field(|p| p.drive_torque), "N*m"),
            ("brake_torque", field(|p| p.brake_torque), "N*m"),
        ] {
            matrix(&ctx, root, name, shape, &values, unit)?;
        }
        let codes: Vec<u8> = envelopes
            .iter()
            .flat_map(|e| e.points.iter().map(|p| p.limit.code()))
            .collect();
        let ds = matrix(&ctx, root, "limit", shape, &codes, "1")?;
        ctx.attr_str(
            &ds,
            "codes",
            "0 unsolved, 1 grip, 2 drive, 3 brake, 4 search ceiling",
        )?;
        provenance(&ctx, root, info)?;
        file.close().map_err(ctx.h5("closing the HDF5 file"))?;
        Ok(())
    })
    .map_err(file_error)
}

/// Root attributes common to both files.
fn stamp(ctx: &H5Context, root: &Group, format: &str, info: &FileInfo) -> Result<(), H5Error> {
    ctx.attr_str(root, "format", format)?;
    ctx.attr_i64(root, "format_version", FORMAT_VERSION)?;
    let (status, message) = match &info.failure {
        None => ("completed", ""),
        Some(m) => ("failed", m.as_str()),
    };
    ctx.attr_str(root, "status", status)?;
    ctx.attr_str(root, "status_message", message)?;
    let version = format!(
        "{} ({})",
        env!("CARGO_PKG_VERSION"),
        env!("YAWDYN_GIT_REVISION")
    );
    ctx.attr_str(root, "yawdyn_version", &version)?;
    ctx.attr_str(root, "created_utc", &crate::sweep::utc_now())?;
    ctx.attr_str(root, "vehicle_name", &info.vehicle_name)
}

/// The `/provenance` group.
fn provenance(ctx: &H5Context, root: &Group, info: &FileInfo) -> Result<(), H5Error> {
    let group = ctx.group(root, "provenance")?;
    ctx.attr_str(&group, "vehicle_path", &info.vehicle_path)?;
    ctx.dataset_str(&group, "vehicle_toml", &info.vehicle_toml)?;
    let overrides: Vec<&str> = info.overrides.iter().map(String::as_str).collect();
    ctx.dataset_strs(&group, "overrides", &overrides)
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

/// A two-dimensional dataset of `shape` (row-major `data`) with its unit.
fn matrix<T: H5Type>(
    ctx: &H5Context,
    group: &Group,
    name: &str,
    shape: [usize; 2],
    data: &[T],
    unit: &str,
) -> Result<hdf5::Dataset, H5Error> {
    if data.len() != shape[0] * shape[1] {
        return Err(ctx.invalid(format!(
            "dataset {name}: {} values for shape {shape:?}",
            data.len()
        )));
    }
    let ds = group
        .new_dataset::<T>()
        .shape((shape[0], shape[1]))
        .create(name)
        .map_err(ctx.h5(format!("creating dataset {name} in {}", group.name())))?;
    ds.write_raw(data)
        .map_err(ctx.h5(format!("writing dataset {name} in {}", group.name())))?;
    ctx.attr_str(&ds, "units", unit)?;
    Ok(ds)
}

/// One diagram group.
fn diagram(ctx: &H5Context, g: &Group, d: &YawMomentDiagram) -> Result<(), H5Error> {
    ctx.attr_f64(g, "front_share", d.condition.front_share)?;
    ctx.attr_f64(g, "turn", d.turn)?;
    let shape = [d.steer.len(), d.sideslip.len()];
    let coefficient: Vec<f64> = d
        .yaw_moment
        .iter()
        .map(|n| n / d.moment_reference)
        .collect();
    for (name, values, unit) in [
        ("lat_accel", &d.lat_accel, "m/s^2"),
        ("yaw_moment", &d.yaw_moment, "N*m"),
        ("yaw_moment_coefficient", &coefficient, "1"),
        ("long_accel", &d.long_accel, "m/s^2"),
        ("yaw_rate", &d.yaw_rate, "rad/s"),
        ("drive_torque", &d.drive_torque, "N*m"),
        ("brake_torque", &d.brake_torque, "N*m"),
    ] {
        matrix(ctx, g, name, shape, values, unit)?;
    }
    let solved: Vec<u8> = d.solved.iter().map(|s| u8::from(*s)).collect();
    matrix(ctx, g, "solved", shape, &solved, "1")?;
    let trim = ctx.group(g, "trim")?;
    let column = |f: fn(&super::TrimPoint) -> f64| -> Vec<f64> { d.trim.iter().map(f).collect() };
    for (name, values, unit) in [
        ("lat_accel", column(|t| t.lat_accel), "m/s^2"),
        ("steer", column(|t| t.steer), "rad"),
        ("sideslip", column(|t| t.sideslip), "rad"),
        (
            "yaw_moment_per_sideslip",
            column(|t| t.yaw_moment_per_sideslip),
            "N*m/rad",
        ),
        (
            "yaw_moment_per_steer",
            column(|t| t.yaw_moment_per_steer),
            "N*m/rad",
        ),
        (
            "lat_accel_per_sideslip",
            column(|t| t.lat_accel_per_sideslip),
            "m/s^2/rad",
        ),
        (
            "lat_accel_per_steer",
            column(|t| t.lat_accel_per_steer),
            "m/s^2/rad",
        ),
    ] {
        vector(ctx, &trim, name, &values, unit)?;
    }
    let nan = f64::NAN;
    let tl = d.trim_limit;
    let lim = d.limit;
    let loc: &Location = g;
    for (name, value) in [
        ("trim_limit_lat_accel", tl.map_or(nan, |t| t.lat_accel)),
        ("trim_limit_steer", tl.map_or(nan, |t| t.steer)),
        ("trim_limit_sideslip", tl.map_or(nan, |t| t.sideslip)),
        ("limit_lat_accel", lim.map_or(nan, |l| l.lat_accel)),
        ("limit_yaw_moment", lim.map_or(nan, |l| l.yaw_moment)),
        ("limit_balance", lim.map_or(nan, |l| l.balance)),
        (
            "limit_balance_coefficient",
            d.limit_balance_coefficient().unwrap_or(nan),
        ),
        ("limit_steer", lim.map_or(nan, |l| l.steer)),
        ("limit_sideslip", lim.map_or(nan, |l| l.sideslip)),
    ] {
        ctx.attr_f64(loc, name, value)?;
    }
    ctx.attr_i64(
        loc,
        "limit_on_grid_edge",
        i64::from(lim.is_some_and(|l| l.on_grid_edge)),
    )
}

/// The `/summary` group: one value per diagram.
fn summary(ctx: &H5Context, root: &Group, diagrams: &[YawMomentDiagram]) -> Result<(), H5Error> {
    let g = ctx.group(root, "summary")?;
    let nan = f64::NAN;
    let column =
        |f: &dyn Fn(&YawMomentDiagram) -> f64| -> Vec<f64> { diagrams.iter().map(f).collect() };
    for (name, values, unit) in [
        ("front_share", column(&|d| d.condition.front_share), "1"),
        (
            "trim_limit_lat_accel",
            column(&|d| d.trim_limit.map_or(nan, |t| t.lat_accel)),
            "m/s^2",
        ),
        (
            "limit_lat_accel",
            column(&|d| d.limit.map_or(nan, |l| l.lat_accel)),
            "m/s^2",
        ),
        (
            "limit_balance",
            column(&|d| d.limit.map_or(nan, |l| l.balance)),
            "N*m",
        ),
        (
            "limit_balance_coefficient",
            column(&|d| d.limit_balance_coefficient().unwrap_or(nan)),
            "1",
        ),
    ] {
        vector(ctx, &g, name, &values, unit)?;
    }
    Ok(())
}

/// Reads the root `format` attribute of an HDF5 file (for tests and tools
/// that dispatch on the file kind).
pub fn file_format(path: &Path) -> Result<String, ResultsError> {
    let ctx = H5Context::reader(path);
    let file: File = ctx.open_file()?;
    Ok(ctx.read_attr_str(&file, "format")?)
}
