//! The functions a manoeuvre script can call, registered on a sandboxed
//! Rhai engine. Each is documented for script authors in `scripts/README.md`.

use rhai::{Array, Dynamic, Engine, EvalAltResult, FnPtr, INT, Map, NativeCallContext};

use super::session::{Conditions, Held, Shared, TickState, Until, lock, run_phase, script_error};
use crate::manoeuvre::{Path as DrivePath, PathFollower, Signal, SpeedController, TurnDirection};
use crate::model;
use crate::params::{GRAVITY, Override};
use crate::sim::SolverKind;

type Res<T> = Result<T, Box<EvalAltResult>>;

/// Operations one script run (top level, phases and controllers) may use.
pub const MAX_OPERATIONS: u64 = 20_000_000;

/// A number from an integer or float script value.
pub(crate) fn as_number(v: &Dynamic) -> Option<f64> {
    if let Ok(f) = v.as_float() {
        Some(f)
    } else {
        v.as_int().ok().map(|i| i as f64)
    }
}

fn num(v: &Dynamic, what: &str) -> Res<f64> {
    match as_number(v) {
        Some(x) if x.is_finite() => Ok(x),
        Some(x) => Err(script_error(format!("{what} must be finite, got {x}"))),
        None => Err(script_error(format!(
            "{what} must be a number, got {}",
            v.type_name()
        ))),
    }
}

fn numbers(a: &Array, what: &str) -> Res<Vec<f64>> {
    a.iter().map(|v| num(v, what)).collect()
}

fn array(values: &[f64]) -> Array {
    values.iter().map(|&v| Dynamic::from_float(v)).collect()
}

fn signal_of(v: &Dynamic, what: &str) -> Res<Signal> {
    if let Some(s) = v.clone().try_cast::<Signal>() {
        return Ok(s);
    }
    Signal::constant(num(v, what)?).map_err(sig_err)
}

fn sig_err(e: crate::manoeuvre::SignalError) -> Box<EvalAltResult> {
    script_error(e.to_string())
}

fn direction(text: &str) -> Res<TurnDirection> {
    match text {
        "left" => Ok(TurnDirection::Left),
        "right" => Ok(TurnDirection::Right),
        other => Err(script_error(format!(
            "direction must be \"left\" or \"right\", got \"{other}\""
        ))),
    }
}

/// Reads the map (or unit) a controller returns.
pub(crate) fn controller_output(out: Dynamic) -> Res<Held> {
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
    let fixed = |v: &Dynamic, key: &str, n: usize| -> Res<Vec<f64>> {
        let a = v.clone().try_cast::<Array>().ok_or_else(|| {
            script_error(format!(
                "controller `{key}` must be an array of {n} numbers"
            ))
        })?;
        let x = numbers(&a, key)?;
        if x.len() != n {
            return Err(script_error(format!(
                "controller `{key}` must have {n} numbers, got {}",
                x.len()
            )));
        }
        Ok(x)
    };
    for (key, v) in &map {
        match key.as_str() {
            "steer" => held.steer = Some(num(v, "controller `steer`")?),
            "drive" => held.drive = Some(num(v, "controller `drive`")?.clamp(0.0, 1.0)),
            "brake" => held.brake = Some(num(v, "controller `brake`")?.clamp(0.0, 1.0)),
            "front_share" => {
                held.front_share = Some(num(v, "controller `front_share`")?.clamp(0.0, 1.0))
            }
            "axle_torque" => {
                let x = fixed(v, key, 2)?;
                held.axle_torque = Some([x[0], x[1]]);
            }
            "wheel_torque" => {
                let x = fixed(v, key, 4)?;
                held.wheel_torque.copy_from_slice(&x);
            }
            "wheel_brake" => {
                let x = fixed(v, key, 4)?;
                held.wheel_brake
                    .copy_from_slice(&x.iter().map(|b| b.max(0.0)).collect::<Vec<_>>());
            }
            other => {
                const KEYS: [&str; 7] = [
                    "steer",
                    "drive",
                    "brake",
                    "front_share",
                    "axle_torque",
                    "wheel_torque",
                    "wheel_brake",
                ];
                return Err(script_error(format!(
                    "controller returned unknown command `{other}`{}; commands are {}",
                    super::session::suggest(other, &KEYS),
                    KEYS.join(", ")
                )));
            }
        }
    }
    Ok(held)
}

