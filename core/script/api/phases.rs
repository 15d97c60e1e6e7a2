//! Phases (`run_for`, `run_until`), their labels (`phase`, `phase_start`),
//! time and state (`now`, `state`) and remembered values (`remember`,
//! `recall`).
//!
//! A phase drives the runner one tick at a time and calls the script's
//! controller between [`Runner::poll`](crate::script::runner::Runner::poll)
//! and [`Runner::advance`](crate::script::runner::Runner::advance), holding
//! no lock while the controller runs.

use rhai::{Dynamic, Engine, Map, NativeCallContext};

use super::errors::{Res, position, script_error, terminated, uncatchable};
use super::inputs::controller_output;
use super::parts::{Parts, Stage};
use super::values::{as_number, log_error, num, suggest};
use crate::script::budget::sample_bytes;
use crate::script::runner::{Conditions, Held, TickState, TickStep, Until};

/// Registers the phase functions.
pub(crate) fn register(engine: &mut Engine, parts: &Parts) {
    register_runs(engine, parts);
    register_labels(engine, parts);
}

/// `run_for`, `run_until`.
fn register_runs(engine: &mut Engine, parts: &Parts) {
    let p = parts.clone();
    engine.register_fn(
        "run_for",
        move |ctx: NativeCallContext, secs: Dynamic| -> Res<()> {
            let d = num(&secs, "duration")?;
            if d < 0.0 {
                return Err(script_error("run_for: duration must be ≥ 0"));
            }
            let ticks = p.runner(|r| r.ticks_for(d))?;
            run_phase(&p, &ctx, Until::Ticks(ticks)).map(|_| ())
        },
    );
    let p = parts.clone();
    engine.register_fn(
        "run_until",
        move |ctx: NativeCallContext, conditions: Map| -> Res<String> {
            let c = conditions_of(&conditions)?;
            run_phase(&p, &ctx, Until::Conditions(c)).map(str::to_string)
        },
    );
}

/// `phase`, `phase_start`, `now`, `state`, `remember`, `recall`.
fn register_labels(engine: &mut Engine, parts: &Parts) {
    let p = parts.clone();
    engine.register_fn("phase", move |name: &str| -> Res<()> {
        let t = p.runner(|r| r.time())?;
        p.log.with(|log| log.phase(name, t));
        Ok(())
    });
    let log = parts.log.clone();
    engine.register_fn("phase_start", move |name: &str| -> Res<f64> {
        log.with(|log| log.phase_start(name)).map_err(log_error)
    });
    let p = parts.clone();
    engine.register_fn("now", move || -> f64 { p.time() });
    let p = parts.clone();
    engine.register_fn("state", move || -> Res<TickState> {
        p.runner(|r| r.state())
    });
    let log = parts.log.clone();
    engine.register_fn("remember", move |name: &str, v: Dynamic| -> Res<()> {
        let v = num(&v, "remembered value")?;
        log.with(|log| log.remember(name, v));
        Ok(())
    });
    let log = parts.log.clone();
    engine.register_fn("recall", move |name: &str| -> Res<f64> {
        log.with(|log| log.recall(name)).map_err(log_error)
    });
}

/// Runs one phase; a stop of the run unwinds the script (and remembers
/// where the phase call is).
fn run_phase(parts: &Parts, ctx: &NativeCallContext, until: Until) -> Res<&'static str> {
    let nested = parts
        .phases
        .with(|ph| std::mem::replace(&mut ph.running, true));
    if nested {
        return Err(script_error(
            "run_for/run_until cannot be called inside a controller",
        ));
    }
    let result = tick_loop(parts, ctx, until);
    let stopped = parts
        .stage
        .with(|s| matches!(s, Stage::Running(r) if r.stopped().is_some()));
    parts.phases.with(|ph| {
        ph.running = false;
        if stopped && ph.stopped_at.is_none() {
            ph.stopped_at = Some(position(&parts.script, ctx.call_position()));
        }
    });
    result
}

