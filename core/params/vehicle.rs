//! The checked vehicle: what the physics uses, built once from a [`VehicleFile`].

use super::file::{DifferentialKind, VehicleFile};
use super::issue::ParamIssue;
use crate::tyre::{CombinedSlip, TyreModel};

/// Standard gravity, m/s² (ISO 80000-3 conventional value).
pub const GRAVITY: f64 = 9.80665;

/// Index of the front axle in per-axle arrays.
pub const FRONT: usize = 0;
/// Index of the rear axle in per-axle arrays.
pub const REAR: usize = 1;

/// Tyre and wheel of one axle, checked, angles in radians.
#[derive(Debug, Clone, Copy)]
pub struct AxleTyre {
    /// Tyre force model.
    pub model: TyreModel,
    /// Effective rolling radius, m.
    pub rolling_radius: f64,
    /// Spin inertia of one wheel, kg·m².
    pub wheel_inertia: f64,
    /// Lateral relaxation length, m.
    pub relaxation_lateral: f64,
    /// Longitudinal relaxation length, m.
    pub relaxation_longitudinal: f64,
    /// Rolling-resistance coefficient, 1.
    pub rolling_resistance: f64,
    /// Static camber, rad (negative = top towards the car).
    pub camber: f64,
    /// Combined-slip method.
    pub combined_slip: CombinedSlip,
}

/// A drive unit with its differential, checked.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DriveUnit {
    /// Maximum torque at the unit's shaft, N·m.
    pub max_torque: f64,
    /// Maximum power, W.
    pub max_power: f64,
    /// Reduction ratio unit → wheels, 1.
    pub ratio: f64,
    /// Efficiency unit → wheels, 1.
    pub efficiency: f64,
    /// Differential kind.
    pub differential: DifferentialKind,
    /// Limited-slip preload, N·m.
    pub preload: f64,
    /// Limited-slip locking coefficient, 1.
    pub locking: f64,
    /// Viscous stand-in for stiction while locked, N·m·s/rad.
    pub coupling_damping: f64,
}

impl DriveUnit {
    /// Largest torque at the wheels (sum of both wheels) at axle wheel speed `wheel_speed`, N·m:
    /// η·i·min(T_max, P_max/ω_unit) with ω_unit = i·|ω_wheel| — the power limit as stated
    /// (common practice: torque is capped by the unit's torque and by power over speed).
    #[inline]
    pub fn available_wheel_torque(&self, wheel_speed: f64) -> f64 {
        let unit_speed = (self.ratio * wheel_speed).abs();
        let unit_torque = if unit_speed * self.max_torque > self.max_power {
            self.max_power / unit_speed
        } else {
            self.max_torque
        };
        self.efficiency * self.ratio * unit_torque
    }
}

/// A vehicle checked and ready for the physics. SI units, angles in radians.
#[derive(Debug, Clone)]
pub struct Vehicle {
    /// Name from the file.
    pub name: String,
    /// Total mass, kg.
    pub mass: f64,
    /// Yaw inertia, kg·m².
    pub yaw_inertia: f64,
    /// Roll inertia, kg·m².
    pub roll_inertia: f64,
    /// Pitch inertia, kg·m².
    pub pitch_inertia: f64,
    /// Wheelbase L, m.
    pub wheelbase: f64,
    /// CG to front axle a, m.
    pub a: f64,
    /// CG to rear axle b = L − a, m.
    pub b: f64,
    /// CG height h, m.
    pub cg_height: f64,
    /// Track widths [front, rear], m.
    pub track: [f64; 2],
    /// Roll-centre heights [front, rear], m.
    pub roll_centre_height: [f64; 2],
    /// Roll stiffness [front, rear], N·m/rad.
    pub roll_stiffness: [f64; 2],
    /// Roll damping [front, rear], N·m·s/rad.
    pub roll_damping: [f64; 2],
    /// Pitch stiffness, N·m/rad.
    pub pitch_stiffness: f64,
    /// Pitch damping, N·m·s/rad.
    pub pitch_damping: f64,
    /// Steering ratio, 1.
    pub steering_ratio: f64,
    /// Ackermann fraction, 1.
    pub ackermann: f64,
    /// Static toe [front, rear], rad, positive toe-in.
    pub toe: [f64; 2],
    /// Air density, kg/m³.
    pub air_density: f64,
    /// Cd·A, m².
    pub drag_area: f64,
    /// Cl·A, m² (positive = downforce).
    pub downforce_area: f64,
    /// Downforce centre of pressure behind the front axle, m.
    pub pressure_centre_to_front_axle: f64,
    /// Drag height, m.
    pub drag_height: f64,
    /// Tyres [front, rear].
    pub tyres: [AxleTyre; 2],
    /// Default front torque share, 0..1.
    pub front_share: f64,
    /// Drive units [front, rear].
    pub drive: [Option<DriveUnit>; 2],
    /// Total brake torque, N·m.
    pub brake_max_torque: f64,
    /// Front brake share, 0..1.
    pub brake_front_bias: f64,
    /// Road friction scale, 1.
    pub road_friction: f64,
    /// The file it was built from, after overrides (for provenance).
    pub file: VehicleFile,
}

