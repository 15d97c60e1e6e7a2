//! The nonlinear two-track vehicle model: the right-hand side of the equations
//! of motion, and nothing else.
//!
//! [`evaluate`] turns a state and the held commands into state derivatives and
//! every derived quantity (loads, tyre forces, slips, accelerations). It
//! allocates nothing, calls no script and does no I/O: it is the inner loop.
//!
//! Model summary (ISO 8855 axes: x forward, y left, z up):
//! - planar body motion (vx, vy, yaw rate) with global position and heading;
//! - body roll and pitch as spring–damper degrees of freedom driving the
//!   elastic load transfer; the roll-centre (geometric) transfer uses a
//!   filtered lateral acceleration so that wheel loads never depend
//!   algebraically on the accelerations they produce;
//! - four wheel spins, Magic Formula tyres with first-order relaxation of
//!   slip ratio and slip angle;
//! - steering with Ackermann fraction and toe; aero drag and downforce;
//! - drive units with torque and power limits, per-axle differentials, brakes.
//!
//! It does not integrate (see [`crate::sim`]) and does not know about
//! manoeuvres or files.

mod derived;
pub mod linear;
mod state;

pub use derived::{CURVATURE_MIN_SPEED, Derived, Pose, derive, sideslip, speed};
pub use state::*;

use crate::params::DifferentialKind;
use crate::params::{DriveUnit, FRONT, GRAVITY, REAR, Vehicle};

/// Below this contact-patch speed the slip equations use this speed instead, m/s.
///
/// Low-speed regularisation of the relaxation equations (common practice; see
/// Pacejka, *Tire and Vehicle Dynamics*, ch. 7 on the need for it as Vx → 0):
/// slips stay bounded from a standing start and lateral oscillation at rest is damped.
pub const LOW_SPEED: f64 = 0.5;

/// Time constant of the lateral acceleration used for roll-centre load transfer, s.
pub const AY_GEOMETRIC_TIME_CONSTANT: f64 = 0.02;

/// Wheel speed below which brake and rolling-resistance torques fade linearly to zero, rad/s.
///
/// A viscous regularisation of Coulomb friction near standstill (common
/// practice) so that a held brake does not chatter at zero wheel speed.
pub const STANDSTILL_WHEEL_SPEED: f64 = 1.0;

/// Driver and controller commands, held constant between controller ticks.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Commands {
    /// Steering-wheel angle, rad (positive = left).
    pub steer_wheel_angle: f64,
    /// Drive request, 0..1 of the torque all drive units can give at their current speed.
    pub drive_request: f64,
    /// Brake request, 0..1 of the total brake torque.
    pub brake_request: f64,
    /// Share of the drive request sent to the front axle, 0 = all rear, 1 = all front.
    pub front_share: f64,
    /// Axle drive torques at the wheels [front, rear], N·m; when set they replace
    /// `drive_request`/`front_share` (still limited by each unit's torque and power).
    pub axle_torque: Option<[f64; 2]>,
    /// Extra drive torque per wheel after the differential (torque vectoring), N·m.
    pub wheel_torque: [f64; 4],
    /// Extra brake torque per wheel (≥ 0), N·m.
    pub wheel_brake: [f64; 4],
}

impl Commands {
    /// Straight ahead, no drive, no brake, the vehicle's default torque split.
    pub fn neutral(vehicle: &Vehicle) -> Self {
        Self {
            steer_wheel_angle: 0.0,
            drive_request: 0.0,
            brake_request: 0.0,
            front_share: vehicle.front_share,
            axle_torque: None,
            wheel_torque: [0.0; 4],
            wheel_brake: [0.0; 4],
        }
    }
}

/// Per-wheel quantities of one evaluation.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct WheelOutput {
    /// Vertical load, N (≥ 0).
    pub fz: f64,
    /// Longitudinal tyre force in wheel axes, N.
    pub fx: f64,
    /// Lateral tyre force in wheel axes, N.
    pub fy: f64,
    /// Slip ratio used by the tyre (relaxed), 1.
    pub slip_ratio: f64,
    /// tan of the slip angle used by the tyre (relaxed), 1 (the channel
    /// `slip_angle` is its arctangent; kept as tan to spare the inner loop).
    pub tan_slip_angle: f64,
    /// Road-wheel steer angle, rad.
    pub steer_angle: f64,
    /// Drive torque applied to the wheel, N·m.
    pub drive_torque: f64,
    /// Brake torque applied to the wheel (magnitude before the standstill fade), N·m.
    pub brake_torque: f64,
    /// Longitudinal speed of the contact patch in wheel axes, m/s.
    pub contact_speed: f64,
}