/// Text of a script value as a TOML value for an override.
fn toml_value(v: &Dynamic) -> Res<toml::Value> {
    if let Ok(b) = v.as_bool() {
        return Ok(toml::Value::Boolean(b));
    }
    if let Ok(i) = v.as_int() {
        return Ok(toml::Value::Integer(i));
    }
    if let Ok(f) = v.as_float() {
        return Ok(toml::Value::Float(f));
    }
    if let Some(s) = v.clone().try_cast::<rhai::ImmutableString>() {
        return Ok(toml::Value::String(s.to_string()));
    }
    Err(script_error(format!(
        "set: a value must be a number, a string or true/false, got {}",
        v.type_name()
    )))
}

/// The sandboxed engine with the whole API registered on `session`.
pub(crate) fn engine(session: Shared) -> Engine {
    let mut engine = Engine::new();
    engine
        .set_max_operations(MAX_OPERATIONS)
        .set_max_call_levels(64)
        .set_max_string_size(1_000_000)
        .set_max_array_size(2_000_000)
        .set_max_map_size(10_000)
        .set_max_expr_depths(64, 64);
    engine.disable_symbol("eval");
    register_units(&mut engine);
    register_signals(&mut engine);
    register_setup(&mut engine, &session);
    register_inputs(&mut engine, &session);
    register_phases(&mut engine, &session);
    register_state(&mut engine);
    super::evaluate::register(&mut engine, &session);
    engine
}

fn register_units(engine: &mut Engine) {
    let unit = |engine: &mut Engine, name: &str, factor: f64| {
        engine.register_fn(name, move |x: Dynamic| -> Res<f64> {
            Ok(num(&x, "the argument")? * factor)
        });
    };
    unit(engine, "deg", std::f64::consts::PI / 180.0);
    unit(engine, "to_deg", 180.0 / std::f64::consts::PI);
    unit(engine, "kph", 1.0 / 3.6);
    unit(engine, "to_kph", 3.6);
    unit(engine, "g", GRAVITY);
    unit(engine, "to_g", 1.0 / GRAVITY);
}

fn register_signals(engine: &mut Engine) {
    engine.register_type_with_name::<Signal>("Signal");
    engine.register_fn("constant", |v: Dynamic| -> Res<Signal> {
        Signal::constant(num(&v, "constant value")?).map_err(sig_err)
    });
    engine.register_fn(
        "step",
        |from: Dynamic, to: Dynamic, at: Dynamic, rate: Dynamic| -> Res<Signal> {
            Signal::step(
                num(&from, "step from")?,
                num(&to, "step to")?,
                num(&at, "step at")?,
                num(&rate, "step rate")?,
            )
            .map_err(sig_err)
        },
    );
    engine.register_fn(
        "ramp",
        |at: Dynamic, rate: Dynamic, limit: Dynamic| -> Res<Signal> {
            Signal::ramp(
                num(&at, "ramp at")?,
                num(&rate, "ramp rate")?,
                Some(num(&limit, "ramp limit")?),
            )
            .map_err(sig_err)
        },
    );
    engine.register_fn("ramp", |at: Dynamic, rate: Dynamic| -> Res<Signal> {
        Signal::ramp(num(&at, "ramp at")?, num(&rate, "ramp rate")?, None).map_err(sig_err)
    });
    engine.register_fn(
        "sine",
        |amp: Dynamic, hz: Dynamic, at: Dynamic, cycles: Dynamic| -> Res<Signal> {
            Signal::sine(
                num(&amp, "sine amplitude")?,
                num(&hz, "sine frequency")?,
                num(&at, "sine start")?,
                Some(num(&cycles, "sine cycles")?),
            )
            .map_err(sig_err)
        },
    );
    engine.register_fn(
        "sine_with_dwell",
        |amp: Dynamic, dir: &str, at: Dynamic| -> Res<Signal> {
            Signal::sine_with_dwell(num(&amp, "amplitude")?, direction(dir)?, num(&at, "start")?)
                .map_err(sig_err)
        },
    );
    engine.register_fn(
        "chirp",
        |amp: Dynamic, f0: Dynamic, f1: Dynamic, at: Dynamic, duration: Dynamic| -> Res<Signal> {
            Signal::chirp(
                num(&amp, "chirp amplitude")?,
                num(&f0, "chirp start frequency")?,
                num(&f1, "chirp end frequency")?,
                num(&at, "chirp start")?,
                num(&duration, "chirp duration")?,
            )
            .map_err(sig_err)
        },
    );
    engine.register_fn("table", |times: Array, values: Array| -> Res<Signal> {
        Signal::table(
            numbers(&times, "table time")?,
            numbers(&values, "table value")?,
        )
        .map_err(sig_err)
    });
    engine.register_fn("sequence", |signals: Array, switch: Array| -> Res<Signal> {
        let s = signals
            .iter()
            .map(|v| signal_of(v, "sequence entry"))
            .collect::<Res<Vec<_>>>()?;
        Signal::sequence(s, numbers(&switch, "switch time")?).map_err(sig_err)
    });
    engine.register_fn("+", |a: Signal, b: Signal| -> Res<Signal> {
        Signal::sum(vec![a, b]).map_err(sig_err)
    });
    engine.register_fn("+", |a: Signal, b: Dynamic| -> Res<Signal> {
        a.offset(num(&b, "offset")?).map_err(sig_err)
    });
    engine.register_fn("+", |b: Dynamic, a: Signal| -> Res<Signal> {
        a.offset(num(&b, "offset")?).map_err(sig_err)
    });
    engine.register_fn("*", |a: Signal, k: Dynamic| -> Res<Signal> {
        a.scaled(num(&k, "gain")?).map_err(sig_err)
    });
    engine.register_fn("*", |k: Dynamic, a: Signal| -> Res<Signal> {
        a.scaled(num(&k, "gain")?).map_err(sig_err)
    });
    engine.register_fn("-", |a: Signal| -> Res<Signal> {
        a.scaled(-1.0).map_err(sig_err)
    });
    engine.register_fn("value", |s: &mut Signal, t: Dynamic| -> Res<f64> {
        Ok(s.value(num(&t, "time")?))
    });
}

