//! Steady-state stability analysis: trim, linearisation, eigenvalues, maps.
//!
//! Checks against the linear single-track model (Rajamani, *Vehicle Dynamics
//! and Control*, 2nd ed., §2.3 state matrix; Gillespie, *Fundamentals of
//! Vehicle Dynamics*, ch. 6 understeer gradient, steady-state steer and
//! critical speed), plus numerical self-checks. Vehicles are the invented
//! demo crossover with overrides (invented data).

use std::path::{Path, PathBuf};
use std::process::Command;

use nalgebra::Complex;
use yawdyn::analysis::BicycleModel;
use yawdyn::model::linear::bicycle_model;
use yawdyn::model::{AY_GEOMETRIC, VX, VY, YAW_RATE, evaluate};
use yawdyn::params::{GRAVITY, Override, Vehicle, load_vehicle};
use yawdyn::stability::{
    LINEAR_STATES, StabilityError, StabilityReport, TrimSettings, TrimTarget, analyse,
    default_relative_step, eigenvalues, find_trim, read_map, state_matrix,
};

const CROSSOVER: &str = "scripts/vehicles/hybrid_crossover.toml";

/// What the 2-DOF model lacks, removed so that the comparison is fair: tyre
/// relaxation (lengths cut to 0.02 m, a lag of under 1 ms at the speeds
/// used), toe, camber (the bicycle model's stiffness is at zero camber),
/// Ackermann geometry, aero forces and rolling resistance (so no drive torque
/// is needed and the tyres run in pure lateral slip). Roll and pitch stay in:
/// at small ay their effect on the axle stiffness is of second order.
const FAIR: &[&str] = &[
    "tyre.front.relaxation_length_lateral=0.02",
    "tyre.rear.relaxation_length_lateral=0.02",
    "tyre.front.relaxation_length_longitudinal=0.02",
    "tyre.rear.relaxation_length_longitudinal=0.02",
    "steering.toe_front_deg=0",
    "steering.toe_rear_deg=0",
    "tyre.front.camber_deg=0",
    "tyre.rear.camber_deg=0",
    "steering.ackermann=0",
    "aero.drag_area=0",
    "aero.downforce_area=0",
    "tyre.front.rolling_resistance=0",
    "tyre.rear.rolling_resistance=0",
];

/// Oversteering variant (invented): CG moved rearwards to 59 % rear weight
/// and weaker rear tyres (pKy1 17 → 12).
const OVERSTEER: &[&str] = &[
    "chassis.cg_to_front_axle=1.6",
    "tyre.rear.magic_formula.pKy1=12",
];

fn vehicle(sets: &[&[&str]]) -> Vehicle {
    let overrides: Vec<Override> = sets
        .iter()
        .flat_map(|s| s.iter())
        .map(|s| Override::parse(s).expect("valid override"))
        .collect();
    load_vehicle(Path::new(CROSSOVER), &overrides).expect("vehicle loads")
}

fn report(v: &Vehicle, speed: f64, ay: f64) -> StabilityReport {
    analyse(
        v,
        &TrimTarget::cornering(v, speed, ay),
        &TrimSettings::default(),
    )
    .expect("trim exists")
}

/// Largest relative error between the full model's yaw/sideslip eigenvalue
/// pair and the closed-form pair, matched in sorted order.
fn yaw_eigen_error(r: &StabilityReport, bike: &BicycleModel, speed: f64) -> f64 {
    let yaw = r.yaw_mode.expect("yaw mode identified");
    let sort = |mut v: Vec<Complex<f64>>| {
        v.sort_by(|p, q| p.re.total_cmp(&q.re).then(p.im.total_cmp(&q.im)));
        v
    };
    let full = sort(
        yaw.eigenvalues
            .iter()
            .map(|l| Complex::new(l.re, l.im))
            .collect(),
    );
    let closed = sort(bike.eigenvalues(speed).to_vec());
    full.iter()
        .zip(&closed)
        .map(|(f, c)| (f - c).norm() / c.norm())
        .fold(0.0, f64::max)
}

