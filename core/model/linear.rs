//! Quantities derived from a vehicle's parameters without simulating: static
//! loads, axle cornering stiffnesses, the linear single-track reference, aero
//! balance, each drive unit's limits and where its axle becomes
//! power-limited, and the energy store.

use serde::Serialize;

use super::loads::static_axle_loads;
use super::units::torque_from_input_power;
use super::{Commands, evaluate, straight_running};
use crate::analysis::BicycleModel;
use crate::params::{FRONT, Fuel, Machine, REAR, TorqueLimit, UnitKind, Vehicle};

/// Highest speed scanned for the speeds where limits change, km/h.
const SCAN_TOP_KPH: f64 = 400.0;
/// Step of that scan, km/h.
const SCAN_STEP_KPH: f64 = 0.1;

/// Per driven axle: torque and the speed where power, not grip, limits traction.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DriveAxleSummary {
    /// `front` or `rear`.
    pub axle: String,
    /// Unit label from the file.
    pub label: String,
    /// `engine` or `motor_generator`.
    pub kind: UnitKind,
    /// Largest drive torque at the unit's shaft (any speed), N·m.
    pub max_shaft_torque_nm: f64,
    /// Largest drive power at the unit's shaft, W.
    pub max_power_w: f64,
    /// Engine with a fuel-flow limit: the power cap ṁ_max·LHV·η_b, W (largest
    /// over the efficiency map's speeds when η_b is a map).
    pub fuel_power_cap_w: Option<f64>,
    /// Motor-generator: largest generating torque at the shaft, N·m.
    pub max_generating_torque_nm: Option<f64>,
    /// Motor-generator: largest generating power at the shaft, W.
    pub max_generating_power_w: Option<f64>,
    /// Largest drive torque at the wheels (both wheels, at low speed, store at
    /// its initial state of charge), N·m.
    pub max_wheel_torque_nm: f64,
    /// Largest tractive force at the wheels, N (torque / rolling radius).
    pub max_tractive_force_n: f64,
    /// Grip of the axle at static load, μx·Fz, N.
    pub grip_force_n: f64,
    /// Speed above which the tractive force the unit's power allows (η·P/v,
    /// with the fuel-flow and store limits) is below the axle's grip μx·Fz,
    /// km/h (`None`: not within 400 km/h).
    pub power_limited_above_kph: Option<f64>,
    /// Speed above which power (or the fuel flow, or the store) rather than
    /// the torque curve limits the unit: the axle becomes power-limited, km/h.
    pub torque_limit_ends_kph: Option<f64>,
}

/// The energy store as derived from its parameters.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StoreSummary {
    /// Usable energy between state of charge 0 and 1, J.
    pub usable_energy_j: f64,
    /// Initial, lowest and highest state of charge, 1.
    pub initial_soc: f64,
    /// Lowest state of charge, 1.
    pub min_soc: f64,
    /// Highest state of charge, 1.
    pub max_soc: f64,
    /// Largest discharging power at the terminals, W.
    pub max_discharge_power_w: f64,
    /// Largest charging power at the terminals, W.
    pub max_charge_power_w: f64,
    /// Energy the terminals can deliver from the initial state of charge down
    /// to the lowest, (SOC₀ − SOC_min)·E·η_dis, J.
    pub deployable_energy_j: f64,
    /// Energy the terminals can take from the initial state of charge up to
    /// the highest, (SOC_max − SOC₀)·E/η_ch, J.
    pub harvestable_energy_j: f64,
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
    /// Whether an axle's unmet drive torque goes to the other axle by default.
    pub spare_torque_to_other_axle: bool,
    /// The energy store, if any.
    pub store: Option<StoreSummary>,
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
    // The same vehicle with unlimited torque curves: what power alone allows.
    let mut power_only = v.clone();
    for u in power_only.powertrain.units.iter_mut().flatten() {
        u.max_torque = TorqueLimit::Constant(f64::INFINITY);
    }
    let drive_axles = [FRONT, REAR]
        .into_iter()
        .filter_map(|axle| drive_axle_summary(v, &power_only, axle, loads[axle]))
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
        spare_torque_to_other_axle: v.powertrain.spare_torque_to_other_axle,
        store: v.powertrain.store.as_ref().map(|s| StoreSummary {
            usable_energy_j: s.usable_energy,
            initial_soc: s.initial_soc,
            min_soc: s.min_soc,
            max_soc: s.max_soc,
            max_discharge_power_w: s.max_discharge_power,
            max_charge_power_w: s.max_charge_power,
            deployable_energy_j: (s.initial_soc - s.min_soc)
                * s.usable_energy
                * s.discharge_efficiency,
            harvestable_energy_j: (s.max_soc - s.initial_soc) * s.usable_energy
                / s.charge_efficiency,
        }),
    }
}

