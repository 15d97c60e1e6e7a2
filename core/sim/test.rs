//! Tests of the integration across ticks and of the sampling.

use super::*;
use crate::model::{VX, YAW_RATE, straight_running};
use crate::params::load_vehicle;

fn crossover() -> Vehicle {
    load_vehicle("scripts/vehicles/hybrid_crossover.toml".as_ref(), &[]).unwrap()
}

fn turning(v: &Vehicle) -> Commands {
    let mut c = Commands::neutral(v);
    c.steer_wheel_angle = 0.5;
    c.drive_request = 0.2;
    c
}

fn settings(kind: SolverKind, tol: f64) -> SolverSettings {
    SolverSettings {
        kind,
        rtol: tol,
        atol: tol,
        fixed_step: 2e-4,
    }
}

/// Advances in ticks of `tick` s to `end`, with the inputs `at(k)` for tick k.
fn ticked<I: InputSource>(sim: &mut Simulation, tick: f64, end: f64, at: impl Fn(usize) -> I) {
    let n = (end / tick).round() as usize;
    for k in 0..n {
        sim.advance((k + 1) as f64 * tick, &at(k)).unwrap();
    }
}

/// Largest |difference| of a channel between two runs with the same sample times.
fn channel_error(a: &Simulation, b: &Simulation, name: &str) -> f64 {
    assert_eq!(a.times(), b.times());
    let (a, b) = (a.channel(name).unwrap(), b.channel(name).unwrap());
    a.iter()
        .zip(b)
        .map(|(x, y)| (x - y).abs())
        .fold(0.0, f64::max)
}

/// The reservation hint changes memory only: a run advanced in ticks
/// records the same samples, bit for bit, with and without it, for the
/// continuous and a stepwise method, with the hint short of the run's end and
/// past it.
#[test]
fn reserving_samples_changes_nothing_recorded() {
    let v = crossover();
    let c = turning(&v);
    for kind in [SolverKind::Dopri5, SolverKind::Rk4] {
        let run = |hint: Option<f64>| {
            let x0 = straight_running(&v, 20.0);
            let mut sim = Simulation::new(&v, x0, settings(kind, 1e-6), 1000.0).unwrap();
            if let Some(t) = hint {
                sim.reserve_samples_until(t);
            }
            ticked(&mut sim, 0.01, 0.5, |_| c);
            sim
        };
        let plain = run(None);
        for hint in [0.2, 0.5, 3.0] {
            let hinted = run(Some(hint));
            assert_eq!(plain.times(), hinted.times(), "{kind:?}, hint {hint}");
            for i in 0..N_CHANNELS {
                let (a, b) = (plain.channel_data(i), hinted.channel_data(i));
                assert!(
                    a.iter().zip(b).all(|(x, y)| x.to_bits() == y.to_bits()),
                    "{kind:?}, hint {hint}, channel {i}"
                );
            }
        }
    }
}

/// The three integrators solve the same equations: Dop853 and Rk4 agree
/// with Dopri5 to well within the tolerances used (a numerical cross-check).
#[test]
fn integrators_agree() {
    let v = crossover();
    let c = turning(&v);
    let run = |kind| {
        let mut sim =
            Simulation::new(&v, straight_running(&v, 20.0), settings(kind, 1e-8), 100.0).unwrap();
        sim.advance(3.0, &c).unwrap();
        assert_eq!(sim.times().len(), 301, "{kind:?} samples");
        *sim.state()
    };
    let a = run(SolverKind::Dopri5);
    for kind in [SolverKind::Dop853, SolverKind::Rk4, SolverKind::Ark436] {
        let b = run(kind);
        for i in [VX, YAW_RATE] {
            assert!(
                (a[i] - b[i]).abs() < 1e-5 * a[i].abs().max(1.0),
                "{kind:?} {i}: {} vs {}",
                a[i],
                b[i]
            );
        }
    }
}

/// Samples land on exact multiples of the sample period whatever the tick length.
#[test]
fn samples_at_exact_period_multiples() {
    let v = crossover();
    let c = turning(&v);
    for kind in [
        SolverKind::Dopri5,
        SolverKind::Dop853,
        SolverKind::Rk4,
        SolverKind::Ark436,
    ] {
        let mut sim =
            Simulation::new(&v, straight_running(&v, 20.0), settings(kind, 1e-6), 200.0).unwrap();
        let mut t = 0.0;
        for _ in 0..37 {
            t += 0.0137;
            sim.advance(t, &c).unwrap();
        }
        for (k, time) in sim.times().iter().enumerate() {
            assert_eq!(*time, k as f64 / 200.0);
        }
        assert_eq!(sim.times().len(), (t * 200.0).floor() as usize + 1);
        assert_eq!(sim.time(), t);
    }
}

