//! Stability maps: the analysis over a grid of one or two varied quantities,
//! and their HDF5 file.
//!
//! File layout (our own, format "yawdyn-stability-map", version 2; also in
//! `docs/file-formats.md`):
//! - root attributes `format`, `format_version`, `vehicle_name`,
//!   `description` (the fixed conditions as text), `yawdyn_version`,
//!   `created_utc`, `vehicle_path`;
//! - `/axis_keys` (1 or 2 strings), `/axis_units` (strings), and one dataset
//!   `/axis_0`, `/axis_1` of grid values per axis, with attributes `key`,
//!   `units` and `dimension` (the grid dimension it indexes: 1 for `axis_0`,
//!   0 for `axis_1`);
//! - per point, datasets of shape [n1, n0] (n1 = 1 with one axis), row j
//!   along axis 1, column i along axis 0: `trim_found` (u8), `stable` (u8),
//!   `yaw_damping_ratio` (1), `yaw_frequency_hz` (Hz), `max_real_part`
//!   (1/s), `lat_accel` (m/s^2, the trimmed or largest reachable ay).
//!   Values with no meaning (no trim) are NaN. Each has the attributes
//!   `units` and `dimensions` (text \[2\]: the axis datasets of its dimensions
//!   in storage order, `["axis_1", "axis_0"]`; `["", "axis_0"]` with one
//!   axis), in place of HDF5 dimension scales (which need the HDF5
//!   high-level library);
//! - `/provenance/vehicle_toml` (the vehicle file's text, before overrides),
//!   `/provenance/overrides` (text \[o\], the `--set` overrides in order);
//! - `/fixed_conditions/<key>`: one f64 scalar per condition held fixed over
//!   the map (`speed_kph`, `lat_accel_g`, `long_accel_g`, `front_share`),
//!   attribute `units`.
//!
//! Version 1 files (no provenance, no fixed conditions, no `dimensions`)
//! are still read.

use std::path::{Path, PathBuf};
use std::str::FromStr;

use hdf5::types::VarLenUnicode;
use hdf5::{File, Group, Location};

use super::{StabilityError, StabilityReport};

/// Root `format` attribute of a map file.
pub const MAP_FORMAT: &str = "yawdyn-stability-map";
/// Layout version written (version 1 files are read too).
pub const MAP_FORMAT_VERSION: i64 = 2;

/// A condition held fixed over a map, as a number.
#[derive(Debug, Clone, PartialEq)]
pub struct FixedCondition {
    /// Key, as for `--vary` (`speed_kph`, `lat_accel_g`, ...).
    pub key: String,
    /// Value, in `unit`.
    pub value: f64,
    /// Unit, ASCII (`km/h`, `g`, `1`).
    pub unit: String,
}

/// Where a map came from.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct MapProvenance {
    /// yawdyn version that wrote the map.
    pub yawdyn_version: String,
    /// Creation time, ISO 8601 UTC.
    pub created_utc: String,
    /// Vehicle file as given.
    pub vehicle_path: String,
    /// Text of the vehicle file, before overrides.
    pub vehicle_toml: String,
    /// `--set` overrides, `key=value`, in order.
    pub overrides: Vec<String>,
    /// The operating-point quantities not varied.
    pub fixed: Vec<FixedCondition>,
}

/// One varied quantity.
#[derive(Debug, Clone, PartialEq)]
pub struct MapAxis {
    /// Key as given (`speed_kph`, `lat_accel_g`, `front_share`, `long_accel_g` or a parameter path).
    pub key: String,
    /// Unit of the values (e.g. "km/h", "g", "1"; "" for parameter paths: the file's unit).
    pub unit: String,
    /// Grid values, in the given unit.
    pub values: Vec<f64>,
}

