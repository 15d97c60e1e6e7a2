//! The hybrid powertrain: fuel-flow-limited engine, motor-generators, energy
//! store, regenerative braking blended with the friction brakes.
//!
//! Each test names its source: the power and energy relations are common
//! practice (P = ṁ·LHV·η_b for an engine, Heywood, *Internal Combustion
//! Engine Fundamentals*, ch. 2, from memory; P_e = P_m/η motoring and P_m·η
//! generating for an electric machine), the power balance at top speed is
//! the closed form of Gillespie, *Fundamentals of Vehicle Dynamics*, ch. 4
//! (road loads), and the blending rules are checked against their own
//! closed-form shares. Vehicles are the invented demo cars.

use yawdyn::model::{
    Commands, Deploy, Evaluation, STORE_ENERGY, State, VX, WHEEL_SPEED, evaluate, straight_running,
};
use yawdyn::params::{
    BlendingRule, DriveUnit, FRONT, GRAVITY, Machine, Override, REAR, Vehicle, load_vehicle,
};
use yawdyn::sim::{Simulation, SolverSettings};

const CROSSOVER: &str = "scripts/vehicles/hybrid_crossover.toml";
const PROTOTYPE: &str = "scripts/vehicles/sports_prototype.toml";

fn vehicle(file: &str, sets: &[&str]) -> Vehicle {
    let overrides: Vec<Override> = sets.iter().map(|s| Override::parse(s).unwrap()).collect();
    load_vehicle(file.as_ref(), &overrides).unwrap_or_else(|e| panic!("{e}"))
}

/// Tight tolerances, so that the integrator's error is far below the checks.
fn tight() -> SolverSettings {
    SolverSettings {
        rtol: 1e-10,
        atol: 1e-10,
        ..SolverSettings::default()
    }
}

fn unit(v: &Vehicle, axle: usize) -> &DriveUnit {
    v.powertrain.units[axle]
        .as_ref()
        .expect("a unit on this axle")
}

/// Shaft speed of the unit on `axle`: ratio × mean wheel speed, rad/s.
fn shaft_speed(v: &Vehicle, x: &State, axle: usize) -> f64 {
    unit(v, axle).ratio * 0.5 * (x[WHEEL_SPEED + 2 * axle] + x[WHEEL_SPEED + 2 * axle + 1])
}

/// Shaft torque from the axle's wheel torque through the gearing (common
/// practice: the gearing loss runs against the power flow).
fn shaft_torque(u: &DriveUnit, wheel: f64) -> f64 {
    if wheel >= 0.0 {
        wheel / (u.efficiency * u.ratio)
    } else {
        wheel * u.efficiency / u.ratio
    }
}

/// Power the store loses, W, recomputed from the wheel torque of the
/// front motor-generator: P_m = T·ω, P_e = P_m/η_m (motoring) or P_m·η_g
/// (generating), then P_e/η_dis or P_e·η_ch at the store.
fn store_power(v: &Vehicle, x: &State, e: &Evaluation, axle: usize) -> f64 {
    let u = unit(v, axle);
    let Machine::MotorGenerator(mg) = &u.machine else {
        panic!("not a motor-generator")
    };
    let w = shaft_speed(v, x, axle);
    let t = shaft_torque(u, e.axle_drive_torque[axle]);
    let p_m = t * w;
    let p_e = if p_m >= 0.0 {
        p_m / mg.motoring_efficiency.value(w, t)
    } else {
        p_m * mg.generating_efficiency.value(w, t)
    };
    let s = v.powertrain.store.as_ref().unwrap();
    if p_e >= 0.0 {
        p_e / s.discharge_efficiency
    } else {
        p_e * s.charge_efficiency
    }
}

/// Fuel mass flow recomputed from the engine's wheel torque, kg/s: P/(LHV·η_b).
fn fuel_flow(v: &Vehicle, x: &State, e: &Evaluation, axle: usize) -> f64 {
    let u = unit(v, axle);
    let Machine::Engine(Some(fuel)) = &u.machine else {
        panic!("not an engine with a fuel model")
    };
    let w = shaft_speed(v, x, axle);
    let t = shaft_torque(u, e.axle_drive_torque[axle]);
    (t * w).max(0.0) / (fuel.lower_heating_value * fuel.thermal_efficiency.value(w, t))
}