impl Vehicle {
    /// Checks a deserialized file and builds the vehicle; returns every physical problem found.
    pub fn from_file(file: VehicleFile) -> Result<Self, Vec<ParamIssue>> {
        let mut issues = Vec::new();
        let mut positive = |path: &str, value: f64| {
            if !(value.is_finite() && value > 0.0) {
                issues.push(ParamIssue::new(
                    path,
                    format!("must be positive, got {value}"),
                ));
            }
        };
        let c = &file.chassis;
        for (k, v) in [
            ("mass", c.mass),
            ("yaw_inertia", c.yaw_inertia),
            ("roll_inertia", c.roll_inertia),
            ("pitch_inertia", c.pitch_inertia),
            ("wheelbase", c.wheelbase),
            ("cg_height", c.cg_height),
            ("track_front", c.track_front),
            ("track_rear", c.track_rear),
            ("roll_stiffness_front", c.roll_stiffness_front),
            ("roll_stiffness_rear", c.roll_stiffness_rear),
            ("pitch_stiffness", c.pitch_stiffness),
        ] {
            positive(&format!("chassis.{k}"), v);
        }
        positive("steering.ratio", file.steering.ratio);
        positive("aero.air_density", file.aero.air_density);
        positive("road.friction", file.road.friction);
        for (axle, t) in [("front", &file.tyre.front), ("rear", &file.tyre.rear)] {
            for (k, v) in [
                ("rolling_radius", t.rolling_radius),
                ("wheel_inertia", t.wheel_inertia),
                ("relaxation_length_lateral", t.relaxation_length_lateral),
                (
                    "relaxation_length_longitudinal",
                    t.relaxation_length_longitudinal,
                ),
            ] {
                positive(&format!("tyre.{axle}.{k}"), v);
            }
        }
        for (axle, unit) in [("front", &file.drive.front), ("rear", &file.drive.rear)] {
            if let Some(u) = unit {
                for (k, v) in [
                    ("max_torque", u.max_torque),
                    ("max_power", u.max_power),
                    ("ratio", u.ratio),
                    ("efficiency", u.efficiency),
                ] {
                    positive(&format!("drive.{axle}.{k}"), v);
                }
            }
        }
        let mut nonneg = |path: &str, value: f64| {
            if !(value.is_finite() && value >= 0.0) {
                issues.push(ParamIssue::new(
                    path,
                    format!("must be zero or positive, got {value}"),
                ));
            }
        };
        for (k, v) in [
            ("roll_damping_front", c.roll_damping_front),
            ("roll_damping_rear", c.roll_damping_rear),
            ("pitch_damping", c.pitch_damping),
        ] {
            nonneg(&format!("chassis.{k}"), v);
        }
        nonneg("aero.drag_area", file.aero.drag_area);
        nonneg("brakes.max_torque", file.brakes.max_torque);
        for (axle, t) in [("front", &file.tyre.front), ("rear", &file.tyre.rear)] {
            nonneg(
                &format!("tyre.{axle}.rolling_resistance"),
                t.rolling_resistance,
            );
        }
        for (axle, unit) in [("front", &file.drive.front), ("rear", &file.drive.rear)] {
            if let Some(u) = unit {
                let p = format!("drive.{axle}.differential");
                nonneg(&format!("{p}.preload"), u.differential.preload);
                nonneg(&format!("{p}.locking"), u.differential.locking);
                nonneg(
                    &format!("{p}.coupling_damping"),
                    u.differential.coupling_damping,
                );
            }
        }
        let mut within = |path: &str, value: f64, lo: f64, hi: f64| {
            if !(value.is_finite() && value >= lo && value <= hi) {
                issues.push(ParamIssue::new(
                    path,
                    format!("must lie in [{lo}, {hi}], got {value}"),
                ));
            }
        };
        within("drive.front_share", file.drive.front_share, 0.0, 1.0);
        within("brakes.front_bias", file.brakes.front_bias, 0.0, 1.0);
        within("steering.ackermann", file.steering.ackermann, 0.0, 1.0);
        within(
            "steering.toe_front_deg",
            file.steering.toe_front_deg,
            -5.0,
            5.0,
        );
        within(
            "steering.toe_rear_deg",
            file.steering.toe_rear_deg,
            -5.0,
            5.0,
        );
        for (axle, unit) in [("front", &file.drive.front), ("rear", &file.drive.rear)] {
            if let Some(u) = unit {
                within(&format!("drive.{axle}.efficiency"), u.efficiency, 0.0, 1.0);
            }
        }
        for (axle, t) in [("front", &file.tyre.front), ("rear", &file.tyre.rear)] {
            within(
                &format!("tyre.{axle}.camber_deg"),
                t.camber_deg,
                -10.0,
                10.0,
            );
        }
        if c.wheelbase > 0.0 && !(c.cg_to_front_axle > 0.0 && c.cg_to_front_axle < c.wheelbase) {
            issues.push(ParamIssue::new(
                "chassis.cg_to_front_axle",
                format!(
                    "the CG must lie between the axles: 0 < {} < wheelbase {}",
                    c.cg_to_front_axle, c.wheelbase
                ),
            ));
        }
        for (k, rc) in [
            ("roll_centre_height_front", c.roll_centre_height_front),
            ("roll_centre_height_rear", c.roll_centre_height_rear),
        ] {
            if !(rc.is_finite() && rc < c.cg_height && rc > -c.cg_height) {
                issues.push(ParamIssue::new(
                    format!("chassis.{k}"),
                    format!(
                        "roll centre must lie below the CG height {} (got {rc})",
                        c.cg_height
                    ),
                ));
            }
        }
        if let Some(x) = file.aero.pressure_centre_to_front_axle {
            if !(x.is_finite() && (0.0..=c.wheelbase).contains(&x)) {
                issues.push(ParamIssue::new(
                    "aero.pressure_centre_to_front_axle",
                    format!("must lie between the axles, 0..{} m, got {x}", c.wheelbase),
                ));
            }
        }
        if let Some(hd) = file.aero.drag_height {
            if !(hd.is_finite() && hd >= 0.0) {
                issues.push(ParamIssue::new(
                    "aero.drag_height",
                    format!("must be ≥ 0, got {hd}"),
                ));
            }
        }
        if !file.aero.downforce_area.is_finite() {
            issues.push(ParamIssue::new("aero.downforce_area", "must be finite"));
        }
        if file.drive.front.is_none() && file.drive.rear.is_none() {
            issues.push(ParamIssue::new(
                "drive",
                "needs a drive unit on at least one axle ([drive.front] or [drive.rear])",
            ));
        }
        file.tyre
            .front
            .magic_formula
            .check("tyre.front.magic_formula", &mut issues);
        file.tyre
            .rear
            .magic_formula
            .check("tyre.rear.magic_formula", &mut issues);
        if !issues.is_empty() {
            return Err(issues);
        }

        let deg = f64::to_radians;
        let axle_tyre = |t: &super::file::TyreFile| AxleTyre {
            model: TyreModel::new(&t.magic_formula),
            rolling_radius: t.rolling_radius,
            wheel_inertia: t.wheel_inertia,
            relaxation_lateral: t.relaxation_length_lateral,
            relaxation_longitudinal: t.relaxation_length_longitudinal,
            rolling_resistance: t.rolling_resistance,
            camber: deg(t.camber_deg),
            combined_slip: t.combined_slip,
        };
        let unit = |u: &Option<super::file::DriveUnitFile>| {
            u.as_ref().map(|u| DriveUnit {
                max_torque: u.max_torque,
                max_power: u.max_power,
                ratio: u.ratio,
                efficiency: u.efficiency,
                differential: u.differential.kind,
                preload: u.differential.preload,
                locking: u.differential.locking,
                coupling_damping: u.differential.coupling_damping,
            })
        };
        Ok(Self {
            name: file.name.clone(),
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
            steering_ratio: file.steering.ratio,
            ackermann: file.steering.ackermann,
            toe: [
                deg(file.steering.toe_front_deg),
                deg(file.steering.toe_rear_deg),
            ],
            air_density: file.aero.air_density,
            drag_area: file.aero.drag_area,
            downforce_area: file.aero.downforce_area,
            pressure_centre_to_front_axle: file
                .aero
                .pressure_centre_to_front_axle
                .unwrap_or(c.cg_to_front_axle),
            drag_height: file.aero.drag_height.unwrap_or(c.cg_height),
            tyres: [axle_tyre(&file.tyre.front), axle_tyre(&file.tyre.rear)],
            front_share: file.drive.front_share,
            drive: [unit(&file.drive.front), unit(&file.drive.rear)],
            brake_max_torque: file.brakes.max_torque,
            brake_front_bias: file.brakes.front_bias,
            road_friction: file.road.friction,
            file,
        })
    }

    /// Static axle loads [front, rear], N: m·g·b/L and m·g·a/L (statics).
    pub fn static_axle_loads(&self) -> [f64; 2] {
        let w = self.mass * GRAVITY;
        [w * self.b / self.wheelbase, w * self.a / self.wheelbase]
    }

    /// The label of the drive unit on `axle` (empty when none or unlabelled).
    pub fn file_label(&self, axle: usize) -> String {
        let unit = if axle == FRONT {
            &self.file.drive.front
        } else {
            &self.file.drive.rear
        };
        unit.as_ref().map(|u| u.label.clone()).unwrap_or_default()
    }

    /// The resolved parameters as TOML text (round-trips to the same vehicle).
    pub fn to_toml(&self) -> String {
        toml::to_string(&self.file).unwrap_or_else(|e| format!("# cannot serialise: {e}\n"))
    }
}
