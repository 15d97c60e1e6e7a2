//! The hybrid powertrain from scripts to files: the script inputs
//! (`deploy_power`, `deploy_torque`, `blending`, `harvest_limit`,
//! `spare_torque_to_other_axle`, controller keys), the controller's view, the
//! powertrain channels of the results file, and the shipped hybrid scripts.
//!
//! Every check reads the recorded channels (`RunRecord`), as a user of the
//! results file would. Sources: the power and energy relations are common
//! practice (P_e = P_m/η motoring and P_m·η generating for an electric
//! machine; ṁ = P/(LHV·η_b) for an engine, Heywood, *Internal Combustion
//! Engine Fundamentals*, ch. 2, from memory); brake proportioning by a fixed
//! bias is Gillespie, *Fundamentals of Vehicle Dynamics*, ch. 3; the
//! blending rules are checked against their own closed-form shares.
//! Vehicle: the invented demo sports prototype.

mod common;

use common::{TempDir, channel, extra, metric, repo_path};
use yawdyn::params::{Machine, Override, Vehicle, load_vehicle};
use yawdyn::results::{RunRecord, RunStatus, read_hdf5};
use yawdyn::script::{RunOptions, run_script, run_script_text};

const PROTOTYPE: &str = "scripts/vehicles/sports_prototype.toml";

/// Relative tolerance of a relation between channels at one sample: the
/// recorder's interpolation check (samples within a smooth step are
/// interpolated from exact evaluations at its nodes).
const INTERPOLATED: f64 = 1e-4;

fn prototype(sets: &[&str]) -> Vehicle {
    let overrides: Vec<Override> = sets.iter().map(|s| Override::parse(s).unwrap()).collect();
    load_vehicle(repo_path(PROTOTYPE).as_ref(), &overrides).unwrap()
}

/// Runs `body` after the prototype's `vehicle(...)` line, as if the script
/// lived in scripts/, with the vehicle overrides `sets`.
fn run_body(body: &str, sets: &[&str]) -> RunRecord {
    let text = format!("vehicle(\"vehicles/sports_prototype.toml\");\n{body}");
    let options = RunOptions {
        overrides: sets.iter().map(|s| Override::parse(s).unwrap()).collect(),
        ..Default::default()
    };
    let r = run_script_text(&text, &repo_path("scripts/test_inline.rhai"), &options)
        .unwrap_or_else(|e| panic!("script failed: {e}"));
    assert_eq!(r.status, RunStatus::Completed, "{:?}", r.status);
    r
}

/// Value of channel `name` at the last sample with time ≤ `t`.
fn at(r: &RunRecord, name: &str, t: f64) -> f64 {
    let k = r.time.iter().rposition(|&s| s <= t + 1e-12).unwrap();
    channel(r, name)[k]
}

/// Change of the state channel `x` and trapezoidal integral of `f` over the
/// record's sample intervals, leaving out the intervals that start at one
/// of the times `switches` (s): a sample at a command change carries the
/// commands of the phase it closes, so `f` jumps inside the next interval
/// and the trapezoidal rule would be off by half the jump times the interval.
fn change_and_integral(r: &RunRecord, x: &[f64], f: &[f64], switches: &[f64]) -> (f64, f64) {
    let (mut change, mut integral) = (0.0, 0.0);
    for k in 0..r.time.len() - 1 {
        if switches.iter().any(|s| (r.time[k] - s).abs() < 1e-9) {
            continue;
        }
        change += x[k + 1] - x[k];
        integral += 0.5 * (r.time[k + 1] - r.time[k]) * (f[k] + f[k + 1]);
    }
    (change, integral)
}

