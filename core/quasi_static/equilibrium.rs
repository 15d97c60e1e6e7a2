//! One quasi-static operating point of the nonlinear model: every state but
//! yaw in equilibrium at a given forward speed, with the yaw moment either
//! left over (the moment method) or balanced (a trim).
//!
//! The point is found by the shared Newton solver of
//! [`crate::stability::newton`] on the derivatives of [`crate::model::evaluate`]:
//!
//! - always solved: the yaw rate r and the 17 states roll, roll rate, pitch,
//!   pitch rate, four wheel speeds, eight relaxed slips and the filtered
//!   lateral acceleration, from v̇y = 0 (so r = a_y/V with a_y the body-axis
//!   lateral acceleration and V = vx), the roll and pitch equations (steady
//!   load transfer), wheel spin equilibrium (each wheel's slip consistent with
//!   its drive and brake torque), relaxed slips equal to the kinematic slips and
//!   the filter at rest;
//! - [`Lateral::Given`]: sideslip β and steer δ given; the residual yaw
//!   moment N = Iz·ṙ is the result (Milliken & Milliken, *Race Car Vehicle
//!   Dynamics*, ch. 8, the moment method);
//! - [`Lateral::Trim`]: δ given, β solved for N = 0;
//! - [`Lateral::TrimAtLatAccel`]: a_y given, β and δ solved for N = 0 (the
//!   steady-state trim of `yawdyn stability`);
//! - [`Longitudinal::Accel`]: v̇x given; the longitudinal command is solved,
//!   drive torque at the wheels split by the front share when positive, brake
//!   torque with the vehicle's brake bias when negative.
//!
//! The forward speed V = vx is fixed (as in the stability trim), so β =
//! atan(vy/V) and r = a_y/V. All quantities SI, angles in radians, ISO 8855
//! signs (β positive when the velocity points left of the nose, N positive
//! nose-left).

use nalgebra::DVector;

use super::{Chassis, QuasiStaticError, chassis};
use crate::model::{
    AY_GEOMETRIC, Commands, PITCH, PITCH_RATE, ROLL, ROLL_RATE, SLIP_ANGLE, SLIP_RATIO, State, VX,
    VY, WHEEL_SPEED, YAW_RATE, evaluate, straight_running,
};
use crate::params::{FRONT, GRAVITY, REAR, Vehicle};
use crate::stability::{derivative_scale, newton, typical_unknown};

/// States always solved for, in seed order.
pub const BODY_UNKNOWNS: [usize; 18] = [
    YAW_RATE,
    ROLL,
    ROLL_RATE,
    PITCH,
    PITCH_RATE,
    WHEEL_SPEED,
    WHEEL_SPEED + 1,
    WHEEL_SPEED + 2,
    WHEEL_SPEED + 3,
    SLIP_ANGLE,
    SLIP_ANGLE + 1,
    SLIP_ANGLE + 2,
    SLIP_ANGLE + 3,
    SLIP_RATIO,
    SLIP_RATIO + 1,
    SLIP_RATIO + 2,
    SLIP_RATIO + 3,
    AY_GEOMETRIC,
];

/// Derivatives always set to zero, one per entry of [`BODY_UNKNOWNS`]: v̇y
/// takes the place of ṙ (it fixes r = a_y/V).
pub const BODY_EQUATIONS: [usize; 18] = [
    VY,
    ROLL,
    ROLL_RATE,
    PITCH,
    PITCH_RATE,
    WHEEL_SPEED,
    WHEEL_SPEED + 1,
    WHEEL_SPEED + 2,
    WHEEL_SPEED + 3,
    SLIP_ANGLE,
    SLIP_ANGLE + 1,
    SLIP_ANGLE + 2,
    SLIP_ANGLE + 3,
    SLIP_RATIO,
    SLIP_RATIO + 1,
    SLIP_RATIO + 2,
    SLIP_RATIO + 3,
    AY_GEOMETRIC,
];

const N_BODY: usize = BODY_UNKNOWNS.len();
/// Index of vy in a [`Seed`].
const SEED_VY: usize = N_BODY;
/// Index of the road-wheel steer angle in a [`Seed`].
const SEED_STEER: usize = N_BODY + 1;
/// Index of the longitudinal command in a [`Seed`].
const SEED_CONTROL: usize = N_BODY + 2;
/// Length of a [`Seed`].
pub const SEED_LEN: usize = N_BODY + 3;

