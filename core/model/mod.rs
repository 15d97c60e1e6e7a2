//! The nonlinear two-track vehicle model: the right-hand side of the equations
//! of motion, and nothing else.
//!
//! [`evaluate`] turns a state and the held commands into state derivatives and
//! every derived quantity (loads, tyre forces, slips, accelerations). It
//! allocates nothing, calls no script and does no I/O: it is the inner loop.
//! It reads as the list of its stages, each in its own file with the
//! parameter group it uses, in the order of the equations:
//!
//! | stage | file | parameters | gives |
//! |---|---|---|---|
//! | aerodynamics | `aero.rs` | [`Aero`](crate::params::Aero) | drag, downforce |
//! | wheel loads | `loads.rs` | [`Chassis`](crate::params::Chassis), aero | Fz per wheel |
//! | steering | `steering.rs` | [`Steering`](crate::params::Steering) | road-wheel angles |
//! | powertrain and brakes | `powertrain.rs` (with `units.rs`, `store.rs`, `brakes.rs`) | [`Powertrain`](crate::params::Powertrain), [`Brakes`](crate::params::Brakes) | drive and brake torque per wheel; power, fuel and energy flows |
//! | tyres | `tyres.rs` | [`Prepared`] (tyre lanes from [`AxleTyre`](crate::params::AxleTyre), [`Road`](crate::params::Road)) | contact-patch velocities, tyre forces |
//! | chassis equations | `chassis.rs` | chassis | body, roll, pitch derivatives; ax, ay |
//! | wheel equations | `wheels.rs` | tyres | wheel spin and slip derivatives |
//! | energy equations | `powertrain.rs` | powertrain | fuel used and stored energy derivatives |
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
//! - drive units per axle, each an engine (torque curve, power, optional
//!   fuel-flow limit, fuel mass flow) or a motor-generator on an energy store
//!   (motoring and generating limits, efficiencies), per-axle differentials,
//!   friction brakes blended with regenerative braking; fuel used and stored
//!   energy are integrated states.
//!
//! Constants that follow from the parameters alone are prepared once per
//! vehicle ([`Prepared`], `prepared.rs`) and the steering angles once per
//! steering command ([`SteerAngles`]); [`evaluate_prepared`] is the inner loop,
//! [`evaluate`] prepares both on every call.
//!
//! It does not integrate (see [`crate::sim`]) and does not know about
//! manoeuvres or files.

mod aero;
mod brakes;
mod chassis;
mod commands;
mod derived;
pub mod linear;
mod loads;
mod powertrain;
mod prepared;
mod state;
mod steering;
mod store;
mod tyres;
mod units;
mod wheels;

pub use aero::{AeroForces, aero_forces};
pub use brakes::{BrakeSplit, blend_brakes};
pub use chassis::{AY_GEOMETRIC_TIME_CONSTANT, BodyAcceleration, chassis_equations};
pub use commands::{Commands, Deploy, PowertrainCommands};
pub use derived::{CURVATURE_MIN_SPEED, Derived, Pose, derive, sideslip, speed};
pub use loads::{static_axle_loads, wheel_loads};
pub use powertrain::{
    PowertrainOutput, WheelTorques, differential_split, energy_equations, powertrain,
};
pub use prepared::{ChassisConstants, Prepared, WheelConstants};
pub use state::*;
pub use steering::{SteerAngles, road_wheel_angles, wheel_positions};
pub use store::{StoreLimits, energy_rate, state_of_charge, store_limits};
pub use tyres::{ContactPatches, contact_patches};
pub use units::{
    electrical_power, engine_available_torque, fuel_mass_flow, generator_available_torque,
    motor_available_torque, shaft_torque, torque_for_output_power, torque_from_input_power,
};
pub use wheels::{
    LOW_SPEED, STANDSTILL_WHEEL_SPEED, WheelJacobian, wheel_equations, wheel_jacobian,
};

use crate::params::{GRAVITY, Vehicle};

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
    /// Powertrain torque applied to the wheel, N·m (negative while a
    /// motor-generator brakes it).
    pub drive_torque: f64,
    /// Friction brake torque applied to the wheel (magnitude before the standstill fade), N·m.
    pub brake_torque: f64,
    /// Longitudinal speed of the contact patch in wheel axes, m/s.
    pub contact_speed: f64,
}

/// Everything one evaluation of the model gives.
#[derive(Debug, Clone, Copy, Default)]
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
    /// Net powertrain torque at the wheels per axle [front, rear], N·m
    /// (regenerative braking counts negative).
    pub axle_drive_torque: [f64; 2],
    /// Drive torque available at the wheels per axle at the current speed [front, rear], N·m.
    pub axle_available_torque: [f64; 2],
    /// Power, fuel and energy flows, regenerative and friction braking per axle.
    pub powertrain: PowertrainOutput,
}

