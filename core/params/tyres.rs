//! The `[tyre.front]` and `[tyre.rear]` groups: wheel and tyre data per axle,
//! with the Magic Formula coefficients checked by [`MagicFormulaCoefficients::check`].

use serde::{Deserialize, Serialize};

use super::checks::Checks;
use crate::tyre::{CombinedSlip, MagicFormulaCoefficients, TyreModel};

/// A value given separately for the front and the rear axle.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AxlePair<T> {
    /// Front axle.
    pub front: T,
    /// Rear axle.
    pub rear: T,
}

/// Tyre and wheel data for the wheels of one axle, as in the file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TyreFile {
    /// Effective rolling radius, m.
    pub rolling_radius: f64,
    /// Spin inertia of one wheel with its tyre, brake and driveline share, kg·m².
    pub wheel_inertia: f64,
    /// Lateral relaxation length, m.
    pub relaxation_length_lateral: f64,
    /// Longitudinal relaxation length, m.
    pub relaxation_length_longitudinal: f64,
    /// Rolling-resistance coefficient (force / load), 1. Default 0.
    #[serde(default)]
    pub rolling_resistance: f64,
    /// Static camber, deg; negative = top of the wheel leans towards the car. Default 0.
    #[serde(default)]
    pub camber_deg: f64,
    /// Combined-slip method. Default `friction_ellipse`.
    #[serde(default)]
    pub combined_slip: CombinedSlip,
    /// Magic Formula coefficients.
    pub magic_formula: MagicFormulaCoefficients,
}

/// Tyre and wheel of one axle, checked, angles in radians.
#[derive(Debug, Clone, Copy)]
pub struct AxleTyre {
    /// Tyre force model.
    pub model: TyreModel,
    /// Effective rolling radius R, m (> 0).
    pub rolling_radius: f64,
    /// Spin inertia of one wheel Iw, kg·m² (> 0).
    pub wheel_inertia: f64,
    /// Lateral relaxation length σα, m (> 0).
    pub relaxation_lateral: f64,
    /// Longitudinal relaxation length σκ, m (> 0).
    pub relaxation_longitudinal: f64,
    /// Rolling-resistance coefficient f_r, 1 (≥ 0).
    pub rolling_resistance: f64,
    /// Static camber of the left wheel, rad (negative = top towards the car; the right wheel mirrored).
    pub camber: f64,
    /// Combined-slip method.
    pub combined_slip: CombinedSlip,
}

impl AxleTyre {
    /// Checks `[tyre.<axle>]` (`axle` = `front` or `rear`) and builds the group.
    pub(crate) fn build(axle: &str, t: &TyreFile, checks: &mut Checks) -> Self {
        // Plausible ranges, wide enough for kart to truck wheels (common
        // practice, not from a source).
        for (k, v, range, unit) in [
            ("rolling_radius", t.rolling_radius, (0.1, 2.0), "m"),
            ("wheel_inertia", t.wheel_inertia, (0.01, 500.0), "kg*m^2"),
            (
                "relaxation_length_lateral",
                t.relaxation_length_lateral,
                (0.01, 5.0),
                "m",
            ),
            (
                "relaxation_length_longitudinal",
                t.relaxation_length_longitudinal,
                (0.01, 5.0),
                "m",
            ),
        ] {
            checks.plausible(&format!("tyre.{axle}.{k}"), v, range, unit);
        }
        checks.non_negative(
            &format!("tyre.{axle}.rolling_resistance"),
            t.rolling_resistance,
        );
        checks.within(
            &format!("tyre.{axle}.camber_deg"),
            t.camber_deg,
            -10.0,
            10.0,
        );
        for issue in t.magic_formula.check() {
            checks.push(
                format!("tyre.{axle}.magic_formula.{}", issue.key),
                issue.message,
            );
        }
        Self {
            model: TyreModel::new(&t.magic_formula),
            rolling_radius: t.rolling_radius,
            wheel_inertia: t.wheel_inertia,
            relaxation_lateral: t.relaxation_length_lateral,
            relaxation_longitudinal: t.relaxation_length_longitudinal,
            rolling_resistance: t.rolling_resistance,
            camber: t.camber_deg.to_radians(),
            combined_slip: t.combined_slip,
        }
    }
}
