//! Setup functions (`vehicle`, `set`, `param`, `sample_rate`, `tick_rate`,
//! `solver`, `fixed_step`, `start_speed`) and the vehicle queries
//! (`vehicle_info`, `steady_state_steer`): thin calls into
//! [`Setup`](crate::script::setup::Setup).

use rhai::{Dynamic, Engine, Map};

use super::errors::{Res, script_error};
use super::parts::Parts;
use super::values::{num, setup_error, toml_value};
use crate::script::facts::VehicleFacts;
use crate::stability::{TrimSettings, TrimTarget, find_trim};

/// Registers the setup functions and vehicle queries.
pub(crate) fn register(engine: &mut Engine, parts: &Parts) {
    register_declarations(engine, parts);
    register_rates(engine, parts);
    register_vehicle_queries(engine, parts);
}

/// `vehicle`, `set`, `param`, `start_speed`.
fn register_declarations(engine: &mut Engine, parts: &Parts) {
    let setup = parts.setup.clone();
    engine.register_fn("vehicle", move |file: &str| -> Res<()> {
        setup.with(|s| s.choose_vehicle(file)).map_err(setup_error)
    });
    let setup = parts.setup.clone();
    engine.register_fn("set", move |key: &str, value: Dynamic| -> Res<()> {
        let value = toml_value(&value)?;
        setup.with(|s| s.set(key, value)).map_err(setup_error)
    });
    let setup = parts.setup.clone();
    engine.register_fn("param", move |name: &str, default: Dynamic| -> Res<f64> {
        let default = num(&default, "param default")?;
        setup.with(|s| s.param(name, default)).map_err(setup_error)
    });
    // `param(name, default, unit)`: the unit is read from the syntax tree by
    // the files that record the parameter (sweep); the run itself ignores it.
    let setup = parts.setup.clone();
    engine.register_fn(
        "param",
        move |name: &str, default: Dynamic, _unit: &str| -> Res<f64> {
            let default = num(&default, "param default")?;
            setup.with(|s| s.param(name, default)).map_err(setup_error)
        },
    );
    let setup = parts.setup.clone();
    engine.register_fn("start_speed", move |v: Dynamic| -> Res<()> {
        let v = num(&v, "start speed")?;
        setup.with(|s| s.start_speed(v)).map_err(setup_error)
    });
}

/// `sample_rate`, `tick_rate`, `solver`, `fixed_step`.
fn register_rates(engine: &mut Engine, parts: &Parts) {
    let setup = parts.setup.clone();
    engine.register_fn("sample_rate", move |hz: Dynamic| -> Res<()> {
        let hz = num(&hz, "sample rate")?;
        setup.with(|s| s.sample_rate(hz)).map_err(setup_error)
    });
    let setup = parts.setup.clone();
    engine.register_fn("tick_rate", move |hz: Dynamic| -> Res<()> {
        let hz = num(&hz, "tick rate")?;
        setup.with(|s| s.tick_rate(hz)).map_err(setup_error)
    });
    let setup = parts.setup.clone();
    engine.register_fn("solver", move |name: &str| -> Res<()> {
        setup.with(|s| s.solver(name, None)).map_err(setup_error)
    });
    let setup = parts.setup.clone();
    engine.register_fn(
        "solver",
        move |name: &str, rtol: Dynamic, atol: Dynamic| -> Res<()> {
            let tolerances = (num(&rtol, "rtol")?, num(&atol, "atol")?);
            setup
                .with(|s| s.solver(name, Some(tolerances)))
                .map_err(setup_error)
        },
    );
    let setup = parts.setup.clone();
    engine.register_fn("fixed_step", move |dt: Dynamic| -> Res<()> {
        let dt = num(&dt, "fixed step")?;
        setup.with(|s| s.fixed_step(dt)).map_err(setup_error)
    });
}

/// `steady_state_steer`, `vehicle_info` (both load the vehicle).
fn register_vehicle_queries(engine: &mut Engine, parts: &Parts) {
    let setup = parts.setup.clone();
    engine.register_fn(
        "steady_state_steer",
        move |speed: Dynamic, lat_accel: Dynamic| -> Res<f64> {
            let speed = num(&speed, "speed")?;
            let lat_accel = num(&lat_accel, "lateral acceleration")?;
            let v = setup.with(|s| s.vehicle()).map_err(setup_error)?;
            let target = TrimTarget::cornering(&v, speed, lat_accel);
            match find_trim(&v, &target, &TrimSettings::default()) {
                Ok(trim) => Ok(trim.steer_wheel_angle()),
                Err(e) => Err(script_error(format!(
                    "no steady state at {speed} m/s and {lat_accel} m/s²: {e}"
                ))),
            }
        },
    );
    let setup = parts.setup.clone();
    engine.register_fn("vehicle_info", move || -> Res<Map> {
        let v = setup.with(|s| s.vehicle()).map_err(setup_error)?;
        Ok(vehicle_info(&VehicleFacts::of(&v)))
    });
}

/// The map of `vehicle_info()` (names and units in scripts/README.md).
fn vehicle_info(f: &VehicleFacts) -> Map {
    let items = [
        ("mass", f.mass),
        ("yaw_inertia", f.yaw_inertia),
        ("wheelbase", f.wheelbase),
        ("cg_to_front_axle", f.cg_to_front_axle),
        ("cg_to_rear_axle", f.cg_to_rear_axle),
        ("cg_height", f.cg_height),
        ("track_front", f.track[0]),
        ("track_rear", f.track[1]),
        ("steering_ratio", f.steering_ratio),
        ("front_share", f.front_share),
        ("rolling_radius_front", f.rolling_radius[0]),
        ("rolling_radius_rear", f.rolling_radius[1]),
        ("brake_max_torque", f.brake_max_torque),
        ("static_load_front", f.static_load[0]),
        ("static_load_rear", f.static_load[1]),
        ("understeer_gradient", f.understeer_gradient),
        (
            "understeer_gradient_deg_per_g",
            f.understeer_gradient_deg_per_g,
        ),
        ("cornering_stiffness_front", f.cornering_stiffness[0]),
        ("cornering_stiffness_rear", f.cornering_stiffness[1]),
    ];
    items
        .iter()
        .map(|(k, v)| ((*k).into(), Dynamic::from_float(*v)))
        .collect()
}
