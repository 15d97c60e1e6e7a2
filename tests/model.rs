//! Checks of the two-track model against published closed forms.
//!
//! Each test names its source. Runs use the demo vehicles with overrides that
//! remove what a closed form does not contain (say which, beside the check).

use yawdyn::model::linear::bicycle_model;
use yawdyn::model::{Commands, State, VX, WHEEL_SPEED, straight_running};
use yawdyn::params::{FRONT, GRAVITY, Override, REAR, Vehicle, load_vehicle};
use yawdyn::sim::{N_CHANNELS, Simulation, SolverSettings};

mod common;
use common::LINEARISE;

const CROSSOVER: &str = "scripts/vehicles/hybrid_crossover.toml";
const TRACK_CAR: &str = "scripts/vehicles/track_car.toml";

fn vehicle(file: &str, sets: &[&str]) -> Vehicle {
    let overrides: Vec<Override> = sets.iter().map(|s| Override::parse(s).unwrap()).collect();
    load_vehicle(file.as_ref(), &overrides).unwrap_or_else(|e| panic!("{e}"))
}

fn channel(sim: &Simulation, name: &str) -> Vec<f64> {
    sim.channel(name)
        .unwrap_or_else(|| panic!("no channel {name}"))
        .to_vec()
}

fn last(sim: &Simulation, name: &str) -> f64 {
    *channel(sim, name).last().unwrap()
}

/// Runs at constant steering-wheel angle with a PI speed hold on the axle
/// torques (split by the vehicle's front share) for `duration` seconds.
fn hold_speed_run(v: &Vehicle, speed: f64, steer_wheel: f64, duration: f64) -> Simulation {
    let mut sim = Simulation::new(
        v,
        straight_running(v, speed),
        SolverSettings::default(),
        50.0,
    )
    .unwrap();
    let mut c = Commands::neutral(v);
    c.steer_wheel_angle = steer_wheel;
    let share = if v.powertrain.units[FRONT].is_none() {
        0.0
    } else if v.powertrain.units[REAR].is_none() {
        1.0
    } else {
        v.powertrain.front_share
    };
    let (mut t, mut integral) = (0.0_f64, 0.0);
    let tick = 0.01;
    while t < duration - 1e-9 {
        let error = speed - sim.state()[VX];
        integral += error * tick;
        let torque = v.chassis.mass * (2.0 * error + 0.5 * integral) * 0.3;
        c.axle_torque = Some([share * torque, (1.0 - share) * torque]);
        t += tick;
        sim.advance(t, &c).unwrap();
    }
    sim
}

/// Linear limit (Gillespie, *Fundamentals of Vehicle Dynamics*, ch. 6):
/// δ = L/R + K·ay, yaw-rate gain (V/L)/(1 + K·V²/L) and steady sideslip, with
/// K = (m/L)(b/Cf − a/Cr) and axle stiffnesses at static load.
fn check_linear_limit(v: &Vehicle, speed: f64, ay_target: f64) {
    let bike = bicycle_model(v);
    let k = bike.understeer_gradient();
    // Road-wheel angle the linear model needs for ay_target at this speed.
    let radius = speed * speed / ay_target;
    let delta = v.chassis.wheelbase / radius + k * ay_target;
    let sim = hold_speed_run(v, speed, delta * v.steering.ratio, 12.0);
    let (ay, r, beta, vx) = (
        last(&sim, "ay"),
        last(&sim, "yaw_rate"),
        last(&sim, "sideslip"),
        last(&sim, "vx"),
    );
    assert!((vx - speed).abs() < 0.01, "speed held: {vx} vs {speed}");
    assert!(
        ay.abs() < 0.1 * GRAVITY,
        "stays in the linear range: ay = {ay}"
    );
    let gain_model = r / delta;
    let gain_linear = bike.yaw_rate_gain(speed);
    let steer_model = delta;
    let steer_linear = v.chassis.wheelbase * r / vx + k * ay;
    let beta_linear = bike.sideslip_gain(speed) * delta;
    let rel = |a: f64, b: f64| (a - b).abs() / b.abs();
    assert!(
        rel(gain_model, gain_linear) < 0.02,
        "yaw-rate gain {gain_model} vs linear {gain_linear}"
    );
    assert!(
        rel(steer_linear, steer_model) < 0.02,
        "steer {steer_model} vs L/R + K ay = {steer_linear}"
    );
    assert!(
        (beta - beta_linear).abs() < 0.02 * beta_linear.abs().max(1e-3),
        "sideslip {beta} vs linear {beta_linear}"
    );
}

