//! Tests of the quasi-static methods against closed forms (sources named at
//! each test) and against the steady-state trim of `stability`. Vehicles are
//! the invented demo vehicles with overrides (invented data).

use std::path::Path;

use super::*;
use crate::model::linear::{axle_cornering_stiffness, understeer_gradient_si};
use crate::params::{GRAVITY, Override, load_vehicle};
use crate::stability::{StabilityError, TrimSettings, TrimTarget, find_trim};

const CROSSOVER: &str = "scripts/vehicles/hybrid_crossover.toml";
const TRACK_CAR: &str = "scripts/vehicles/track_car.toml";

/// What the single-track model lacks, removed for a fair comparison: toe,
/// camber, Ackermann geometry, aero and rolling resistance.
const SINGLE_TRACK: &[&str] = &[
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

fn vehicle(path: &str, sets: &[&str]) -> Vehicle {
    let overrides: Vec<Override> = sets.iter().map(|s| Override::parse(s).unwrap()).collect();
    load_vehicle(Path::new(path), &overrides).unwrap()
}

fn degrees(count: i32, step_deg: f64) -> Vec<f64> {
    (-count..=count)
        .map(|k| (f64::from(k) * step_deg).to_radians())
        .collect()
}

fn condition(v: &Vehicle, kph: f64, longitudinal: Longitudinal) -> Condition {
    Condition {
        speed: kph / 3.6,
        front_share: v.powertrain.front_share,
        longitudinal,
    }
}

/// Largest lateral acceleration `yawdyn stability` reaches at `speed` (its
/// continuation stops at the fold), m/s².
fn stability_limit(v: &Vehicle, speed: f64) -> f64 {
    match find_trim(
        v,
        &TrimTarget::cornering(v, speed, 3.0 * GRAVITY),
        &TrimSettings::default(),
    ) {
        Err(StabilityError::NoTrim {
            largest_lat_accel: Some(l),
            ..
        }) => l,
        other => panic!("expected the trim to stop below 3 g: {other:?}"),
    }
}

/// Linear single-track moment-method derivatives at the origin (Milliken &
/// Milliken, *Race Car Vehicle Dynamics*, ch. 8; slip angles α_f = δ − β −
/// a·r/V, α_r = −β + b·r/V with r = a_y/V, Gillespie, *Fundamentals of
/// Vehicle Dynamics*, ch. 6). Solving m·a_y = Cf·α_f + Cr·α_r for a_y with
/// D = m + (a·Cf − b·Cr)/V² gives ∂a_y/∂δ = Cf/D, ∂a_y/∂β = −(Cf + Cr)/D, and
/// N = a·Cf·α_f − b·Cr·α_r gives ∂N/∂δ = a·Cf − (a²·Cf + b²·Cr)·Cf/(V²·D),
/// ∂N/∂β = −(a·Cf − b·Cr) + (a²·Cf + b²·Cr)·(Cf + Cr)/(V²·D). As V → ∞ these
/// are the textbook Cf/m, a·Cf and b·Cr − a·Cf. Cf, Cr are the axle
/// cornering stiffnesses `yawdyn vehicle` reports.
#[test]
fn linear_range_matches_single_track_derivatives() {
    let v = vehicle(CROSSOVER, SINGLE_TRACK);
    let speed_kph = 80.0;
    let c = condition(&v, speed_kph, Longitudinal::FreeRolling);
    let d = yaw_moment_diagram(
        &v,
        &c,
        &degrees(4, 0.25),
        &degrees(4, 0.1),
        &DiagramSettings::default(),
    )
    .unwrap();
    let [cf, cr] = axle_cornering_stiffness(&v);
    let (m, a, b) = (v.chassis.mass, v.chassis.a, v.chassis.b);
    let v2 = (speed_kph / 3.6_f64).powi(2);
    let dd = m + (a * cf - b * cr) / v2;
    let inertia = a * a * cf + b * b * cr;
    let expected = [
        ("d ay / d steer", cf / dd),
        ("d ay / d sideslip", -(cf + cr) / dd),
        ("d N / d steer", a * cf - inertia * cf / (v2 * dd)),
        (
            "d N / d sideslip",
            -(a * cf - b * cr) + inertia * (cf + cr) / (v2 * dd),
        ),
    ];
    let origin = d
        .trim
        .iter()
        .find(|t| t.steer == 0.0)
        .expect("the straight-ahead trim");
    assert!(origin.lat_accel.abs() < 1e-9 && origin.sideslip.abs() < 1e-9);
    let got = [
        origin.lat_accel_per_steer,
        origin.lat_accel_per_sideslip,
        origin.yaw_moment_per_steer,
        origin.yaw_moment_per_sideslip,
    ];
    for ((name, want), got) in expected.iter().zip(got) {
        assert!(
            (got / want - 1.0).abs() < 1e-4,
            "{name}: {got} vs closed form {want}"
        );
    }
    // The crossover is directionally stable: ∂N/∂β > 0 in ISO 8855 signs.
    assert!(origin.yaw_moment_per_sideslip > 0.0);
}

/// Steady-state steer δ = L/R + K·a_y with R = V²/a_y and K the static-load
/// understeer gradient of `yawdyn vehicle` (Gillespie, *Fundamentals of
/// Vehicle Dynamics*, ch. 6): the trim line of the diagram in the linear
/// range (a_y up to about 1.1 m/s²) follows it within 1 %.
#[test]
fn trim_line_follows_understeer_gradient() {
    let v = vehicle(CROSSOVER, SINGLE_TRACK);
    let speed = 80.0 / 3.6;
    let c = condition(&v, 80.0, Longitudinal::FreeRolling);
    let d = yaw_moment_diagram(
        &v,
        &c,
        &degrees(5, 0.2),
        &degrees(5, 0.1),
        &DiagramSettings::default(),
    )
    .unwrap();
    let k = understeer_gradient_si(&v);
    let linear: Vec<&TrimPoint> = d.trim.iter().filter(|t| t.steer > 0.0).collect();
    assert_eq!(linear.len(), 5, "one trim per positive steer row");
    for t in linear {
        let want = (v.chassis.wheelbase / (speed * speed) + k) * t.lat_accel;
        assert!(
            (t.steer / want - 1.0).abs() < 0.01,
            "a_y {}: steer {} vs L/R + K*a_y = {}",
            t.lat_accel,
            t.steer,
            want
        );
    }
}

/// Consistency with `yawdyn stability`: at constant speed (v̇x = 0, drive
/// torque solved with the vehicle's split) the trim limit of the diagram is
/// the largest steady-state trim, both found to 0.005 m/s². Off power (free
/// rolling) no drive torque uses up tyre grip and the drag decelerates the
/// car, moving load to the front axle that limits this understeering car, so
/// its trim limit lies above, within 10 % (common practice).
#[test]
fn trim_limit_matches_largest_stability_trim() {
    let v = vehicle(CROSSOVER, &[]);
    let grid = degrees(5, 1.0);
    for kph in [50.0, 100.0] {
        let largest = stability_limit(&v, kph / 3.6);
        let at = |longitudinal| {
            yaw_moment_diagram(
                &v,
                &condition(&v, kph, longitudinal),
                &grid,
                &grid,
                &DiagramSettings::default(),
            )
            .unwrap()
            .trim_limit
            .unwrap()
            .lat_accel
        };
        let steady = at(Longitudinal::Accel(0.0));
        assert!(
            (steady - largest).abs() < 0.015,
            "{kph} km/h: {steady} vs stability {largest}"
        );
        let off_power = at(Longitudinal::FreeRolling);
        assert!(
            off_power > steady && off_power < 1.1 * steady,
            "{kph} km/h: off power {off_power} vs {steady}"
        );
    }
}

/// Power on with the same total drive torque: moving it to the front axle
/// moves the limit balance towards understeer, to the rear towards oversteer
/// (common practice: a driven tyre has less lateral grip). Invented crossover,
/// 1100 N·m at 80 km/h (within both units' power limit).
#[test]
fn front_drive_moves_limit_balance_towards_understeer() {
    let v = vehicle(CROSSOVER, &[]);
    let grid = degrees(7, 1.5);
    let balance = |share: f64| {
        let c = Condition {
            speed: 80.0 / 3.6,
            front_share: share,
            longitudinal: Longitudinal::DriveTorque(1100.0),
        };
        let d = yaw_moment_diagram(&v, &c, &grid, &grid, &DiagramSettings::default()).unwrap();
        let limit = d.limit.unwrap();
        assert!(!limit.on_grid_edge, "share {share}: {limit:?}");
        limit.balance
    };
    let (rear, split, front) = (balance(0.0), balance(0.5), balance(1.0));
    assert!(
        rear > split && split > front,
        "balance rear {rear}, split {split}, front {front} N*m"
    );
}

/// The diagram does not depend on the thread count (rows run in parallel,
/// each from its own seed).
#[test]
fn diagram_is_identical_on_one_and_two_threads() {
    let v = vehicle(CROSSOVER, &[]);
    let c = condition(&v, 90.0, Longitudinal::Accel(1.0));
    let grid = degrees(4, 1.5);
    let run = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| {
                yaw_moment_diagram(&v, &c, &grid, &grid, &DiagramSettings::default()).unwrap()
            })
    };
    let (one, two) = (run(1), run(2));
    let bits = |x: &[f64]| x.iter().map(|v| v.to_bits()).collect::<Vec<_>>();
    assert_eq!(bits(&one.lat_accel), bits(&two.lat_accel));
    assert_eq!(bits(&one.yaw_moment), bits(&two.yaw_moment));
    assert_eq!(one.trim, two.trim);
    assert_eq!(one.trim_limit, two.trim_limit);
    assert_eq!(one.limit, two.limit);
}