/// The new channels are in the file with their ASCII units.
#[test]
fn powertrain_channels_have_units() {
    let expected = [
        ("engine_torque", "N*m"),
        ("engine_power", "W"),
        ("fuel_mass_flow", "kg/s"),
        ("fuel_used", "kg"),
        ("motor_generator_torque", "N*m"),
        ("motor_generator_mechanical_power", "W"),
        ("motor_generator_electrical_power", "W"),
        ("store_energy", "J"),
        ("state_of_charge", "1"),
        ("regen_brake_torque_front_axle", "N*m"),
        ("regen_brake_torque_rear_axle", "N*m"),
        ("friction_brake_torque_front_axle", "N*m"),
        ("friction_brake_torque_rear_axle", "N*m"),
        ("braking_front_share", "1"),
    ];
    let list = yawdyn::sim::channel_list();
    for (name, unit) in expected {
        let found = list.iter().find(|(n, _, _)| n == name);
        assert_eq!(found.map(|c| c.1), Some(unit), "{name}");
    }
}

/// Energy bookkeeping through the results channels (common practice, see
/// the file header): over deployment, braking with regeneration first and
/// harvesting on demand, sample by sample P_e = P_m/η_m when motoring and
/// P_m·η_g when generating (η from the vehicle's maps at the recorded shaft
/// speed and torque); the change of `store_energy` equals −∫P_store dt with
/// P_store = P_e/η_dis or P_e·η_ch; `fuel_used` equals ∫P_engine/(LHV·η_b) dt.
/// Integrals by the trapezoidal rule on 1 ms samples with the solver at
/// rtol 1e-10: agreement to 1e-5 of the energy throughput. Samples inside
/// a smooth integration step are interpolated channel by channel (the
/// recorder's interpolation check, `INTERPOLATION_CHECK` = 1e-4 of a
/// channel's magnitude), so the pointwise relation holds to that.
#[test]
fn energy_bookkeeping_through_the_channels() {
    let r = run_body(
        r#"
sample_rate(1000);
solver("dopri5", 1e-10, 1e-10);
start_speed(kph(120));
drive(0.6);
deploy_power(80e3);
run_for(2.0);
release_deploy();
drive(0.0);
blending("regeneration_first");
brake(0.4);
run_for(2.0);
brake(0.0);
drive(0.5);
deploy_power(-20e3);
run_for(1.0);
"#,
        &[],
    );
    let v = prototype(&[]);
    let mg_unit = v.powertrain.units[0].as_ref().unwrap();
    let Machine::MotorGenerator(mg) = &mg_unit.machine else {
        panic!("front unit is the motor-generator")
    };
    let Machine::Engine(Some(fuel)) = &v.powertrain.units[1].as_ref().unwrap().machine else {
        panic!("rear unit is an engine with a fuel model")
    };
    let store = v.powertrain.store.as_ref().unwrap();
    let torque = channel(&r, "motor_generator_torque");
    let p_m = channel(&r, "motor_generator_mechanical_power");
    let p_e = channel(&r, "motor_generator_electrical_power");
    let (mut motoring, mut generating) = (0, 0);
    for k in 0..r.time.len() {
        if torque[k].abs() < 1.0 {
            continue;
        }
        let w = p_m[k] / torque[k];
        let expected = if p_m[k] >= 0.0 {
            motoring += 1;
            p_m[k] / mg.motoring_efficiency.value(w, torque[k])
        } else {
            generating += 1;
            p_m[k] * mg.generating_efficiency.value(w, torque[k])
        };
        assert!(
            (p_e[k] - expected).abs() <= INTERPOLATED * expected.abs().max(1.0),
            "t = {}: P_e {} W, P_m {} W, expected {expected} W",
            r.time[k],
            p_e[k],
            p_m[k]
        );
    }
    assert!(
        motoring > 1000 && generating > 1000,
        "{motoring} {generating}"
    );
    // Stored energy against the terminal power.
    let p_store: Vec<f64> = p_e
        .iter()
        .map(|&p| {
            if p >= 0.0 {
                p / store.discharge_efficiency
            } else {
                p * store.charge_efficiency
            }
        })
        .collect();
    let switches = [2.0, 4.0];
    let e = channel(&r, "store_energy");
    let n = e.len() - 1;
    let abs: Vec<f64> = p_store.iter().map(|p| p.abs()).collect();
    let (_, throughput) = change_and_integral(&r, e, &abs, &switches);
    let (change, integral) = change_and_integral(&r, e, &p_store, &switches);
    assert!(throughput > 1e5, "{throughput} J");
    assert!(
        (change + integral).abs() < 1e-5 * throughput,
        "ΔE {change} J, −∫P dt {} J, throughput {throughput} J",
        -integral
    );
    // Fuel used against the engine power.
    let flow: Vec<f64> = channel(&r, "engine_power")
        .iter()
        .zip(channel(&r, "engine_torque"))
        .map(|(&p, &t)| {
            let w = if t.abs() > 0.0 { p / t } else { 0.0 };
            p.max(0.0) / (fuel.lower_heating_value * fuel.thermal_efficiency.value(w, t))
        })
        .collect();
    let (used, burnt) = change_and_integral(&r, channel(&r, "fuel_used"), &flow, &switches);
    assert!(burnt > 1e-3, "{burnt} kg");
    assert!(
        (used - burnt).abs() < 1e-5 * burnt,
        "fuel used {used} kg, ∫ṁ dt {burnt} kg"
    );
    let flow_channel = channel(&r, "fuel_mass_flow");
    for k in 0..=n {
        assert!((flow_channel[k] - flow[k]).abs() <= 1e-12 + INTERPOLATED * flow[k]);
    }
}

