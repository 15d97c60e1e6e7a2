//! Inputs: open-loop signals (`steer`, `drive`, `drive_torque`, `brake`,
//! `front_share`), the hybrid powertrain's (`deploy_power`, `deploy_torque`,
//! `harvest_limit`, `blending`, `spare_torque_to_other_axle`,
//! `release_deploy`), the drivers (`hold_speed`, `follow_*`, `release_*`),
//! the per-tick `controller` and the commands it returns.

use rhai::{Array, Dynamic, Engine, FnPtr, Map};

use super::errors::{Res, script_error};
use super::parts::Parts;
use super::ranges::{NON_NEGATIVE, UNIT_RANGE, check_signal, check_value, range_of};
use super::values::{direction, num, numbers, signal_error, signal_of, suggest};
use crate::manoeuvre::{Path as DrivePath, Signal};
use crate::model::Deploy;
use crate::params::BlendingRule;
use crate::script::runner::{Held, OpenInput, TickState};

/// Registers the input functions.
pub(crate) fn register(engine: &mut Engine, parts: &Parts) {
    register_signals(engine, parts);
    register_powertrain(engine, parts);
    register_paths(engine, parts);
    register_controller(engine, parts);
}

/// Open-loop inputs and the speed hold.
fn register_signals(engine: &mut Engine, parts: &Parts) {
    let inputs = [
        ("steer", OpenInput::Steer),
        ("drive", OpenInput::Drive),
        ("drive_torque", OpenInput::DriveTorque),
        ("brake", OpenInput::Brake),
        ("front_share", OpenInput::FrontShare),
        ("deploy_power", OpenInput::DeployPower),
        ("deploy_torque", OpenInput::DeployTorque),
        ("harvest_limit", OpenInput::HarvestLimit),
    ];
    for (name, input) in inputs {
        let p = parts.clone();
        engine.register_fn(name, move |v: Dynamic| -> Res<()> {
            let signal = signal_of(&v, name)?;
            if let Some(range) = range_of(input) {
                check_signal(name, &signal, range)?;
            }
            p.inputs(|i| i.set_open(input, signal))
        });
    }
    let p = parts.clone();
    engine.register_fn("hold_speed", move |v: Dynamic| -> Res<()> {
        let target = signal_of(&v, "target speed")?;
        check_signal("hold_speed: target speed", &target, NON_NEGATIVE)?;
        p.inputs(|i| i.hold_speed(target))
    });
    let p = parts.clone();
    engine.register_fn("release_speed", move || -> Res<()> {
        p.inputs(|i| i.release_speed())
    });
}

/// The hybrid powertrain's settings that are not signals.
fn register_powertrain(engine: &mut Engine, parts: &Parts) {
    let p = parts.clone();
    engine.register_fn("release_deploy", move || -> Res<()> {
        p.inputs(|i| i.release_deploy())
    });
    let p = parts.clone();
    engine.register_fn("blending", move |rule: &str| -> Res<()> {
        let rule = blending_rule(rule, "blending")?;
        p.inputs(|i| i.set_blending(rule))
    });
    let p = parts.clone();
    engine.register_fn("spare_torque_to_other_axle", move |on: bool| -> Res<()> {
        p.inputs(|i| i.set_spare_torque(on))
    });
}

/// Names of the blending rules, as in the vehicle file's `brakes.blending`.
const BLENDING_RULES: [(&str, BlendingRule); 2] = [
    ("balance_kept", BlendingRule::BalanceKept),
    ("regeneration_first", BlendingRule::RegenerationFirst),
];

/// The blending rule called `name`; `what` names the command in the error.
fn blending_rule(name: &str, what: &str) -> Res<BlendingRule> {
    BLENDING_RULES
        .iter()
        .find(|(n, _)| *n == name)
        .map(|(_, r)| *r)
        .ok_or_else(|| {
            let names = BLENDING_RULES.map(|(n, _)| n);
            script_error(format!(
                "{what}: unknown blending rule `{name}`{}; rules are {}",
                suggest(name, &names),
                names.join(", ")
            ))
        })
}