/// Every quantity of a point in one vector, whatever the problem: the 18
/// [`BODY_UNKNOWNS`], vy (m/s), road-wheel steer δ (rad) and the longitudinal
/// command u (N·m: drive torque at the wheels when ≥ 0, brake torque −u when
/// < 0). Problems take their unknowns from it and give a full one back, so
/// predictors can extrapolate between points of different problems.
pub type Seed = DVector<f64>;

/// Typical magnitude of the longitudinal command as an unknown, N·m.
const TYPICAL_CONTROL: f64 = 100.0;
/// Typical magnitude of the steer angle as an unknown, rad.
const TYPICAL_STEER: f64 = 0.01;

/// Newton settings of the quasi-static solves.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolveSettings {
    /// Convergence: largest scaled residual, 1 (as the stability trim). Default 1e-9.
    pub tolerance: f64,
    /// Newton iterations per solve. Default 25: the solves start close to the
    /// answer (a neighbouring point), so a solve that needs more is better
    /// retried from closer.
    pub max_iterations: usize,
}

impl Default for SolveSettings {
    fn default() -> Self {
        Self {
            tolerance: 1e-9,
            max_iterations: 25,
        }
    }
}

/// How the longitudinal command is set.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Longitudinal {
    /// No drive torque and no brake; v̇x follows (drag, rolling resistance and
    /// the tyres' own drag decelerate the car).
    FreeRolling,
    /// Total drive torque at the wheels, N·m (≥ 0), split by the front share
    /// (each axle's part capped, as in the model, at what its unit can give at
    /// that wheel speed); v̇x follows.
    DriveTorque(f64),
    /// Rate of change of the forward speed v̇x, m/s²; the command is solved:
    /// drive torque (split by the front share) or brake torque (brake bias).
    Accel(f64),
}

/// What is given on the lateral side and whether yaw is balanced.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Lateral {
    /// Sideslip β (rad) and road-wheel steer δ (rad) given; the yaw moment is left over.
    Given {
        /// Sideslip at the CG, atan(vy/vx), rad.
        sideslip: f64,
        /// Mean road-wheel steer angle δ_sw/ratio, rad.
        steer: f64,
    },
    /// Steer given (rad), sideslip solved for zero yaw moment.
    Trim {
        /// Mean road-wheel steer angle, rad.
        steer: f64,
    },
    /// Lateral acceleration given (m/s², body axes), sideslip and steer solved for zero yaw moment.
    TrimAtLatAccel {
        /// Lateral acceleration, m/s².
        lat_accel: f64,
    },
}

/// The fixed conditions of a family of points.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Condition {
    /// Forward speed vx, m/s (> 1).
    pub speed: f64,
    /// Share of the drive torque on the front axle, 0..1.
    pub front_share: f64,
    /// The longitudinal command.
    pub longitudinal: Longitudinal,
}

impl Condition {
    /// Checks the condition against the vehicle: finite values, a speed above
    /// 1 m/s, a share in 0..1 that reaches a driven axle when drive is asked
    /// for, a non-negative drive torque.
    pub fn validate(&self, vehicle: &Vehicle) -> Result<(), QuasiStaticError> {
        let bad = |name: &'static str, value: f64, expected: &'static str| {
            Err(QuasiStaticError::InvalidInput {
                name,
                value,
                expected,
            })
        };
        if !(self.speed.is_finite() && self.speed > 1.0) {
            return bad("speed", self.speed, "finite and > 1 m/s");
        }
        if !(0.0..=1.0).contains(&self.front_share) {
            return bad("front_share", self.front_share, "between 0 and 1");
        }
        let drives = match self.longitudinal {
            Longitudinal::FreeRolling => false,
            Longitudinal::DriveTorque(t) => {
                if !(t.is_finite() && t >= 0.0) {
                    return bad("drive_torque", t, "finite and >= 0 N*m");
                }
                t > 0.0
            }
            Longitudinal::Accel(a) => {
                if !a.is_finite() {
                    return bad("long_accel", a, "finite");
                }
                true
            }
        };
        let c = chassis(vehicle);
        let reach = self.front_share * f64::from(u8::from(c.driven[FRONT]))
            + (1.0 - self.front_share) * f64::from(u8::from(c.driven[REAR]));
        if drives && reach <= 0.0 {
            return bad(
                "front_share",
                self.front_share,
                "a split that sends torque to a driven axle",
            );
        }
        Ok(())
    }
}