/// The result at one grid point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MapPoint {
    /// A trim was found.
    pub trim_found: bool,
    /// Every eigenvalue's real part ≤ [`super::UNSTABLE_REAL_PART`] (false without trim).
    pub stable: bool,
    /// Yaw/sideslip mode damping ratio, 1 (NaN if undefined).
    pub yaw_damping_ratio: f64,
    /// Yaw/sideslip mode natural frequency, Hz (NaN if undefined).
    pub yaw_frequency_hz: f64,
    /// Largest eigenvalue real part, 1/s (NaN without trim).
    pub max_real_part: f64,
    /// Trimmed lateral acceleration, or the largest reachable one without trim, m/s² (NaN if none).
    pub lat_accel: f64,
}

impl MapPoint {
    /// Summarises one analysis result.
    pub fn from_result(result: &Result<StabilityReport, StabilityError>) -> Self {
        match result {
            Ok(r) => MapPoint {
                trim_found: true,
                stable: r.stable,
                yaw_damping_ratio: r.yaw_mode.map_or(f64::NAN, |m| m.damping_ratio),
                yaw_frequency_hz: r.yaw_mode.map_or(f64::NAN, |m| m.frequency_hz),
                max_real_part: r.max_real_part,
                lat_accel: r.trim.target.lat_accel,
            },
            Err(e) => MapPoint {
                trim_found: false,
                stable: false,
                yaw_damping_ratio: f64::NAN,
                yaw_frequency_hz: f64::NAN,
                max_real_part: f64::NAN,
                lat_accel: match e {
                    StabilityError::NoTrim {
                        largest_lat_accel: Some(l),
                        ..
                    } => *l,
                    _ => f64::NAN,
                },
            },
        }
    }
}

/// A stability map: axes and points in row-major order (index j·n0 + i).
#[derive(Debug, Clone, PartialEq)]
pub struct StabilityMap {
    /// Vehicle name.
    pub vehicle_name: String,
    /// Free text: the fixed conditions of the map.
    pub description: String,
    /// One or two axes.
    pub axes: Vec<MapAxis>,
    /// Points, `points[j * axes[0].values.len() + i]`.
    pub points: Vec<MapPoint>,
    /// Version, date, vehicle file, overrides, fixed conditions.
    pub provenance: MapProvenance,
}

impl StabilityMap {
    /// Grid shape [n1, n0] (n1 = 1 with one axis).
    pub fn shape(&self) -> [usize; 2] {
        let n0 = self.axes.first().map_or(0, |a| a.values.len());
        let n1 = self.axes.get(1).map_or(1, |a| a.values.len());
        [n1, n0]
    }
}

/// Errors writing or reading a map file.
#[derive(Debug, thiserror::Error)]
pub enum MapError {
    /// HDF5 failed.
    #[error("{}: {action}: {source}", path.display())]
    Hdf5 {
        /// File.
        path: PathBuf,
        /// What was being done.
        action: String,
        /// Cause.
        source: hdf5::Error,
    },
    /// The file is not a stability map or is inconsistent.
    #[error("{}: {reason}", path.display())]
    Invalid {
        /// File.
        path: PathBuf,
        /// What is wrong.
        reason: String,
    },
    /// The output path is refused or cannot be written (see [`crate::output`]).
    #[error(transparent)]
    Output(#[from] crate::output::OutputError),
    /// File system error.
    #[error("{}: {source}", path.display())]
    Io {
        /// File.
        path: PathBuf,
        /// Cause.
        source: std::io::Error,
    },
}

struct Ctx<'a> {
    path: &'a Path,
}

impl crate::error::Classify for MapError {
    /// File-system errors by their cause ([`crate::error::io_kind`]); an
    /// inconsistent map or an HDF5 failure is bad input (the output
    /// directory and temporary file are created before HDF5 writes, so HDF5
    /// failures come from reading a file that is not a readable map).
    fn kind(&self) -> crate::error::ErrorKind {
        match self {
            MapError::Io { source, .. } => crate::error::io_kind(source),
            MapError::Output(e) => e.kind(),
            MapError::Hdf5 { .. } | MapError::Invalid { .. } => crate::error::ErrorKind::BadInput,
        }
    }
}

