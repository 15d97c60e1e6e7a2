//! Steady cornering trim: the state and commands at which the nonlinear model
//! holds a constant speed, lateral acceleration and (optionally) longitudinal
//! acceleration.
//!
//! Unknowns (21): steering-wheel angle, total longitudinal wheel torque T
//! (T ≥ 0 drives: `Commands::axle_torque = [S·T, (1 − S)·T]`; T < 0 brakes:
//! a brake request of −T over the brake capacity, shared by the brakes'
//! own rule — bias and, on a hybrid, regenerative blending), and the 19 states vy, yaw rate, roll, roll rate, pitch, pitch
//! rate, four wheel speeds, eight slip states and ay_geometric. vx = V is
//! fixed. Equations (21): the derivatives of those 19 states are zero,
//! v̇x = ax_target (zero for true steady cornering), and the model's
//! lateral acceleration equals ay_target (so r = ay/V at the solution).
//! X, Y and YAW are cyclic and take no part.
//!
//! Solved by Newton's method with a forward-difference Jacobian and a
//! backtracking line search (Dennis & Schnabel, *Numerical Methods for
//! Unconstrained Optimization and Nonlinear Equations*, ch. 6, from memory),
//! continued in ay from 0 with a secant predictor and step halving, so that
//! it reaches the grip limit; the last converged ay is then the largest
//! reachable lateral acceleration to within [`TrimSettings::min_step`].

use nalgebra::DVector;

use super::StabilityError;
use super::linear::LINEAR_STATES;
use super::solve::{self, derivative_scale, typical_unknown};
use crate::model::{Commands, State, VX, evaluate, straight_running};
use crate::params::{FRONT, GRAVITY, REAR, Vehicle};

/// States solved for in the trim: the linearised states except VX (the speed
/// is the trim's given condition).
pub const TRIM_STATES: &[usize] = LINEAR_STATES.split_at(1).1;

const N: usize = TRIM_STATES.len() + 2;

/// What steady condition to trim for.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TrimTarget {
    /// Forward speed vx, m/s (> 0).
    pub speed: f64,
    /// Lateral acceleration, m/s² (positive = left turn).
    pub lat_accel: f64,
    /// Rate of change of vx, m/s² (default 0 = steady cornering). When non-zero
    /// the speed is frozen as a parameter (a quasi-steady point, not an equilibrium).
    pub long_accel: f64,
    /// Share of the drive torque on the front axle, 1 (0..1).
    pub front_share: f64,
}

impl TrimTarget {
    /// Steady cornering at `speed` (m/s) and `lat_accel` (m/s²) with the vehicle's own torque split.
    pub fn cornering(vehicle: &Vehicle, speed: f64, lat_accel: f64) -> Self {
        Self {
            speed,
            lat_accel,
            long_accel: 0.0,
            front_share: vehicle.powertrain.front_share,
        }
    }

    /// Checks the target for finite, sensible values.
    pub fn validate(&self, vehicle: &Vehicle) -> Result<(), StabilityError> {
        let bad = |name: &'static str, value: f64, expected: &'static str| {
            Err(StabilityError::InvalidTarget {
                name,
                value,
                expected,
            })
        };
        if !(self.speed.is_finite() && self.speed > 1.0) {
            return bad("speed", self.speed, "finite and > 1 m/s");
        }
        if !self.lat_accel.is_finite() {
            return bad("lat_accel", self.lat_accel, "finite");
        }
        if !self.long_accel.is_finite() {
            return bad("long_accel", self.long_accel, "finite");
        }
        if !(0.0..=1.0).contains(&self.front_share) {
            return bad("front_share", self.front_share, "between 0 and 1");
        }
        let reach = self.front_share
            * f64::from(u8::from(vehicle.powertrain.units[FRONT].is_some()))
            + (1.0 - self.front_share)
                * f64::from(u8::from(vehicle.powertrain.units[REAR].is_some()));
        if reach <= 0.0 {
            return Err(StabilityError::NoDrive {
                front_share: self.front_share,
            });
        }
        Ok(())
    }
}

/// Newton and continuation settings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TrimSettings {
    /// Convergence: largest scaled residual, 1 (see [`trim_residual`]). Default 1e-9.
    pub tolerance: f64,
    /// Newton iterations per continuation step. Default 40.
    pub max_iterations: usize,
    /// First and largest continuation step in ay, m/s². Default 1.0.
    pub max_step: f64,
    /// Smallest continuation step, m/s²; also the resolution of the largest
    /// reachable ay. Default 0.005.
    pub min_step: f64,
}

impl Default for TrimSettings {
    fn default() -> Self {
        Self {
            tolerance: 1e-9,
            max_iterations: 40,
            max_step: 1.0,
            min_step: 0.005,
        }
    }
}

