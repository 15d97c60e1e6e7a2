//! From results records to plot data: engineering units for display, axis
//! labels, closest-name suggestions, the kind of a yawdyn HDF5 file, and the
//! handling-diagram data with its understeer-gradient fit.
//!
//! This is the one part of [`crate::plot`] that knows the results record; the
//! drawing functions stay free of it. It computes; it does not draw.

use std::path::{Path, PathBuf};

use crate::analysis::bicycle::STANDARD_GRAVITY;
use crate::analysis::{fit_line, understeer_gradient};
use crate::params::{Vehicle, load_vehicle_text};
use crate::results::RunRecord;

/// A display unit: value_display = factor × value_SI.
#[derive(Debug, Clone, PartialEq)]
pub struct EngineeringUnit {
    /// Multiplier from the SI value to the displayed value.
    pub factor: f64,
    /// Unit shown on the axis, e.g. `deg/s`.
    pub unit: String,
}

/// The display unit engineers read for an SI unit: rad → deg, rad/s → deg/s,
/// m/s → km/h (× 3.6), m/s² → g (÷ 9.80665, standard gravity, ISO 80000-3);
/// any other unit is shown as stored (factor 1). Accepts `m/s^2` and `m/s²`.
pub fn engineering_unit(si_unit: &str) -> EngineeringUnit {
    let (factor, unit) = match si_unit {
        "rad" => (180.0 / std::f64::consts::PI, "deg"),
        "rad/s" => (180.0 / std::f64::consts::PI, "deg/s"),
        "m/s" => (3.6, "km/h"),
        "m/s^2" | "m/s²" => (1.0 / STANDARD_GRAVITY, "g"),
        other => (1.0, other),
    };
    EngineeringUnit {
        factor,
        unit: unit.to_string(),
    }
}

/// Axis title for a channel: its name with spaces for underscores and the
/// display unit in brackets, e.g. `yaw rate [deg/s]` (`[1]` for `1` or no unit; `²` written `^2`).
pub fn axis_label(name: &str, display_unit: &str) -> String {
    format!("{} [{}]", name.replace('_', " "), unit_text(display_unit))
}

/// A unit as plot labels write it: ASCII exponents (`m/s^2`, not `m/s²`)
/// and `1` for dimensionless quantities (empty, `-` or `1`).
pub fn unit_text(unit: &str) -> String {
    match unit.trim() {
        "" | "-" | "1" => "1".to_string(),
        u => u.replace('²', "^2").replace('³', "^3").replace('·', "*"),
    }
}

/// Up to `count` of `candidates` closest to `wanted` (Jaro–Winkler
/// similarity, highest first; ties in the given order).
pub fn closest_names<'a>(
    wanted: &str,
    candidates: impl IntoIterator<Item = &'a str>,
    count: usize,
) -> Vec<&'a str> {
    let mut scored: Vec<(f64, usize, &str)> = candidates
        .into_iter()
        .enumerate()
        .map(|(i, c)| (strsim::jaro_winkler(wanted, c), i, c))
        .collect();
    scored.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
    scored.into_iter().take(count).map(|(_, _, c)| c).collect()
}

/// Why plot data could not be prepared.
#[derive(Debug, thiserror::Error)]
pub enum FigureError {
    /// The file could not be opened as HDF5 or has no text `format` attribute.
    #[error("{}: {reason}", path.display())]
    UnknownFile {
        /// The file.
        path: PathBuf,
        /// What was found.
        reason: String,
    },
    /// A channel the figure needs is not in the record.
    #[error("channel `{name}` is not in the results file (closest: {})", closest.join(", "))]
    MissingChannel {
        /// The channel wanted.
        name: String,
        /// The closest channel names present.
        closest: Vec<String>,
    },
    /// The vehicle parameters stored in the record's provenance cannot be used.
    #[error("the vehicle stored in the results file cannot be read: {0}")]
    Vehicle(String),
    /// Too few usable samples for the understeer-gradient fit.
    #[error("{0}")]
    NoFit(String),
}

impl crate::error::Classify for FigureError {
    /// The file or its data do not fit the figure asked for: bad input.
    fn kind(&self) -> crate::error::ErrorKind {
        crate::error::ErrorKind::BadInput
    }
}