/// Runs phases of held commands, sampling every `dt` (s); calls `sample`
/// with (time, state, evaluation) at every sample, phase ends included with
/// the commands of the phase they close.
fn run_phases(
    v: &Vehicle,
    x0: State,
    phases: &[(f64, Commands)],
    dt: f64,
    mut sample: impl FnMut(usize, f64, &State, &Evaluation),
) -> State {
    let mut sim = Simulation::new(v, x0, tight(), 10.0).unwrap();
    let mut t = 0.0;
    for (k, (duration, c)) in phases.iter().enumerate() {
        let steps = (duration / dt).round() as usize;
        sample(k, t, sim.state(), &sim.evaluate_now(c));
        for _ in 0..steps {
            t += dt;
            sim.advance(t, c).unwrap();
            sample(k, t, sim.state(), &sim.evaluate_now(c));
        }
    }
    *sim.state()
}

/// Energy bookkeeping (common practice, see the file header): the change in
/// stored energy equals −∫ P_store dt with P_store recomputed from the
/// motor-generator's mechanical power through its efficiency maps and the
/// store's efficiencies, and fuel used equals ∫ P_engine/(LHV·η_b) dt, over
/// deployment, regenerative braking and harvesting on demand; to integrator
/// tolerance (Simpson's rule on 1 ms samples).
#[test]
fn energy_bookkeeping_follows_power_over_efficiency() {
    let v = vehicle(PROTOTYPE, &[]);
    let mut deploy = Commands::neutral(&v);
    deploy.drive_request = 0.6;
    deploy.powertrain.deploy = Some(Deploy::Power(80e3));
    let mut brake = Commands::neutral(&v);
    brake.brake_request = 0.5;
    brake.powertrain.blending = Some(BlendingRule::RegenerationFirst);
    let mut harvest = Commands::neutral(&v);
    harvest.drive_request = 0.5;
    harvest.powertrain.deploy = Some(Deploy::Power(-20e3));
    let phases = [(2.0, deploy), (2.0, brake), (1.0, harvest)];
    let x0 = straight_running(&v, 120.0 / 3.6);
    let dt = 1e-3;
    // Per phase: samples of store power and fuel flow.
    let mut store = vec![Vec::new(); phases.len()];
    let mut fuel = vec![Vec::new(); phases.len()];
    let mut terminal = vec![Vec::new(); phases.len()];
    let x1 = run_phases(&v, x0, &phases, dt, |k, _, x, e| {
        store[k].push(store_power(&v, x, e, FRONT));
        fuel[k].push(fuel_flow(&v, x, e, REAR));
        terminal[k].push(e.powertrain.electrical_power[FRONT]);
    });
    let simpson = |f: &[f64]| {
        let n = f.len() - 1;
        assert_eq!(n % 2, 0);
        let inner: f64 = (1..n)
            .map(|i| f[i] * if i % 2 == 1 { 4.0 } else { 2.0 })
            .sum();
        (f[0] + f[n] + inner) * dt / 3.0
    };
    let store_used: f64 = store.iter().map(|p| simpson(p)).sum();
    let fuel_burnt: f64 = fuel.iter().map(|m| simpson(m)).sum();
    let delta_e = x1[STORE_ENERGY] - x0[STORE_ENERGY];
    let fuel_used = x1[yawdyn::model::FUEL_USED];
    // The phases did what they should: deploy, harvest by braking, harvest on demand.
    assert!(
        terminal[0].iter().skip(1).all(|p| (p - 80e3).abs() < 1e-6),
        "deploys 80 kW"
    );
    assert!(terminal[1].iter().skip(1).all(|p| *p < 0.0), "regenerates");
    assert!(
        terminal[2].iter().skip(1).all(|p| (p + 20e3).abs() < 1e-6),
        "harvests 20 kW"
    );
    let exchanged: f64 = store.iter().flatten().map(|p| p.abs() * dt).sum();
    assert!(
        (delta_e + store_used).abs() < 1e-6 * exchanged,
        "dE = {delta_e} J vs -integral {} J (exchanged {exchanged} J)",
        -store_used
    );
    assert!(fuel_used > 0.0);
    assert!(
        (fuel_used - fuel_burnt).abs() < 1e-6 * fuel_used,
        "fuel used {fuel_used} kg vs integral {fuel_burnt} kg"
    );
}