/// A solved quasi-static point.
#[derive(Debug, Clone)]
pub struct Point {
    /// Full model state (X = Y = YAW = 0).
    pub state: State,
    /// Commands at the point.
    pub commands: Commands,
    /// Sideslip at the CG, atan(vy/vx), rad.
    pub sideslip: f64,
    /// Mean road-wheel steer angle, rad.
    pub steer: f64,
    /// Body-axis lateral acceleration a_y, m/s².
    pub lat_accel: f64,
    /// Rate of change of the forward speed v̇x, m/s².
    pub long_accel: f64,
    /// Residual yaw moment N = Iz·ṙ about the CG, N·m (positive nose-left;
    /// zero at a trim).
    pub yaw_moment: f64,
    /// Total drive torque at the wheels as delivered (after each axle's
    /// torque and power cap), N·m.
    pub drive_torque: f64,
    /// Total brake torque requested, N·m (after the brake system's cap).
    pub brake_torque: f64,
    /// Largest share of its unit's available torque (at this speed) that a
    /// driven axle delivers, 0..1.
    pub drive_usage: f64,
    /// Brake request as a share of the brake system's torque, 0..1.
    pub brake_usage: f64,
    /// Largest scaled residual of the solve, 1.
    pub residual: f64,
    /// Everything as a [`Seed`], for starting neighbouring solves.
    pub seed: Seed,
}

/// One problem: the condition, the lateral setting and the vehicle.
#[derive(Debug, Clone, Copy)]
pub struct Problem<'a> {
    vehicle: &'a Vehicle,
    chassis: Chassis,
    condition: Condition,
    lateral: Lateral,
    /// Residual scale of each body equation, then of the yaw equation.
    scale: [f64; N_BODY + 1],
}

impl<'a> Problem<'a> {
    /// A problem; call [`Condition::validate`] first.
    pub fn new(vehicle: &'a Vehicle, condition: Condition, lateral: Lateral) -> Self {
        let mut scale = [0.0; N_BODY + 1];
        for (k, &i) in BODY_EQUATIONS.iter().chain(&[YAW_RATE]).enumerate() {
            scale[k] = derivative_scale(vehicle, i, condition.speed);
        }
        Self {
            vehicle,
            chassis: chassis(vehicle),
            condition,
            lateral,
            scale,
        }
    }

    /// The same problem with another lateral setting.
    pub fn with_lateral(&self, lateral: Lateral) -> Self {
        Self { lateral, ..*self }
    }

    fn sideslip_free(&self) -> bool {
        !matches!(self.lateral, Lateral::Given { .. })
    }

    fn steer_free(&self) -> bool {
        matches!(self.lateral, Lateral::TrimAtLatAccel { .. })
    }

    fn control_free(&self) -> bool {
        matches!(self.condition.longitudinal, Longitudinal::Accel(_))
    }

    /// Number of unknowns (= equations).
    fn len(&self) -> usize {
        N_BODY
            + usize::from(self.sideslip_free())
            + usize::from(self.steer_free())
            + usize::from(self.control_free())
    }

    /// A seed for straight running at the condition's speed with the given
    /// lateral values filled in (a starting point far from nothing).
    pub fn straight_seed(&self) -> Seed {
        let x = straight_running(self.vehicle, self.condition.speed);
        let mut s = Seed::zeros(SEED_LEN);
        for (k, &i) in BODY_UNKNOWNS.iter().enumerate() {
            s[k] = x[i];
        }
        self.fill_given(&mut s);
        s
    }

    /// Writes the given (not solved) quantities of this problem into `seed`.
    fn fill_given(&self, seed: &mut Seed) {
        match self.lateral {
            Lateral::Given { sideslip, steer } => {
                seed[SEED_VY] = self.condition.speed * sideslip.tan();
                seed[SEED_STEER] = steer;
            }
            Lateral::Trim { steer } => seed[SEED_STEER] = steer,
            Lateral::TrimAtLatAccel { .. } => {}
        }
        match self.condition.longitudinal {
            Longitudinal::FreeRolling => seed[SEED_CONTROL] = 0.0,
            Longitudinal::DriveTorque(t) => seed[SEED_CONTROL] = t,
            Longitudinal::Accel(_) => {}
        }
    }

