//! Tests of the driver models.

use std::f64::consts::PI;

use super::*;
use crate::manoeuvre::TurnDirection;
use approx::assert_relative_eq;

const L: f64 = 2.7;
const RATIO: f64 = 16.0;
const DT: f64 = 1e-3;

/// Kinematic bicycle about the rear axle (Rajamani §2.2, from memory),
/// Euler-integrated; `understeer` K (rad/(m/s²)) scales the achieved
/// curvature by 1/(1 + K·v²/L) as a stand-in for tyre slip.
struct Toy {
    x: f64,
    y: f64,
    yaw: f64,
    speed: f64,
    understeer: f64,
}

impl Toy {
    fn view(&self) -> DriverView {
        DriverView {
            x: self.x,
            y: self.y,
            yaw: self.yaw,
            speed: self.speed,
            wheelbase: L,
            steering_ratio: RATIO,
        }
    }
    fn step(&mut self, steer_wheel_angle: f64) {
        let commanded = (steer_wheel_angle / RATIO).tan() / L;
        let actual = commanded / (1.0 + self.understeer * self.speed * self.speed / L);
        self.x += self.speed * self.yaw.cos() * DT;
        self.y += self.speed * self.yaw.sin() * DT;
        self.yaw += self.speed * actual * DT;
    }
}

/// Run for `duration` s; return the largest |cross-track error| over the
/// final `last` s and the largest |steering-wheel angle| overall.
fn drive(toy: &mut Toy, follower: &mut PathFollower, duration: f64, last: f64) -> (f64, f64) {
    let n = (duration / DT) as usize;
    let tail = ((duration - last) / DT) as usize;
    let (mut worst, mut max_sw) = (0.0f64, 0.0f64);
    for i in 0..n {
        let sw = follower.update(&toy.view(), DT);
        max_sw = max_sw.max(sw.abs());
        toy.step(sw);
        if i >= tail {
            worst = worst.max(follower.path.closest(toy.x, toy.y).cross_track_error.abs());
        }
    }
    (worst, max_sw)
}

#[test]
fn converges_onto_100_m_circle() {
    let path = Path::circle(0.0, 100.0, 100.0, TurnDirection::Left).unwrap();
    let mut follower = PathFollower::new(path);
    // Start 0.5 m outside the circle, heading along the tangent.
    let mut toy = Toy {
        x: 0.0,
        y: -0.5,
        yaw: 0.0,
        speed: 15.0,
        understeer: 0.0,
    };
    let (worst, _) = drive(&mut toy, &mut follower, 40.0, 10.0);
    println!("circle: max |e| over last 10 s = {worst:.2e} m");
    assert!(worst < 0.01, "{worst}");
}

#[test]
fn same_inputs_give_bit_identical_steering() {
    let run = || {
        let path = Path::double_lane_change(0.0, 0.0, 0.1, 3.5).unwrap();
        let mut follower = PathFollower::new(path);
        let mut toy = Toy {
            x: -5.0,
            y: 0.3,
            yaw: 0.1,
            speed: 18.0,
            understeer: 0.001,
        };
        let mut bits = Vec::new();
        for _ in 0..5000 {
            let sw = follower.update(&toy.view(), DT);
            bits.push(sw.to_bits());
            toy.step(sw);
        }
        bits
    };
    assert_eq!(run(), run());
}

#[test]
fn bad_settings_give_nan_not_panic() {
    let path = Path::straight(0.0, 0.0, 0.0).unwrap();
    let mut follower = PathFollower::new(path);
    let toy = Toy {
        x: 0.0,
        y: 1.0,
        yaw: 0.0,
        speed: 20.0,
        understeer: 0.0,
    };
    follower.max_road_wheel_angle = f64::NAN;
    assert!(follower.update(&toy.view(), DT).is_nan());
    follower.max_road_wheel_angle = 2.0;
    assert!(follower.check_settings().is_err());
    assert!(follower.update(&toy.view(), DT).is_nan());
    follower.max_road_wheel_angle = 0.5;
    follower.integral_time = Some(-1.0);
    assert!(follower.update(&toy.view(), DT).is_nan());
    follower.integral_time = None;
    assert!(follower.update(&toy.view(), DT).is_finite());
    let mut c = SpeedController::default();
    c.ki = -1.0;
    assert_eq!(c.update(20.0, 10.0, 0.01), (0.0, 0.0));
}