/// The path follower.
fn register_paths(engine: &mut Engine, parts: &Parts) {
    let p = parts.clone();
    engine.register_fn(
        "follow_circle",
        move |radius: Dynamic, dir: &str| -> Res<()> {
            let r = num(&radius, "radius")?;
            let side = direction(dir)?;
            let st = p.runner(|r| r.state())?;
            // Centre one radius to the side of the current heading.
            let sign = side.sign();
            let centre = (
                st.x - sign * r * st.yaw.sin(),
                st.y + sign * r * st.yaw.cos(),
            );
            let path = DrivePath::circle(centre.0, centre.1, r, side)
                .map_err(|e| script_error(e.to_string()))?;
            p.runner(|runner| runner.follow(path))?;
            p.log.with(|log| {
                log.remember("circle_centre_x", centre.0);
                log.remember("circle_centre_y", centre.1);
                log.remember("circle_radius", r);
            });
            Ok(())
        },
    );
    let p = parts.clone();
    engine.register_fn("follow_line", move || -> Res<()> {
        follow(&p, |st| DrivePath::straight(st.x, st.y, st.yaw))
    });
    let p = parts.clone();
    engine.register_fn("follow_lane_change", move |offset: Dynamic| -> Res<()> {
        let o = num(&offset, "offset")?;
        follow(&p, |st| {
            DrivePath::double_lane_change(st.x, st.y, st.yaw, o)
        })
    });
    let p = parts.clone();
    engine.register_fn("release_steering", move || -> Res<()> {
        let t = p.time();
        p.inputs(|i| {
            let held = Signal::constant(i.steer_at(t)).map_err(signal_error)?;
            i.release_steering(held);
            Ok(())
        })?
    });
    let p = parts.clone();
    engine.register_fn("cross_track_error", move || -> f64 {
        p.read_inputs(|i| i.cross_track_error())
    });
    let p = parts.clone();
    engine.register_fn("max_cross_track_error", move || -> f64 {
        p.read_inputs(|i| i.max_cross_track_error())
    });
    let p = parts.clone();
    engine.register_fn("reset_max_cross_track_error", move || -> Res<()> {
        p.inputs(|i| i.reset_max_cross_track_error())
    });
}

/// Follows the path `make` builds from the current state.
fn follow(
    parts: &Parts,
    make: impl FnOnce(&TickState) -> Result<DrivePath, crate::manoeuvre::driver::DriverError>,
) -> Res<()> {
    let st = parts.runner(|r| r.state())?;
    let path = make(&st).map_err(|e| script_error(e.to_string()))?;
    parts.runner(|r| r.follow(path))
}

/// `controller(f)`, `release_controller()`.
fn register_controller(engine: &mut Engine, parts: &Parts) {
    let controller = parts.controller.clone();
    engine.register_fn("controller", move |f: FnPtr| {
        controller.with(|c| *c = Some(f));
    });
    let controller = parts.controller.clone();
    engine.register_fn("release_controller", move || {
        controller.with(|c| *c = None);
    });
}

/// Commands a controller may return.
const COMMAND_KEYS: [&str; 12] = [
    "steer",
    "drive",
    "brake",
    "front_share",
    "axle_torque",
    "wheel_torque",
    "wheel_brake",
    "deploy_power",
    "deploy_torque",
    "blending",
    "harvest_limit",
    "spare_torque_to_other_axle",
];

/// Reads the map (or unit) a controller returns at time `t` (s); a command
/// outside its range is an error naming the key, the value and the time.
pub(crate) fn controller_output(out: Dynamic, t: f64) -> Res<Held> {
    let mut held = Held::default();
    if out.is_unit() {
        return Ok(held);
    }
    let Some(map) = out.clone().try_cast::<Map>() else {
        return Err(script_error(format!(
            "a controller must return a map of commands or (), got {}",
            out.type_name()
        )));
    };
    let checked = |key: &str, x: f64, range| {
        check_value(&format!("controller output `{key}` at t = {t} s"), x, range).map(|()| x)
    };
    for (key, v) in &map {
        let share =
            |what| -> Res<Option<f64>> { checked(key, num(v, what)?, UNIT_RANGE).map(Some) };
        match key.as_str() {
            "steer" => held.steer = Some(num(v, "controller `steer`")?),
            "drive" => held.drive = share("controller `drive`")?,
            "brake" => held.brake = share("controller `brake`")?,
            "front_share" => held.front_share = share("controller `front_share`")?,
            "axle_torque" => held.axle_torque = Some(fixed::<2>(v, key)?),
            "wheel_torque" => held.wheel_torque = fixed::<4>(v, key)?,
            "wheel_brake" => {
                held.wheel_brake = fixed::<4>(v, key)?;
                for b in held.wheel_brake {
                    checked(key, b, NON_NEGATIVE)?;
                }
            }
            "deploy_power" | "deploy_torque" => {
                if held.deploy.is_some() {
                    return Err(script_error(
                        "a controller may return `deploy_power` or `deploy_torque`, not both",
                    ));
                }
                let x = num(v, key)?;
                held.deploy = Some(if key == "deploy_power" {
                    Deploy::Power(x)
                } else {
                    Deploy::Torque(x)
                });
            }
            "blending" => {
                let name = v.clone().into_string().map_err(|t| {
                    script_error(format!(
                        "controller `blending` must be a string (a rule name), got {t}"
                    ))
                })?;
                held.blending = Some(blending_rule(&name, "controller `blending`")?);
            }
            "harvest_limit" => {
                held.harvest_limit = Some(checked(
                    key,
                    num(v, "controller `harvest_limit`")?,
                    NON_NEGATIVE,
                )?);
            }
            "spare_torque_to_other_axle" => {
                held.spare_torque_to_other_axle = Some(v.as_bool().map_err(|t| {
                    script_error(format!(
                        "controller `spare_torque_to_other_axle` must be true or false, got {t}"
                    ))
                })?);
            }
            other => {
                return Err(script_error(format!(
                    "controller returned unknown command `{other}`{}; commands are {}",
                    suggest(other, &COMMAND_KEYS),
                    COMMAND_KEYS.join(", ")
                )));
            }
        }
    }
    Ok(held)
}