const LOW_AY: f64 = 0.05 * GRAVITY;

/// Rajamani §2.3 / Gillespie ch. 6: understeering set, two speeds, within 3 %.
#[test]
fn yaw_eigenvalues_match_bicycle_model_understeer() {
    let v = vehicle(&[FAIR]);
    let bike = bicycle_model(&v);
    assert!(bike.understeer_gradient() > 0.0, "set must understeer");
    for speed in [15.0, 35.0] {
        let r = report(&v, speed, LOW_AY);
        let err = yaw_eigen_error(&r, &bike, speed);
        eprintln!(
            "understeer V={speed} m/s: yaw eigenvalue error vs closed form {:.3} %",
            100.0 * err
        );
        assert!(err < 0.03, "error {err} at {speed} m/s");
        assert!(r.stable);
    }
}

/// Same for an oversteering set, below and above its critical speed.
#[test]
fn yaw_eigenvalues_match_bicycle_model_oversteer() {
    let v = vehicle(&[FAIR, OVERSTEER]);
    let bike = bicycle_model(&v);
    assert!(bike.understeer_gradient() < 0.0, "set must oversteer");
    for speed in [15.0, 35.0] {
        let r = report(&v, speed, LOW_AY);
        let err = yaw_eigen_error(&r, &bike, speed);
        eprintln!(
            "oversteer V={speed} m/s: yaw eigenvalue error vs closed form {:.3} %",
            100.0 * err
        );
        assert!(err < 0.03, "error {err} at {speed} m/s");
    }
}

