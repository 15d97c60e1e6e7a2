//! The `[chassis]` group: body mass, inertia, geometry and suspension (roll
//! and pitch), as written in the file and as checked for the model.

use serde::{Deserialize, Serialize};

use super::checks::Checks;

/// Index of the front axle in per-axle arrays.
pub const FRONT: usize = 0;
/// Index of the rear axle in per-axle arrays.
pub const REAR: usize = 1;

/// Body mass, inertia, geometry and suspension (roll and pitch), as in the file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ChassisFile {
    /// Total vehicle mass, kg (treated as sprung mass for roll and pitch).
    pub mass: f64,
    /// Yaw moment of inertia about the CG, kg·m².
    pub yaw_inertia: f64,
    /// Roll moment of inertia of the body about the roll axis, kg·m².
    pub roll_inertia: f64,
    /// Pitch moment of inertia of the body about the CG, kg·m².
    pub pitch_inertia: f64,
    /// Wheelbase, m.
    pub wheelbase: f64,
    /// Horizontal distance from the front axle back to the CG, m (0 < a < wheelbase).
    pub cg_to_front_axle: f64,
    /// CG height above the ground, m.
    pub cg_height: f64,
    /// Front track width, m.
    pub track_front: f64,
    /// Rear track width, m.
    pub track_rear: f64,
    /// Front roll-centre height above the ground, m.
    pub roll_centre_height_front: f64,
    /// Rear roll-centre height above the ground, m.
    pub roll_centre_height_rear: f64,
    /// Front roll stiffness (springs and anti-roll bar), N·m/rad.
    pub roll_stiffness_front: f64,
    /// Rear roll stiffness, N·m/rad.
    pub roll_stiffness_rear: f64,
    /// Front roll damping, N·m·s/rad.
    pub roll_damping_front: f64,
    /// Rear roll damping, N·m·s/rad.
    pub roll_damping_rear: f64,
    /// Pitch stiffness of the suspension, N·m/rad.
    pub pitch_stiffness: f64,
    /// Pitch damping of the suspension, N·m·s/rad.
    pub pitch_damping: f64,
}

/// The checked chassis. SI units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Chassis {
    /// Total mass m, kg (> 0).
    pub mass: f64,
    /// Yaw inertia Iz, kg·m² (> 0).
    pub yaw_inertia: f64,
    /// Roll inertia Ixx about the roll axis, kg·m² (> 0).
    pub roll_inertia: f64,
    /// Pitch inertia Iyy, kg·m² (> 0).
    pub pitch_inertia: f64,
    /// Wheelbase L, m (> 0).
    pub wheelbase: f64,
    /// CG to front axle a, m (0 < a < L).
    pub a: f64,
    /// CG to rear axle b = L − a, m.
    pub b: f64,
    /// CG height h above the ground, m (> 0).
    pub cg_height: f64,
    /// Track widths [front, rear], m (> 0).
    pub track: [f64; 2],
    /// Roll-centre heights above the ground [front, rear], m (|z| < h).
    pub roll_centre_height: [f64; 2],
    /// Roll stiffness [front, rear], N·m/rad (> 0).
    pub roll_stiffness: [f64; 2],
    /// Roll damping [front, rear], N·m·s/rad (≥ 0).
    pub roll_damping: [f64; 2],
    /// Pitch stiffness, N·m/rad (> 0).
    pub pitch_stiffness: f64,
    /// Pitch damping, N·m·s/rad (≥ 0).
    pub pitch_damping: f64,
}