/// A fuel-flow-limited engine on a long straight reaches the top speed where
/// ṁ_max·LHV·η_b·η_d equals drag plus rolling-resistance power,
/// (½ρ·Cd·A·V² + f_r·(m·g + ½ρ·Cl·A·V²))·V (Gillespie ch. 4 road loads;
/// power cap from Heywood ch. 2, from memory). The prototype's engine alone
/// (front share 0, spare torque off so the motor-generator gives nothing);
/// its torque curve and rated power are above the cap at that speed. Tyre
/// slip losses (well under 1 % of the power) sit inside the tolerance.
#[test]
fn fuel_flow_limited_engine_reaches_closed_form_top_speed() {
    let v = vehicle(
        PROTOTYPE,
        &[
            "drive.front_share=0",
            "drive.spare_torque_to_other_axle=false",
        ],
    );
    let u = unit(&v, REAR);
    let Machine::Engine(Some(fuel)) = &u.machine else {
        panic!("the prototype's rear unit is an engine with fuel")
    };
    let eta_b = fuel.thermal_efficiency.value(0.0, 0.0);
    let flow = fuel.max_mass_flow.unwrap();
    let power = flow * fuel.lower_heating_value * eta_b * u.efficiency;
    let f_r = v.tyres[REAR].rolling_resistance;
    assert_eq!(f_r, v.tyres[FRONT].rolling_resistance);
    let resist = |s: f64| {
        let q = 0.5 * v.aero.air_density * s * s;
        (q * v.aero.drag_area + f_r * (v.chassis.mass * GRAVITY + q * v.aero.downforce_area)) * s
    };
    let (mut lo, mut hi) = (1.0, 200.0);
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
    sim.advance(90.0, &c).unwrap();
    let speed = sim.state()[VX];
    assert!(
        (speed - v_top).abs() < 0.01 * v_top,
        "top speed {speed} m/s vs closed form {v_top} m/s"
    );
    // At the end the engine runs on its fuel-flow limit.
    let e = sim.evaluate_now(&c);
    assert!((e.powertrain.fuel_mass_flow[REAR] / flow - 1.0).abs() < 1e-9);
    assert_eq!(e.powertrain.unit_torque[FRONT], 0.0);
}