#[test]
fn linear_limit_matches_bicycle_model_understeering() {
    let v = vehicle(CROSSOVER, &LINEARISE);
    assert!(bicycle_model(&v).understeer_gradient() > 0.0);
    check_linear_limit(&v, 20.0, 0.05 * GRAVITY);
}

#[test]
fn linear_limit_matches_bicycle_model_oversteering() {
    let mut sets = LINEARISE.to_vec();
    sets.extend([
        "chassis.cg_to_front_axle=1.55",
        "tyre.rear.magic_formula.pKy1=12.0",
    ]);
    let v = vehicle(CROSSOVER, &sets);
    let bike = bicycle_model(&v);
    assert!(bike.understeer_gradient() < 0.0);
    let v_crit = bike.critical_speed().unwrap();
    let speed = 0.5 * v_crit;
    check_linear_limit(&v, speed, 0.05 * GRAVITY);
}

/// Longitudinal load transfer ΔFz = m·ax·h/L (statics; Milliken & Milliken,
/// *Race Car Vehicle Dynamics*, ch. 18; Gillespie ch. 2), under braking and
/// under acceleration, within 1 % of the transfer.
#[test]
fn longitudinal_load_transfer_matches_statics() {
    let v = vehicle(CROSSOVER, &LINEARISE);
    let statics = yawdyn::model::static_axle_loads(&v.chassis);
    let h = v.chassis.cg_height;
    for (label, drive, brake) in [("braking", 0.0, 0.2), ("accelerating", 0.45, 0.0)] {
        let mut sim = Simulation::new(
            &v,
            straight_running(&v, 30.0),
            SolverSettings::default(),
            100.0,
        )
        .unwrap();
        let mut c = Commands::neutral(&v);
        c.brake_request = brake;
        // A constant axle torque (not the power-limited request) keeps ax steady.
        if drive > 0.0 {
            c.axle_torque = Some([drive * 2000.0, drive * 2000.0]);
        }
        // Long enough for the pitch mode (about 1.2 Hz, 23 % damping) to settle.
        sim.advance(4.0, &c).unwrap();
        let ax = last(&sim, "ax");
        let front = last(&sim, "fz_front_left") + last(&sim, "fz_front_right");
        let transfer_model = front - statics[FRONT];
        let transfer_statics = -v.chassis.mass * ax * h / v.chassis.wheelbase;
        assert!(ax.abs() > 2.0, "{label}: ax = {ax}");
        assert!(
            (transfer_model - transfer_statics).abs() < 0.01 * transfer_statics.abs(),
            "{label}: model transfer {transfer_model} N vs m*ax*h/L = {transfer_statics} N"
        );
        // Common practice: braking moves load forward, acceleration rearward.
        assert_eq!(transfer_model > 0.0, brake > 0.0, "{label}: direction");
    }
}

/// Lateral load transfer per axle (Milliken & Milliken, *Race Car Vehicle
/// Dynamics*, ch. 18, unsprung mass neglected), with the elastic part grown
/// by the overturning moment of the displaced body, m·g·H·φ (Gillespie,
/// *Fundamentals of Vehicle Dynamics*, ch. 8, roll gradient
/// φ/ay = m·H/(KΦ − m·g·H)):
/// ΔFz_f = (m·ay/t_f)·[H·KΦf/(KΦf + KΦr − m·g·H) + (b/L)·z_rf], likewise rear.
/// Milliken & Milliken's form without the m·g·H term is about 9 % low on the
/// elastic part for the demo crossover; the small-angle form differs from the
/// model's sin φ by under 0.03 % at 0.4 g.
#[test]
fn lateral_load_transfer_matches_roll_stiffness_formula() {
    for file in [CROSSOVER, TRACK_CAR] {
        let v = vehicle(file, &LINEARISE);
        let c = &v.chassis;
        let speed = 20.0;
        let ay_target = 0.4 * GRAVITY;
        let bike = bicycle_model(&v);
        let delta =
            c.wheelbase * ay_target / (speed * speed) + bike.understeer_gradient() * ay_target;
        let sim = hold_speed_run(&v, speed, delta * v.steering.ratio, 10.0);
        let ay = last(&sim, "ay");
        let z = c.roll_centre_height;
        let roll_axis = z[FRONT] + (z[REAR] - z[FRONT]) * c.a / c.wheelbase;
        let arm = c.cg_height - roll_axis;
        let k = c.roll_stiffness;
        let effective = k[FRONT] + k[REAR] - c.mass * GRAVITY * arm;
        let share = [c.b / c.wheelbase, c.a / c.wheelbase];
        for (axle, left, right) in [
            (FRONT, "fz_front_left", "fz_front_right"),
            (REAR, "fz_rear_left", "fz_rear_right"),
        ] {
            let model = 0.5 * (last(&sim, right) - last(&sim, left));
            let formula =
                c.mass * ay / c.track[axle] * (arm * k[axle] / effective + share[axle] * z[axle]);
            assert!(
                (model - formula).abs() < 0.01 * formula.abs(),
                "{file} axle {axle}: model {model} N vs formula {formula} N (ay {ay})"
            );
        }
    }
}