fn register_setup(engine: &mut Engine, session: &Shared) {
    let s = session.clone();
    engine.register_fn("vehicle", move |file: &str| -> Res<()> {
        let mut s = lock(&s);
        s.check_setup("vehicle(...)")?;
        s.set_script_vehicle(file);
        Ok(())
    });
    let s = session.clone();
    engine.register_fn("set", move |key: &str, value: Dynamic| -> Res<()> {
        let mut s = lock(&s);
        s.check_setup("set(...)")?;
        let value = toml_value(&value)?;
        s.script_overrides.push(Override {
            path: key.to_string(),
            value,
        });
        Ok(())
    });
    let s = session.clone();
    engine.register_fn("param", move |name: &str, default: Dynamic| -> Res<f64> {
        let mut s = lock(&s);
        let given = s
            .manoeuvre_params
            .iter()
            .find(|(n, _)| n == name)
            .map(|(_, v)| v.clone());
        let value = match given {
            Some(toml::Value::Float(x)) => x,
            Some(toml::Value::Integer(i)) => i as f64,
            Some(other) => {
                return Err(script_error(format!(
                    "manoeuvre parameter `{name}` must be a number, got {other}"
                )));
            }
            None => num(&default, "param default")?,
        };
        if !value.is_finite() {
            return Err(script_error(format!(
                "manoeuvre parameter `{name}` is not finite"
            )));
        }
        if !s.params_read.iter().any(|(n, _)| n == name) {
            s.params_read.push((name.to_string(), value));
        }
        Ok(value)
    });
    let s = session.clone();
    engine.register_fn("sample_rate", move |hz: Dynamic| -> Res<()> {
        let mut s = lock(&s);
        s.check_not_started("sample_rate(...)")?;
        let hz = num(&hz, "sample rate")?;
        if !(hz > 0.0 && hz <= 100_000.0) {
            return Err(script_error(format!(
                "sample rate must be in (0, 100000] Hz, got {hz}"
            )));
        }
        s.sample_rate = hz;
        Ok(())
    });
    let s = session.clone();
    engine.register_fn("tick_rate", move |hz: Dynamic| -> Res<()> {
        let mut s = lock(&s);
        s.check_not_started("tick_rate(...)")?;
        let hz = num(&hz, "tick rate")?;
        if !(1.0..=10_000.0).contains(&hz) {
            return Err(script_error(format!(
                "tick rate must be in [1, 10000] Hz, got {hz}"
            )));
        }
        s.tick_rate = hz;
        Ok(())
    });
    let set_solver = |s: &Shared, name: &str, rtol: Option<f64>, atol: Option<f64>| -> Res<()> {
        let mut s = lock(s);
        s.check_not_started("solver(...)")?;
        let kind = SolverKind::from_name(name).ok_or_else(|| {
            script_error(format!("unknown solver \"{name}\" (dopri5, dop853 or rk4)"))
        })?;
        s.solver.kind = kind;
        if let (Some(r), Some(a)) = (rtol, atol) {
            if !(r > 0.0 && a > 0.0) {
                return Err(script_error("solver tolerances must be positive"));
            }
            s.solver.rtol = r;
            s.solver.atol = a;
        }
        Ok(())
    };
    let s = session.clone();
    engine.register_fn("solver", move |name: &str| -> Res<()> {
        set_solver(&s, name, None, None)
    });
    let s = session.clone();
    engine.register_fn(
        "solver",
        move |name: &str, rtol: Dynamic, atol: Dynamic| -> Res<()> {
            set_solver(
                &s,
                name,
                Some(num(&rtol, "rtol")?),
                Some(num(&atol, "atol")?),
            )
        },
    );
    let s = session.clone();
    engine.register_fn("fixed_step", move |dt: Dynamic| -> Res<()> {
        let mut s = lock(&s);
        s.check_not_started("fixed_step(...)")?;
        let dt = num(&dt, "fixed step")?;
        if dt <= 0.0 {
            return Err(script_error("fixed step must be positive"));
        }
        s.solver.fixed_step = dt;
        Ok(())
    });
    let s = session.clone();
    engine.register_fn("start_speed", move |v: Dynamic| -> Res<()> {
        let mut s = lock(&s);
        s.check_not_started("start_speed(...)")?;
        let v = num(&v, "start speed")?;
        if v < 0.0 {
            return Err(script_error("start speed must be ≥ 0"));
        }
        s.start_speed = v;
        Ok(())
    });
    let s = session.clone();
    engine.register_fn(
        "steady_state_steer",
        move |speed: Dynamic, lat_accel: Dynamic| -> Res<f64> {
            let v = lock(&s).vehicle()?;
            let speed = num(&speed, "speed")?;
            let lat_accel = num(&lat_accel, "lateral acceleration")?;
            let target = crate::stability::TrimTarget::cornering(&v, speed, lat_accel);
            let settings = crate::stability::TrimSettings::default();
            match crate::stability::find_trim(&v, &target, &settings) {
                Ok(trim) => Ok(trim.steer_wheel_angle()),
                Err(e) => Err(script_error(format!(
                    "no steady state at {speed} m/s and {lat_accel} m/s²: {e}"
                ))),
            }
        },
    );
    let s = session.clone();
    engine.register_fn("vehicle_info", move || -> Res<Map> {
        let v = lock(&s).vehicle()?;
        let bike = model::linear::bicycle_model(&v);
        let loads = crate::model::static_axle_loads(&v.chassis);
        let mut m = Map::new();
        let mut put = |k: &str, x: f64| {
            m.insert(k.into(), Dynamic::from_float(x));
        };
        put("mass", v.chassis.mass);
        put("yaw_inertia", v.chassis.yaw_inertia);
        put("wheelbase", v.chassis.wheelbase);
        put("cg_to_front_axle", v.chassis.a);
        put("cg_to_rear_axle", v.chassis.b);
        put("cg_height", v.chassis.cg_height);
        put("track_front", v.chassis.track[0]);
        put("track_rear", v.chassis.track[1]);
        put("steering_ratio", v.steering.ratio);
        put("front_share", v.powertrain.front_share);
        put("rolling_radius_front", v.tyres[0].rolling_radius);
        put("rolling_radius_rear", v.tyres[1].rolling_radius);
        put("brake_max_torque", v.brakes.max_torque);
        put("static_load_front", loads[0]);
        put("static_load_rear", loads[1]);
        put("understeer_gradient", bike.understeer_gradient());
        put(
            "understeer_gradient_deg_per_g",
            bike.understeer_gradient_deg_per_g(),
        );
        put("cornering_stiffness_front", bike.cornering_stiffness_front);
        put("cornering_stiffness_rear", bike.cornering_stiffness_rear);
        Ok(m)
    });
}

