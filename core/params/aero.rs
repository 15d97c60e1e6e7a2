//! The `[aero]` group: drag and downforce coefficients and where they act.

use serde::{Deserialize, Serialize};

use super::chassis::ChassisFile;
use super::checks::Checks;

/// Aerodynamics, as in the file. Defaults: no drag, no downforce.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AeroFile {
    /// Air density, kg/m³. Default 1.2 (sea level, about 20 °C).
    #[serde(default = "default_air_density")]
    pub air_density: f64,
    /// Drag coefficient times frontal area, Cd·A, m². Default 0.
    #[serde(default)]
    pub drag_area: f64,
    /// Downforce coefficient times area, Cl·A, m² (positive pushes the car down). Default 0.
    #[serde(default)]
    pub downforce_area: f64,
    /// Centre of pressure of the downforce: distance behind the front axle, m. Default: at the CG.
    #[serde(default)]
    pub pressure_centre_to_front_axle: Option<f64>,
    /// Height at which drag acts, m. Default: at the CG height.
    #[serde(default)]
    pub drag_height: Option<f64>,
}

fn default_air_density() -> f64 {
    1.2
}

impl Default for AeroFile {
    fn default() -> Self {
        Self {
            air_density: default_air_density(),
            drag_area: 0.0,
            downforce_area: 0.0,
            pressure_centre_to_front_axle: None,
            drag_height: None,
        }
    }
}

/// The checked aerodynamics. SI units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Aero {
    /// Air density ρ, kg/m³ (> 0).
    pub air_density: f64,
    /// Cd·A, m² (≥ 0).
    pub drag_area: f64,
    /// Cl·A, m² (positive = downforce).
    pub downforce_area: f64,
    /// Downforce centre of pressure behind the front axle, m (0..L).
    pub pressure_centre_to_front_axle: f64,
    /// Height at which drag acts, m (≥ 0).
    pub drag_height: f64,
}

impl Aero {
    /// Checks `[aero]` (the centre of pressure against the chassis' wheelbase)
    /// and builds the group; defaults taken from the chassis.
    pub(crate) fn build(a: &AeroFile, chassis: &ChassisFile, checks: &mut Checks) -> Self {
        checks.positive("aero.air_density", a.air_density);
        checks.non_negative("aero.drag_area", a.drag_area);
        checks.finite("aero.downforce_area", a.downforce_area);
        if let Some(x) = a.pressure_centre_to_front_axle {
            if !(x.is_finite() && (0.0..=chassis.wheelbase).contains(&x)) {
                checks.push(
                    "aero.pressure_centre_to_front_axle",
                    format!(
                        "must lie between the axles, 0..{} m, got {x}",
                        chassis.wheelbase
                    ),
                );
            }
        }
        if let Some(hd) = a.drag_height {
            if !(hd.is_finite() && hd >= 0.0) {
                checks.push("aero.drag_height", format!("must be ≥ 0, got {hd}"));
            }
        }
        Self {
            air_density: a.air_density,
            drag_area: a.drag_area,
            downforce_area: a.downforce_area,
            pressure_centre_to_front_axle: a
                .pressure_centre_to_front_axle
                .unwrap_or(chassis.cg_to_front_axle),
            drag_height: a.drag_height.unwrap_or(chassis.cg_height),
        }
    }
}