/// A converged steady-state trim.
#[derive(Debug, Clone, Copy)]
pub struct Trim {
    /// What was asked for.
    pub target: TrimTarget,
    /// Full model state at the trim (X = Y = YAW = 0).
    pub state: State,
    /// Commands at the trim (steering-wheel angle and axle torques set).
    pub commands: Commands,
    /// Total longitudinal torque at the wheels T, N·m: drive torque when
    /// positive, brake torque −T from the brake request when negative.
    pub total_torque: f64,
    /// Largest scaled residual at the solution, 1.
    pub residual: f64,
    /// Continuation steps taken from ay = 0.
    pub steps: usize,
}

impl Trim {
    /// Steering-wheel angle, rad.
    pub fn steer_wheel_angle(&self) -> f64 {
        self.commands.steer_wheel_angle
    }
    /// Mean road-wheel angle δ_sw/ratio, rad.
    pub fn road_wheel_angle(&self, vehicle: &Vehicle) -> f64 {
        self.commands.steer_wheel_angle / vehicle.steering.ratio
    }
    /// Sideslip angle at the CG, atan(vy/vx), rad.
    pub fn sideslip(&self) -> f64 {
        crate::model::sideslip(&self.state)
    }
    /// Path radius V²/ay, m (infinite when ay = 0).
    pub fn radius(&self) -> f64 {
        let v = self.state[VX];
        v * v / self.target.lat_accel
    }
}

/// Commands for unknown vector `z` (z[0] steering-wheel angle, z[1] total
/// torque: drive torque split by the front share when positive, a brake
/// request when negative).
fn commands_for(vehicle: &Vehicle, target: &TrimTarget, z: &DVector<f64>) -> Commands {
    let mut c = Commands::neutral(vehicle);
    c.steer_wheel_angle = z[0];
    c.front_share = target.front_share;
    let drive = z[1].max(0.0);
    c.axle_torque = Some([
        target.front_share * drive,
        (1.0 - target.front_share) * drive,
    ]);
    let capacity = vehicle.brakes.max_torque;
    if z[1] < 0.0 && capacity > 0.0 {
        c.brake_request = -z[1] / capacity;
    }
    c
}

/// The state for unknown vector `z`: straight running at the target speed
/// (fuel used zero, store at its initial state of charge) with the trim
/// states taken from `z`.
fn state_for(vehicle: &Vehicle, target: &TrimTarget, z: &DVector<f64>) -> State {
    let mut x = straight_running(vehicle, target.speed);
    for (k, &i) in TRIM_STATES.iter().enumerate() {
        x[i] = z[2 + k];
    }
    x
}

/// Scaled trim residual (21 values, each of order one for a gross error).
///
/// Each derivative is multiplied by a mass, inertia or relaxation length to
/// make it a force, moment or speed, then divided by a reference force m·g
/// (moment m·g·L or m·g·h, speed V) so that the line search weighs them alike.
pub fn trim_residual(vehicle: &Vehicle, target: &TrimTarget, z: &DVector<f64>) -> DVector<f64> {
    let x = state_for(vehicle, target, z);
    let c = commands_for(vehicle, target, z);
    let e = evaluate(vehicle, &x, &c);
    let d = &e.derivative;
    let g = GRAVITY;
    let mut f = DVector::zeros(N);
    for (k, &i) in TRIM_STATES.iter().enumerate() {
        f[k] = d[i] * derivative_scale(vehicle, i, target.speed);
    }
    f[N - 2] = (e.ay - target.lat_accel) / g;
    f[N - 1] = (d[VX] - target.long_accel) / g;
    f
}

/// Typical magnitude of each unknown, for finite-difference steps.
fn typical(vehicle: &Vehicle, target: &TrimTarget) -> DVector<f64> {
    let mut s = DVector::from_element(N, 0.01);
    s[0] = 0.1;
    s[1] = 100.0;
    for (k, &i) in TRIM_STATES.iter().enumerate() {
        s[2 + k] = typical_unknown(vehicle, i, target.speed);
    }
    s
}

/// Newton's method on [`trim_residual`] (the shared solver, [`super::solve::newton`]).
/// Returns the solution and its largest scaled residual, or `None`.
fn newton(
    vehicle: &Vehicle,
    target: &TrimTarget,
    start: &DVector<f64>,
    settings: &TrimSettings,
) -> Option<(DVector<f64>, f64)> {
    solve::newton(
        |z| trim_residual(vehicle, target, z),
        start,
        &typical(vehicle, target),
        settings.tolerance,
        settings.max_iterations,
    )
}