fn register_inputs(engine: &mut Engine, session: &Shared) {
    for name in ["steer", "drive", "drive_torque", "brake", "front_share"] {
        let s = session.clone();
        engine.register_fn(name, move |v: Dynamic| -> Res<()> {
            let signal = signal_of(&v, name)?;
            let mut s = lock(&s);
            match name {
                "steer" => {
                    s.follower = None;
                    s.open.steer = signal;
                }
                "drive" | "drive_torque" | "brake" => {
                    if s.speed_hold.take().is_some() {
                        s.open.drive = Signal::Constant(0.0);
                        s.open.brake = Signal::Constant(0.0);
                    }
                    match name {
                        "drive" => {
                            s.open.drive = signal;
                            s.open.drive_torque = None;
                        }
                        "drive_torque" => s.open.drive_torque = Some(signal),
                        _ => s.open.brake = signal,
                    }
                }
                _ => s.open.front_share = Some(signal),
            }
            Ok(())
        });
    }
    let s = session.clone();
    engine.register_fn("hold_speed", move |v: Dynamic| -> Res<()> {
        let target = signal_of(&v, "target speed")?;
        let mut s = lock(&s);
        match s.speed_hold.as_mut() {
            Some((_, t)) => *t = target,
            None => s.speed_hold = Some((SpeedController::default(), target)),
        }
        Ok(())
    });
    let s = session.clone();
    engine.register_fn("release_speed", move || {
        let mut s = lock(&s);
        s.speed_hold = None;
        s.open.drive = Signal::Constant(0.0);
        s.open.drive_torque = None;
        s.open.brake = Signal::Constant(0.0);
    });
    let follow = |s: &Shared, make: &mut dyn FnMut(&TickState) -> Res<DrivePath>| -> Res<()> {
        let mut s = lock(s);
        let st = s.state_now()?;
        let path = make(&st)?;
        let v = s.vehicle()?;
        let mut f = PathFollower::new(path);
        // Feedforward of the linear understeer (Gillespie ch. 6: δ = L/R + K·ay).
        f.understeer_feedforward = model::linear::understeer_gradient_si(&v).max(0.0);
        s.follower = Some(f);
        s.max_cross_track_error = 0.0;
        Ok(())
    };
    let s = session.clone();
    engine.register_fn(
        "follow_circle",
        move |radius: Dynamic, dir: &str| -> Res<()> {
            let r = num(&radius, "radius")?;
            let d = direction(dir)?;
            let mut centre = (0.0, 0.0);
            follow(&s, &mut |st| {
                // Centre one radius to the side of the current heading.
                let side = d.sign();
                centre = (
                    st.x - side * r * st.yaw.sin(),
                    st.y + side * r * st.yaw.cos(),
                );
                DrivePath::circle(centre.0, centre.1, r, d).map_err(|e| script_error(e.to_string()))
            })?;
            let mut s = lock(&s);
            s.remember("circle_centre_x", centre.0);
            s.remember("circle_centre_y", centre.1);
            s.remember("circle_radius", r);
            Ok(())
        },
    );
    let s = session.clone();
    engine.register_fn("follow_line", move || -> Res<()> {
        follow(&s, &mut |st| {
            DrivePath::straight(st.x, st.y, st.yaw).map_err(|e| script_error(e.to_string()))
        })
    });
    let s = session.clone();
    engine.register_fn("follow_lane_change", move |offset: Dynamic| -> Res<()> {
        let o = num(&offset, "offset")?;
        follow(&s, &mut |st| {
            DrivePath::double_lane_change(st.x, st.y, st.yaw, o)
                .map_err(|e| script_error(e.to_string()))
        })
    });
    let s = session.clone();
    engine.register_fn("release_steering", move || -> Res<()> {
        let mut s = lock(&s);
        let held = s.commands_now().steer_wheel_angle;
        s.follower = None;
        s.open.steer = Signal::constant(held).map_err(sig_err)?;
        Ok(())
    });
    let s = session.clone();
    engine.register_fn("cross_track_error", move || -> f64 {
        lock(&s)
            .follower
            .as_ref()
            .map_or(0.0, |f| f.cross_track_error())
    });
    let s = session.clone();
    engine.register_fn("max_cross_track_error", move || -> f64 {
        lock(&s).max_cross_track_error
    });
    let s = session.clone();
    engine.register_fn("reset_max_cross_track_error", move || {
        lock(&s).max_cross_track_error = 0.0;
    });
    let s = session.clone();
    engine.register_fn("controller", move |f: FnPtr| {
        lock(&s).controller = Some(f);
    });
    let s = session.clone();
    engine.register_fn("release_controller", move || {
        lock(&s).controller = None;
    });
}