/// Blending in steady straight braking through the channels (Gillespie
/// ch. 3 brake proportioning; the rules' closed forms): with a front
/// generator of capacity C at the wheels (the recorded friction + regenerative
/// torque) and a request T, balance kept gives regeneration min(b·T, C) on
/// the front and the braking torque split at the bias b, so the front share
/// of the braking force is (b/r_f)/(b/r_f + (1 − b)/r_r); regeneration first
/// gives regeneration C (C < T), front torque C + b·(T − C). With a harvest
/// limit the electrical power fed back never exceeds it.
#[test]
fn blending_shares_in_straight_braking() {
    let v = prototype(&[]);
    let (b, rf, rr) = (
        v.brakes.front_bias,
        v.tyres[0].rolling_radius,
        v.tyres[1].rolling_radius,
    );
    let request = 0.3;
    let total = request * v.brakes.max_torque;
    let body = |rule: &str, extra: &str| {
        format!(
            "start_speed(30.0);\nblending(\"{rule}\");\n{extra}\nbrake({request});\nrun_for(1.0);\n"
        )
    };
    let t = 1.0;
    let shares = |r: &RunRecord| {
        let regen = at(r, "regen_brake_torque_front_axle", t);
        let friction = [
            at(r, "friction_brake_torque_front_axle", t),
            at(r, "friction_brake_torque_rear_axle", t),
        ];
        assert_eq!(at(r, "regen_brake_torque_rear_axle", t), 0.0);
        assert!((regen + friction[0] + friction[1] - total).abs() < 1e-9 * total);
        (regen, regen + friction[0], at(r, "braking_front_share", t))
    };
    // Balance kept.
    let kept = run_body(&body("balance_kept", ""), &[]);
    let (regen, front, share) = shares(&kept);
    assert!(regen > 0.5 * b * total, "regeneration {regen} N·m");
    assert!(regen <= b * total + 1e-9);
    assert!((front - b * total).abs() < 1e-9 * total);
    let force_share = (b / rf) / (b / rf + (1.0 - b) / rr);
    assert!(
        (share - force_share).abs() < 1e-12,
        "{share} vs {force_share}"
    );
    // Regeneration first.
    let first = run_body(&body("regeneration_first", ""), &[]);
    let (c, front, share) = shares(&first);
    assert!(c > 0.3 * total && c < total, "capacity {c} N·m of {total}");
    assert!((front - (c + b * (total - c))).abs() < 1e-9 * total);
    let rear = (1.0 - b) * (total - c);
    let expected = (front / rf) / (front / rf + rear / rr);
    assert!((share - expected).abs() < 1e-12);
    assert!(
        share > force_share + 0.1,
        "{share}: the balance moves forward"
    );
    // A harvest limit caps the power fed back at every sample.
    let limit = 30e3;
    let capped = run_body(
        &body("regeneration_first", &format!("harvest_limit({limit});")),
        &[],
    );
    let p = channel(&capped, "motor_generator_electrical_power");
    assert!(p.iter().all(|&p| p >= -limit * (1.0 + 1e-9)), "{p:?}");
    assert!(p.iter().any(|&p| p < -0.9 * limit));
    assert!(shares(&capped).0 < c);
}