/// Everything one evaluation of the model gives.
#[derive(Debug, Clone, Copy)]
pub struct Evaluation {
    /// State derivatives.
    pub derivative: State,
    /// Longitudinal acceleration of the CG in body axes, m/s² (v̇x − r·vy).
    pub ax: f64,
    /// Lateral acceleration of the CG in body axes, m/s² (v̇y + r·vx).
    pub ay: f64,
    /// Per-wheel results (FL, FR, RL, RR).
    pub wheels: [WheelOutput; 4],
    /// Aerodynamic drag force along body x, N (negative when moving forward).
    pub drag_force: f64,
    /// Total downforce, N.
    pub downforce: f64,
    /// Drive torque at the wheels per axle [front, rear], N·m.
    pub axle_drive_torque: [f64; 2],
    /// Drive torque available at the wheels per axle at the current speed [front, rear], N·m.
    pub axle_available_torque: [f64; 2],
}

/// Wheel positions relative to the CG in body axes, (x, y), m.
#[inline]
pub fn wheel_positions(v: &Vehicle) -> [(f64, f64); 4] {
    let (tf, tr) = (0.5 * v.track[FRONT], 0.5 * v.track[REAR]);
    [(v.a, tf), (v.a, -tf), (-v.b, tr), (-v.b, -tr)]
}

/// Road-wheel steer angles (FL, FR, RL, RR), rad, from the steering-wheel angle.
///
/// Mean front angle δ = δ_sw / ratio. Geometric Ackermann angles (Gillespie,
/// *Fundamentals of Vehicle Dynamics*, ch. 6, Ackermann steering geometry):
/// tan δ_left = L·tan δ / (L − (t/2)·tan δ), tan δ_right = L·tan δ / (L + (t/2)·tan δ),
/// blended with parallel steer by the Ackermann fraction. Toe-in turns each
/// wheel's front towards the car's centre line.
#[inline]
pub fn steer_angles(v: &Vehicle, steer_wheel_angle: f64) -> [f64; 4] {
    let delta = steer_wheel_angle / v.steering_ratio;
    let tan_d = delta.tan();
    let l = v.wheelbase;
    let half_t = 0.5 * v.track[FRONT];
    let geo_left = (l * tan_d).atan2(l - half_t * tan_d);
    let geo_right = (l * tan_d).atan2(l + half_t * tan_d);
    let left = delta + v.ackermann * (geo_left - delta);
    let right = delta + v.ackermann * (geo_right - delta);
    [
        left - v.toe[FRONT],
        right + v.toe[FRONT],
        -v.toe[REAR],
        v.toe[REAR],
    ]
}

/// Split of the drive demand into axle torques at the wheels [front, rear], N·m,
/// and the torque each axle could give [front, rear], N·m.
///
/// In request mode the demand is request × (sum of available torques), sent
/// front/rear by the share and capped by each axle's availability (the excess
/// is not redistributed). Axle-torque mode caps each torque at ± availability.
#[inline]
fn axle_torques(v: &Vehicle, x: &State, c: &Commands) -> ([f64; 2], [f64; 2]) {
    let mut available = [0.0; 2];
    for (axle, unit) in v.drive.iter().enumerate() {
        if let Some(u) = unit {
            let w = 0.5 * (x[WHEEL_SPEED + 2 * axle] + x[WHEEL_SPEED + 2 * axle + 1]);
            available[axle] = u.available_wheel_torque(w);
        }
    }
    let torque = match c.axle_torque {
        Some(t) => [
            t[FRONT].clamp(-available[FRONT], available[FRONT]),
            t[REAR].clamp(-available[REAR], available[REAR]),
        ],
        None => {
            let share = c.front_share.clamp(0.0, 1.0);
            let total = c.drive_request.clamp(0.0, 1.0) * (available[FRONT] + available[REAR]);
            [
                (share * total).min(available[FRONT]),
                ((1.0 - share) * total).min(available[REAR]),
            ]
        }
    };
    (torque, available)
}