    /// Seed indices of this problem's unknowns, in unknown order.
    fn unknown_indices(&self) -> impl Iterator<Item = usize> {
        (0..N_BODY)
            .chain(self.sideslip_free().then_some(SEED_VY))
            .chain(self.steer_free().then_some(SEED_STEER))
            .chain(self.control_free().then_some(SEED_CONTROL))
    }

    /// The full seed for unknowns `z`: every entry is either an unknown or
    /// given by the problem.
    fn seed_of(&self, z: &DVector<f64>) -> Seed {
        let mut s = Seed::zeros(SEED_LEN);
        for (k, i) in self.unknown_indices().enumerate() {
            s[i] = z[k];
        }
        self.fill_given(&mut s);
        s
    }

    /// Model state and commands of unknowns `z` (no allocation).
    fn state_and_commands(&self, z: &DVector<f64>) -> (State, Commands) {
        // Straight running gives the states that are not unknowns here, e.g.
        // the energy store at its initial state of charge.
        let mut x = straight_running(self.vehicle, self.condition.speed);
        for (k, &i) in BODY_UNKNOWNS.iter().enumerate() {
            x[i] = z[k];
        }
        let mut k = N_BODY;
        let mut next = || {
            k += 1;
            z[k - 1]
        };
        let (vy, steer) = match self.lateral {
            Lateral::Given { sideslip, steer } => (self.condition.speed * sideslip.tan(), steer),
            Lateral::Trim { steer } => (next(), steer),
            Lateral::TrimAtLatAccel { .. } => (next(), next()),
        };
        let u = match self.condition.longitudinal {
            Longitudinal::FreeRolling => 0.0,
            Longitudinal::DriveTorque(t) => t,
            Longitudinal::Accel(_) => next(),
        };
        x[VY] = vy;
        (x, self.commands(steer, u))
    }

    /// Commands for road-wheel steer `steer` (rad) and longitudinal command `u` (N·m).
    fn commands(&self, steer: f64, u: f64) -> Commands {
        let c = &self.chassis;
        let share = self.condition.front_share;
        let mut cmd = Commands::neutral(self.vehicle);
        cmd.steer_wheel_angle = steer * c.steering_ratio;
        cmd.front_share = share;
        let drive = u.max(0.0);
        cmd.axle_torque = Some([share * drive, (1.0 - share) * drive]);
        cmd.brake_request = if c.brake_max_torque > 0.0 {
            (-u).max(0.0) / c.brake_max_torque
        } else {
            0.0
        };
        cmd
    }

    /// Scaled residual of unknowns `z`.
    fn residual(&self, z: &DVector<f64>) -> DVector<f64> {
        let (x, c) = self.state_and_commands(z);
        let e = evaluate(self.vehicle, &x, &c);
        let d = &e.derivative;
        let mut f = DVector::zeros(self.len());
        for (k, &i) in BODY_EQUATIONS.iter().enumerate() {
            f[k] = d[i] * self.scale[k];
        }
        let mut k = N_BODY;
        if self.sideslip_free() {
            f[k] = d[YAW_RATE] * self.scale[N_BODY];
            k += 1;
        }
        if let Lateral::TrimAtLatAccel { lat_accel } = self.lateral {
            f[k] = (e.ay - lat_accel) / GRAVITY;
            k += 1;
        }
        if let Longitudinal::Accel(ax) = self.condition.longitudinal {
            f[k] = (d[VX] - ax) / GRAVITY;
        }
        f
    }

    /// Typical magnitude of each unknown.
    fn typical(&self) -> DVector<f64> {
        let speed = self.condition.speed;
        let values: Vec<f64> = self
            .unknown_indices()
            .map(|i| match i {
                SEED_VY => typical_unknown(self.vehicle, VY, speed),
                SEED_STEER => TYPICAL_STEER,
                SEED_CONTROL => TYPICAL_CONTROL,
                k => typical_unknown(self.vehicle, BODY_UNKNOWNS[k], speed),
            })
            .collect();
        DVector::from_vec(values)
    }