impl Ctx<'_> {
    fn h5(&self, action: impl Into<String>) -> impl FnOnce(hdf5::Error) -> MapError + '_ {
        let action = action.into();
        move |source| MapError::Hdf5 {
            path: self.path.to_path_buf(),
            action,
            source,
        }
    }
    fn invalid(&self, reason: impl Into<String>) -> MapError {
        MapError::Invalid {
            path: self.path.to_path_buf(),
            reason: reason.into(),
        }
    }
    fn text(&self, s: &str) -> Result<VarLenUnicode, MapError> {
        VarLenUnicode::from_str(s).map_err(|_| self.invalid("text contains a NUL character"))
    }
    fn attr_str(&self, loc: &Location, name: &str, s: &str) -> Result<(), MapError> {
        let v = self.text(s)?;
        loc.new_attr::<VarLenUnicode>()
            .shape(())
            .create(name)
            .and_then(|a| a.write_scalar(&v))
            .map_err(self.h5(format!("writing attribute {name}")))
    }
    fn read_attr_str(&self, loc: &Location, name: &str) -> Result<String, MapError> {
        let attr = loc
            .attr(name)
            .map_err(self.h5(format!("opening attribute {name}")))?;
        self.check::<VarLenUnicode, _>(&attr, &format!("attribute {name}"))?;
        let text = attr
            .read_scalar::<VarLenUnicode>()
            .map_err(self.h5(format!("reading attribute {name}")))?;
        crate::results::h5::utf8_text(&text)
            .map_err(|why| self.invalid(format!("attribute {name}: {why}")))
    }
    fn strs(&self, g: &Group, name: &str, items: &[&str]) -> Result<(), MapError> {
        let v = self.text_list(items)?;
        g.new_dataset_builder()
            .with_data(&v[..])
            .create(name)
            .map(|_| ())
            .map_err(self.h5(format!("writing dataset {name}")))
    }
    fn read_strs(&self, g: &Group, name: &str) -> Result<Vec<String>, MapError> {
        let ds = g
            .dataset(name)
            .map_err(self.h5(format!("opening dataset {name}")))?;
        self.check::<VarLenUnicode, _>(&ds, name)?;
        let items = ds
            .read_raw::<VarLenUnicode>()
            .map_err(self.h5(format!("reading dataset {name}")))?;
        items
            .iter()
            .map(|s| {
                crate::results::h5::utf8_text(s)
                    .map_err(|why| self.invalid(format!("dataset {name}: {why}")))
            })
            .collect()
    }
    /// Checks an object before reading it ([`crate::results::h5::check_before_read`]).
    fn check<T: hdf5::H5Type, O: crate::results::h5::StoredText>(
        &self,
        object: &O,
        name: &str,
    ) -> Result<(), MapError> {
        crate::results::h5::check_before_read::<T, O>(object, self.path)
            .map_err(|why| self.invalid(format!("{name} is damaged or not of this layout: {why}")))
    }
    fn grid<T: hdf5::H5Type>(
        &self,
        g: &Group,
        name: &str,
        shape: [usize; 2],
        data: &[T],
        unit: &str,
        dimensions: &[&str],
    ) -> Result<(), MapError> {
        let ds = g
            .new_dataset::<T>()
            .shape((shape[0], shape[1]))
            .create(name)
            .map_err(self.h5(format!("creating dataset {name}")))?;
        ds.write_raw(data)
            .map_err(self.h5(format!("writing dataset {name}")))?;
        self.attr_str(&ds, "units", unit)?;
        let dims = self.text_list(dimensions)?;
        ds.new_attr::<VarLenUnicode>()
            .shape(dims.len())
            .create("dimensions")
            .and_then(|a| a.write_raw(&dims))
            .map_err(self.h5(format!("writing attribute dimensions of {name}")))
    }
    fn text_list(&self, items: &[&str]) -> Result<Vec<VarLenUnicode>, MapError> {
        items.iter().map(|s| self.text(s)).collect()
    }
    fn scalar(&self, g: &Group, name: &str, value: f64, unit: &str) -> Result<(), MapError> {
        let ds = g
            .new_dataset::<f64>()
            .shape(())
            .create(name)
            .and_then(|d| d.write_scalar(&value).map(|()| d))
            .map_err(self.h5(format!("writing dataset {name}")))?;
        self.attr_str(&ds, "units", unit)
    }
    fn read_grid<T: hdf5::H5Type>(
        &self,
        g: &Group,
        name: &str,
        shape: [usize; 2],
    ) -> Result<Vec<T>, MapError> {
        let ds = g
            .dataset(name)
            .map_err(self.h5(format!("opening dataset {name}")))?;
        self.check::<T, _>(&ds, name)?;
        if ds.shape() != shape.to_vec() {
            return Err(self.invalid(format!(
                "dataset {name} has shape {:?}, expected {:?}",
                ds.shape(),
                shape
            )));
        }
        ds.read_raw::<T>()
            .map_err(self.h5(format!("reading dataset {name}")))
    }
}