/// Torque sent to the left and right wheels of a driven axle, N·m.
///
/// Open: equal halves. The locking torque of a locked or limited-slip
/// differential is a viscous stand-in for stiction, c·(ω_left − ω_right),
/// saturated at the locking capacity: infinite for locked, preload +
/// locking·|T_in| for a torque-sensing limited-slip unit (Milliken & Milliken,
/// *Race Car Vehicle Dynamics*, ch. 20, limited-slip differentials, from memory).
#[inline]
fn differential_split(u: &DriveUnit, torque: f64, w_left: f64, w_right: f64) -> (f64, f64) {
    let capacity = match u.differential {
        crate::params::DifferentialKind::Open => 0.0,
        DifferentialKind::Locked => f64::INFINITY,
        DifferentialKind::LimitedSlip => u.preload + u.locking * torque.abs(),
    };
    let lock = (u.coupling_damping * (w_left - w_right)).clamp(-capacity, capacity);
    (0.5 * torque - lock, 0.5 * torque + lock)
}

/// Evaluates the model: state derivatives and all derived quantities.
///
/// Equations (body axes, ISO 8855):
/// - m·(v̇x − r·vy) = ΣFx + F_drag, m·(v̇y + r·vx) = ΣFy, Iz·ṙ = Σ(xᵢ·Fyᵢ − yᵢ·Fxᵢ)
///   (Newton–Euler in a rotating frame; Milliken & Milliken ch. 5, Gillespie ch. 6);
/// - Ixx·φ̈ = m·ay·H − KΦ·φ − CΦ·φ̇ with H the CG height above the roll axis (the
///   inertial force −m·ay at height H rolls the body towards the outside of the turn:
///   right side down, φ > 0, in a left turn), and
///   Iyy·θ̈ = −m·ax·h − Kθ·θ − Cθ·θ̇ (pitch centre at the ground), so that in steady
///   state the elastic transfers equal the quasi-static results m·ay·H·KΦᵢ/KΦ per
///   axle and m·ax·h/L (Milliken & Milliken, ch. 18). The CG shift due to body
///   rotation (m·g·h·φ) is neglected, as in those formulas;
/// - roll-centre transfer per axle m·ay·(b/L)·z_rf / t_f (front), m·ay·(a/L)·z_rr / t_r
///   (rear) (Milliken & Milliken ch. 18), using the filtered acceleration state;
/// - wheel spin Iw·ω̇ = T_drive − T_brake − Fx·R − T_roll;
/// - tyre relaxation σκ·κ̇′ = (ω·R − Vcx) − |Vcx|·κ′ and σα·ṫ′ = −Vcy − |Vcx|·t′ with
///   t′ = tan α′ (Pacejka, *Tire and Vehicle Dynamics*, ch. 7, first-order
///   transient slip; |Vcx| floored at [`LOW_SPEED`]).
#[inline]
pub fn evaluate(v: &Vehicle, x: &State, c: &Commands) -> Evaluation {
    let (vx, vy, r) = (x[VX], x[VY], x[YAW_RATE]);
    let (roll, roll_rate, pitch, pitch_rate) = (x[ROLL], x[ROLL_RATE], x[PITCH], x[PITCH_RATE]);
    let m = v.mass;
    let l = v.wheelbase;

    // Aerodynamics: F = ½·ρ·C·A·V² (drag opposing vx).
    let q = 0.5 * v.air_density * vx * vx;
    let drag_force = -0.5 * v.air_density * v.drag_area * vx * vx.abs();
    let downforce = q * v.downforce_area;
    let x_cp = v.pressure_centre_to_front_axle;

    // Axle loads: static + downforce + drag-height moment + elastic pitch moment.
    let statics = v.static_axle_loads();
    let pitch_moment = v.pitch_stiffness * pitch + v.pitch_damping * pitch_rate;
    let drag_transfer = drag_force * v.drag_height / l;
    let axle_load = [
        statics[FRONT] + downforce * (l - x_cp) / l + drag_transfer + pitch_moment / l,
        statics[REAR] + downforce * x_cp / l - drag_transfer - pitch_moment / l,
    ];
    // Lateral transfer per axle (positive moves load to the right wheel).
    let ay_geo = x[AY_GEOMETRIC];
    let lateral_share = [v.b / l, v.a / l];
    let mut fz = [0.0; 4];
    for axle in [FRONT, REAR] {
        // A body rolled right side down (φ > 0, ISO 8855) loads the right wheels.
        let elastic = v.roll_stiffness[axle] * roll + v.roll_damping[axle] * roll_rate;
        let geometric = m * ay_geo * lateral_share[axle] * v.roll_centre_height[axle];
        let transfer = (elastic + geometric) / v.track[axle];
        fz[2 * axle] = (0.5 * axle_load[axle] - transfer).max(0.0);
        fz[2 * axle + 1] = (0.5 * axle_load[axle] + transfer).max(0.0);
    }

    let steer = steer_angles(v, c.steer_wheel_angle);
    let positions = wheel_positions(v);
    let (axle_drive_torque, axle_available_torque) = axle_torques(v, x, c);
    let mut drive = [0.0; 4];
    for (axle, unit) in v.drive.iter().enumerate() {
        if let Some(u) = unit {
            let (left, right) = differential_split(
                u,
                axle_drive_torque[axle],
                x[WHEEL_SPEED + 2 * axle],
                x[WHEEL_SPEED + 2 * axle + 1],
            );
            drive[2 * axle] = left;
            drive[2 * axle + 1] = right;
        }
    }
    let brake_total = c.brake_request.clamp(0.0, 1.0) * v.brake_max_torque;
    let brake_axle = [
        0.5 * brake_total * v.brake_front_bias,
        0.5 * brake_total * (1.0 - v.brake_front_bias),
    ];

    let mut d = State::zeros();
    let mut wheels = [WheelOutput::default(); 4];
    let (mut sum_fx, mut sum_fy, mut yaw_moment) = (0.0, 0.0, 0.0);
    for i in 0..4 {
        let axle = i / 2;
        let tyre = &v.tyres[axle];
        let (px, py) = positions[i];
        let (sin_d, cos_d) = steer[i].sin_cos();
        // Contact-patch velocity: body velocity plus r × position, rotated into wheel axes.
        let (bx, by) = (vx - r * py, vy + r * px);
        let vcx = bx * cos_d + by * sin_d;
        let vcy = -bx * sin_d + by * cos_d;
        let omega = x[WHEEL_SPEED + i];
        let kappa = x[SLIP_RATIO + i];
        let tan_alpha = x[SLIP_ANGLE + i];

        // Camber in tyre axes: the left wheel's static camber as given, the right mirrored.
        let gamma = if i % 2 == 0 {
            tyre.camber
        } else {
            -tyre.camber
        };
        let force = tyre.model.combined_tan(
            kappa,
            tan_alpha,
            gamma,
            fz[i],
            v.road_friction,
            tyre.combined_slip,
        );
        let fx_body = force.fx * cos_d - force.fy * sin_d;
        let fy_body = force.fx * sin_d + force.fy * cos_d;
        sum_fx += fx_body;
        sum_fy += fy_body;
        yaw_moment += px * fy_body - py * fx_body;

        let fade = (omega / STANDSTILL_WHEEL_SPEED).clamp(-1.0, 1.0);
        let brake = brake_axle[axle] + c.wheel_brake[i].max(0.0);
        let drive_i = drive[i] + c.wheel_torque[i];
        let rolling = tyre.rolling_resistance * fz[i] * tyre.rolling_radius;
        let radius = tyre.rolling_radius;
        d[WHEEL_SPEED + i] =
            (drive_i - (brake + rolling) * fade - force.fx * radius) / tyre.wheel_inertia;
        let v_ref = vcx.abs().max(LOW_SPEED);
        d[SLIP_RATIO + i] = (omega * radius - vcx - v_ref * kappa) / tyre.relaxation_longitudinal;
        d[SLIP_ANGLE + i] = (-vcy - v_ref * tan_alpha) / tyre.relaxation_lateral;
        wheels[i] = WheelOutput {
            fz: fz[i],
            fx: force.fx,
            fy: force.fy,
            slip_ratio: kappa,
            tan_slip_angle: tan_alpha,
            steer_angle: steer[i],
            drive_torque: drive_i,
            brake_torque: brake,
            contact_speed: vcx,
        };
    }

    let ax = (sum_fx + drag_force) / m;
    let ay = sum_fy / m;
    let (sin_yaw, cos_yaw) = x[YAW].sin_cos();
    d[X] = vx * cos_yaw - vy * sin_yaw;
    d[Y] = vx * sin_yaw + vy * cos_yaw;
    d[YAW] = r;
    d[VX] = ax + r * vy;
    d[VY] = ay - r * vx;
    d[YAW_RATE] = yaw_moment / v.yaw_inertia;

    let roll_axis_height = v.roll_centre_height[FRONT]
        + (v.roll_centre_height[REAR] - v.roll_centre_height[FRONT]) * v.a / l;
    let arm = v.cg_height - roll_axis_height;
    let roll_stiffness = v.roll_stiffness[FRONT] + v.roll_stiffness[REAR];
    let roll_damping = v.roll_damping[FRONT] + v.roll_damping[REAR];
    d[ROLL] = roll_rate;
    d[ROLL_RATE] =
        (m * ay * arm - roll_stiffness * roll - roll_damping * roll_rate) / v.roll_inertia;
    d[PITCH] = pitch_rate;
    d[PITCH_RATE] =
        (-m * ax * v.cg_height - v.pitch_stiffness * pitch - v.pitch_damping * pitch_rate)
            / v.pitch_inertia;
    d[AY_GEOMETRIC] = (ay - ay_geo) / AY_GEOMETRIC_TIME_CONSTANT;

    Evaluation {
        derivative: d,
        ax,
        ay,
        wheels,
        drag_force,
        downforce,
        axle_drive_torque,
        axle_available_torque,
    }
}