/// Bad grids and conditions are bad input, named.
#[test]
fn bad_settings_are_bad_input() {
    use crate::error::{Classify, ErrorKind};
    let v = vehicle(CROSSOVER, &[]);
    let grid = degrees(2, 1.0);
    let bad_speed = condition(&v, 2.0, Longitudinal::FreeRolling);
    let e =
        yaw_moment_diagram(&v, &bad_speed, &grid, &grid, &DiagramSettings::default()).unwrap_err();
    assert_eq!(e.kind(), ErrorKind::BadInput);
    assert!(e.to_string().contains("speed"), "{e}");
    let c = condition(&v, 80.0, Longitudinal::FreeRolling);
    let e =
        yaw_moment_diagram(&v, &c, &[0.1, 0.0], &grid, &DiagramSettings::default()).unwrap_err();
    assert_eq!(e.kind(), ErrorKind::BadInput);
    assert!(e.to_string().contains("sideslip grid"), "{e}");
}

/// The direction of a point of the envelope nearest to `deg` degrees.
fn at_direction(e: &Envelope, deg: f64) -> &EnvelopePoint {
    e.points
        .iter()
        .min_by(|p, q| {
            let d = |x: &EnvelopePoint| (x.direction.to_degrees() - deg).abs();
            d(p).total_cmp(&d(q))
        })
        .unwrap()
}