/// Writes `map` to `path` (HDF5, layout in the module documentation). The
/// file is written under a temporary name in the same directory and renamed
/// into place when complete.
pub fn write_map(map: &StabilityMap, path: &Path) -> Result<(), MapError> {
    let ctx = Ctx { path };
    let shape = map.shape();
    if map.axes.is_empty() || map.axes.len() > 2 || map.points.len() != shape[0] * shape[1] {
        return Err(ctx.invalid("a map needs 1 or 2 axes and one point per grid cell"));
    }
    crate::output::write_atomically(path, |temp| write_map_file(map, &ctx, temp, shape))
}

/// Writes the map's HDF5 objects into the new file `temp`.
fn write_map_file(
    map: &StabilityMap,
    ctx: &Ctx<'_>,
    temp: &Path,
    shape: [usize; 2],
) -> Result<(), MapError> {
    {
        let file = File::create(temp).map_err(ctx.h5("creating the HDF5 file"))?;
        let root: &Group = &file;
        ctx.attr_str(root, "format", MAP_FORMAT)?;
        root.new_attr::<i64>()
            .shape(())
            .create("format_version")
            .and_then(|a| a.write_scalar(&MAP_FORMAT_VERSION))
            .map_err(ctx.h5("writing attribute format_version"))?;
        ctx.attr_str(root, "vehicle_name", &map.vehicle_name)?;
        ctx.attr_str(root, "description", &map.description)?;
        let prov = &map.provenance;
        ctx.attr_str(root, "yawdyn_version", &prov.yawdyn_version)?;
        ctx.attr_str(root, "created_utc", &prov.created_utc)?;
        ctx.attr_str(root, "vehicle_path", &prov.vehicle_path)?;
        let pg = root
            .create_group("provenance")
            .map_err(ctx.h5("creating group provenance"))?;
        let toml = ctx.text(&prov.vehicle_toml)?;
        pg.new_dataset::<VarLenUnicode>()
            .shape(())
            .create("vehicle_toml")
            .and_then(|d| d.write_scalar(&toml))
            .map_err(ctx.h5("writing dataset vehicle_toml"))?;
        let overrides: Vec<&str> = prov.overrides.iter().map(String::as_str).collect();
        ctx.strs(&pg, "overrides", &overrides)?;
        let fg = root
            .create_group("fixed_conditions")
            .map_err(ctx.h5("creating group fixed_conditions"))?;
        for c in &prov.fixed {
            ctx.scalar(&fg, &c.key, c.value, &c.unit)?;
        }
        let keys: Vec<&str> = map.axes.iter().map(|a| a.key.as_str()).collect();
        let units: Vec<&str> = map.axes.iter().map(|a| a.unit.as_str()).collect();
        ctx.strs(root, "axis_keys", &keys)?;
        ctx.strs(root, "axis_units", &units)?;
        for (k, axis) in map.axes.iter().enumerate() {
            let ds = root
                .new_dataset_builder()
                .with_data(&axis.values[..])
                .create(format!("axis_{k}").as_str())
                .map_err(ctx.h5(format!("writing dataset axis_{k}")))?;
            ctx.attr_str(&ds, "units", &axis.unit)?;
            ctx.attr_str(&ds, "key", &axis.key)?;
            ds.new_attr::<i64>()
                .shape(())
                .create("dimension")
                .and_then(|a| a.write_scalar(&(1 - k as i64)))
                .map_err(ctx.h5(format!("writing attribute dimension of axis_{k}")))?;
        }
        let dims: [&str; 2] = if map.axes.len() == 2 {
            ["axis_1", "axis_0"]
        } else {
            ["", "axis_0"]
        };
        let p = &map.points;
        let flag = |f: fn(&MapPoint) -> bool| p.iter().map(|x| u8::from(f(x))).collect::<Vec<_>>();
        let real = |f: fn(&MapPoint) -> f64| p.iter().map(f).collect::<Vec<_>>();
        ctx.grid(
            root,
            "trim_found",
            shape,
            &flag(|x| x.trim_found),
            "1",
            &dims,
        )?;
        ctx.grid(root, "stable", shape, &flag(|x| x.stable), "1", &dims)?;
        ctx.grid(
            root,
            "yaw_damping_ratio",
            shape,
            &real(|x| x.yaw_damping_ratio),
            "1",
            &dims,
        )?;
        ctx.grid(
            root,
            "yaw_frequency_hz",
            shape,
            &real(|x| x.yaw_frequency_hz),
            "Hz",
            &dims,
        )?;
        ctx.grid(
            root,
            "max_real_part",
            shape,
            &real(|x| x.max_real_part),
            "1/s",
            &dims,
        )?;
        ctx.grid(
            root,
            "lat_accel",
            shape,
            &real(|x| x.lat_accel),
            "m/s^2",
            &dims,
        )?;
        file.close().map_err(ctx.h5("closing the HDF5 file"))?;
    }
    Ok(())
}