/// An array of exactly `N` finite numbers.
fn fixed<const N: usize>(v: &Dynamic, key: &str) -> Res<[f64; N]> {
    let a = v.clone().try_cast::<Array>().ok_or_else(|| {
        script_error(format!(
            "controller `{key}` must be an array of {N} numbers"
        ))
    })?;
    let x = numbers(&a, key)?;
    x.try_into().map_err(|x: Vec<f64>| {
        script_error(format!(
            "controller `{key}` must have {N} numbers, got {}",
            x.len()
        ))
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::script::api::values::array;

    #[test]
    fn controller_map_is_read_and_checked() {
        let mut m = Map::new();
        m.insert("drive".into(), Dynamic::from_float(1.5));
        m.insert(
            "axle_torque".into(),
            Dynamic::from_array(array(&[100.0, 200.0])),
        );
        let err = controller_output(Dynamic::from_map(m.clone()), 2.5)
            .unwrap_err()
            .to_string();
        assert!(
            err.contains("controller output `drive` at t = 2.5 s = 1.5 is outside its range 0…1"),
            "{err}"
        );
        m.insert("drive".into(), Dynamic::from_float(1.0));
        let h = controller_output(Dynamic::from_map(m), 2.5).unwrap();
        assert_eq!(h.drive, Some(1.0));
        assert_eq!(h.axle_torque, Some([100.0, 200.0]));
        let mut bad = Map::new();
        bad.insert("steering".into(), Dynamic::from_float(0.0));
        let err = controller_output(Dynamic::from_map(bad), 0.0)
            .unwrap_err()
            .to_string();
        assert!(err.contains("unknown command `steering`"), "{err}");
        let mut short = Map::new();
        short.insert("wheel_brake".into(), Dynamic::from_array(array(&[1.0])));
        let err = controller_output(Dynamic::from_map(short), 0.0)
            .unwrap_err()
            .to_string();
        assert!(err.contains("must have 4 numbers, got 1"), "{err}");
        assert!(controller_output(Dynamic::UNIT, 0.0).is_ok());
    }

    /// The powertrain keys: a deployment of one kind, a named blending rule,
    /// a harvest limit ≥ 0, a bool; errors name the key and the value.
    #[test]
    fn controller_powertrain_keys_are_read_and_checked() {
        let mut m = Map::new();
        m.insert("deploy_power".into(), Dynamic::from_float(5e4));
        m.insert("blending".into(), Dynamic::from("regeneration_first"));
        m.insert("harvest_limit".into(), Dynamic::from_float(2e4));
        m.insert("spare_torque_to_other_axle".into(), Dynamic::from(false));
        let h = controller_output(Dynamic::from_map(m.clone()), 1.0).unwrap();
        assert_eq!(h.deploy, Some(Deploy::Power(5e4)));
        assert_eq!(h.blending, Some(BlendingRule::RegenerationFirst));
        assert_eq!(h.harvest_limit, Some(2e4));
        assert_eq!(h.spare_torque_to_other_axle, Some(false));
        let mut both = m.clone();
        both.insert("deploy_torque".into(), Dynamic::from_float(100.0));
        let err = controller_output(Dynamic::from_map(both), 1.0)
            .unwrap_err()
            .to_string();
        assert!(err.contains("not both"), "{err}");
        let mut bad = m.clone();
        bad.insert("harvest_limit".into(), Dynamic::from_float(-1.0));
        let err = controller_output(Dynamic::from_map(bad), 3.0)
            .unwrap_err()
            .to_string();
        assert!(
            err.contains(
                "controller output `harvest_limit` at t = 3 s = -1 is outside its range ≥ 0"
            ),
            "{err}"
        );
        let mut rule = m;
        rule.insert("blending".into(), Dynamic::from("regen_first"));
        let err = controller_output(Dynamic::from_map(rule), 0.0)
            .unwrap_err()
            .to_string();
        assert!(err.contains("unknown blending rule `regen_first`"), "{err}");
    }
}