/// Pure lateral extreme of the g-g-V envelope = the largest steady-state
/// trim of `yawdyn stability` at the same speed (same equations: v̇x = 0,
/// zero yaw moment), to the two resolutions (0.01 and 0.005 m/s²).
#[test]
fn envelope_lateral_extreme_is_the_largest_trim() {
    let v = vehicle(CROSSOVER, &[]);
    let speed = 50.0 / 3.6;
    let e = envelope_at_speed(
        &v,
        speed,
        v.powertrain.front_share,
        &EnvelopeSettings::default(),
    )
    .unwrap();
    let largest = stability_limit(&v, speed);
    for (deg, sign) in [(90.0, 1.0), (270.0, -1.0)] {
        let p = at_direction(&e, deg);
        assert_eq!(p.limit, LimitKind::Grip);
        assert!(p.long_accel.abs() < 1e-6);
        assert!(
            (sign * p.lat_accel - largest).abs() < 0.02,
            "{deg} deg: {} vs stability {largest}",
            p.lat_accel
        );
    }
}

/// Track car without aero, rolling resistance or load sensitivity of μx, and
/// with enough engine torque to be traction-limited (invented overrides).
const TRACTION: &[&str] = &[
    "aero.drag_area=0",
    "aero.downforce_area=0",
    "tyre.front.rolling_resistance=0",
    "tyre.rear.rolling_resistance=0",
    "tyre.front.magic_formula.pDx2=0",
    "tyre.rear.magic_formula.pDx2=0",
    "drive.rear.max_torque=1200",
];

/// Pure longitudinal extremes at low speed against statics with the steady
/// load transfer m·a_x·h/L:
/// - acceleration, rear drive: a_x/g = μr·(a/L)/(1 − μr·h/L) (Gillespie,
///   *Fundamentals of Vehicle Dynamics*, ch. 2, traction-limited
///   acceleration; symbols ours, a = CG to front axle);
/// - braking with a fixed brake proportioning φ (front share of the brake
///   force): the front axle locks at D/g = μf·(b/L)/(φ − μf·h/L), the rear at
///   D/g = μr·(a/L)/(1 − φ + μr·h/L), the smaller wins (Gillespie ch. 3,
///   brake proportioning, from memory for the layout).
#[test]
fn envelope_longitudinal_extremes_match_traction_limits() {
    let v = vehicle(TRACK_CAR, TRACTION);
    let e = envelope_at_speed(
        &v,
        30.0 / 3.6,
        v.powertrain.front_share,
        &EnvelopeSettings::default(),
    )
    .unwrap();
    let (l, h, a, b) = (
        v.chassis.wheelbase,
        v.chassis.cg_height,
        v.chassis.a,
        v.chassis.b,
    );
    let mu = |axle: usize| v.tyres[axle].model.peak_friction(3000.0, v.road.friction).0;
    let (mu_f, mu_r) = (mu(0), mu(1));
    let accel = mu_r * (a / l) / (1.0 - mu_r * h / l) * GRAVITY;
    let p = at_direction(&e, 0.0);
    assert_eq!(p.limit, LimitKind::Grip, "{p:?}");
    assert!(
        (p.long_accel - accel).abs() < 0.02,
        "{} vs {accel}",
        p.long_accel
    );
    let torque_share = v.brakes.front_bias;
    let (rf, rr) = (v.tyres[0].rolling_radius, v.tyres[1].rolling_radius);
    let phi = (torque_share / rf) / (torque_share / rf + (1.0 - torque_share) / rr);
    let front_locks = mu_f * (b / l) / (phi - mu_f * h / l);
    let rear_locks = mu_r * (a / l) / (1.0 - phi + mu_r * h / l);
    let braking = front_locks.min(rear_locks) * GRAVITY;
    let p = at_direction(&e, 180.0);
    assert_eq!(p.limit, LimitKind::Grip, "{p:?}");
    assert!(
        (-p.long_accel - braking).abs() < 0.02,
        "{} vs {braking}",
        p.long_accel
    );
}

