//! Quantities ranked without a script: the derived figures of a vehicle
//! (`vehicle.<field>`, the numeric fields of
//! [`VehicleSummary`](crate::model::linear::VehicleSummary), as `yawdyn
//! vehicle --json` prints them) and the stability figures at one operating
//! point (`stability.<name>`, from [`crate::stability::analyse`]).

use std::path::Path;

use crate::model::linear::summarize;
use crate::params::{Override, Vehicle, load_vehicle_text};
use crate::results::{Metric, Provenance, RunRecord, RunStatus};
use crate::stability::{TrimSettings, TrimTarget, analyse};

/// The steady cornering condition of the `stability.*` quantities.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OperatingPoint {
    /// Forward speed, m/s.
    pub speed: f64,
    /// Steady lateral acceleration, m/s² (positive = left turn, ISO 8855).
    pub lat_accel: f64,
}

/// The stability figures, each with its unit and what it is.
const STABILITY: [(&str, &str, &str); 6] = [
    (
        "yaw_damping_ratio",
        "1",
        "damping ratio of the yaw/sideslip mode",
    ),
    (
        "yaw_frequency_hz",
        "Hz",
        "undamped natural frequency of the yaw/sideslip mode",
    ),
    (
        "understeer_gradient_deg_per_g",
        "deg/g",
        "local understeer gradient at the trim (ISO 4138 definition)",
    ),
    (
        "max_real_part",
        "1/s",
        "largest real part of the eigenvalues",
    ),
    (
        "steer_wheel_angle_deg",
        "deg",
        "steering-wheel angle at the trim",
    ),
    ("sideslip_deg", "deg", "body sideslip angle at the trim"),
];

/// A quantity of the vehicle or of its stability, by name.
#[derive(Debug, Clone, PartialEq)]
pub enum Quantity {
    /// A numeric field of the vehicle summary (`vehicle.<field>`).
    Vehicle(String),
    /// A stability figure at the operating point (`stability.<name>`).
    Stability(String),
}

impl Quantity {
    /// The quantity called `name` (`vehicle.…` or `stability.…`); `None`
    /// for a name without either prefix (a script metric), `Some(Err)` with
    /// the known names for an unknown one.
    pub fn parse(name: &str) -> Option<Result<Quantity, String>> {
        let unknown = |prefix: &str| {
            let known: Vec<String> = quantity_names()
                .into_iter()
                .filter(|n| n.starts_with(prefix))
                .collect();
            Err(format!("unknown quantity; known: {}", known.join(", ")))
        };
        if let Some(field) = name.strip_prefix("vehicle.") {
            return Some(if vehicle_fields().contains(&field) {
                Ok(Quantity::Vehicle(field.to_string()))
            } else {
                unknown("vehicle.")
            });
        }
        if let Some(figure) = name.strip_prefix("stability.") {
            return Some(if STABILITY.iter().any(|(n, _, _)| *n == figure) {
                Ok(Quantity::Stability(figure.to_string()))
            } else {
                unknown("stability.")
            });
        }
        None
    }

    /// The full name, `vehicle.<field>` or `stability.<name>`.
    pub fn name(&self) -> String {
        match self {
            Quantity::Vehicle(f) => format!("vehicle.{f}"),
            Quantity::Stability(f) => format!("stability.{f}"),
        }
    }

    /// The unit, read from the name's suffix for vehicle fields.
    pub fn unit(&self) -> &'static str {
        match self {
            Quantity::Vehicle(f) => vehicle_unit(f),
            Quantity::Stability(f) => STABILITY
                .iter()
                .find(|(n, _, _)| n == f)
                .map_or("", |(_, u, _)| u),
        }
    }

    /// True for a quantity that needs an operating point.
    pub fn needs_operating_point(&self) -> bool {
        matches!(self, Quantity::Stability(_))
    }
}

/// Evaluates `quantities` for `vehicle`: `(name, value)` in order; NaN for
/// a vehicle field that is absent (`null`, e.g. no critical speed). `Err`
/// when a stability quantity is asked and no trim is found at `point`, or
/// when a stability quantity is asked without a point.
pub fn evaluate(
    vehicle: &Vehicle,
    quantities: &[Quantity],
    point: Option<OperatingPoint>,
) -> Result<Vec<(String, f64)>, String> {
    let summary = quantities
        .iter()
        .any(|q| matches!(q, Quantity::Vehicle(_)))
        .then(|| serde_json::to_value(summarize(vehicle)).unwrap_or_default());
    let report = if quantities.iter().any(Quantity::needs_operating_point) {
        let point = point.ok_or("stability quantities need an operating point")?;
        let target = TrimTarget::cornering(vehicle, point.speed, point.lat_accel);
        Some(analyse(vehicle, &target, &TrimSettings::default()).map_err(|e| e.to_string())?)
    } else {
        None
    };
    let mut out = Vec::with_capacity(quantities.len());
    for q in quantities {
        let value = match (q, &summary, &report) {
            (Quantity::Vehicle(f), Some(s), _) => s.get(f).and_then(|v| v.as_f64()),
            (Quantity::Stability(f), _, Some(r)) => match f.as_str() {
                "yaw_damping_ratio" => r.yaw_mode.map(|m| m.damping_ratio),
                "yaw_frequency_hz" => r.yaw_mode.map(|m| m.frequency_hz),
                "understeer_gradient_deg_per_g" => r.understeer_gradient_deg_per_g(),
                "max_real_part" => Some(r.max_real_part),
                "steer_wheel_angle_deg" => Some(r.trim.steer_wheel_angle().to_degrees()),
                "sideslip_deg" => Some(r.trim.sideslip().to_degrees()),
                _ => None,
            },
            _ => None,
        };
        out.push((q.name(), value.unwrap_or(f64::NAN)));
    }
    Ok(out)
}