/// Gillespie ch. 6: V_crit = sqrt(−57.3·L·g/K) (SI: sqrt(−L/K)). The full
/// model is stable 10 % below it and flagged unstable 10 % above it, and the
/// speed where its largest real part crosses zero (bisection) is within 3 %.
#[test]
fn oversteer_car_is_unstable_above_critical_speed() {
    let v = vehicle(&[FAIR, OVERSTEER]);
    let bike = bicycle_model(&v);
    let k_deg_per_g = bike.understeer_gradient_deg_per_g();
    let v_crit = (-57.3 * bike.wheelbase() * GRAVITY / k_deg_per_g).sqrt();
    assert!((v_crit - bike.critical_speed().unwrap()).abs() / v_crit < 1e-3);
    assert!(
        report(&v, 0.9 * v_crit, LOW_AY).stable,
        "stable below V_crit"
    );
    let above = report(&v, 1.1 * v_crit, LOW_AY);
    assert!(!above.stable, "unstable above V_crit");
    assert!(above.max_real_part > 0.0);
    let (mut lo, mut hi) = (0.8 * v_crit, 1.2 * v_crit);
    for _ in 0..20 {
        let mid = 0.5 * (lo + hi);
        if report(&v, mid, LOW_AY).max_real_part > 0.0 {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    let full_crit = 0.5 * (lo + hi);
    eprintln!(
        "critical speed: Gillespie {:.3} km/h, full model {:.3} km/h ({:+.2} %)",
        3.6 * v_crit,
        3.6 * full_crit,
        100.0 * (full_crit / v_crit - 1.0)
    );
    assert!((full_crit / v_crit - 1.0).abs() < 0.03);
}

/// Near the critical speed of the oversteering set (1.01·V_crit, Gillespie
/// ch. 6) the reported yaw/sideslip mode is divergent: negative damping ratio
/// or a saddle (NaN), and the car is flagged unstable; just below (0.99·V_crit)
/// it is stable with a positive damping ratio.
#[test]
fn yaw_mode_reported_divergent_just_above_critical_speed() {
    let v = vehicle(&[FAIR, OVERSTEER]);
    let v_crit = bicycle_model(&v).critical_speed().unwrap();
    let above = report(&v, 1.01 * v_crit, LOW_AY);
    let zeta = above.yaw_mode.expect("yaw mode").damping_ratio;
    assert!(!above.stable);
    assert!(zeta.is_nan() || zeta < 0.0, "damping ratio {zeta}");
    let below = report(&v, 0.95 * v_crit, LOW_AY);
    assert!(below.stable);
    assert!(below.yaw_mode.expect("yaw mode").damping_ratio > 0.0);
}

/// Gillespie ch. 6: local understeer gradient K and steady-state steer
/// δ = L/R + K·ay of the full model at low ay agree with the bicycle model
/// within 3 % (both sets).
#[test]
fn understeer_gradient_and_steer_match_bicycle_model() {
    for sets in [&[FAIR][..], &[FAIR, OVERSTEER][..]] {
        let v = vehicle(sets);
        let bike = bicycle_model(&v);
        let speed = 20.0;
        let r = report(&v, speed, LOW_AY);
        let k = r.understeer_gradient.expect("gradient");
        let k_ref = bike.understeer_gradient();
        eprintln!(
            "understeer gradient: full {:.4} deg/g, bicycle {:.4} deg/g",
            r.understeer_gradient_deg_per_g().unwrap(),
            bike.understeer_gradient_deg_per_g()
        );
        assert!((k / k_ref - 1.0).abs() < 0.03, "K {k} vs {k_ref}");
        let radius = speed * speed / LOW_AY;
        let delta_ref = bike.steady_state_steer(speed, radius);
        let delta = r.trim.road_wheel_angle(&v);
        assert!(
            (delta / delta_ref - 1.0).abs() < 0.03,
            "steer {delta} vs {delta_ref}"
        );
    }
}

/// The trim is an equilibrium of the full model: all non-cyclic derivatives
/// vanish, ay is the target and r = ay/V (steady circular motion).
#[test]
fn trim_is_a_steady_state() {
    let v = vehicle(&[]);
    let speed = 25.0;
    let ay = 5.0;
    let r = report(&v, speed, ay);
    let e = evaluate(&v, &r.trim.state, &r.trim.commands);
    for &i in &LINEAR_STATES {
        assert!(
            e.derivative[i].abs() < 1e-6,
            "derivative of state {i} = {}",
            e.derivative[i]
        );
    }
    assert!((e.ay - ay).abs() < 1e-7);
    assert!((r.trim.state[YAW_RATE] - ay / speed).abs() < 1e-8);
    assert_eq!(r.trim.state[VX], speed);
    assert!((r.trim.state[AY_GEOMETRIC] - ay).abs() < 1e-6);
    assert!(r.trim.state[VY].is_finite());
}

/// Numerical Jacobian: central differences at the default step and at 1/10
/// and 10 times it agree entry by entry within 1e-6 of the largest entry of
/// the row (truncation O(h²) and rounding O(ε/h) are both far below that);
/// the eigenvalues within 1e-6 relative.
#[test]
fn jacobian_is_step_size_independent() {
    let v = vehicle(&[]);
    let r = report(&v, 30.0, 4.0);
    let h = default_relative_step();
    let base = state_matrix(&v, &r.trim.state, &r.trim.commands, h);
    let mut worst: f64 = 0.0;
    for factor in [0.1, 10.0] {
        let other = state_matrix(&v, &r.trim.state, &r.trim.commands, h * factor);
        for i in 0..base.nrows() {
            let scale = base
                .row(i)
                .iter()
                .fold(0.0_f64, |m, x| m.max(x.abs()))
                .max(1e-12);
            for j in 0..base.ncols() {
                let d = (base[(i, j)] - other[(i, j)]).abs() / scale;
                worst = worst.max(d);
                assert!(
                    d < 1e-6,
                    "A[{i},{j}] {} vs {} (step x{factor})",
                    base[(i, j)],
                    other[(i, j)]
                );
            }
        }
        let (e1, e2) = (eigenvalues(&base), eigenvalues(&other));
        for (a, b) in e1.iter().zip(&e2) {
            assert!((a - b).norm() <= 1e-6 * a.norm().max(1.0), "{a} vs {b}");
        }
    }
    eprintln!("jacobian: largest row-relative difference between step sizes {worst:.2e}");
}

/// 3 g is far beyond the grip of a road car (μ ≈ 1, common practice): no
/// trim, and the largest reachable ay is between 0.6 g and 3 g; a trim just
/// above it does not exist either.
#[test]
fn no_trim_beyond_grip_limit() {
    let v = vehicle(&[]);
    let target = TrimTarget::cornering(&v, 100.0 / 3.6, 3.0 * GRAVITY);
    let err = find_trim(&v, &target, &TrimSettings::default()).unwrap_err();
    let StabilityError::NoTrim {
        largest_lat_accel: Some(largest),
        ..
    } = err
    else {
        panic!("expected NoTrim with a largest ay, got {err:?}");
    };
    eprintln!(
        "largest reachable ay at 100 km/h: {:.4} g",
        largest / GRAVITY
    );
    assert!(largest > 0.6 * GRAVITY && largest < 3.0 * GRAVITY);
    let beyond = TrimTarget::cornering(&v, 100.0 / 3.6, largest + 0.05 * GRAVITY);
    assert!(find_trim(&v, &beyond, &TrimSettings::default()).is_err());
    let within = TrimTarget::cornering(&v, 100.0 / 3.6, largest - 0.02 * GRAVITY);
    assert!(find_trim(&v, &within, &TrimSettings::default()).is_ok());
}

/// Deterministic: two analyses give bit-identical eigenvalues.
#[test]
fn analysis_is_bit_identical_twice() {
    let v = vehicle(&[]);
    let a = report(&v, 27.0, -4.0);
    let b = report(&v, 27.0, -4.0);
    for (x, y) in a.eigenvalues.iter().zip(&b.eigenvalues) {
        assert_eq!(x.re.to_bits(), y.re.to_bits());
        assert_eq!(x.im.to_bits(), y.im.to_bits());
    }
}

/// Left and right turns are mirror images: same eigenvalues, opposite steer
/// (the demo vehicle is left/right symmetric).
#[test]
fn left_and_right_turns_mirror() {
    let v = vehicle(&[]);
    let left = report(&v, 27.0, 4.0);
    let right = report(&v, 27.0, -4.0);
    assert!((left.trim.steer_wheel_angle() + right.trim.steer_wheel_angle()).abs() < 1e-8);
    for (x, y) in left.eigenvalues.iter().zip(&right.eigenvalues) {
        assert!((x.re - y.re).abs() < 1e-6 * (1.0 + x.re.abs()));
    }
}

#[test]
fn roll_is_positive_right_side_down_in_left_turn() {
    let v = vehicle(&[]);
    let r = report(&v, 25.0, 4.0);
    let phi = r.trim.state[yawdyn::model::ROLL];
    assert!(phi > 0.0);
    let e = evaluate(&v, &r.trim.state, &r.trim.commands);
    assert!(e.wheels[1].fz > e.wheels[0].fz && e.wheels[3].fz > e.wheels[2].fz);
    let c = &v.chassis;
    let m_g_h = c.mass * GRAVITY * c.roll_arm();
    let balance = c.total_roll_stiffness() * phi - c.mass * 4.0 * c.roll_arm() - m_g_h * phi.sin();
    assert!(
        balance.abs() < 1e-6 * c.total_roll_stiffness() * phi,
        "roll moment balance off by {balance} N*m"
    );
}

/// Roll gradient with the overturning moment of the displaced sprung mass
/// (Gillespie, *Fundamentals of Vehicle Dynamics*, ch. 8):
/// dφ/day = m·H/(KΦ − m·g·H), and the total lateral load transfer at 0.5 g,
/// Σ ΔFzᵢ·tᵢ = KΦ·φ + m·ay·[(b/L)·z_rf + (a/L)·z_rr] (elastic plus roll-centre
/// parts; Milliken & Milliken, *Race Car Vehicle Dynamics*, ch. 18, for the
/// split). Without the m·g·H term the demo crossover would roll about 9 % less
/// and transfer about 8 % less load at 0.5 g; both are checked to be absent.
#[test]
fn roll_gradient_includes_overturning_moment_of_displaced_mass() {
    let v = vehicle(&[]);
    let c = &v.chassis;
    let k = c.total_roll_stiffness();
    let h = c.roll_arm();
    let gradient = c.mass * h / (k - c.mass * GRAVITY * h);
    // Small-angle gradient from two trims at small ay (central difference).
    let roll_at = |ay: f64| report(&v, 25.0, ay).trim.state[yawdyn::model::ROLL];
    let slope = (roll_at(0.2) - roll_at(-0.2)) / 0.4;
    assert!(
        (slope / gradient - 1.0).abs() < 1e-4,
        "roll gradient {slope} rad/(m/s^2) vs m*H/(K - m*g*H) = {gradient}"
    );
    let without = c.mass * h / k;
    assert!(
        slope / without > 1.08,
        "the m*g*H term is in: {slope} vs {without}"
    );
    // Total transfer moment at 0.5 g, from the trim's wheel loads.
    let ay = 0.5 * GRAVITY;
    let r = report(&v, 25.0, ay);
    let e = evaluate(&v, &r.trim.state, &r.trim.commands);
    let moment: f64 = (0..2)
        .map(|axle| (e.wheels[2 * axle + 1].fz - e.wheels[2 * axle].fz) * 0.5 * c.track[axle])
        .sum();
    let phi = r.trim.state[yawdyn::model::ROLL];
    let z = c.roll_centre_height;
    let geometric = c.mass * e.ay * (c.b * z[0] + c.a * z[1]) / c.wheelbase;
    let expected = k * phi + geometric;
    assert!(
        (moment / expected - 1.0).abs() < 1e-6,
        "transfer moment {moment} N*m vs {expected} N*m"
    );
    let small_angle = c.mass * ay * h * k / (k - c.mass * GRAVITY * h) + geometric;
    assert!(
        (moment / small_angle - 1.0).abs() < 2e-3,
        "transfer moment {moment} N*m vs small-angle closed form {small_angle} N*m"
    );
    let milliken = c.mass * ay * h + geometric;
    assert!(moment / milliken > 1.07, "{moment} vs {milliken}");
}

/// A trim with negative longitudinal acceleration brakes with the brakes at
/// their bias (the brake proportioning of Gillespie, *Fundamentals of Vehicle
/// Dynamics*, ch. 3), not with negative drive torque: straight braking at
/// 0.6 g from 80 km/h on the demo crossover trims with zero drive torque;
/// the rear motor-generator regenerates (blending "balance kept") and the
/// front share of friction plus regenerative brake torque stays at the bias;
/// the longitudinal force balance m·ax = ΣFx + F_drag holds (Newton).
#[test]
fn braking_trim_uses_the_brakes_at_their_bias() {
    let v = vehicle(&[]);
    let target = TrimTarget {
        long_accel: -0.6 * GRAVITY,
        ..TrimTarget::cornering(&v, 80.0 / 3.6, 0.0)
    };
    let trim = find_trim(&v, &target, &TrimSettings::default()).expect("braking trim exists");
    assert!(trim.total_torque < 0.0);
    let e = evaluate(&v, &trim.state, &trim.commands);
    let p = &e.powertrain;
    assert_eq!(e.axle_available_torque.map(|t| t > 0.0), [true, true]);
    assert_eq!(p.unit_torque[0], 0.0, "the engine gives no torque");
    assert!(
        p.regen_brake_torque[1] > 0.0,
        "the rear motor-generator regenerates"
    );
    let axle = [0, 1].map(|k| p.friction_brake_torque[k] + p.regen_brake_torque[k]);
    let total = axle[0] + axle[1];
    assert!((total + trim.total_torque).abs() < 1e-9 * total);
    assert!((axle[0] / total - v.brakes.front_bias).abs() < 1e-12);
    // Tyre forces rotated from wheel to body axes (toe steers each wheel).
    let fx: f64 = e
        .wheels
        .iter()
        .map(|w| w.fx * w.steer_angle.cos() - w.fy * w.steer_angle.sin())
        .sum();
    let ax = (fx + e.drag_force) / v.chassis.mass;
    assert!((ax - target.long_accel).abs() < 1e-6, "{ax}");
}

mod command;