/// Evaluates the model: state derivatives and all derived quantities, stage
/// by stage in the order of the equations (see the module documentation and
/// each stage's own for the equations and their sources).
///
/// Prepares the vehicle's constants and the steering angles on every call:
/// for repeated evaluations of one vehicle use [`evaluate_prepared`] (the
/// same computation, bit for bit).
///
/// ```
/// use yawdyn::model::{Commands, evaluate, straight_running, VX};
/// use yawdyn::params::load_vehicle;
/// let car = load_vehicle("scripts/vehicles/track_car.toml".as_ref(), &[]).unwrap();
/// let x = straight_running(&car, 30.0);
/// let e = evaluate(&car, &x, &Commands::neutral(&car));
/// assert!(e.derivative[VX] < 0.0, "coasting slows down: drag and rolling resistance");
/// ```
pub fn evaluate(v: &Vehicle, x: &State, c: &Commands) -> Evaluation {
    let steer = SteerAngles::new(v, c.steer_wheel_angle);
    evaluate_prepared(v, &Prepared::new(v), &steer, x, c)
}

/// [`evaluate`] with the vehicle's constants prepared once ([`Prepared::new`])
/// and the steering angles computed once per held command
/// ([`SteerAngles::new`] with `c.steer_wheel_angle`): the inner loop.
///
/// ```
/// use yawdyn::model::{Commands, Prepared, SteerAngles, evaluate, evaluate_prepared, straight_running};
/// use yawdyn::params::load_vehicle;
/// let car = load_vehicle("scripts/vehicles/track_car.toml".as_ref(), &[]).unwrap();
/// let (p, c) = (Prepared::new(&car), Commands::neutral(&car));
/// let steer = SteerAngles::new(&car, c.steer_wheel_angle);
/// let x = straight_running(&car, 30.0);
/// let e = evaluate_prepared(&car, &p, &steer, &x, &c);
/// assert_eq!(e.derivative, evaluate(&car, &x, &c).derivative);
/// ```
#[inline]
pub fn evaluate_prepared(
    v: &Vehicle,
    p: &Prepared,
    steer: &SteerAngles,
    x: &State,
    c: &Commands,
) -> Evaluation {
    let mut e = Evaluation::default();
    evaluate_prepared_into(v, p, steer, x, c, &mut e);
    e
}

/// [`evaluate_prepared`] written into `out`, every field: the simulation's
/// inner loop evaluates in place instead of building an evaluation and
/// copying it.
#[inline]
pub fn evaluate_prepared_into(
    v: &Vehicle,
    p: &Prepared,
    steer: &SteerAngles,
    x: &State,
    c: &Commands,
    out: &mut Evaluation,
) {
    debug_assert!(steer.is_for(c.steer_wheel_angle));
    let aero = aero_forces(&v.aero, x[VX]);
    let fz = wheel_loads(&v.chassis, &p.chassis, &v.aero, &aero, x);
    let (torques, power) = powertrain(v, x, c);
    let patches = contact_patches(&p.tyres, &p.wheels, steer, &fz, x);
    let d = &mut out.derivative;
    d.fill(0.0);
    let body = chassis_equations(
        &v.chassis,
        &p.chassis,
        &p.wheels,
        &patches,
        aero.drag_force,
        x,
        d,
    );
    wheel_equations(&p.wheels, &fz, &patches, &torques, x, d);
    energy_equations(&power, d);
    out.ax = body.ax;
    out.ay = body.ay;
    for (i, w) in out.wheels.iter_mut().enumerate() {
        *w = WheelOutput {
            fz: fz[i],
            fx: patches.fx[i],
            fy: patches.fy[i],
            slip_ratio: x[SLIP_RATIO + i],
            tan_slip_angle: x[SLIP_ANGLE + i],
            steer_angle: steer.angle[i],
            drive_torque: torques.drive[i],
            brake_torque: torques.brake[i],
            contact_speed: patches.vcx[i],
        };
    }
    out.drag_force = aero.drag_force;
    out.downforce = aero.downforce;
    out.axle_drive_torque = torques.axle_drive;
    out.axle_available_torque = torques.axle_available;
    out.powertrain = power;
}

/// A state running straight at `speed` (m/s): wheels rolling freely, body
/// level, no slip, no fuel used, the store at its initial state of charge.
pub fn straight_running(v: &Vehicle, speed: f64) -> State {
    let mut x = State::zeros();
    x[VX] = speed;
    for i in 0..4 {
        x[WHEEL_SPEED + i] = speed / v.tyres[i / 2].rolling_radius;
    }
    x[STORE_ENERGY] = v
        .powertrain
        .store
        .as_ref()
        .map_or(0.0, |s| s.initial_energy());
    x
}

/// Total gravity force m·g, N (convenience for g-normalised reports).
pub fn weight(v: &Vehicle) -> f64 {
    v.chassis.mass * GRAVITY
}

#[cfg(test)]
mod tests;
