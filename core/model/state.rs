//! The state vector of the two-track model: layout, names and units.
//!
//! [`STATE_NAMES`] is the one list of names and units; every index constant
//! below points into it. The last two states are energy integrators (fuel
//! used, stored energy): nothing in the vehicle's motion depends on fuel used,
//! and the stored energy only through the store's limits.

use nalgebra::SVector;

/// Number of states.
pub const N_STATES: usize = 25;

/// The state vector (static size, no allocation).
pub type State = SVector<f64, N_STATES>;

/// Global x position of the CG, m.
pub const X: usize = 0;
/// Global y position of the CG, m.
pub const Y: usize = 1;
/// Heading (yaw angle), rad.
pub const YAW: usize = 2;
/// Longitudinal velocity in body axes, m/s.
pub const VX: usize = 3;
/// Lateral velocity in body axes, m/s.
pub const VY: usize = 4;
/// Yaw rate, rad/s.
pub const YAW_RATE: usize = 5;
/// Body roll angle, rad (positive = right side down, ISO 8855).
pub const ROLL: usize = 6;
/// Body roll rate, rad/s.
pub const ROLL_RATE: usize = 7;
/// Body pitch angle, rad (positive = nose down, ISO 8855).
pub const PITCH: usize = 8;
/// Body pitch rate, rad/s.
pub const PITCH_RATE: usize = 9;
/// First of four wheel spin speeds (FL, FR, RL, RR), rad/s.
pub const WHEEL_SPEED: usize = 10;
/// First of four relaxed lateral slips tan α′ (FL, FR, RL, RR), 1.
pub const SLIP_ANGLE: usize = 14;
/// First of four relaxed slip ratios κ′ (FL, FR, RL, RR), 1.
pub const SLIP_RATIO: usize = 18;
/// Lateral acceleration seen by the roll-centre (geometric) load transfer, m/s².
pub const AY_GEOMETRIC: usize = 22;
/// Fuel burnt since the start, kg (the integral of the engines' fuel mass flow).
pub const FUEL_USED: usize = 23;
/// Energy in the store, J (the integral of its energy rate; 0 without a store).
pub const STORE_ENERGY: usize = 24;

/// Wheel position names, in the order used by every per-wheel array.
pub const WHEEL_NAMES: [&str; 4] = ["front_left", "front_right", "rear_left", "rear_right"];

/// Name and unit of each state, for messages and linearisation reports.
pub const STATE_NAMES: [(&str, &str); N_STATES] = [
    ("x", "m"),
    ("y", "m"),
    ("yaw", "rad"),
    ("vx", "m/s"),
    ("vy", "m/s"),
    ("yaw_rate", "rad/s"),
    ("roll", "rad"),
    ("roll_rate", "rad/s"),
    ("pitch", "rad"),
    ("pitch_rate", "rad/s"),
    ("wheel_speed_front_left", "rad/s"),
    ("wheel_speed_front_right", "rad/s"),
    ("wheel_speed_rear_left", "rad/s"),
    ("wheel_speed_rear_right", "rad/s"),
    ("slip_angle_state_front_left", "1"),
    ("slip_angle_state_front_right", "1"),
    ("slip_angle_state_rear_left", "1"),
    ("slip_angle_state_rear_right", "1"),
    ("slip_ratio_state_front_left", "1"),
    ("slip_ratio_state_front_right", "1"),
    ("slip_ratio_state_rear_left", "1"),
    ("slip_ratio_state_rear_right", "1"),
    ("ay_geometric", "m/s^2"),
    ("fuel_used", "kg"),
    ("store_energy", "J"),
];