/// The summary of the drive unit on `axle` (static axle load `load`, N), if
/// any; `power_only` is the vehicle with unlimited torque curves.
///
/// The speeds where limits change are found by evaluating the model running
/// straight at speeds 0.1 km/h apart (availability as the model computes it,
/// store at its initial state of charge). Common practice: at constant power
/// the tractive force is P/v, so above some speed power, not grip, limits it.
fn drive_axle_summary(
    v: &Vehicle,
    power_only: &Vehicle,
    axle: usize,
    load: f64,
) -> Option<DriveAxleSummary> {
    let u = v.powertrain.units[axle].as_ref()?;
    let radius = v.tyres[axle].rolling_radius;
    let (mu_x, _) = v.tyres[axle]
        .model
        .peak_friction(0.5 * load, v.road.friction);
    let grip = mu_x * load;
    let neutral = Commands::neutral(v);
    let available_in = |car: &Vehicle, speed: f64| {
        evaluate(car, &straight_running(car, speed), &neutral).axle_available_torque[axle]
    };
    let available = |speed: f64| available_in(v, speed);
    let torque_curve =
        |speed: f64| u.efficiency * u.ratio * u.max_torque.value(u.ratio * speed / radius);
    let steps = (SCAN_TOP_KPH / SCAN_STEP_KPH) as usize;
    let speeds = (1..=steps).map(|k| k as f64 * SCAN_STEP_KPH / 3.6);
    let mut torque_limit_ends = None;
    let mut power_limited = None;
    for speed in speeds {
        let t = available(speed);
        if torque_limit_ends.is_none() && t < torque_curve(speed) * (1.0 - 1e-9) {
            torque_limit_ends = Some(speed * 3.6);
        }
        if power_limited.is_none() && available_in(power_only, speed) / radius < grip {
            power_limited = Some(speed * 3.6);
        }
        if torque_limit_ends.is_some() && power_limited.is_some() {
            break;
        }
    }
    let max_torque = available(0.0);
    let (fuel_cap, generating) = match &u.machine {
        Machine::Engine(fuel) => (fuel.as_ref().and_then(fuel_power_cap), None),
        Machine::MotorGenerator(mg) => (
            None,
            Some((mg.max_generating_torque, mg.max_generating_power)),
        ),
    };
    Some(DriveAxleSummary {
        axle: if axle == FRONT { "front" } else { "rear" }.to_string(),
        label: u.label.clone(),
        kind: u.kind(),
        max_shaft_torque_nm: u.max_torque.max_value(),
        max_power_w: u.max_power,
        fuel_power_cap_w: fuel_cap,
        max_generating_torque_nm: generating.map(|g| g.0),
        max_generating_power_w: generating.map(|g| g.1),
        max_wheel_torque_nm: max_torque,
        max_tractive_force_n: max_torque / radius,
        grip_force_n: grip,
        power_limited_above_kph: power_limited,
        torque_limit_ends_kph: torque_limit_ends,
    })
}

/// The fuel-flow power cap P = ṁ_max·LHV·η_b, W: with an efficiency map, the
/// largest shaft power T·ω the cap allows over the map's speed range.
pub fn fuel_power_cap(fuel: &Fuel) -> Option<f64> {
    let fuel_power = fuel.max_mass_flow? * fuel.lower_heating_value;
    Some(match &fuel.thermal_efficiency {
        crate::params::Efficiency::Constant(e) => fuel_power * e,
        crate::params::Efficiency::Map(m) => {
            let top = m.x[m.x.len() - 1];
            (1..=200)
                .map(|k| {
                    let w = top * k as f64 / 200.0;
                    let eff = &fuel.thermal_efficiency;
                    torque_from_input_power(eff, w, fuel_power, f64::INFINITY) * w
                })
                .fold(0.0, f64::max)
        }
    })
}

/// Static-load understeer gradient in SI, rad/(m/s²) (for tests and reports).
pub fn understeer_gradient_si(v: &Vehicle) -> f64 {
    bicycle_model(v).understeer_gradient()
}