    /// Solves the problem from `guess` (a full seed; only the entries this
    /// problem solves for are read). `None` when Newton does not converge.
    pub fn solve(&self, guess: &Seed, settings: &SolveSettings) -> Option<Point> {
        let start = DVector::from_iterator(self.len(), self.unknown_indices().map(|i| guess[i]));
        let (z, residual) = newton(
            |z| self.residual(z),
            &start,
            &self.typical(),
            settings.tolerance,
            settings.max_iterations,
        )?;
        Some(self.point(&z, residual))
    }

    /// Evaluates the model at unknowns `z` and collects the point.
    fn point(&self, z: &DVector<f64>, residual: f64) -> Point {
        let seed = self.seed_of(z);
        let (x, c) = self.state_and_commands(z);
        let e = evaluate(self.vehicle, &x, &c);
        let drive_usage = [FRONT, REAR]
            .iter()
            .filter(|&&a| self.chassis.driven[a] && e.axle_available_torque[a] > 0.0)
            .map(|&a| e.axle_drive_torque[a] / e.axle_available_torque[a])
            .fold(0.0, f64::max);
        let request = c.brake_request.clamp(0.0, 1.0);
        Point {
            sideslip: x[VY].atan2(x[VX]),
            steer: seed[SEED_STEER],
            lat_accel: e.ay,
            long_accel: e.derivative[VX],
            yaw_moment: e.derivative[YAW_RATE] * self.chassis.yaw_inertia,
            drive_torque: e.axle_drive_torque[FRONT] + e.axle_drive_torque[REAR],
            brake_torque: request * self.chassis.brake_max_torque,
            drive_usage,
            brake_usage: request,
            residual,
            state: x,
            commands: c,
            seed,
        }
    }
}

/// Linear extrapolation of seeds: `b + (b − a)·t`.
pub fn extrapolate(a: &Seed, b: &Seed, t: f64) -> Seed {
    b + (b - a) * t
}

/// Settings of [`march_to_limit`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MarchSettings {
    /// First and largest step of the parameter, in its unit.
    pub max_step: f64,
    /// Smallest step: the resolution of the limit found, in the parameter's unit.
    pub min_step: f64,
    /// Growth of the step after a success, 1. Default 1.5 (as the stability trim's continuation).
    pub growth: f64,
}

/// Follows a one-parameter family of points from `(s0, start)` towards
/// increasing `s` up to `s_max` and returns the last parameter value solved
/// with its point: the limit of the family to within `min_step` when the
/// solves stop converging before `s_max` (a fold of the family, or a command
/// at its cap).
///
/// Continuation with a secant predictor (as the stability trim,
/// [`crate::stability::find_trim`]): steps grow by `growth` after each
/// success until the first failure; from then on the bracket between the last
/// solved and the first unsolved value is halved (bisection) until it is
/// narrower than `min_step`. `solve(s, guess)` solves the member at `s`.
pub fn march_to_limit<F>(
    mut solve: F,
    s0: f64,
    start: Point,
    s_max: f64,
    settings: &MarchSettings,
) -> (f64, Point)
where
    F: FnMut(f64, &Seed) -> Option<Point>,
{
    let (mut s, mut point) = (s0, start);
    let mut previous: Option<(f64, Seed)> = None;
    let mut step = settings.max_step;
    let mut unsolved: Option<f64> = None;
    loop {
        let next = match unsolved {
            None => (s + step).min(s_max),
            Some(u) => 0.5 * (s + u),
        };
        if next <= s || unsolved.is_some_and(|u| u - s < settings.min_step) {
            break;
        }
        // Secant predictor from the last two points, else the last point.
        let guess = match &previous {
            Some((sp, zp)) if *sp != s => extrapolate(zp, &point.seed, (next - s) / (s - sp)),
            _ => point.seed.clone(),
        };
        match solve(next, &guess) {
            Some(p) => {
                previous = Some((s, std::mem::replace(&mut point, p).seed));
                s = next;
                step = (step * settings.growth).min(settings.max_step);
            }
            None => unsolved = Some(next),
        }
    }
    (s, point)
}