/// A full store refuses harvest and an empty one refuses deployment, and
/// the power fades in at the limits without chatter: no sign change of the
/// electrical power between consecutive 1 ms samples, the state of charge
/// monotonic and within its limits (common practice of power derating near
/// the state-of-charge limits).
#[test]
fn store_limits_refuse_without_chatter() {
    let v = prototype(&[]);
    let s = v.powertrain.store.as_ref().unwrap();
    // Near full, braking with regeneration first for 6 s.
    let full = format!("drive.store.initial_soc={}", s.max_soc - 0.5 * s.limit_fade);
    let r = run_body(
        "sample_rate(1000);\nstart_speed(50.0);\nblending(\"regeneration_first\");\nbrake(0.15);\nrun_for(4.0);\n",
        &[&full],
    );
    check_no_chatter(&r, -1.0, s.max_soc);
    // Near empty, deploying 120 kW for 4 s.
    let empty = format!("drive.store.initial_soc={}", s.min_soc + 0.5 * s.limit_fade);
    let r = run_body(
        "sample_rate(1000);\nstart_speed(30.0);\ndeploy_power(120e3);\ndrive(0.2);\nrun_for(4.0);\n",
        &[&empty],
    );
    check_no_chatter(&r, 1.0, s.min_soc);
}

/// `sign` of the electrical power (−1 harvesting, +1 deploying) held at
/// every sample, the state of charge moving one way towards `limit`, never
/// past it, and the power fading to a small part of its start.
fn check_no_chatter(r: &RunRecord, sign: f64, limit: f64) {
    let p = channel(r, "motor_generator_electrical_power");
    let soc = channel(r, "state_of_charge");
    let active: Vec<usize> = (0..p.len()).filter(|&k| p[k] != 0.0).collect();
    assert!(active.len() > p.len() / 2);
    for w in p.windows(2) {
        assert!(
            w[0] * w[1] >= 0.0,
            "power changes sign: {} W then {} W",
            w[0],
            w[1]
        );
    }
    assert!(p.iter().all(|&x| x * sign >= 0.0));
    for w in soc.windows(2) {
        assert!((w[1] - w[0]) * sign <= 0.0, "state of charge turns back");
    }
    assert!(
        soc.iter().all(|&x| (x - limit) * sign >= -1e-12),
        "passes {limit}"
    );
    let n = p.len() - 1;
    let start = p[active[10]].abs();
    assert!(p[n].abs() < 0.2 * start, "{} W of {start} W", p[n]);
}

/// The shipped scripts: with deployment the same total wheel torque
/// reaches the axles as without (1500 N·m, 600 of it on the front from the
/// store); the deployment draws energy from the store and burns less fuel.
/// Balance kept holds the braking share at the bias conversion; regeneration
/// first moves it forward and harvests more (the rules' definitions).
#[test]
fn shipped_hybrid_scripts_compare_as_designed() {
    let run = |name: &str, sets: &[&str]| {
        let options = RunOptions {
            overrides: sets.iter().map(|s| Override::parse(s).unwrap()).collect(),
            ..Default::default()
        };
        let r = run_script(&repo_path(&format!("scripts/{name}.rhai")), &options).unwrap();
        assert_eq!(r.status, RunStatus::Completed);
        r
    };
    let with = run("power_on_exit_hybrid", &[]);
    let without = run("power_on_exit_hybrid", &["manoeuvre.deploy=0"]);
    let t = extra(&with, "phase.power_on") + 1.5;
    for r in [&with, &without] {
        let sum = at(r, "drive_torque_front_axle", t) + at(r, "drive_torque_rear_axle", t);
        assert!((sum - 1500.0).abs() < 1e-6, "{sum} N·m");
    }
    assert!((at(&with, "drive_torque_front_axle", t) - 600.0).abs() < 1e-6);
    assert_eq!(at(&without, "drive_torque_front_axle", t), 0.0);
    assert!(
        metric(&with, "electrical_energy_deployed")
            > metric(&without, "electrical_energy_deployed")
    );
    assert!(metric(&with, "store_energy_change") < metric(&without, "store_energy_change"));
    assert!(metric(&with, "fuel_used") < metric(&without, "fuel_used"));

    let kept = run("brake_in_turn_hybrid", &[]);
    let first = run("brake_in_turn_hybrid", &["manoeuvre.regeneration_first=1"]);
    assert!(
        metric(&first, "braking_front_share_1s") > metric(&kept, "braking_front_share_1s") + 0.05
    );
    assert!(metric(&first, "regen_share_1s") > metric(&kept, "regen_share_1s"));
    assert!(
        metric(&first, "electrical_energy_harvested")
            > metric(&kept, "electrical_energy_harvested")
    );
}