/// Reads a map file written by [`write_map`]. Fails with
/// [`MapError::Invalid`] when the file is not a stability map (wrong or missing
/// `format`) or is inconsistent; never panics.
pub fn read_map(path: &Path) -> Result<StabilityMap, MapError> {
    let ctx = Ctx { path };
    match std::fs::metadata(path) {
        Ok(meta) if !meta.is_file() => {
            return Err(ctx.invalid("not a regular file (a folder, device, FIFO or socket)"));
        }
        _ => {}
    }
    crate::output::note_read(path);
    crate::results::h5::heap::check_global_heaps(path)
        .map_err(|why| ctx.invalid(format!("the file is damaged: {why}")))?;
    let file = File::open(path).map_err(ctx.h5("opening the file as HDF5"))?;
    let root: &Group = &file;
    let format = ctx
        .read_attr_str(root, "format")
        .map_err(|_| ctx.invalid("not a stability map (no text `format` attribute)"))?;
    if format != MAP_FORMAT {
        return Err(ctx.invalid(format!("not a stability map: format is {format:?}")));
    }
    let version_attr = root
        .attr("format_version")
        .map_err(ctx.h5("opening attribute format_version"))?;
    ctx.check::<i64, _>(&version_attr, "attribute format_version")?;
    let version: i64 = version_attr
        .read_scalar()
        .map_err(ctx.h5("reading attribute format_version"))?;
    if !(1..=MAP_FORMAT_VERSION).contains(&version) {
        return Err(ctx.invalid(format!(
            "map format version {version} is not supported (this yawdyn reads {MAP_FORMAT_VERSION})"
        )));
    }
    let keys = ctx.read_strs(root, "axis_keys")?;
    let units = ctx.read_strs(root, "axis_units")?;
    if keys.is_empty() || keys.len() > 2 || units.len() != keys.len() {
        return Err(ctx.invalid("axis_keys/axis_units must list 1 or 2 axes"));
    }
    let mut axes = Vec::new();
    for (k, (key, unit)) in keys.into_iter().zip(units).enumerate() {
        let name = format!("axis_{k}");
        let ds = root
            .dataset(&name)
            .map_err(ctx.h5(format!("opening dataset {name}")))?;
        ctx.check::<f64, _>(&ds, &name)?;
        let values = ds
            .read_raw::<f64>()
            .map_err(ctx.h5(format!("reading dataset {name}")))?;
        axes.push(MapAxis { key, unit, values });
    }
    let mut map = StabilityMap {
        vehicle_name: ctx.read_attr_str(root, "vehicle_name")?,
        description: ctx.read_attr_str(root, "description")?,
        axes,
        points: Vec::new(),
        provenance: if version >= 2 {
            read_provenance(&ctx, root)?
        } else {
            MapProvenance::default()
        },
    };
    let shape = map.shape();
    let trim_found: Vec<u8> = ctx.read_grid(root, "trim_found", shape)?;
    let stable: Vec<u8> = ctx.read_grid(root, "stable", shape)?;
    let zeta: Vec<f64> = ctx.read_grid(root, "yaw_damping_ratio", shape)?;
    let freq: Vec<f64> = ctx.read_grid(root, "yaw_frequency_hz", shape)?;
    let max_re: Vec<f64> = ctx.read_grid(root, "max_real_part", shape)?;
    let ay: Vec<f64> = ctx.read_grid(root, "lat_accel", shape)?;
    map.points = (0..shape[0] * shape[1])
        .map(|k| MapPoint {
            trim_found: trim_found[k] != 0,
            stable: stable[k] != 0,
            yaw_damping_ratio: zeta[k],
            yaw_frequency_hz: freq[k],
            max_real_part: max_re[k],
            lat_accel: ay[k],
        })
        .collect();
    Ok(map)
}

