//! Quantities derived from a vehicle's parameters without simulating: static
//! loads, axle cornering stiffnesses, the linear single-track reference, aero
//! balance and where each drive axle becomes power-limited.

use serde::Serialize;

use super::loads::static_axle_loads;
use super::powertrain::available_wheel_torque;
use crate::analysis::BicycleModel;
use crate::params::{FRONT, REAR, Vehicle};

/// Per driven axle: torque and the speed where power, not grip, limits traction.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DriveAxleSummary {
    /// `front` or `rear`.
    pub axle: String,
    /// Unit label from the file.
    pub label: String,
    /// Largest drive torque at the wheels (both wheels), N·m.
    pub max_wheel_torque_nm: f64,
    /// Largest tractive force at the wheels, N (torque / rolling radius).
    pub max_tractive_force_n: f64,
    /// Grip of the axle at static load, μx·Fz, N.
    pub grip_force_n: f64,
    /// Speed above which the unit's power (η·P/v) is below the axle's grip μx·Fz, km/h.
    pub power_limited_above_kph: f64,
    /// Speed above which the unit is on its power limit rather than its torque limit, km/h.
    pub torque_limit_ends_kph: f64,
}

/// Derived quantities of a vehicle.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct VehicleSummary {
    /// Vehicle name.
    pub name: String,
    /// Total mass, kg.
    pub mass_kg: f64,
    /// Wheelbase, m.
    pub wheelbase_m: f64,
    /// CG to front axle, m.
    pub cg_to_front_axle_m: f64,
    /// CG height, m.
    pub cg_height_m: f64,
    /// Yaw inertia, kg·m².
    pub yaw_inertia_kg_m2: f64,
    /// Static front axle load, N.
    pub front_axle_load_n: f64,
    /// Static rear axle load, N.
    pub rear_axle_load_n: f64,
    /// Front share of the static weight, 1.
    pub front_weight_fraction: f64,
    /// Front axle cornering stiffness at static load (both tyres), N/rad.
    pub cornering_stiffness_front_n_per_rad: f64,
    /// Rear axle cornering stiffness at static load (both tyres), N/rad.
    pub cornering_stiffness_rear_n_per_rad: f64,
    /// Linear understeer gradient, deg/g (positive = understeer).
    pub understeer_gradient_deg_per_g: f64,
    /// Characteristic speed (understeer), km/h.
    pub characteristic_speed_kph: Option<f64>,
    /// Critical speed (oversteer), km/h.
    pub critical_speed_kph: Option<f64>,
    /// Front share of the downforce (aero balance), 1; `None` without downforce.
    pub aero_front_fraction: Option<f64>,
    /// Total downforce at 100 km/h, N (negative = lift).
    pub downforce_at_100_kph_n: f64,
    /// Default front share of the drive request, 1.
    pub front_share: f64,
    /// Driven axles.
    pub drive_axles: Vec<DriveAxleSummary>,
}

/// Axle cornering stiffnesses at static load [front, rear], N/rad (two tyres
/// each, zero camber, from the Magic Formula Kyα at the static wheel load).
pub fn axle_cornering_stiffness(v: &Vehicle) -> [f64; 2] {
    let loads = static_axle_loads(&v.chassis);
    [FRONT, REAR].map(|axle| 2.0 * v.tyres[axle].model.cornering_stiffness(0.5 * loads[axle]))
}

/// The linear single-track model with the vehicle's mass, inertia, CG position
/// and static-load axle cornering stiffnesses (Gillespie, *Fundamentals of
/// Vehicle Dynamics*, ch. 6).
pub fn bicycle_model(v: &Vehicle) -> BicycleModel {
    let c = axle_cornering_stiffness(v);
    BicycleModel {
        mass: v.chassis.mass,
        yaw_inertia: v.chassis.yaw_inertia,
        a: v.chassis.a,
        b: v.chassis.b,
        cornering_stiffness_front: c[FRONT],
        cornering_stiffness_rear: c[REAR],
    }
}

/// Derives every quantity of [`VehicleSummary`].
pub fn summarize(v: &Vehicle) -> VehicleSummary {
    let ch = &v.chassis;
    let loads = static_axle_loads(ch);
    let c = axle_cornering_stiffness(v);
    let bike = bicycle_model(v);
    let kph = |s: f64| s * 3.6;
    let drive_axles = [FRONT, REAR]
        .into_iter()
        .filter_map(|axle| {
            let u = v.powertrain.units[axle].as_ref()?;
            let radius = v.tyres[axle].rolling_radius;
            let (mu_x, _) = v.tyres[axle]
                .model
                .peak_friction(0.5 * loads[axle], v.road.friction);
            let grip = mu_x * loads[axle];
            let max_torque = available_wheel_torque(u, 0.0);
            let wheel_power = u.efficiency * u.max_power;
            Some(DriveAxleSummary {
                axle: if axle == FRONT { "front" } else { "rear" }.to_string(),
                label: v.unit_label(axle).to_string(),
                max_wheel_torque_nm: max_torque,
                max_tractive_force_n: max_torque / radius,
                grip_force_n: grip,
                // Common practice: at constant power the tractive force is P/v.
                power_limited_above_kph: kph(wheel_power / grip),
                torque_limit_ends_kph: kph(u.max_power * radius / (u.max_torque * u.ratio)),
            })
        })
        .collect();
    let downforce_100 = super::aero_forces(&v.aero, 100.0 / 3.6).downforce;
    VehicleSummary {
        name: v.name.clone(),
        mass_kg: ch.mass,
        wheelbase_m: ch.wheelbase,
        cg_to_front_axle_m: ch.a,
        cg_height_m: ch.cg_height,
        yaw_inertia_kg_m2: ch.yaw_inertia,
        front_axle_load_n: loads[FRONT],
        rear_axle_load_n: loads[REAR],
        front_weight_fraction: ch.b / ch.wheelbase,
        cornering_stiffness_front_n_per_rad: c[FRONT],
        cornering_stiffness_rear_n_per_rad: c[REAR],
        understeer_gradient_deg_per_g: bike.understeer_gradient_deg_per_g(),
        characteristic_speed_kph: bike.characteristic_speed().map(kph),
        critical_speed_kph: bike.critical_speed().map(kph),
        aero_front_fraction: (v.aero.downforce_area != 0.0)
            .then(|| (ch.wheelbase - v.aero.pressure_centre_to_front_axle) / ch.wheelbase),
        downforce_at_100_kph_n: downforce_100,
        front_share: v.powertrain.front_share,
        drive_axles,
    }
}

/// Static-load understeer gradient in SI, rad/(m/s²) (for tests and reports).
pub fn understeer_gradient_si(v: &Vehicle) -> f64 {
    bicycle_model(v).understeer_gradient()
}
