//! Stage 4, powertrain and brakes: the torque each drive unit can give, the
//! split of the drive demand between the axles, the differentials, and the
//! friction brakes. Gives the drive and brake torque at every wheel.

use super::commands::Commands;
use super::state::{State, WHEEL_SPEED};
use crate::params::{DifferentialKind, DriveUnit, FRONT, REAR, Vehicle};

/// Torques of the powertrain and brakes at one evaluation.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct WheelTorques {
    /// Drive torque at each wheel after the differential, torque vectoring included, N·m.
    pub drive: [f64; 4],
    /// Friction brake torque at each wheel (magnitude, before the standstill fade), N·m.
    pub brake: [f64; 4],
    /// Drive torque at the wheels per axle [front, rear], N·m (both wheels, before vectoring).
    pub axle_drive: [f64; 2],
    /// Drive torque available at the wheels per axle [front, rear], N·m.
    pub axle_available: [f64; 2],
}

/// Largest torque at the wheels of a unit (sum of both wheels) at axle wheel
/// speed `wheel_speed` (rad/s), N·m: η·i·min(T_max, P_max/ω_unit) with
/// ω_unit = i·|ω_wheel| (common practice: torque is capped by the unit's
/// torque and by power over speed).
#[inline]
pub fn available_wheel_torque(u: &DriveUnit, wheel_speed: f64) -> f64 {
    let unit_speed = (u.ratio * wheel_speed).abs();
    let unit_torque = if unit_speed * u.max_torque > u.max_power {
        u.max_power / unit_speed
    } else {
        u.max_torque
    };
    u.efficiency * u.ratio * unit_torque
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
    for (axle, unit) in v.powertrain.units.iter().enumerate() {
        if let Some(u) = unit {
            let w = 0.5 * (x[WHEEL_SPEED + 2 * axle] + x[WHEEL_SPEED + 2 * axle + 1]);
            available[axle] = available_wheel_torque(u, w);
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
pub fn differential_split(u: &DriveUnit, torque: f64, w_left: f64, w_right: f64) -> (f64, f64) {
    let d = &u.differential;
    let capacity = match d.kind {
        DifferentialKind::Open => 0.0,
        DifferentialKind::Locked => f64::INFINITY,
        DifferentialKind::LimitedSlip => d.preload + d.locking * torque.abs(),
    };
    let lock = (d.coupling_damping * (w_left - w_right)).clamp(-capacity, capacity);
    (0.5 * torque - lock, 0.5 * torque + lock)
}

/// Drive and brake torque at every wheel: the axle demand through each
/// differential, plus torque vectoring; the brake request × capacity split by
/// the front bias, half per wheel, plus the per-wheel extra brake.
#[inline]
pub fn wheel_torques(v: &Vehicle, x: &State, c: &Commands) -> WheelTorques {
    let (axle_drive, axle_available) = axle_torques(v, x, c);
    let mut drive = [0.0; 4];
    for (axle, unit) in v.powertrain.units.iter().enumerate() {
        if let Some(u) = unit {
            let (left, right) = differential_split(
                u,
                axle_drive[axle],
                x[WHEEL_SPEED + 2 * axle],
                x[WHEEL_SPEED + 2 * axle + 1],
            );
            drive[2 * axle] = left;
            drive[2 * axle + 1] = right;
        }
    }
    let brakes = &v.brakes;
    let brake_total = c.brake_request.clamp(0.0, 1.0) * brakes.max_torque;
    let brake_axle = [
        0.5 * brake_total * brakes.front_bias,
        0.5 * brake_total * (1.0 - brakes.front_bias),
    ];
    let mut brake = [0.0; 4];
    for i in 0..4 {
        drive[i] += c.wheel_torque[i];
        brake[i] = brake_axle[i / 2] + c.wheel_brake[i].max(0.0);
    }
    WheelTorques {
        drive,
        brake,
        axle_drive,
        axle_available,
    }
}