fn register_phases(engine: &mut Engine, session: &Shared) {
    let s = session.clone();
    engine.register_fn(
        "run_for",
        move |ctx: NativeCallContext, secs: Dynamic| -> Res<()> {
            let d = num(&secs, "duration")?;
            if d < 0.0 {
                return Err(script_error("run_for: duration must be ≥ 0"));
            }
            let rate = lock(&s).tick_rate;
            let ticks = (d * rate).round() as u64;
            run_phase(&s, &ctx, Until::Ticks(ticks))?;
            Ok(())
        },
    );
    let s = session.clone();
    engine.register_fn(
        "run_until",
        move |ctx: NativeCallContext, conditions: Map| -> Res<String> {
            let c = Conditions::from_map(&conditions)?;
            run_phase(&s, &ctx, Until::Conditions(c))
        },
    );
    let s = session.clone();
    engine.register_fn("phase", move |name: &str| -> Res<()> {
        let mut s = lock(&s);
        let t = s.state_now()?.time;
        s.phases.push((name.to_string(), t));
        Ok(())
    });
    let s = session.clone();
    engine.register_fn("phase_start", move |name: &str| -> Res<f64> {
        let s = lock(&s);
        s.phases
            .iter()
            .rev()
            .find(|(n, _)| n == name)
            .map(|(_, t)| *t)
            .ok_or_else(|| script_error(format!("no phase called \"{name}\"")))
    });
    let s = session.clone();
    engine.register_fn("now", move || -> f64 { lock(&s).time() });
    let s = session.clone();
    engine.register_fn("state", move || -> Res<TickState> { lock(&s).state_now() });
    let s = session.clone();
    engine.register_fn("remember", move |name: &str, v: Dynamic| -> Res<()> {
        let v = num(&v, "remembered value")?;
        lock(&s).remember(name, v);
        Ok(())
    });
    let s = session.clone();
    engine.register_fn("recall", move |name: &str| -> Res<f64> {
        let s = lock(&s);
        s.remembered
            .iter()
            .rev()
            .find(|(n, _)| n == name)
            .map(|(_, v)| *v)
            .ok_or_else(|| script_error(format!("nothing remembered as \"{name}\"")))
    });
}

