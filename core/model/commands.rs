//! The driver's and controller's commands, held constant between controller ticks.

use crate::params::Vehicle;

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
            front_share: vehicle.powertrain.front_share,
            axle_torque: None,
            wheel_torque: [0.0; 4],
            wheel_brake: [0.0; 4],
        }
    }
}