#[test]
fn converges_onto_straight_line_from_1_m_offset() {
    let path = Path::straight(0.0, 0.0, 0.0).unwrap();
    let mut follower = PathFollower::new(path);
    let mut toy = Toy {
        x: 0.0,
        y: 1.0,
        yaw: 0.0,
        speed: 20.0,
        understeer: 0.0,
    };
    let (worst, _) = drive(&mut toy, &mut follower, 20.0, 5.0);
    println!("straight: max |e| over last 5 s = {worst:.2e} m");
    assert!(worst < 0.01, "{worst}");
}

#[test]
fn integral_action_removes_understeer_offset() {
    // K·v²/L = 0.002·400/2.7 ≈ 0.30: the car achieves only 77 % of the
    // commanded curvature on a 100 m circle at 20 m/s (ay = 4 m/s²).
    let run = |integral_time: Option<f64>| {
        let path = Path::circle(0.0, 100.0, 100.0, TurnDirection::Left).unwrap();
        let mut follower = PathFollower::new(path);
        follower.integral_time = integral_time;
        let mut toy = Toy {
            x: 0.0,
            y: 0.0,
            yaw: 0.0,
            speed: 20.0,
            understeer: 0.002,
        };
        drive(&mut toy, &mut follower, 60.0, 10.0).0
    };
    let without = run(None);
    let with = run(Some(2.0));
    println!("understeer toy: offset without integral {without:.3} m, with {with:.2e} m");
    assert!(
        without > 0.1,
        "pure pursuit alone should leave an offset: {without}"
    );
    assert!(with < 0.1, "{with}");
}

#[test]
fn steering_limit_holds_and_integral_stays_bounded() {
    let path = Path::straight(0.0, 0.0, 0.0).unwrap();
    let mut follower = PathFollower::new(path);
    follower.max_road_wheel_angle = 0.3;
    let mut toy = Toy {
        x: 0.0,
        y: 30.0,
        yaw: PI / 2.0,
        speed: 10.0,
        understeer: 0.0,
    };
    let (worst, max_sw) = drive(&mut toy, &mut follower, 40.0, 5.0);
    assert!(max_sw <= 0.3 * RATIO + 1e-12);
    assert_relative_eq!(max_sw, 0.3 * RATIO, max_relative = 1e-12); // it did saturate
    assert!(worst < 0.01, "{worst}");
    let bound = 0.3f64.tan() / L / (2.0 / (5.0 * 5.0 * 2.0));
    assert!(follower.integral().abs() <= bound);
}