/// The root `format` attribute of an HDF5 file (`yawdyn-results`,
/// `yawdyn-sweep`, `yawdyn-stability-map`, ...), read without reading the rest.
pub fn file_format(path: &Path) -> Result<String, FigureError> {
    let unknown = |reason: String| FigureError::UnknownFile {
        path: path.to_path_buf(),
        reason,
    };
    // A regular file whose global heaps are sound (see `results::h5::heap`).
    let meta = std::fs::metadata(path).map_err(|e| unknown(format!("cannot open: {e}")))?;
    if !meta.is_file() {
        return Err(unknown("not a regular file".into()));
    }
    crate::output::note_read(path);
    crate::results::h5::heap::check_global_heaps(path)
        .map_err(|why| unknown(format!("the file is damaged: {why}")))?;
    // No HDF5 file locking: see the note on `results::read_hdf5`'s opener.
    let mut builder = hdf5::File::with_options();
    builder.with_fapl(|fapl| fapl.file_locking(false));
    let file = builder
        .open(path)
        .map_err(|e| unknown(format!("cannot open as HDF5: {e}")))?;
    let attr = file
        .attr("format")
        .map_err(|_| unknown("no `format` attribute on the root group".into()))?;
    crate::results::h5::check_before_read::<hdf5::types::VarLenUnicode, _>(&attr, path)
        .map_err(|why| unknown(format!("the `format` attribute {why}")))?;
    if attr.ndim() != 0 {
        return Err(unknown(
            "the `format` attribute is not a single text".into(),
        ));
    }
    let format: hdf5::types::VarLenUnicode = attr
        .read_scalar()
        .map_err(|_| unknown("the `format` attribute is not a text scalar".into()))?;
    crate::results::h5::utf8_text(&format).map_err(|why| unknown(format!("format: {why}")))
}

/// A channel's samples, or [`FigureError::MissingChannel`] naming the closest.
pub fn channel_data<'r>(record: &'r RunRecord, name: &str) -> Result<&'r [f64], FigureError> {
    record
        .channel(name)
        .map(|c| c.data.as_slice())
        .ok_or_else(|| FigureError::MissingChannel {
            name: name.to_string(),
            closest: closest_names(name, record.channels.iter().map(|c| c.name.as_str()), 5)
                .into_iter()
                .map(String::from)
                .collect(),
        })
}

/// The vehicle stored (as resolved TOML) in the record's provenance.
pub fn stored_vehicle(record: &RunRecord) -> Result<Vehicle, FigureError> {
    let prov = &record.provenance;
    if prov.vehicle_toml.trim().is_empty() {
        return Err(FigureError::Vehicle("no vehicle parameters stored".into()));
    }
    load_vehicle_text(&prov.vehicle_toml, Path::new(&prov.vehicle_path), &[])
        .map_err(|e| FigureError::Vehicle(e.to_string()))
}

/// Names under which a circle radius (m) is looked up, first in the metrics,
/// then in the provenance extras, as given and with the prefix `value.` that
/// the script runner gives remembered values (`remember("radius", r)` and
/// `follow_circle` store `value.radius`, `value.circle_radius`).
pub const RADIUS_KEYS: [&str; 3] = ["radius", "circle_radius", "radius_m"];

/// How the understeer gradient of a [`HandlingData`] was obtained.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum HandlingMethod {
    /// Constant radius known from the file (ISO 4138 constant-radius
    /// method): the Ackermann angle L/R is the same at every point, so the
    /// slope of road-wheel angle against ay is the gradient itself.
    ConstantRadius {
        /// Circle radius, m.
        radius_m: f64,
    },
    /// No radius stored: the Ackermann angle L·κ of every sample (κ the path
    /// curvature, from `path_curvature` or yaw_rate/speed) is subtracted from
    /// the road-wheel angle before the fit, from δ = L/R + K·ay (Gillespie,
    /// "Fundamentals of Vehicle Dynamics", ch. 6), so the slope is K for any
    /// mix of speed and radius.
    AckermannCorrected,
}

/// Line fitted to the handling diagram, in display units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HandlingFit {
    /// Understeer gradient, deg/g.
    pub gradient_deg_per_g: f64,
    /// Intercept of the fitted line at ay = 0, deg.
    pub intercept_deg: f64,
    /// Signed lateral acceleration of the fitted point farthest from zero, g.
    pub ay_max_g: f64,
    /// Coefficient of determination of the fit.
    pub r_squared: f64,
    /// Points in the fit.
    pub count: usize,
}