/// Ticks whose commands did not change cost nothing: 100 Hz ticks with the
/// same commands take (almost) the evaluations of one open-loop segment and
/// give the same answer to within the tolerance.
#[test]
fn unchanged_ticks_do_not_restart() {
    let v = crossover();
    let c = turning(&v);
    let new = || {
        Simulation::new(
            &v,
            straight_running(&v, 20.0),
            SolverSettings::default(),
            100.0,
        )
        .unwrap()
    };
    let mut segment = new();
    segment.advance(5.0, &c).unwrap();
    let mut ticks = new();
    ticked(&mut ticks, 0.01, 5.0, |_| c);
    let ratio = ticks.evaluations() as f64 / segment.evaluations() as f64;
    assert!(
        ratio < 1.02,
        "{} vs {}",
        ticks.evaluations(),
        segment.evaluations()
    );
    for name in ["yaw_rate", "vy", "ay", "fy_front_left"] {
        let scale = segment
            .channel(name)
            .unwrap()
            .iter()
            .fold(0.0, |m: f64, x| m.max(x.abs()));
        let error = channel_error(&segment, &ticks, name);
        assert!(error < 1e-5 * scale, "{name}: {error} of {scale}");
    }
}

/// Commands that change at a tick restart the integration there: with the
/// steering switched between two values every 5th tick (every 50 ms), the
/// ticked run follows a tight-tolerance run (rtol 1e-11) as closely as a run
/// that restarts at every tick (the pre-continuation behaviour, `revision`
/// unknown), and a step that went past a switching tick is cut back to it.
#[test]
fn changed_commands_restart_at_the_tick() {
    /// Commands with an unknown revision: restart at every tick.
    struct Unknown(Commands);
    impl InputSource for Unknown {
        fn commands(&self, _t: f64) -> Commands {
            self.0
        }
    }
    let v = crossover();
    let base = turning(&v);
    let at = |k: usize| {
        let mut c = base;
        c.steer_wheel_angle = if (k / 5) % 2 == 0 { 0.3 } else { 0.6 };
        c
    };
    let new = |tol| {
        Simulation::new(
            &v,
            straight_running(&v, 20.0),
            settings(SolverKind::Dopri5, tol),
            100.0,
        )
        .unwrap()
    };
    let mut reference = new(1e-11);
    ticked(&mut reference, 0.01, 3.0, |k| Unknown(at(k)));
    let mut held = new(1e-7);
    ticked(&mut held, 0.01, 3.0, at);
    let mut restarted = new(1e-7);
    ticked(&mut restarted, 0.01, 3.0, |k| Unknown(at(k)));
    assert!(held.evaluations() < restarted.evaluations());
    for name in ["yaw_rate", "vy", "ay"] {
        let e_held = channel_error(&held, &reference, name);
        let e_restarted = channel_error(&restarted, &reference, name);
        assert!(
            e_held < 1e-5 && e_held < 10.0 * e_restarted.max(1e-7),
            "{name}: held {e_held}, restarted {e_restarted}"
        );
    }
}

/// Samples interpolated within long steps agree with the model evaluated at
/// every sample: 1 kHz output of a steady turn, each channel to 1e-6 of its
/// largest magnitude (the solver's own tolerance is 1e-6).
#[test]
fn interpolated_samples_match_exact_evaluation() {
    let v = crossover();
    let c = turning(&v);
    let run = |interpolate| {
        let mut sim = Simulation::new(
            &v,
            straight_running(&v, 20.0),
            SolverSettings::default(),
            1000.0,
        )
        .unwrap();
        sim.set_output_interpolation(interpolate);
        ticked(&mut sim, 0.01, 4.0, |_| c);
        sim
    };
    let (fast, exact) = (run(true), run(false));
    assert!(fast.output_evaluations() * 3 < exact.output_evaluations());
    assert_eq!(fast.evaluations(), exact.evaluations(), "the same steps");
    for info in ChannelTable::get().channels() {
        let scale = exact
            .channel(&info.name)
            .unwrap()
            .iter()
            .fold(1e-3, |m: f64, x| m.max(x.abs()));
        let error = channel_error(&fast, &exact, &info.name);
        assert!(error <= 1e-6 * scale, "{}: {error} of {scale}", info.name);
    }
}

/// The controller's view at a tick is the solver's own evaluation there when
/// the integration stopped at the tick, and equals a fresh evaluation.
#[test]
fn outputs_now_reuse_the_solvers_evaluation() {
    let v = crossover();
    let c = turning(&v);
    let mut sim = Simulation::new(
        &v,
        straight_running(&v, 20.0),
        SolverSettings::default(),
        100.0,
    )
    .unwrap();
    sim.advance(0.5, &c).unwrap();
    let o = sim.outputs_now(&c);
    let fresh = crate::model::evaluate(&v, sim.state(), &c);
    assert_eq!(o.evaluation.ay.to_bits(), fresh.ay.to_bits());
    assert_eq!(o.channel("yaw_rate"), Some(sim.state()[YAW_RATE]));
    assert_eq!(o.time, 0.5);
}