/// A state running straight at `speed` (m/s): wheels rolling freely, body level, no slip.
pub fn straight_running(v: &Vehicle, speed: f64) -> State {
    let mut x = State::zeros();
    x[VX] = speed;
    for i in 0..4 {
        x[WHEEL_SPEED + i] = speed / v.tyres[i / 2].rolling_radius;
    }
    x
}

/// Total gravity force m·g, N (convenience for g-normalised reports).
pub fn weight(v: &Vehicle) -> f64 {
    v.mass * GRAVITY
}

#[cfg(test)]
mod tests {
    use super::*;
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
        v.ackermann = 1.0;
        v.toe = [0.0, 0.0];
        let steer = steer_angles(&v, 0.3 * v.steering_ratio);
        assert!(
            steer[0] > steer[1],
            "inner (left) wheel steers more in a left turn"
        );
        let half = 0.5 * v.track[FRONT];
        let r_left = v.wheelbase / steer[0].tan() + half;
        let r_right = v.wheelbase / steer[1].tan() - half;
        assert!((r_left - r_right).abs() < 1e-9, "{r_left} vs {r_right}");
    }

    /// Differentials: open splits equally; a limited-slip unit transfers at
    /// most preload + locking·|T| (torque-sensing definition).
    #[test]
    fn differential_torque_split() {
        let v = crossover();
        let mut unit = v.drive[FRONT].unwrap();
        let (l, r) = differential_split(&unit, 1000.0, 50.0, 40.0);
        assert_eq!((l, r), (500.0, 500.0));
        unit.differential = DifferentialKind::LimitedSlip;
        unit.preload = 50.0;
        unit.locking = 0.2;
        let (l, r) = differential_split(&unit, 1000.0, 50.0, 40.0);
        assert!(
            (r - l - 2.0 * 250.0).abs() < 1e-9,
            "capacity 250 N*m moves to the slower wheel"
        );
        unit.differential = DifferentialKind::Locked;
        let (l, r) = differential_split(&unit, 1000.0, 50.0, 49.9);
        assert!((r - l - 2.0 * unit.coupling_damping * 0.1).abs() < 1e-6);
    }

    /// The power limit: available torque is min(T_max, P_max/ω) at the unit.
    #[test]
    fn available_torque_is_capped_by_power() {
        let v = crossover();
        let u = v.drive[FRONT].unwrap();
        let low = u.available_wheel_torque(1.0);
        assert_eq!(low, u.efficiency * u.ratio * u.max_torque);
        let w = 100.0;
        let high = u.available_wheel_torque(w);
        assert!((high * w - u.efficiency * u.max_power).abs() < 1e-6);
    }
}
