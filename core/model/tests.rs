//! Checks of the model's stages at fixed states, before any integration.
use super::*;
use crate::params::{DifferentialKind, FRONT, REAR};
use crate::params::{Override, load_vehicle};

fn crossover() -> Vehicle {
    let flat = [Override::parse("steering.toe_rear_deg=0.0").unwrap()];
    load_vehicle("scripts/vehicles/hybrid_crossover.toml".as_ref(), &flat).unwrap()
}

/// Tyre relaxation (Pacejka, *Tire and Vehicle Dynamics*, ch. 7): with the
/// chassis motion frozen, a step in slip angle builds the relaxed slip as
/// 1 − exp(−s/σ) over the travelled distance s.
#[test]
fn slip_angle_step_relaxes_with_distance_constant_sigma() {
    let v = crossover();
    let speed = 20.0;
    let mut x = straight_running(&v, speed);
    let alpha = 0.02_f64; // rad, a step of the body's lateral velocity
    x[VY] = -speed * alpha.tan();
    let c = Commands::neutral(&v);
    let wheel = 2; // rear left: no steer, no toe
    let sigma = v.tyres[REAR].relaxation_lateral;
    let (mut t, dt) = (0.0, 1e-5);
    let t_end = 3.0 * sigma / speed;
    while t < t_end {
        // Integrate only this wheel's slip state (classical RK4, tiny step).
        let f = |s: f64| {
            let mut y = x;
            y[SLIP_ANGLE + wheel] = s;
            evaluate(&v, &y, &c).derivative[SLIP_ANGLE + wheel]
        };
        let s0 = x[SLIP_ANGLE + wheel];
        let k1 = f(s0);
        let k2 = f(s0 + 0.5 * dt * k1);
        let k3 = f(s0 + 0.5 * dt * k2);
        let k4 = f(s0 + dt * k3);
        x[SLIP_ANGLE + wheel] = s0 + dt / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4);
        t += dt;
        let distance = speed * t;
        let expected = alpha.tan() * (1.0 - (-distance / sigma).exp());
        assert!(
            (x[SLIP_ANGLE + wheel] - expected).abs() < 1e-9,
            "at s = {distance} m: {} vs {expected}",
            x[SLIP_ANGLE + wheel]
        );
    }
}

/// Ackermann geometry (Gillespie ch. 6): with full Ackermann the inner
/// wheel steers more and both wheel axes meet on the rear-axle line.
#[test]
fn full_ackermann_wheel_axes_meet_on_rear_axle_line() {
    let mut v = crossover();
    v.steering.ackermann = 1.0;
    v.steering.toe = [0.0, 0.0];
    let steer = road_wheel_angles(&v.steering, &v.chassis, 0.3 * v.steering.ratio);
    assert!(
        steer[0] > steer[1],
        "inner (left) wheel steers more in a left turn"
    );
    let half = 0.5 * v.chassis.track[FRONT];
    let r_left = v.chassis.wheelbase / steer[0].tan() + half;
    let r_right = v.chassis.wheelbase / steer[1].tan() - half;
    assert!((r_left - r_right).abs() < 1e-9, "{r_left} vs {r_right}");
}

/// Differentials: open splits equally; a limited-slip unit transfers at
/// most preload + locking·|T| (torque-sensing definition).
#[test]
fn differential_torque_split() {
    let v = crossover();
    let mut unit = v.powertrain.units[FRONT].clone().unwrap();
    let (l, r) = differential_split(&unit, 1000.0, 50.0, 40.0);
    assert_eq!((l, r), (500.0, 500.0));
    unit.differential.kind = DifferentialKind::LimitedSlip;
    unit.differential.preload = 50.0;
    unit.differential.locking = 0.2;
    let (l, r) = differential_split(&unit, 1000.0, 50.0, 40.0);
    assert!(
        (r - l - 2.0 * 250.0).abs() < 1e-9,
        "capacity 250 N*m moves to the slower wheel"
    );
    unit.differential.kind = DifferentialKind::Locked;
    let (l, r) = differential_split(&unit, 1000.0, 50.0, 49.9);
    assert!((r - l - 2.0 * unit.differential.coupling_damping * 0.1).abs() < 1e-6);
}

/// The power limit (common practice): available torque is min(T_max, P_max/ω)
/// at the unit, η·i times that at the wheels, as the model reports it.
#[test]
fn available_torque_is_capped_by_power() {
    let v = crossover();
    let u = v.powertrain.units[FRONT].clone().unwrap();
    let at = |wheel_speed: f64| {
        let mut x = straight_running(&v, 1.0);
        for i in 0..4 {
            x[WHEEL_SPEED + i] = wheel_speed;
        }
        evaluate(&v, &x, &Commands::neutral(&v)).axle_available_torque[FRONT]
    };
    let low = at(1.0);
    assert_eq!(low, u.efficiency * u.ratio * u.max_torque.value(u.ratio));
    let w = 100.0;
    let high = at(w);
    assert!((high * w - u.efficiency * u.max_power).abs() < 1e-6);
}

/// Evaluating in place writes every field: into an evaluation whose every
/// number is NaN and whose unit kinds are unset it gives
/// `evaluate_prepared`'s result (compared through `Debug`, which prints every
/// field, NaN included, with the shortest representation that reads back
/// exactly). A field added to `Evaluation` must be added here to compile.
#[test]
fn evaluating_in_place_writes_every_field() {
    let v = crossover();
    let p = Prepared::new(&v);
    let mut c = Commands::neutral(&v);
    c.steer_wheel_angle = 0.3;
    c.drive_request = 0.6;
    let mut x = straight_running(&v, 25.0);
    x[VY] = 0.4;
    x[YAW_RATE] = 0.2;
    let steer = SteerAngles::new(&v, c.steer_wheel_angle);
    let expected = evaluate_prepared(&v, &p, &steer, &x, &c);
    assert!(expected.powertrain.unit_kind.iter().all(Option::is_some));
    let nan = f64::NAN;
    let pair = [nan; 2];
    let wheel = WheelOutput {
        fz: nan,
        fx: nan,
        fy: nan,
        slip_ratio: nan,
        tan_slip_angle: nan,
        steer_angle: nan,
        drive_torque: nan,
        brake_torque: nan,
        contact_speed: nan,
    };
    let mut out = Evaluation {
        derivative: State::from_element(nan),
        ax: nan,
        ay: nan,
        wheels: [wheel; 4],
        drag_force: nan,
        downforce: nan,
        axle_drive_torque: pair,
        axle_available_torque: pair,
        powertrain: PowertrainOutput {
            unit_torque: pair,
            unit_speed: pair,
            electrical_power: pair,
            fuel_mass_flow: pair,
            regen_brake_torque: pair,
            friction_brake_torque: pair,
            available_regen_torque: pair,
            state_of_charge: nan,
            store_energy_rate: nan,
            unit_kind: [None; 2],
            braking_front_share: nan,
        },
    };
    evaluate_prepared_into(&v, &p, &steer, &x, &c, &mut out);
    assert_eq!(format!("{out:?}"), format!("{expected:?}"));
}