/// Power limit (common practice; closed form from the power balance):
/// at top speed η·P = (½·ρ·Cd·A·V² + f_r·(m·g + ½·ρ·Cl·A·V²))·V (Cl·A > 0
/// is downforce, which loads the tyres). The crossover's store is made
/// practically unlimited so that its motor-generator holds full power for
/// the two minutes the run takes, and spare torque goes to the other axle so
/// that a full request asks for the whole η·P of both units.
#[test]
fn full_power_reaches_closed_form_top_speed() {
    let v = vehicle(
        CROSSOVER,
        &[
            "drive.store.usable_energy=1e12",
            "drive.spare_torque_to_other_axle=true",
        ],
    );
    let power: f64 = v
        .powertrain
        .units
        .iter()
        .flatten()
        .map(|u| u.efficiency * u.max_power)
        .sum();
    let f_r = v.tyres[FRONT].rolling_resistance;
    assert_eq!(f_r, v.tyres[REAR].rolling_resistance);
    let resist = |s: f64| {
        let q = 0.5 * v.aero.air_density * s * s;
        (q * v.aero.drag_area + f_r * (v.chassis.mass * GRAVITY + q * v.aero.downforce_area)) * s
    };
    // Bisection for η·P = resistance power.
    let (mut lo, mut hi) = (1.0, 150.0);
    for _ in 0..100 {
        let mid = 0.5 * (lo + hi);
        if resist(mid) < power {
            lo = mid
        } else {
            hi = mid
        }
    }
    let v_top = 0.5 * (lo + hi);
    let mut sim = Simulation::new(
        &v,
        straight_running(&v, 0.97 * v_top),
        SolverSettings::default(),
        10.0,
    )
    .unwrap();
    let mut c = Commands::neutral(&v);
    c.drive_request = 1.0;
    sim.advance(120.0, &c).unwrap();
    let speed = last(&sim, "vx");
    // Tyre slip losses (a fraction of a percent of power) sit inside the tolerance.
    assert!(
        (speed - v_top).abs() < 0.01 * v_top,
        "top speed {speed} m/s vs closed form {v_top} m/s"
    );
}

/// Above the grip-limited range the tractive force follows η·P/v (common practice).
#[test]
fn tractive_force_follows_power_over_speed() {
    let base = vehicle(CROSSOVER, &[]);
    let unit_power = base
        .powertrain
        .units
        .each_ref()
        .map(|u| u.as_ref().map_or(0.0, |u| u.efficiency * u.max_power));
    let power = unit_power[FRONT] + unit_power[REAR];
    // Split the request as the units' powers so that neither axle's share is
    // capped (the model does not move a capped share to the other axle).
    let share = format!("drive.front_share={}", unit_power[FRONT] / power);
    let v = vehicle(
        CROSSOVER,
        &[
            "aero.drag_area=0.0",
            "aero.downforce_area=0.0",
            share.as_str(),
        ],
    );
    let mut sim = Simulation::new(
        &v,
        straight_running(&v, 5.0),
        SolverSettings::default(),
        20.0,
    )
    .unwrap();
    let mut c = Commands::neutral(&v);
    c.drive_request = 1.0;
    sim.advance(25.0, &c).unwrap();
    let speeds = channel(&sim, "vx");
    // Tractive force at the wheels: Σ T_drive / R. It differs from η·P/v by the
    // tyre slip (ω·R = v·(1 + κ), about 1–2 % here), hence the 3 % tolerance.
    let fx: Vec<f64> = {
        let wheels = ["front_left", "front_right", "rear_left", "rear_right"];
        let chans: Vec<Vec<f64>> = wheels
            .iter()
            .map(|w| channel(&sim, &format!("drive_torque_{w}")))
            .collect();
        (0..speeds.len())
            .map(|i| {
                (0..4)
                    .map(|w| chans[w][i] / v.tyres[w / 2].rolling_radius)
                    .sum()
            })
            .collect()
    };
    let mut checked = 0;
    for (s, f) in speeds.iter().zip(&fx) {
        // Well above the power-limited speeds printed by `yawdyn vehicle` (about 36 km/h).
        if *s > 20.0 && *s < 40.0 {
            let ideal = power / s;
            assert!(
                (f - ideal).abs() < 0.03 * ideal,
                "at {s} m/s: {f} N vs P/v = {ideal} N"
            );
            checked += 1;
        }
    }
    assert!(
        checked > 10,
        "covered the power-limited range ({checked} samples)"
    );
}