fn register_state(engine: &mut Engine) {
    engine.register_type_with_name::<TickState>("State");
    macro_rules! getters {
        ($($f:ident),*) => {
            $( engine.register_get(stringify!($f), |s: &mut TickState| s.$f); )*
        };
    }
    getters!(
        time, x, y, yaw, vx, vy, speed, yaw_rate, ax, ay, sideslip, steer
    );
    macro_rules! wheels {
        ($($f:ident),*) => {
            $(
                engine.register_get(stringify!($f), |s: &mut TickState| array(&s.$f));
                engine.register_fn(stringify!($f), |s: &mut TickState, i: INT| -> Res<f64> {
                    usize::try_from(i)
                        .ok()
                        .and_then(|i| s.$f.get(i).copied())
                        .ok_or_else(|| script_error(format!("wheel index must be 0..3, got {i}")))
                });
            )*
        };
    }
    wheels!(fz, fx, fy, slip_ratio, slip_angle, wheel_speed);
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn controller_map_is_read_and_checked() {
        let mut m = Map::new();
        m.insert("drive".into(), Dynamic::from_float(1.5));
        m.insert(
            "axle_torque".into(),
            Dynamic::from_array(array(&[100.0, 200.0])),
        );
        let h = controller_output(Dynamic::from_map(m)).unwrap();
        assert_eq!(h.drive, Some(1.0), "drive clamped to 0..1");
        assert_eq!(h.axle_torque, Some([100.0, 200.0]));
        let mut bad = Map::new();
        bad.insert("steering".into(), Dynamic::from_float(0.0));
        let err = controller_output(Dynamic::from_map(bad))
            .unwrap_err()
            .to_string();
        assert!(err.contains("unknown command `steering`"), "{err}");
        assert!(controller_output(Dynamic::UNIT).is_ok());
    }

    #[test]
    fn override_values_keep_their_toml_type() {
        assert_eq!(
            toml_value(&Dynamic::from_float(0.3)).unwrap(),
            toml::Value::Float(0.3)
        );
        assert_eq!(
            toml_value(&Dynamic::from_int(2)).unwrap(),
            toml::Value::Integer(2)
        );
        assert_eq!(
            toml_value(&Dynamic::from("locked")).unwrap(),
            toml::Value::String("locked".into())
        );
        assert!(toml_value(&Dynamic::UNIT).is_err());
    }
}
