//! The driver's and controller's commands, held constant between controller ticks.

use crate::params::{BlendingRule, Vehicle};

/// Driver and controller commands, held constant between controller ticks.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Commands {
    /// Steering-wheel angle, rad (positive = left).
    pub steer_wheel_angle: f64,
    /// Drive request, 0..1 of the torque all drive units can give at their current speed.
    pub drive_request: f64,
    /// Brake request, 0..1 of the friction brakes' capacity; shared with
    /// regenerative braking by the blending rule.
    pub brake_request: f64,
    /// Share of the drive request sent to the front axle, 0 = all rear, 1 = all front.
    pub front_share: f64,
    /// Axle drive torques at the wheels [front, rear], N·m; when set they
    /// replace `drive_request`/`front_share`. Each is limited by its unit's
    /// torque, power, fuel flow and store; negative torque (generating) only on
    /// a motor-generator's axle (an engine gives none).
    pub axle_torque: Option<[f64; 2]>,
    /// Extra drive torque per wheel after the differential (torque vectoring), N·m.
    pub wheel_torque: [f64; 4],
    /// Extra brake torque per wheel (≥ 0), N·m.
    pub wheel_brake: [f64; 4],
    /// Hybrid powertrain commands: electric deployment, blending rule,
    /// harvest limit, spare torque. The default follows the vehicle file.
    pub powertrain: PowertrainCommands,
}

impl Commands {
    /// Straight ahead, no drive, no brake, the vehicle's default torque split
    /// and powertrain settings.
    pub fn neutral(vehicle: &Vehicle) -> Self {
        Self {
            steer_wheel_angle: 0.0,
            drive_request: 0.0,
            brake_request: 0.0,
            front_share: vehicle.powertrain.front_share,
            axle_torque: None,
            wheel_torque: [0.0; 4],
            wheel_brake: [0.0; 4],
            powertrain: PowertrainCommands::default(),
        }
    }
}

/// Commands of a hybrid powertrain. `None` everywhere (the default) means:
/// no deployment request, and the vehicle file's blending rule and
/// spare-torque setting, and no harvest limit beyond the machine's and the
/// store's own.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct PowertrainCommands {
    /// Electric deployment request for the motor-generator(s). When set, it
    /// replaces the motor-generator's share of the drive request (or its
    /// `axle_torque`), and the drive request then asks each other unit for that
    /// fraction of its own available torque. With two motor-generators the
    /// request is shared in proportion to their power ratings.
    pub deploy: Option<Deploy>,
    /// Blending of regenerative and friction braking; `None` = `brakes.blending`.
    pub blending: Option<BlendingRule>,
    /// Largest electrical power the generator(s) may feed into the store, W
    /// (≥ 0); `None` = only the machine's and the store's limits.
    pub harvest_limit: Option<f64>,
    /// Send an axle's unmet drive torque to the other axle (not with a
    /// deployment request); `None` = `drive.spare_torque_to_other_axle`.
    pub spare_torque_to_other_axle: Option<bool>,
}

/// An electric deployment request for the motor-generator(s).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Deploy {
    /// Electrical power at the machine terminals, W: positive drawn from the
    /// store (motoring), negative fed into it (generating).
    Power(f64),
    /// Torque at the wheels of the motor-generator's axle (both wheels), N·m:
    /// positive drives, negative generates.
    Torque(f64),
}