/// Plausible ranges of the chassis values, wide enough for anything from a
/// kart to a heavy truck (common practice, not from a source): outside them
/// a value is a typing error, and the model's numbers would be meaningless
/// or its equations too stiff to integrate.
mod plausible {
    /// Mass, kg.
    pub const MASS: (f64, f64) = (50.0, 1.0e5);
    /// Any moment of inertia of the body, kg·m².
    pub const INERTIA: (f64, f64) = (1.0, 1.0e7);
    /// Radius of gyration √(I/m) of the body about any axis, m.
    pub const GYRATION_RADIUS: (f64, f64) = (0.05, 10.0);
    /// Wheelbase, m.
    pub const WHEELBASE: (f64, f64) = (0.5, 20.0);
    /// Track widths, m.
    pub const TRACK: (f64, f64) = (0.3, 5.0);
    /// CG height, m.
    pub const CG_HEIGHT: (f64, f64) = (0.05, 5.0);
    /// Roll and pitch stiffness, N·m/rad.
    pub const STIFFNESS: (f64, f64) = (1.0e2, 1.0e9);
    /// Roll and pitch damping, N·m·s/rad (zero allowed).
    pub const DAMPING: (f64, f64) = (0.0, 1.0e8);
    /// Largest damping ratio ζ = c / (2·√(K·I)) of the roll and pitch modes:
    /// passenger cars lie near 0.2–0.7; beyond 5 the mode is a stiff first-order
    /// lag that only slows integration.
    pub const DAMPING_RATIO_MAX: f64 = 5.0;
}