/// Data of a handling diagram from one run.
#[derive(Debug, Clone, PartialEq)]
pub struct HandlingData {
    /// Lateral acceleration of each plotted sample, g.
    pub lat_accel_g: Vec<f64>,
    /// Road-wheel angle (steering-wheel angle / overall ratio), deg; for
    /// [`HandlingMethod::AckermannCorrected`] minus the Ackermann angle L·κ.
    pub steer_deg: Vec<f64>,
    /// How the gradient was found.
    pub method: HandlingMethod,
    /// The linear fit.
    pub fit: HandlingFit,
}

/// Lowest speed, m/s, at which a sample enters the Ackermann-corrected fit
/// (below it κ = r/V is ill-conditioned).
const MIN_SPEED: f64 = 1.0;

fn stored_radius(record: &RunRecord) -> Option<f64> {
    let ok = |v: f64| v.is_finite() && v != 0.0;
    for key in RADIUS_KEYS {
        if let Some(m) = record.metrics.iter().find(|m| m.name == key)
            && ok(m.value)
        {
            return Some(m.value);
        }
    }
    for key in RADIUS_KEYS {
        let prefixed = format!("value.{key}");
        if let Some((_, v)) = record
            .provenance
            .extra
            .iter()
            .find(|(k, _)| k == key || *k == prefixed)
            && let Ok(r) = v.trim().parse::<f64>()
            && ok(r)
        {
            return Some(r);
        }
    }
    None
}

/// Handling-diagram data of `record` and its understeer-gradient fit over
/// the samples with |ay| ≤ `lat_accel_max` (m/s², the linear range; ISO 4138
/// leaves the range to the tester, 0.4 g is common practice).
///
/// Needs channels `steer_wheel_angle` and `ay` (plus `path_curvature` or
/// `yaw_rate` and `speed` without a stored radius) and the vehicle in the
/// provenance (steering ratio, wheelbase). Radius: see [`RADIUS_KEYS`] and
/// [`HandlingMethod`].
pub fn handling_data(record: &RunRecord, lat_accel_max: f64) -> Result<HandlingData, FigureError> {
    let vehicle = stored_vehicle(record)?;
    let ratio = vehicle.steering.ratio;
    let wheelbase = vehicle.chassis.wheelbase;
    let sw = channel_data(record, "steer_wheel_angle")?;
    let ay = channel_data(record, "ay")?;
    let g = STANDARD_GRAVITY;
    let no_fit = || {
        FigureError::NoFit(format!(
            "too few steady samples with |ay| ≤ {:.2} g for an understeer-gradient fit",
            lat_accel_max / g
        ))
    };
    let farthest = |values: &[f64]| {
        values
            .iter()
            .copied()
            .filter(|v| v.abs() <= lat_accel_max)
            .fold(0.0_f64, |m, v| if v.abs() > m.abs() { v } else { m })
    };
    if let Some(radius) = stored_radius(record) {
        let fit = understeer_gradient(ay, sw, ratio, wheelbase, radius, lat_accel_max)
            .ok_or_else(no_fit)?;
        return Ok(HandlingData {
            lat_accel_g: ay.iter().map(|a| a / g).collect(),
            steer_deg: sw.iter().map(|s| (s / ratio).to_degrees()).collect(),
            method: HandlingMethod::ConstantRadius { radius_m: radius },
            fit: HandlingFit {
                gradient_deg_per_g: fit.gradient_deg_per_g,
                intercept_deg: fit.fit.intercept.to_degrees(),
                ay_max_g: farthest(ay) / g,
                r_squared: fit.fit.r_squared,
                count: fit.fit.count,
            },
        });
    }
    let speed = channel_data(record, "speed")?;
    let curvature: Vec<f64> = match record.channel("path_curvature") {
        Some(c) => c.data.clone(),
        None => {
            let r = channel_data(record, "yaw_rate")?;
            r.iter().zip(speed).map(|(r, v)| r / v).collect()
        }
    };
    let mut x = Vec::new();
    let mut y = Vec::new();
    for i in 0..ay.len() {
        let delta = sw[i] / ratio - wheelbase * curvature[i];
        if speed[i] >= MIN_SPEED && delta.is_finite() && ay[i].is_finite() {
            x.push(ay[i]);
            y.push(delta);
        }
    }
    let (fx, fy): (Vec<f64>, Vec<f64>) = x
        .iter()
        .zip(&y)
        .filter(|(a, _)| a.abs() <= lat_accel_max)
        .map(|(a, d)| (*a, *d))
        .unzip();
    if fx.len() < 3 {
        return Err(no_fit());
    }
    let fit = fit_line(&fx, &fy).ok_or_else(no_fit)?;
    Ok(HandlingData {
        lat_accel_g: x.iter().map(|a| a / g).collect(),
        steer_deg: y.iter().map(|d| d.to_degrees()).collect(),
        method: HandlingMethod::AckermannCorrected,
        fit: HandlingFit {
            gradient_deg_per_g: fit.slope.to_degrees() * g,
            intercept_deg: fit.intercept.to_degrees(),
            ay_max_g: farthest(&fx) / g,
            r_squared: fit.r_squared,
            count: fit.count,
        },
    })
}