/// The controller sees the powertrain (each value the channel of its name
/// at the tick) and its powertrain keys act: a controller that deploys
/// while the state of charge is above a threshold stops at it.
#[test]
fn controller_reads_and_commands_the_powertrain() {
    let dir = TempDir::new();
    let v = std::fs::read_to_string(repo_path(PROTOTYPE)).unwrap();
    dir.write("vehicles/sports_prototype.toml", &v);
    let script = dir.write(
        "c.rhai",
        r#"vehicle("vehicles/sports_prototype.toml");
start_speed(40.0);
let seen = [];
controller(|s| {
    let p = if s.state_of_charge > 0.48 { 100e3 } else { 0.0 };
    #{ deploy_power: p, drive: 0.1, harvest_limit: 0.0, blending: "balance_kept",
       spare_torque_to_other_axle: false }
});
run_for(3.0);
let s = state();
remember("soc", s.state_of_charge);
remember("fuel", s.fuel_used);
remember("engine_power", s.engine_power);
remember("electric_power", s.electric_power);
remember("available_front", s.available_torque[0]);
remember("available_rear", s.available_torque[1]);
"#,
    );
    let out = dir.join("c.h5");
    dir.yawdyn([
        "run",
        script.to_str().unwrap(),
        "--quiet",
        "--out",
        out.to_str().unwrap(),
    ])
    .expect_code(0);
    let r = read_hdf5(&out).unwrap();
    let value = |k: &str| extra(&r, &format!("value.{k}"));
    let n = r.time.len() - 1;
    for (k, ch) in [
        ("soc", "state_of_charge"),
        ("fuel", "fuel_used"),
        ("engine_power", "engine_power"),
        ("electric_power", "motor_generator_electrical_power"),
        ("available_front", "available_torque_front_axle"),
        ("available_rear", "available_torque_rear_axle"),
    ] {
        assert_eq!(value(k), channel(&r, ch)[n], "{k}");
    }
    let soc = channel(&r, "state_of_charge");
    assert!(
        soc[n] < 0.48 && soc[n] > 0.47,
        "stops deploying near 0.48: {}",
        soc[n]
    );
    assert!(value("fuel") > 0.0 && value("engine_power") > 0.0);
    assert_eq!(value("electric_power"), 0.0, "no deployment, no harvest");
}

/// Determinism: the hybrid scripts give bit-identical records when run twice.
#[test]
fn hybrid_scripts_are_bit_identical() {
    for name in ["power_on_exit_hybrid", "brake_in_turn_hybrid"] {
        let path = repo_path(&format!("scripts/{name}.rhai"));
        let a = run_script(&path, &RunOptions::default()).unwrap();
        let b = run_script(&path, &RunOptions::default()).unwrap();
        assert_eq!(a.time.len(), b.time.len());
        for (ca, cb) in a.channels.iter().zip(&b.channels) {
            assert!(
                ca.data
                    .iter()
                    .zip(&cb.data)
                    .all(|(x, y)| x.to_bits() == y.to_bits()),
                "{name}: {}",
                ca.name
            );
        }
        assert_eq!(a.metrics, b.metrics);
    }
}