/// With downforce the envelope grows with speed (common practice): the
/// invented track car's lateral and braking extremes at 180 km/h exceed
/// those at 90 km/h by more than 15 %, and by at least 10 points more than
/// the same car without aero (no downforce, no drag), whose lateral reach
/// still changes a little with speed through the limited-slip differential
/// (its locking torque grows with the wheel-speed difference, r = a_y/V).
#[test]
fn downforce_grows_the_envelope_with_speed() {
    let settings = EnvelopeSettings {
        directions: 8,
        ..EnvelopeSettings::default()
    };
    let growth = |v: &Vehicle| {
        let reach = |kph: f64| {
            let e = envelope_at_speed(v, kph / 3.6, v.powertrain.front_share, &settings).unwrap();
            (
                at_direction(&e, 90.0).lat_accel,
                -at_direction(&e, 180.0).long_accel,
            )
        };
        let (slow, fast) = (reach(90.0), reach(180.0));
        (fast.0 / slow.0, fast.1 / slow.1)
    };
    let winged = growth(&vehicle(TRACK_CAR, &[]));
    let plain = growth(&vehicle(
        TRACK_CAR,
        &["aero.downforce_area=0", "aero.drag_area=0"],
    ));
    assert!(winged.0 > 1.15 && winged.1 > 1.15, "{winged:?}");
    assert!(
        winged.0 > plain.0 + 0.1 && winged.1 > plain.1 + 0.1,
        "with wings {winged:?}, without aero {plain:?}"
    );
}

/// Files: the root attributes of both kinds and the shapes of the grids.
#[test]
fn files_carry_format_and_shapes() {
    let dir = tempfile::tempdir().unwrap();
    let v = vehicle(CROSSOVER, &[]);
    let grid = degrees(2, 1.0);
    let d = yaw_moment_diagram(
        &v,
        &condition(&v, 80.0, Longitudinal::FreeRolling),
        &grid,
        &grid,
        &DiagramSettings::default(),
    )
    .unwrap();
    let info = file::FileInfo {
        vehicle_name: v.name.clone(),
        vehicle_toml: v.to_toml(),
        ..file::FileInfo::default()
    };
    let path = dir.path().join("ym.h5");
    write_yaw_moment(&path, &[d.clone(), d], &info).unwrap();
    assert_eq!(file::file_format(&path).unwrap(), "yawdyn-yaw-moment");
    let h5 = hdf5::File::open(&path).unwrap();
    let ay = h5.dataset("diagrams/1/lat_accel").unwrap();
    assert_eq!(ay.shape(), vec![5, 5]);
    let shares: Vec<f64> = h5
        .dataset("summary/front_share")
        .unwrap()
        .read_raw()
        .unwrap();
    assert_eq!(shares.len(), 2);

    let settings = EnvelopeSettings {
        directions: 12,
        ..EnvelopeSettings::default()
    };
    let envelopes: Vec<Envelope> = [40.0, 80.0]
        .iter()
        .map(|kph| envelope_at_speed(&v, kph / 3.6, v.powertrain.front_share, &settings).unwrap())
        .collect();
    let path = dir.path().join("gg.h5");
    write_envelope(&path, &envelopes, &info).unwrap();
    assert_eq!(file::file_format(&path).unwrap(), "yawdyn-gg-envelope");
    let h5 = hdf5::File::open(&path).unwrap();
    assert_eq!(h5.dataset("lat_accel").unwrap().shape(), vec![2, 12]);
    let status: hdf5::types::VarLenUnicode = h5.attr("status").unwrap().read_scalar().unwrap();
    assert_eq!(status.as_str(), "completed");
}