/// One line of a sweep plot: a metric against the x parameter for one
/// combination of the other varied parameters.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepLine {
    /// Legend text, e.g. `drive.front_share = 0.3` (empty with one parameter).
    pub label: String,
    /// Values of the x parameter, ascending.
    pub x: Vec<f64>,
    /// Metric values at `x` (NaN where a case has none; the line breaks there).
    pub y: Vec<f64>,
}

/// Splits the rows of a sweep summary into lines of metric `y` against the
/// parameter `x_key`, one line per distinct combination of the other varied
/// parameters (in order of first appearance; points sorted by x).
/// `parameters` holds `(key, one value per row)` columns, `y` one value per
/// row. `None` when `x_key` is not among the parameters or lengths differ.
pub fn sweep_lines(
    parameters: &[(String, Vec<f64>)],
    x_key: &str,
    y: &[f64],
) -> Option<Vec<SweepLine>> {
    let x_column = parameters.iter().position(|(k, _)| k == x_key)?;
    if parameters.iter().any(|(_, v)| v.len() != y.len()) {
        return None;
    }
    let mut lines: Vec<(Vec<u64>, SweepLine)> = Vec::new();
    for row in 0..y.len() {
        let others: Vec<(&str, f64)> = parameters
            .iter()
            .enumerate()
            .filter(|(c, _)| *c != x_column)
            .map(|(_, (k, v))| (k.as_str(), v[row]))
            .collect();
        let key: Vec<u64> = others.iter().map(|(_, v)| v.to_bits()).collect();
        let index = match lines.iter().position(|(k, _)| *k == key) {
            Some(i) => i,
            None => {
                let label = others
                    .iter()
                    .map(|(k, v)| format!("{k} = {v}"))
                    .collect::<Vec<_>>()
                    .join(", ");
                lines.push((
                    key,
                    SweepLine {
                        label,
                        x: Vec::new(),
                        y: Vec::new(),
                    },
                ));
                lines.len() - 1
            }
        };
        let line = &mut lines[index].1;
        line.x.push(parameters[x_column].1[row]);
        line.y.push(y[row]);
    }
    Some(
        lines
            .into_iter()
            .map(|(_, mut line)| {
                let mut pairs: Vec<(f64, f64)> =
                    line.x.iter().copied().zip(line.y.iter().copied()).collect();
                pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
                (line.x, line.y) = pairs.into_iter().unzip();
                line
            })
            .collect(),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn engineering_units_convert() {
        let u = engineering_unit("rad/s");
        assert_eq!(u.unit, "deg/s");
        assert!((u.factor * std::f64::consts::PI - 180.0).abs() < 1e-12);
        assert_eq!(engineering_unit("m/s").factor, 3.6);
        // 1 g = 9.80665 m/s² (standard gravity, ISO 80000-3).
        assert!((engineering_unit("m/s^2").factor * 9.80665 - 1.0).abs() < 1e-15);
        assert_eq!(engineering_unit("N").unit, "N");
        assert_eq!(axis_label("yaw_rate", "deg/s"), "yaw rate [deg/s]");
        assert_eq!(axis_label("front_share", "1"), "front share [1]");
    }

    use crate::results::{Channel, Metric, Provenance, RunStatus};

    /// A synthetic steady-state record obeying δ = L·κ + K·ay exactly
    /// (Gillespie, "Fundamentals of Vehicle Dynamics", ch. 6), at constant
    /// speed (κ = ay/V²) or, with `radius`, on a constant radius.
    fn steady_record(gradient: f64, radius: Option<f64>) -> (RunRecord, Vehicle) {
        let path = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/scripts/vehicles/hybrid_crossover.toml"
        );
        let vehicle = crate::params::load_vehicle(Path::new(path), &[]).unwrap();
        let (l, ratio, v) = (vehicle.chassis.wheelbase, vehicle.steering.ratio, 20.0);
        let ay: Vec<f64> = (0..=60).map(|i| i as f64 * 0.1).collect();
        let curvature: Vec<f64> = ay
            .iter()
            .map(|a| radius.map_or(a / (v * v), |r| 1.0 / r))
            .collect();
        let steer: Vec<f64> = ay
            .iter()
            .zip(&curvature)
            .map(|(a, k)| ratio * (l * k + gradient * a))
            .collect();
        let ch = |name: &str, unit: &str, data: Vec<f64>| Channel {
            name: name.into(),
            unit: unit.into(),
            description: String::new(),
            data,
        };
        let n = ay.len();
        let record = RunRecord {
            time: (0..n).map(|i| i as f64).collect(),
            channels: vec![
                ch("ay", "m/s^2", ay),
                ch("steer_wheel_angle", "rad", steer),
                ch("path_curvature", "1/m", curvature),
                ch("speed", "m/s", vec![v; n]),
            ],
            provenance: Provenance {
                vehicle_toml: vehicle.to_toml(),
                vehicle_path: path.into(),
                ..Provenance::default()
            },
            status: RunStatus::Completed,
            metrics: radius
                .map(|r| Metric {
                    name: "radius".into(),
                    value: r,
                    unit: "m".into(),
                })
                .into_iter()
                .collect(),
            criteria: Vec::new(),
        };
        (record, vehicle)
    }

    #[test]
    fn handling_fit_recovers_understeer_gradient_at_constant_speed() {
        let k = 0.004; // rad/(m/s²)
        let (record, _) = steady_record(k, None);
        let d = handling_data(&record, 4.0).unwrap();
        assert_eq!(d.method, HandlingMethod::AckermannCorrected);
        let expected = k.to_degrees() * STANDARD_GRAVITY; // 2.2475 deg/g
        assert!((d.fit.gradient_deg_per_g - expected).abs() < 1e-9);
        assert!(d.fit.intercept_deg.abs() < 1e-9);
        assert_eq!(d.fit.count, 41); // ay = 0.0 ..= 4.0 m/s²
    }

    #[test]
    fn handling_fit_uses_stored_radius() {
        let k = -0.001; // an oversteerer
        let (record, vehicle) = steady_record(k, Some(50.0));
        let d = handling_data(&record, 4.0).unwrap();
        assert_eq!(d.method, HandlingMethod::ConstantRadius { radius_m: 50.0 });
        assert!((d.fit.gradient_deg_per_g - k.to_degrees() * STANDARD_GRAVITY).abs() < 1e-9);
        // Intercept = Ackermann angle L/R.
        let ackermann = (vehicle.chassis.wheelbase / 50.0).to_degrees();
        assert!((d.fit.intercept_deg - ackermann).abs() < 1e-9);
    }

    #[test]
    fn handling_fit_names_missing_channel() {
        let (mut record, _) = steady_record(0.004, None);
        record.channels.retain(|c| c.name != "ay");
        let err = handling_data(&record, 4.0).unwrap_err();
        assert!(err.to_string().contains("`ay`"), "{err}");
    }

    #[test]
    fn sweep_lines_group_by_other_parameter() {
        let params = vec![
            ("speed".to_string(), vec![20.0, 10.0, 20.0, 10.0]),
            ("front_share".to_string(), vec![0.3, 0.3, 0.7, 0.7]),
        ];
        let y = [2.0, 1.0, 4.0, 3.0];
        let lines = sweep_lines(&params, "speed", &y).unwrap();
        assert_eq!(lines.len(), 2);
        assert_eq!(lines[0].label, "front_share = 0.3");
        assert_eq!(
            (lines[0].x.clone(), lines[0].y.clone()),
            (vec![10.0, 20.0], vec![1.0, 2.0])
        );
        assert_eq!(lines[1].y, vec![3.0, 4.0]);
        assert!(sweep_lines(&params, "mass", &y).is_none());
        assert!(sweep_lines(&params, "speed", &y[..3]).is_none());
    }

    #[test]
    fn closest_names_ranks_by_similarity() {
        let names = ["yaw_rate", "yaw", "speed", "ay"];
        assert_eq!(closest_names("yaw_rat", names, 2), vec!["yaw_rate", "yaw"]);
    }
}
