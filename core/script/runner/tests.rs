//! The runner driven from Rust alone: phases, the zero-order hold of
//! controller outputs, stops, the input revision, and the same result as the
//! script glue for the same manoeuvre.

use std::path::Path;
use std::sync::Arc;

use super::*;
use crate::manoeuvre::Signal;
use crate::params::load_vehicle;
use crate::results::RunStatus;
use crate::script::{RunOptions, run_script_text};

const CROSSOVER: &str = "scripts/vehicles/hybrid_crossover.toml";

fn config(start_speed: f64) -> RunConfig {
    let file = Path::new(CROSSOVER);
    let mut c = RunConfig::new(load_vehicle(file, &[]).unwrap(), file);
    c.start_speed = start_speed;
    c
}

fn runner(config: RunConfig) -> Runner {
    Runner::start(Arc::new(config), Inputs::default()).unwrap()
}

fn no_controller(_: &TickState) -> Held {
    Held::default()
}

/// The same step steer driven from Rust and from a script gives
/// bit-identical channels: the script layer adds nothing to the physics.
#[test]
fn rust_and_script_runs_of_one_manoeuvre_are_bit_identical() {
    let step = Signal::step(0.0, 0.8, 1.0, 8.0).unwrap();
    let mut r = runner(config(22.0));
    r.inputs_mut().hold_speed(Signal::Constant(22.0));
    assert_eq!(r.run_phase(Until::Ticks(100), no_controller), Ok("time"));
    r.inputs_mut().set_open(OpenInput::Steer, step);
    assert_eq!(r.run_phase(Until::Ticks(200), no_controller), Ok("time"));
    let rust = r.into_record(Default::default(), None);

    let text = "vehicle(\"vehicles/hybrid_crossover.toml\");\nstart_speed(22.0);\n\
                hold_speed(22.0);\nrun_for(1.0);\nsteer(step(0.0, 0.8, 1.0, 8.0));\nrun_for(2.0);\n";
    let path = Path::new("scripts/inline.rhai");
    let script = run_script_text(text, path, &RunOptions::default()).unwrap();
    assert_eq!(rust.time, script.time);
    for (a, b) in rust.channels.iter().zip(&script.channels) {
        let same = a
            .data
            .iter()
            .zip(&b.data)
            .all(|(x, y)| x.to_bits() == y.to_bits());
        assert!(same, "{} differs", a.name);
    }
}

/// Controller outputs are held over the tick (zero-order hold): at 1 kHz
/// output and 100 Hz ticks, the recorded steering angle is constant over
/// each tick and changes only at tick boundaries.
#[test]
fn controller_outputs_are_held_between_ticks() {
    let mut c = config(20.0);
    c.sample_rate_hz = 1000.0;
    let mut r = runner(c);
    let mut calls = 0;
    let controller = |s: &TickState| {
        calls += 1;
        Held {
            steer: Some(0.3 + 0.1 * s.time),
            ..Default::default()
        }
    };
    r.run_phase(Until::Ticks(50), controller).unwrap();
    assert_eq!(calls, 50);
    let record = r.into_record(Default::default(), None);
    let steer = &record.channel("steer_wheel_angle").unwrap().data;
    for tick in 0..50 {
        // Samples (k/1000 s) in (tick/100, (tick+1)/100] hold the output computed at tick/100.
        let expected = 0.3 + 0.1 * (tick as f64 / 100.0);
        for (k, v) in steer.iter().enumerate().skip(10 * tick + 1).take(10) {
            assert!((v - expected).abs() < 1e-12, "sample {k}");
        }
    }
}

/// A constant steer settles: `steady` on the yaw rate ends the phase before
/// `max_time`, with the yaw rate within the band over the window.
#[test]
fn run_until_steady_ends_the_phase() {
    let mut r = runner(config(20.0));
    r.inputs_mut()
        .set_open(OpenInput::Steer, Signal::Constant(0.5));
    let until = Until::Conditions(Conditions {
        steady: Some("yaw_rate".into()),
        max_time: 20.0,
        ..Default::default()
    });
    assert_eq!(r.run_phase(until, no_controller), Ok("steady"));
    assert!(r.time() > 1.0 && r.time() < 20.0, "{}", r.time());
    assert!(r.state().yaw_rate > 0.1);
}

/// `fail_on_timeout` and the simulated-time limit stop the run; the record
/// keeps its samples and says why, prefixed with the caller's context.
#[test]
fn stops_keep_the_samples_and_say_why() {
    let mut r = runner(config(20.0));
    let until = Until::Conditions(Conditions {
        speed_above: Some(100.0),
        max_time: 0.5,
        fail_on_timeout: true,
        ..Default::default()
    });
    let stop = r.run_phase(until, no_controller).unwrap_err();
    assert!(matches!(stop, RunStop::Timeout { .. }), "{stop:?}");
    let record = r.into_record(Default::default(), Some("here"));
    let RunStatus::Failed { message, time_s } = &record.status else {
        panic!("{:?}", record.status);
    };
    assert!(
        message.starts_with("here: run_until: no condition met"),
        "{message}"
    );
    assert!((time_s - 0.5).abs() < 1e-9);
    assert_eq!(record.samples(), 51);

    let mut c = config(20.0);
    c.limits.max_sim_time_s = 0.3;
    let mut r = runner(c);
    let stop = r.run_phase(Until::Ticks(100), no_controller).unwrap_err();
    assert_eq!(
        stop,
        RunStop::TimeLimit {
            limit: 0.3,
            time: 0.3
        }
    );
    assert!(
        r.run_phase(Until::Ticks(1), no_controller).is_err(),
        "stays stopped"
    );
    let record = r.into_record(Default::default(), None);
    assert!(matches!(record.status, RunStatus::Failed { .. }));
    assert_eq!(*record.time.last().unwrap(), 0.3);
}

/// Open-loop ticks leave the input revision alone; held commands move it
/// only when their value changes: a saturated speed hold (full drive, far
/// below its target) once, a speed hold near its target at nearly every tick.
#[test]
fn revision_follows_the_inputs() {
    let mut r = runner(config(20.0));
    r.inputs_mut()
        .set_open(OpenInput::Steer, Signal::sine(0.2, 1.0, 0.0, None).unwrap());
    let before = r.inputs().revision();
    r.run_phase(Until::Ticks(20), no_controller).unwrap();
    assert_eq!(r.inputs().revision(), before, "signals only: same inputs");
    r.inputs_mut().hold_speed(Signal::Constant(40.0));
    let held = r.inputs().revision();
    r.run_phase(Until::Ticks(20), no_controller).unwrap();
    assert_eq!(
        r.inputs().revision(),
        held + 1,
        "saturated: drive 1, brake 0"
    );
    let speed = r.state().speed;
    r.inputs_mut().hold_speed(Signal::Constant(speed));
    let near = r.inputs().revision();
    r.run_phase(Until::Ticks(20), no_controller).unwrap();
    assert!(r.inputs().revision() > near + 10);
}