/// One case of a ranking over quantities: the vehicle `text` (read from
/// `path`, named in messages) with `overrides`, its `quantities` as the
/// metrics of a record without samples (provenance: the resolved
/// parameters). `Err` with the message when the parameters are invalid or
/// no trim is found; the sweep engine records it as a failed case.
pub fn quantity_case(
    text: &str,
    path: &Path,
    overrides: &[Override],
    quantities: &[Quantity],
    point: Option<OperatingPoint>,
) -> Result<RunRecord, String> {
    let vehicle = load_vehicle_text(text, path, overrides).map_err(|e| e.to_string())?;
    let values = evaluate(&vehicle, quantities, point)?;
    let metrics = quantities
        .iter()
        .zip(values)
        .map(|(q, (name, value))| Metric {
            name,
            value,
            unit: q.unit().to_string(),
        })
        .collect();
    Ok(RunRecord {
        time: Vec::new(),
        channels: Vec::new(),
        provenance: Provenance {
            vehicle_path: path.display().to_string(),
            vehicle_toml: vehicle.to_toml(),
            overrides: overrides.iter().map(Override::to_text).collect(),
            ..Provenance::default()
        },
        status: RunStatus::Completed,
        metrics,
        criteria: Vec::new(),
    })
}

/// Every quantity name, `vehicle.*` then `stability.*`.
pub fn quantity_names() -> Vec<String> {
    let mut names: Vec<String> = vehicle_fields()
        .into_iter()
        .map(|f| format!("vehicle.{f}"))
        .collect();
    names.extend(STABILITY.iter().map(|(n, _, _)| format!("stability.{n}")));
    names
}

/// The numeric top-level fields of the vehicle summary (`yawdyn vehicle
/// --json`) with their units, in declaration order. A test checks this
/// list against the summary's JSON.
const VEHICLE_FIELDS: [(&str, &str); 16] = [
    ("mass_kg", "kg"),
    ("wheelbase_m", "m"),
    ("cg_to_front_axle_m", "m"),
    ("cg_height_m", "m"),
    ("yaw_inertia_kg_m2", "kg*m^2"),
    ("front_axle_load_n", "N"),
    ("rear_axle_load_n", "N"),
    ("front_weight_fraction", "1"),
    ("cornering_stiffness_front_n_per_rad", "N/rad"),
    ("cornering_stiffness_rear_n_per_rad", "N/rad"),
    ("understeer_gradient_deg_per_g", "deg/g"),
    ("characteristic_speed_kph", "km/h"),
    ("critical_speed_kph", "km/h"),
    ("aero_front_fraction", "1"),
    ("downforce_at_100_kph_n", "N"),
    ("front_share", "1"),
];

/// The names of [`VEHICLE_FIELDS`].
fn vehicle_fields() -> Vec<&'static str> {
    VEHICLE_FIELDS.iter().map(|(f, _)| *f).collect()
}

/// Unit of a vehicle-summary field.
fn vehicle_unit(field: &str) -> &'static str {
    VEHICLE_FIELDS
        .iter()
        .find(|(f, _)| *f == field)
        .map_or("", |(_, u)| u)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The list of vehicle fields is the summary's numeric fields: each
    /// listed field is a number (or absent: null) in the JSON, and every
    /// numeric field of the JSON is listed.
    #[test]
    fn vehicle_fields_follow_the_summary() {
        for file in ["hybrid_crossover", "track_car"] {
            let path = format!("scripts/vehicles/{file}.toml");
            let v = crate::params::load_vehicle(path.as_ref(), &[]).unwrap();
            let json = serde_json::to_value(summarize(&v)).unwrap();
            let object = json.as_object().unwrap();
            for (field, _) in VEHICLE_FIELDS {
                let value = &object[field];
                assert!(value.is_number() || value.is_null(), "{field}: {value}");
            }
            for (key, value) in object {
                if value.is_number() {
                    assert!(vehicle_fields().contains(&key.as_str()), "{key} not listed");
                }
            }
        }
    }
}