/// Equal commands have equal revisions; a change in any field changes it.
#[test]
fn command_revision_follows_every_field() {
    let v = crossover();
    let c = turning(&v);
    assert_eq!(c.revision(), turning(&v).revision());
    let mut changes = vec![c; 6];
    changes[0].steer_wheel_angle += 1e-12;
    changes[1].front_share = 0.3;
    changes[2].axle_torque = Some([0.0, 0.0]);
    changes[3].wheel_torque[3] = 1.0;
    changes[4].wheel_brake[0] = 1.0;
    changes[5].brake_request = -0.0;
    for (i, other) in changes.iter().enumerate() {
        assert_ne!(c.revision(), other.revision(), "change {i}");
    }
}

/// A non-finite value stops the run with the time and the state named, and
/// keeps every sample computed before.
#[test]
fn non_finite_input_stops_with_time_and_state() {
    let v = crossover();
    let c = turning(&v);
    for kind in [
        SolverKind::Dopri5,
        SolverKind::Dop853,
        SolverKind::Rk4,
        SolverKind::Ark436,
    ] {
        let mut sim =
            Simulation::new(&v, straight_running(&v, 20.0), settings(kind, 1e-6), 100.0).unwrap();
        sim.advance(1.0, &c).unwrap();
        let mut bad = c;
        bad.steer_wheel_angle = f64::NAN;
        let err = sim.advance(2.0, &bad).unwrap_err();
        match &err {
            SimError::NonFinite { time, state } => {
                assert!((1.0..=2.0).contains(time), "{time}");
                assert!(STATE_NAMES.iter().any(|(n, _)| n == state));
            }
            other => panic!("{kind:?}: unexpected {other:?}"),
        }
        assert!(
            sim.times().len() >= 101,
            "samples up to the failure are kept"
        );
        for i in 0..N_CHANNELS {
            assert_eq!(sim.channel_data(i).len(), sim.times().len());
            assert!(sim.channel_data(i).iter().all(|x| x.is_finite()));
        }
        let record = sim.into_record(Provenance::default());
        assert!(matches!(record.status, RunStatus::Failed { .. }));
    }
}

/// Through corners of the model (the drive torque reaching the power limit at
/// full drive; brakes fading near standstill in a braked turn) interpolated
/// samples stay within 1e-4 of each channel's largest magnitude of the model
/// evaluated at every sample: the check against an exact evaluation sends
/// steps with a corner to sample-by-sample evaluation. Wheel loads stay ≥ 0.
#[test]
fn interpolated_samples_through_corners() {
    let v = crossover();
    let neutral = Commands::neutral(&v);
    let full_drive = Commands {
        drive_request: 1.0,
        ..neutral
    };
    let braked_turn = Commands {
        brake_request: 0.8,
        steer_wheel_angle: 1.0,
        ..neutral
    };
    for (c, speed) in [(full_drive, 5.0), (braked_turn, 25.0)] {
        let run = |interpolate| {
            let x0 = straight_running(&v, speed);
            let mut sim = Simulation::new(&v, x0, SolverSettings::default(), 1000.0).unwrap();
            sim.set_output_interpolation(interpolate);
            sim.advance(6.0, &c).unwrap();
            sim
        };
        let (fast, exact) = (run(true), run(false));
        for info in ChannelTable::get().channels() {
            let data = exact.channel(&info.name).unwrap();
            let scale = data.iter().fold(1e-9, |m: f64, x| m.max(x.abs()));
            let error = channel_error(&fast, &exact, &info.name);
            assert!(error <= 1e-4 * scale, "{}: {error} of {scale}", info.name);
        }
        for wheel in crate::model::WHEEL_NAMES {
            let fz = fast.channel(&format!("fz_{wheel}")).unwrap();
            assert!(fz.iter().all(|f| *f >= 0.0), "fz_{wheel}");
        }
    }
}

/// An output row evaluated in place in a used scratch equals the row of a
/// fresh evaluation, bit for bit (no field of the scratch survives).
#[test]
fn rows_evaluated_in_place_are_fresh_rows() {
    let v = crossover();
    let sim = Simulation::new(
        &v,
        straight_running(&v, 20.0),
        SolverSettings::default(),
        100.0,
    )
    .unwrap();
    let (vehicle, prepared, steer) = sim.model_parts();
    let model = plant::Model {
        vehicle: &vehicle,
        prepared: &prepared,
        steer: &steer,
    };
    let c = turning(&v);
    let mut x = straight_running(&v, 23.0);
    x[crate::model::VY] = -0.3;
    x[YAW_RATE] = 0.25;
    let mut braked = Commands::neutral(&v);
    braked.brake_request = 0.5;
    let mut scratch = sim.outputs_now(&braked);
    let mut row = [0.0; N_CHANNELS];
    sim.row_at(model, &c, 0.7, &x, &mut scratch, &mut row);
    let fresh = plant::Captured::evaluate(model, &c, 0.7, &x);
    let expected = ChannelTable::get().row(&sim.outputs_of(0.7, &fresh));
    assert_eq!(row.map(f64::to_bits), expected.map(f64::to_bits));
}