/// Coasting on a straight with no drag and no rolling resistance keeps the
/// kinetic energy (body + wheels) to integrator tolerance (conservation of energy).
#[test]
fn coasting_conserves_energy() {
    let v = vehicle(CROSSOVER, &LINEARISE);
    let mut sim = Simulation::new(
        &v,
        straight_running(&v, 30.0),
        SolverSettings::default(),
        10.0,
    )
    .unwrap();
    let energy = |x: &State| {
        let body = 0.5 * v.chassis.mass * (x[VX] * x[VX]);
        let wheels: f64 = (0..4)
            .map(|i| 0.5 * v.tyres[i / 2].wheel_inertia * x[WHEEL_SPEED + i].powi(2))
            .sum();
        body + wheels
    };
    let e0 = energy(sim.state());
    sim.advance(20.0, &Commands::neutral(&v)).unwrap();
    let e1 = energy(sim.state());
    assert!(((e1 - e0) / e0).abs() < 1e-6, "energy {e0} J -> {e1} J");
}

/// A step of any input from rest gives finite results (no NaN): a numerical
/// robustness check of the low-speed regularisation (Pacejka, ch. 7).
#[test]
fn input_steps_from_rest_stay_finite() {
    for file in [CROSSOVER, TRACK_CAR] {
        let v = vehicle(file, &[]);
        let cases: [(f64, f64, f64); 5] = [
            (0.5, 0.0, 0.0),
            (0.0, 1.0, 0.0),
            (0.0, 0.0, 1.0),
            (0.6, 1.0, 0.0),
            (-0.6, 1.0, 1.0),
        ];
        for (steer, drive, brake) in cases {
            let mut sim = Simulation::new(
                &v,
                straight_running(&v, 0.0),
                SolverSettings::default(),
                100.0,
            )
            .unwrap();
            let mut c = Commands::neutral(&v);
            c.steer_wheel_angle = steer * v.steering.ratio;
            c.drive_request = drive;
            c.brake_request = brake;
            let result = sim.advance(3.0, &c);
            assert!(result.is_ok(), "{file} {steer} {drive} {brake}: {result:?}");
            assert!(
                (0..N_CHANNELS).all(|i| sim.channel_data(i).iter().all(|x| x.is_finite())),
                "{file}: non-finite channel for steer {steer} drive {drive} brake {brake}"
            );
            // Wheel loads never go negative (wheel lift is clamped at zero).
            for wheel in ["front_left", "front_right", "rear_left", "rear_right"] {
                assert!(
                    channel(&sim, &format!("fz_{wheel}"))
                        .iter()
                        .all(|f| *f >= 0.0)
                );
            }
        }
    }
}

/// Sign convention (ISO 8855): a left turn (positive steer) gives positive
/// yaw rate, positive lateral acceleration and leftward front tyre forces.
#[test]
fn left_turn_signs_follow_iso_8855() {
    let v = vehicle(CROSSOVER, &[]);
    let sim = hold_speed_run(&v, 15.0, 0.5, 4.0);
    assert!(last(&sim, "yaw_rate") > 0.0);
    assert!(last(&sim, "ay") > 0.0);
    assert!(last(&sim, "fy_front_left") > 0.0 && last(&sim, "fy_front_right") > 0.0);
    assert!(last(&sim, "slip_angle_front_left") > 0.0);
    // The outer (right) wheels carry more load in a left turn.
    assert!(last(&sim, "fz_front_right") > last(&sim, "fz_front_left"));
    assert!(
        last(&sim, "roll") > 0.0,
        "body rolls outwards, right side down: positive roll about x (ISO 8855)"
    );
}

/// Determinism: two identical runs are bit-identical.
#[test]
fn identical_runs_are_bit_identical() {
    let v = vehicle(TRACK_CAR, &[]);
    let a = hold_speed_run(&v, 25.0, 0.8, 3.0);
    let b = hold_speed_run(&v, 25.0, 0.8, 3.0);
    assert_eq!(a.times().len(), b.times().len());
    for i in 0..N_CHANNELS {
        for (x, y) in a.channel_data(i).iter().zip(b.channel_data(i)) {
            assert_eq!(x.to_bits(), y.to_bits());
        }
    }
}