/// Steady straight braking on the crossover (rear motor-generator, constant
/// efficiencies), 80 km/h, request 0.25 of 12 kN·m (about 0.47 g, no wheel
/// locks). The generator's capacity at the wheels by its limits,
/// C = min(T_g, P_g/ω_m)·i/η_d (the store's 60 kW charge power allows more
/// than P_g through η_g = 0.9), here set by its generating power. Balance
/// kept: regeneration min((1 − bias)·T, C), front share of the braking torque
/// at the bias; regeneration first: regeneration C, front share
/// bias·(T − C)/T (the rules' closed forms). The tyres' braking forces after
/// a second of braking agree with these shares within 2 % (wheel inertia
/// and rolling resistance make the difference), and regeneration never
/// exceeds the generator's capacity or the store's charge power.
#[test]
fn blending_rules_give_their_closed_form_shares() {
    let v = vehicle(CROSSOVER, &[]);
    let u = unit(&v, REAR);
    let Machine::MotorGenerator(mg) = &u.machine else {
        panic!("rear motor-generator")
    };
    let speed = 80.0 / 3.6;
    let request = 0.25;
    let total = request * v.brakes.max_torque;
    let bias = v.brakes.front_bias;
    for rule in [BlendingRule::BalanceKept, BlendingRule::RegenerationFirst] {
        let x = straight_running(&v, speed);
        let mut c = Commands::neutral(&v);
        c.brake_request = request;
        c.powertrain.blending = Some(rule);
        // Closed forms at the initial state.
        let w_m = shaft_speed(&v, &x, REAR);
        let shaft = mg.max_generating_torque.min(mg.max_generating_power / w_m);
        let capacity = shaft * u.ratio / u.efficiency;
        assert!(mg.max_generating_power / w_m < mg.max_generating_torque);
        let (expected, regen) = match rule {
            BlendingRule::BalanceKept => (bias, capacity.min((1.0 - bias) * total)),
            BlendingRule::RegenerationFirst => (bias * (total - capacity) / total, capacity),
        };
        let e = evaluate(&v, &x, &c);
        let p = &e.powertrain;
        assert!((p.regen_brake_torque[REAR] - regen).abs() < 1e-9 * regen);
        let axle = [0, 1].map(|k| p.friction_brake_torque[k] + p.regen_brake_torque[k]);
        assert!((axle[0] + axle[1] - total).abs() < 1e-9 * total);
        assert!((axle[0] / total - expected).abs() < 1e-12, "{rule:?}");
        // Time domain: limits hold at every sample; tyre forces follow the shares.
        let store = v.powertrain.store.unwrap();
        let mut last = None;
        run_phases(&v, x, &[(1.0, c)], 1e-2, |_, _, xs, es| {
            let p = &es.powertrain;
            assert!(p.regen_brake_torque[REAR] <= p.available_regen_torque[REAR] * (1.0 + 1e-12));
            assert!(-p.electrical_power[REAR] <= store.max_charge_power * (1.0 + 1e-12));
            last = Some((*xs, *es));
        });
        let (xs, es) = last.unwrap();
        let fx = [0, 1].map(|k| -(es.wheels[2 * k].fx + es.wheels[2 * k + 1].fx));
        let share = fx[0] / (fx[0] + fx[1]);
        assert!(xs[VX] < speed);
        assert!(
            (share - es.powertrain.braking_front_share(&v)).abs() < 0.02,
            "{rule:?}: tyre force share {share} vs torque share {}",
            es.powertrain.braking_front_share(&v)
        );
    }
}

/// A full store refuses harvest and an empty one refuses deployment, and the
/// limits fade in without chatter: started just inside the fade band and
/// pushed towards the limit, the electrical power keeps its sign at every
/// 1 ms sample, the state of charge moves monotonically and never passes
/// the limit (the linear fade makes the approach exponential; common
/// practice of power derating near the state-of-charge limits).
#[test]
fn store_limits_refuse_and_fade_without_chatter() {
    let base = vehicle(PROTOTYPE, &[]);
    let s = base.powertrain.store.unwrap();
    // At the limits: nothing flows.
    for (soc, deploy) in [(s.max_soc, -50e3), (s.min_soc, 50e3)] {
        let v = vehicle(PROTOTYPE, &[&format!("drive.store.initial_soc={soc}")]);
        let mut c = Commands::neutral(&v);
        c.powertrain.deploy = Some(Deploy::Power(deploy));
        c.brake_request = if deploy < 0.0 { 0.3 } else { 0.0 };
        let e = evaluate(&v, &straight_running(&v, 30.0), &c);
        assert_eq!(e.powertrain.electrical_power[FRONT], 0.0, "soc {soc}");
        assert_eq!(e.powertrain.regen_brake_torque, [0.0, 0.0]);
        assert_eq!(e.derivative[STORE_ENERGY], 0.0);
    }
    // Approaching the limits: harvest into an almost full store, deploy from an almost empty one.
    for (soc, deploy, limit) in [
        (s.max_soc - 0.5 * s.limit_fade, -150e3, s.max_soc),
        (s.min_soc + 0.5 * s.limit_fade, 150e3, s.min_soc),
    ] {
        let v = vehicle(PROTOTYPE, &[&format!("drive.store.initial_soc={soc}")]);
        let mut c = Commands::neutral(&v);
        c.drive_request = 0.3;
        c.powertrain.deploy = Some(Deploy::Power(deploy));
        let mut powers = Vec::new();
        let mut socs = Vec::new();
        run_phases(
            &v,
            straight_running(&v, 40.0),
            &[(3.0, c)],
            1e-3,
            |_, _, _, e| {
                powers.push(e.powertrain.electrical_power[FRONT]);
                socs.push(e.powertrain.state_of_charge);
            },
        );
        let sign = deploy.signum();
        assert!(
            powers.iter().all(|p| p * sign > 0.0),
            "power keeps its sign"
        );
        assert!(
            socs.windows(2).all(|w| (w[1] - w[0]) * sign <= 0.0),
            "state of charge moves one way"
        );
        assert!(
            socs.iter().all(|x| (x - limit) * sign >= 0.0),
            "never past the limit"
        );
        let first = powers[0].abs();
        let end = powers.last().unwrap().abs();
        assert!(end < 0.2 * first, "the power fades: {first} W -> {end} W");
    }
}