/// Reads the provenance and fixed conditions of a version 2 map.
fn read_provenance(ctx: &Ctx<'_>, root: &Group) -> Result<MapProvenance, MapError> {
    let pg = root
        .group("provenance")
        .map_err(ctx.h5("opening group provenance"))?;
    let toml_ds = pg
        .dataset("vehicle_toml")
        .map_err(ctx.h5("opening dataset vehicle_toml"))?;
    ctx.check::<VarLenUnicode, _>(&toml_ds, "vehicle_toml")?;
    if toml_ds.ndim() != 0 {
        return Err(ctx.invalid("dataset vehicle_toml is not a single text"));
    }
    let vehicle_toml = toml_ds
        .read_scalar::<VarLenUnicode>()
        .map_err(ctx.h5("reading dataset vehicle_toml"))
        .and_then(|v| {
            crate::results::h5::utf8_text(&v)
                .map_err(|why| ctx.invalid(format!("dataset vehicle_toml: {why}")))
        })?;
    let fg = root
        .group("fixed_conditions")
        .map_err(ctx.h5("opening group fixed_conditions"))?;
    let mut fixed = Vec::new();
    for name in fg
        .member_names()
        .map_err(ctx.h5("listing fixed_conditions"))?
    {
        let ds = fg
            .dataset(&name)
            .map_err(ctx.h5(format!("opening fixed condition {name}")))?;
        ctx.check::<f64, _>(&ds, &name)?;
        if ds.ndim() != 0 {
            return Err(ctx.invalid(format!("fixed condition {name} is not a single number")));
        }
        fixed.push(FixedCondition {
            value: ds
                .read_scalar::<f64>()
                .map_err(ctx.h5(format!("reading fixed condition {name}")))?,
            unit: ctx.read_attr_str(&ds, "units")?,
            key: name,
        });
    }
    // Stored in name order by HDF5: back to the order conditions are written.
    fixed.sort_by_key(|c| CONDITION_ORDER.iter().position(|k| *k == c.key));
    Ok(MapProvenance {
        yawdyn_version: ctx.read_attr_str(root, "yawdyn_version")?,
        created_utc: ctx.read_attr_str(root, "created_utc")?,
        vehicle_path: ctx.read_attr_str(root, "vehicle_path")?,
        vehicle_toml,
        overrides: ctx.read_strs(&pg, "overrides")?,
        fixed,
    })
}

/// The operating-point quantities of a map, in the order they are listed.
pub const CONDITION_ORDER: [&str; 4] = ["speed_kph", "lat_accel_g", "long_accel_g", "front_share"];

#[cfg(test)]
mod tests;