#[test]
fn double_lane_change_geometry() {
    let path = Path::double_lane_change(10.0, -2.0, 0.0, DOUBLE_LANE_CHANGE_OFFSET).unwrap();
    let Path::DoubleLaneChange(course) = &path else {
        unreachable!()
    };
    assert_eq!(DoubleLaneChange::course_length(), 110.0);
    // Entry lane, mid-transition (half the offset), side lane, exit lane.
    let at = |xi: f64| path.closest(10.0 + xi, -2.0 + 0.0).s;
    let p = path.point_at(at(7.0));
    assert_relative_eq!(p.y, -2.0, epsilon = 1e-12);
    let mid = path.closest(10.0 + 30.0, -2.0 + 1.75);
    assert!(mid.cross_track_error.abs() < 1e-9);
    assert_relative_eq!(mid.x, 40.0, epsilon = 1e-9);
    let side = path.closest(10.0 + 57.5, -2.0 + 3.5 + 0.4);
    assert_relative_eq!(side.cross_track_error, 0.4, epsilon = 1e-12);
    let exit = path.closest(10.0 + 100.0, -2.0 - 0.3);
    assert_relative_eq!(exit.cross_track_error, -0.3, epsilon = 1e-12);
    // Arc length longer than 110 m; each half-cosine of rise h over ℓ adds
    // ≈ (π·h)²/(16·ℓ) m (small-slope expansion of ∫sqrt(1 + η'²)).
    let extra = (PI * 3.5f64).powi(2) / 16.0 * (1.0 / 30.0 + 1.0 / 25.0);
    assert_relative_eq!(course.arc_length() - 110.0, extra, max_relative = 0.02);
    // point_at and closest agree, and points ahead move by arc length.
    for s in [5.0, 20.0, 33.3, 50.0, 80.0, 120.0] {
        let p = path.point_at(s);
        let q = path.closest(p.x, p.y);
        assert_relative_eq!(q.s, s, epsilon = 1e-6);
        assert!(q.cross_track_error.abs() < 1e-9);
        let ahead = path.point_ahead(p.x, p.y, 2.0);
        let chord = (ahead.x - p.x).hypot(ahead.y - p.y);
        assert!(chord <= 2.0 + 1e-9 && chord > 1.99, "{chord}");
    }
    // Peak curvature at the start of the first change: h·π²/(2ℓ²).
    let c = path.point_at(15.0 + 1e-6).curvature;
    assert_relative_eq!(c, 3.5 * PI * PI / (2.0 * 900.0), max_relative = 1e-6);
}

#[test]
fn follows_double_lane_change() {
    let path = Path::double_lane_change(0.0, 0.0, 0.0, DOUBLE_LANE_CHANGE_OFFSET).unwrap();
    let mut follower = PathFollower::new(path);
    let mut toy = Toy {
        x: -20.0,
        y: 0.0,
        yaw: 0.0,
        speed: 60.0 / 3.6,
        understeer: 0.0,
    };
    let (mut worst, n) = (0.0f64, (10.0 / DT) as usize);
    for _ in 0..n {
        let sw = follower.update(&toy.view(), DT);
        toy.step(sw);
        worst = worst.max(follower.cross_track_error().abs());
    }
    println!("double lane change at 60 km/h: max |e| = {worst:.3} m");
    assert!(toy.x > 120.0);
    assert!(worst < 0.5, "{worst}");
    assert!(follower.cross_track_error().abs() < 0.01);
}

#[test]
fn speed_controller_holds_target_without_mixing_pedals() {
    // Toy plant (invented): dv/dt = 4·drive − 8·brake − 0.03·v − 0.1.
    let mut c = SpeedController::default();
    let mut v = 10.0;
    let dt = 0.01;
    let (mut used_brake, mut worst) = (false, 0.0f64);
    for i in 0..12_000 {
        let t = i as f64 * dt;
        let target = if t < 60.0 { 80.0 / 3.6 } else { 50.0 / 3.6 };
        let (drive, brake) = c.update(target, v, dt);
        assert!(drive == 0.0 || brake == 0.0);
        assert!((0.0..=1.0).contains(&drive) && (0.0..=1.0).contains(&brake));
        used_brake |= brake > 0.0;
        v += (4.0 * drive - 8.0 * brake - 0.03 * v - 0.1) * dt;
        if (40.0..60.0).contains(&t) || t >= 100.0 {
            worst = worst.max((v - target).abs());
        }
    }
    println!(
        "speed controller: max |error| when settled = {:.2e} km/h",
        worst * 3.6
    );
    assert!(used_brake);
    assert!(worst * 3.6 < 0.1, "{}", worst * 3.6);
    assert!(SpeedController::new(-1.0, 0.1).is_err());
    assert_eq!(c.update(f64::NAN, 10.0, dt), (0.0, 0.0));
}