/// The tick loop of one phase: poll → controller → hold → advance → report.
fn tick_loop(parts: &Parts, ctx: &NativeCallContext, until: Until) -> Res<&'static str> {
    let mut phase = match parts.runner(|r| r.begin(until))? {
        Ok(phase) => phase,
        Err(_) => return Err(terminated()),
    };
    // The samples planned for the phase are not the script's memory (a
    // growing buffer may take twice their size).
    let planned = parts.runner(|r| r.samples_until(phase.planned_end))?;
    parts.budget.allow(2 * sample_bytes(planned));
    loop {
        let s = match parts.runner(|r| r.poll(&mut phase))? {
            Ok(TickStep::End(name)) => return Ok(name),
            Ok(TickStep::Control(s)) => s,
            Err(_) => return Err(terminated()),
        };
        let controller = parts.controller.with(|c| c.clone());
        let held = match controller {
            Some(f) => {
                let out = f.call_within_context(ctx, (s,)).map_err(uncatchable)?;
                controller_output(out, s.time)?
            }
            None => Held::default(),
        };
        let advanced = parts.runner(|r| {
            r.inputs_mut().hold_controller(held);
            r.advance(&mut phase).map(|()| r.time())
        })?;
        match advanced {
            Ok(t) => parts.report(t, phase.planned_end),
            Err(_) => return Err(terminated()),
        }
    }
}

/// Keys accepted by `run_until`.
const CONDITION_KEYS: [&str; 11] = [
    "speed_above",
    "speed_below",
    "lat_accel_above",
    "yaw_rate_above",
    "sideslip_above",
    "time_above",
    "steady",
    "steady_window",
    "steady_tolerance",
    "max_time",
    "fail_on_timeout",
];

/// Reads and checks a `run_until` map.
fn conditions_of(map: &Map) -> Res<Conditions> {
    let mut c = Conditions::default();
    for (key, value) in map {
        let number = || {
            as_number(value)
                .ok_or_else(|| script_error(format!("run_until: `{key}` must be a number")))
        };
        match key.as_str() {
            "speed_above" => c.speed_above = Some(number()?),
            "speed_below" => c.speed_below = Some(number()?),
            "lat_accel_above" => c.lat_accel_above = Some(number()?),
            "yaw_rate_above" => c.yaw_rate_above = Some(number()?),
            "sideslip_above" => c.sideslip_above = Some(number()?),
            "time_above" => c.time_above = Some(number()?),
            "steady_window" => c.steady_window = number()?,
            "steady_tolerance" => c.steady_tolerance = number()?,
            "max_time" => c.max_time = number()?,
            "fail_on_timeout" => {
                c.fail_on_timeout = value.as_bool().map_err(|_| {
                    script_error("run_until: `fail_on_timeout` must be true or false")
                })?
            }
            "steady" => {
                let name = value.clone().into_string();
                let name =
                    name.map_err(|_| script_error("run_until: `steady` must be a quantity name"))?;
                c.steady = Some(name);
            }
            other => {
                return Err(script_error(format!(
                    "run_until: unknown condition `{other}`{}; conditions are {}",
                    suggest(other, &CONDITION_KEYS),
                    CONDITION_KEYS.join(", ")
                )));
            }
        }
    }
    c.check().map_err(script_error)?;
    Ok(c)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unknown_run_until_condition_suggests_the_closest() {
        let mut map = Map::new();
        map.insert("speed_abve".into(), Dynamic::from_float(10.0));
        let err = conditions_of(&map).unwrap_err().to_string();
        assert!(err.contains("did you mean `speed_above`"), "{err}");
    }

    #[test]
    fn run_until_map_is_read_with_defaults() {
        let mut map = Map::new();
        map.insert("steady".into(), Dynamic::from("yaw_rate"));
        map.insert("max_time".into(), Dynamic::from_int(12));
        let c = conditions_of(&map).unwrap();
        assert_eq!(c.steady.as_deref(), Some("yaw_rate"));
        assert_eq!(c.max_time, 12.0);
        assert_eq!(c.steady_window, 1.0);
    }
}