impl Chassis {
    /// Checks `[chassis]` (problems pushed with their key paths) and builds the group.
    pub(crate) fn build(c: &ChassisFile, checks: &mut Checks) -> Self {
        use plausible::*;
        checks.plausible("chassis.mass", c.mass, MASS, "kg");
        for (k, v) in [
            ("yaw_inertia", c.yaw_inertia),
            ("roll_inertia", c.roll_inertia),
            ("pitch_inertia", c.pitch_inertia),
        ] {
            let path = format!("chassis.{k}");
            checks.plausible(&path, v, INERTIA, "kg*m^2");
            // The inertia must fit the mass: I = m·k² with a plausible k.
            let (lo, hi) = GYRATION_RADIUS;
            let radius = (v / c.mass).sqrt();
            let mass_ok = c.mass.is_finite() && c.mass >= MASS.0 && c.mass <= MASS.1;
            let inertia_ok = v.is_finite() && v >= INERTIA.0 && v <= INERTIA.1;
            if mass_ok && inertia_ok && !(lo..=hi).contains(&radius) {
                checks.push(
                    &path,
                    format!(
                        "{} kg*m^2 with mass {} kg means a radius of gyration of {radius:.3} m, \
                         outside the plausible range [{lo}, {hi}] m: allowed [{:.4}, {:.4e}] kg*m^2",
                        super::checks::short(v),
                        c.mass,
                        c.mass * lo * lo,
                        c.mass * hi * hi
                    ),
                );
            }
        }
        checks.plausible("chassis.wheelbase", c.wheelbase, WHEELBASE, "m");
        checks.plausible("chassis.cg_height", c.cg_height, CG_HEIGHT, "m");
        checks.plausible("chassis.track_front", c.track_front, TRACK, "m");
        checks.plausible("chassis.track_rear", c.track_rear, TRACK, "m");
        for (k, v) in [
            ("roll_stiffness_front", c.roll_stiffness_front),
            ("roll_stiffness_rear", c.roll_stiffness_rear),
            ("pitch_stiffness", c.pitch_stiffness),
        ] {
            checks.plausible(&format!("chassis.{k}"), v, STIFFNESS, "N*m/rad");
        }
        for (k, v) in [
            ("roll_damping_front", c.roll_damping_front),
            ("roll_damping_rear", c.roll_damping_rear),
            ("pitch_damping", c.pitch_damping),
        ] {
            checks.plausible(&format!("chassis.{k}"), v, DAMPING, "N*m*s/rad");
        }
        if c.wheelbase > 0.0 && !(c.cg_to_front_axle > 0.0 && c.cg_to_front_axle < c.wheelbase) {
            checks.push(
                "chassis.cg_to_front_axle",
                format!(
                    "the CG must lie between the axles: 0 < {} < wheelbase {}",
                    c.cg_to_front_axle, c.wheelbase
                ),
            );
        }
        for (k, rc) in [
            ("roll_centre_height_front", c.roll_centre_height_front),
            ("roll_centre_height_rear", c.roll_centre_height_rear),
        ] {
            if !(rc.is_finite() && rc < c.cg_height && rc > -c.cg_height) {
                checks.push(
                    format!("chassis.{k}"),
                    format!(
                        "roll centre must lie below the CG height {} (got {rc})",
                        c.cg_height
                    ),
                );
            }
        }
        let built = Self {
            mass: c.mass,
            yaw_inertia: c.yaw_inertia,
            roll_inertia: c.roll_inertia,
            pitch_inertia: c.pitch_inertia,
            wheelbase: c.wheelbase,
            a: c.cg_to_front_axle,
            b: c.wheelbase - c.cg_to_front_axle,
            cg_height: c.cg_height,
            track: [c.track_front, c.track_rear],
            roll_centre_height: [c.roll_centre_height_front, c.roll_centre_height_rear],
            roll_stiffness: [c.roll_stiffness_front, c.roll_stiffness_rear],
            roll_damping: [c.roll_damping_front, c.roll_damping_rear],
            pitch_stiffness: c.pitch_stiffness,
            pitch_damping: c.pitch_damping,
        };
        // Damping ratios of roll and pitch, each as a single-degree-of-freedom
        // oscillator: ζ = c / c_c with critical damping c_c = 2·√(K·I)
        // (Thomson & Dahleh, Theory of Vibration with Applications, ch. 2,
        // viscously damped free vibration; from memory). Roll uses the net stiffness after the overturning
        // moment m·g·H.
        let mass_ok = (MASS.0..=MASS.1).contains(&built.mass);
        let net_roll =
            built.total_roll_stiffness() - built.mass * super::GRAVITY * built.roll_arm();
        let roll_damping = built.roll_damping[FRONT] + built.roll_damping[REAR];
        for (path, what, damping, stiffness, inertia) in [
            (
                "chassis.roll_damping_front",
                "roll damping (front + rear)",
                roll_damping,
                net_roll,
                built.roll_inertia,
            ),
            (
                "chassis.pitch_damping",
                "pitch damping",
                built.pitch_damping,
                built.pitch_stiffness,
                built.pitch_inertia,
            ),
        ] {
            let zeta = damping / (2.0 * (stiffness * inertia).sqrt());
            let inertia_ok = (INERTIA.0..=INERTIA.1).contains(&inertia);
            if mass_ok
                && inertia_ok
                && stiffness > 0.0
                && zeta.is_finite()
                && zeta > DAMPING_RATIO_MAX
            {
                let most = DAMPING_RATIO_MAX * 2.0 * (stiffness * inertia).sqrt();
                checks.push(
                    path,
                    format!(
                        "{what} {damping} N*m*s/rad gives a damping ratio of {zeta:.3} with \
                         stiffness {stiffness:.0} N*m/rad and inertia {inertia} kg*m^2; \
                         at most {DAMPING_RATIO_MAX} is accepted (damping up to {most:.0} N*m*s/rad)"
                    ),
                );
            }
        }
        // The roll spring must hold the body up against its own overturning
        // moment m·g·H·φ (Gillespie, Fundamentals of Vehicle Dynamics, ch. 8).
        let overturning = built.mass * super::GRAVITY * built.roll_arm();
        if mass_ok
            && built.total_roll_stiffness() <= overturning
            && built.total_roll_stiffness() > 0.0
        {
            checks.push(
                "chassis.roll_stiffness_front",
                format!(
                    "total roll stiffness {} N*m/rad (front + rear) must exceed m*g*H = {overturning:.0} N*m/rad, \
                     the overturning moment of the body per radian of roll",
                    built.total_roll_stiffness()
                ),
            );
        }
        built
    }

    /// Height of the roll axis under the CG, m: the line through the two roll
    /// centres, interpolated at the CG (z_rf + (z_rr − z_rf)·a/L).
    pub fn roll_axis_height(&self) -> f64 {
        let z = self.roll_centre_height;
        z[FRONT] + (z[REAR] - z[FRONT]) * self.a / self.wheelbase
    }

    /// CG height above the roll axis H = h − roll-axis height, m.
    pub fn roll_arm(&self) -> f64 {
        self.cg_height - self.roll_axis_height()
    }

    /// Total roll stiffness KΦ = KΦf + KΦr, N·m/rad.
    pub fn total_roll_stiffness(&self) -> f64 {
        self.roll_stiffness[FRONT] + self.roll_stiffness[REAR]
    }
}