/// Determinism: the same hybrid run twice is bit-identical.
#[test]
fn hybrid_runs_are_bit_identical() {
    let v = vehicle(PROTOTYPE, &[]);
    let mut c = Commands::neutral(&v);
    c.steer_wheel_angle = 0.6;
    c.drive_request = 0.7;
    c.powertrain.deploy = Some(Deploy::Torque(800.0));
    let run = || {
        let mut states = Vec::new();
        run_phases(
            &v,
            straight_running(&v, 25.0),
            &[(2.0, c)],
            1e-2,
            |_, _, x, _| states.push(*x),
        );
        states
    };
    let (a, b) = (run(), run());
    assert_eq!(a.len(), b.len());
    for (x, y) in a.iter().zip(&b) {
        assert!(
            x.iter()
                .zip(y.iter())
                .all(|(p, q)| p.to_bits() == q.to_bits())
        );
    }
}

/// Spare torque (definition of the option): on the crossover at 55 m/s a full
/// drive request with the vehicle's split (0.6 front) leaves part of the
/// front engine's share unmet; with spare torque on, the rear takes it and
/// the wheels get the whole η_d·P of both units (both on their power limit).
#[test]
fn spare_torque_delivers_all_available_power() {
    let v = vehicle(CROSSOVER, &[]);
    let x = straight_running(&v, 55.0);
    let mut c = Commands::neutral(&v);
    c.drive_request = 1.0;
    let wheel_power = |c: &Commands| {
        let e = evaluate(&v, &x, c);
        [FRONT, REAR]
            .map(|k| e.axle_drive_torque[k] * shaft_speed(&v, &x, k) / unit(&v, k).ratio)
            .iter()
            .sum::<f64>()
    };
    let available: f64 = [FRONT, REAR]
        .map(|k| unit(&v, k).efficiency * unit(&v, k).max_power)
        .iter()
        .sum();
    let kept = wheel_power(&c);
    c.powertrain.spare_torque_to_other_axle = Some(true);
    let moved = wheel_power(&c);
    assert!(kept < 0.99 * available, "{kept} W of {available} W");
    assert!(
        (moved / available - 1.0).abs() < 1e-12,
        "{moved} W of {available} W"
    );
}

/// Commands reach the motor-generator as asked when within its limits: a
/// power deployment gives that electrical power at the terminals, a torque
/// deployment that wheel torque; an engine gives no negative torque.
#[test]
fn deployment_requests_and_engine_limits() {
    let v = vehicle(PROTOTYPE, &[]);
    let x = straight_running(&v, 30.0);
    let mut c = Commands::neutral(&v);
    c.powertrain.deploy = Some(Deploy::Power(60e3));
    let e = evaluate(&v, &x, &c);
    assert!((e.powertrain.electrical_power[FRONT] - 60e3).abs() < 1e-6);
    c.powertrain.deploy = Some(Deploy::Torque(-500.0));
    let e = evaluate(&v, &x, &c);
    assert!((e.axle_drive_torque[FRONT] + 500.0).abs() < 1e-9);
    assert!(
        e.powertrain.electrical_power[FRONT] < 0.0,
        "generating charges the store"
    );
    c.powertrain.deploy = None;
    c.axle_torque = Some([0.0, -800.0]);
    let e = evaluate(&v, &x, &c);
    assert_eq!(e.axle_drive_torque[REAR], 0.0, "no engine braking modelled");
    // A harvest limit caps the generator's electrical power.
    let mut c = Commands::neutral(&v);
    c.brake_request = 0.6;
    c.powertrain.harvest_limit = Some(25e3);
    let e = evaluate(&v, &x, &c);
    assert!((e.powertrain.electrical_power[FRONT] + 25e3).abs() < 1e-6);
}