/// Unknowns of the straight-running starting point at `target.speed`.
fn initial_guess(vehicle: &Vehicle, target: &TrimTarget) -> DVector<f64> {
    let x = straight_running(vehicle, target.speed);
    let mut z = DVector::zeros(N);
    for (k, &i) in TRIM_STATES.iter().enumerate() {
        z[2 + k] = x[i];
    }
    // Torque to overcome drag and rolling resistance and give the requested
    // acceleration (a first guess only).
    let radius = 0.5 * (vehicle.tyres[FRONT].rolling_radius + vehicle.tyres[REAR].rolling_radius);
    let drag =
        0.5 * vehicle.aero.air_density * vehicle.aero.drag_area * target.speed * target.speed;
    let rolling = vehicle.tyres[FRONT].rolling_resistance * vehicle.chassis.mass * GRAVITY;
    z[1] = (vehicle.chassis.mass * target.long_accel + drag + rolling) * radius;
    z
}

/// Solves the trim by continuation in ay from 0.
///
/// Errors: [`StabilityError::InvalidTarget`]/[`StabilityError::NoDrive`] for
/// bad targets; [`StabilityError::NoTrim`] when the requested ay cannot be
/// reached, with the largest ay (m/s², same sign as requested) that was.
///
/// ```no_run
/// # fn demo(vehicle: &yawdyn::params::Vehicle) -> Result<(), yawdyn::stability::StabilityError> {
/// use yawdyn::stability::{TrimSettings, TrimTarget, find_trim};
/// let trim = find_trim(vehicle, &TrimTarget::cornering(vehicle, 25.0, 4.0), &TrimSettings::default())?;
/// println!("steering-wheel angle {} deg", trim.steer_wheel_angle().to_degrees());
/// # Ok(()) }
/// ```
pub fn find_trim(
    vehicle: &Vehicle,
    target: &TrimTarget,
    settings: &TrimSettings,
) -> Result<Trim, StabilityError> {
    target.validate(vehicle)?;
    let mut at = TrimTarget {
        lat_accel: 0.0,
        ..*target
    };
    let no_trim = |largest: Option<f64>| StabilityError::NoTrim {
        requested_lat_accel: target.lat_accel,
        long_accel: target.long_accel,
        largest_lat_accel: largest,
    };
    let (mut z, mut residual) =
        newton(vehicle, &at, &initial_guess(vehicle, &at), settings).ok_or(no_trim(None))?;
    let mut previous: Option<(DVector<f64>, f64)> = None; // (solution, its ay)
    let sign = target.lat_accel.signum();
    let mut step = settings.max_step.min(target.lat_accel.abs());
    let mut steps = 0;
    while at.lat_accel != target.lat_accel {
        let next = if (target.lat_accel - at.lat_accel).abs() <= step {
            target.lat_accel
        } else {
            at.lat_accel + sign * step
        };
        // Secant predictor from the last two solutions.
        let guess = match &previous {
            Some((zp, ayp)) if at.lat_accel != *ayp => {
                &z + (&z - zp) * ((next - at.lat_accel) / (at.lat_accel - ayp))
            }
            _ => z.clone(),
        };
        let trial = TrimTarget {
            lat_accel: next,
            ..at
        };
        let solved = newton(vehicle, &trial, &guess, settings)
            .or_else(|| newton(vehicle, &trial, &z, settings));
        match solved {
            Some((zn, r)) => {
                previous = Some((std::mem::replace(&mut z, zn), at.lat_accel));
                residual = r;
                at = trial;
                steps += 1;
                step = (step * 1.5).min(settings.max_step);
            }
            None => {
                step *= 0.5;
                if step < settings.min_step {
                    return Err(no_trim(Some(at.lat_accel)));
                }
            }
        }
    }
    Ok(Trim {
        target: *target,
        state: state_for(vehicle, target, &z),
        commands: commands_for(vehicle, target, &z),
        total_torque: z[1],
        residual,
        steps,
    })
}

/// Re-solves a trim at another lateral acceleration starting from `from`
/// (no continuation: for small changes such as finite differences).
pub fn retrim(
    vehicle: &Vehicle,
    from: &Trim,
    lat_accel: f64,
    settings: &TrimSettings,
) -> Option<Trim> {
    let target = TrimTarget {
        lat_accel,
        ..from.target
    };
    let mut z = DVector::zeros(N);
    z[0] = from.commands.steer_wheel_angle;
    z[1] = from.total_torque;
    for (k, &i) in TRIM_STATES.iter().enumerate() {
        z[2 + k] = from.state[i];
    }
    let (z, residual) = newton(vehicle, &target, &z, settings)?;
    Some(Trim {
        target,
        state: state_for(vehicle, &target, &z),
        commands: commands_for(vehicle, &target, &z),
        total_torque: z[1],
        residual,
        steps: 0,
    })
}
