//! The recorded channels: one table of names, units and descriptions, and the
//! one function that fills a sample from a model evaluation.

use crate::model::{Commands, Evaluation, State, VX, VY, WHEEL_NAMES, WHEEL_SPEED};
use crate::model::{PITCH, ROLL, X, Y, YAW, YAW_RATE};

/// Name, SI unit and description of a recorded channel.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ChannelInfo {
    /// Channel name.
    pub name: &'static str,
    /// SI unit.
    pub unit: &'static str,
    /// One-line description.
    pub description: &'static str,
}

const fn ch(name: &'static str, unit: &'static str, description: &'static str) -> ChannelInfo {
    ChannelInfo {
        name,
        unit,
        description,
    }
}

/// Channels that are not per wheel.
const BODY: [ChannelInfo; 24] = [
    ch("x", "m", "global x position of the CG"),
    ch("y", "m", "global y position of the CG"),
    ch(
        "yaw",
        "rad",
        "heading angle (ISO 8855, positive anticlockwise from above)",
    ),
    ch("vx", "m/s", "longitudinal velocity of the CG in body axes"),
    ch(
        "vy",
        "m/s",
        "lateral velocity of the CG in body axes (positive left)",
    ),
    ch("speed", "m/s", "magnitude of the CG velocity"),
    ch(
        "yaw_rate",
        "rad/s",
        "yaw rate (positive anticlockwise from above)",
    ),
    ch(
        "ax",
        "m/s^2",
        "longitudinal acceleration of the CG in body axes",
    ),
    ch(
        "ay",
        "m/s^2",
        "lateral acceleration of the CG in body axes (positive left)",
    ),
    ch(
        "sideslip",
        "rad",
        "vehicle sideslip angle at the CG, atan(vy/vx)",
    ),
    ch(
        "path_curvature",
        "1/m",
        "curvature of the CG path (positive turning left)",
    ),
    ch(
        "roll",
        "rad",
        "body roll angle (ISO 8855, positive right side down)",
    ),
    ch(
        "pitch",
        "rad",
        "body pitch angle (ISO 8855, positive nose down)",
    ),
    ch(
        "steer_wheel_angle",
        "rad",
        "steering-wheel angle (positive left)",
    ),
    ch("drive_request", "1", "drive request, 0..1"),
    ch("brake_request", "1", "brake request, 0..1"),
    ch(
        "front_share",
        "1",
        "front share of the drive request, 0 = all rear",
    ),
    ch(
        "drag_force",
        "N",
        "aerodynamic drag along body x (negative when moving forward)",
    ),
    ch("downforce", "N", "total aerodynamic downforce"),
    ch(
        "drive_torque_front_axle",
        "N*m",
        "drive torque at the front wheels, both wheels",
    ),
    ch(
        "drive_torque_rear_axle",
        "N*m",
        "drive torque at the rear wheels, both wheels",
    ),
    ch(
        "available_torque_front_axle",
        "N*m",
        "drive torque the front unit could give now",
    ),
    ch(
        "available_torque_rear_axle",
        "N*m",
        "drive torque the rear unit could give now",
    ),
    ch(
        "lateral_offset",
        "m",
        "lateral displacement of the CG from the initial heading line",
    ),
];

/// Per-wheel channel stems; each is recorded as `<stem>_<wheel>`.
const WHEEL: [ChannelInfo; 9] = [
    ch("fz", "N", "vertical tyre load"),
    ch("fx", "N", "longitudinal tyre force in wheel axes"),
    ch("fy", "N", "lateral tyre force in wheel axes"),
    ch(
        "slip_ratio",
        "1",
        "longitudinal slip ratio (positive driving)",
    ),
    ch(
        "slip_angle",
        "rad",
        "tyre slip angle (positive gives leftward force)",
    ),
    ch("wheel_speed", "rad/s", "wheel spin speed"),
    ch(
        "steer_angle",
        "rad",
        "road-wheel steer angle (positive left)",
    ),
    ch("drive_torque", "N*m", "drive torque applied to the wheel"),
    ch("brake_torque", "N*m", "brake torque applied to the wheel"),
];

/// Number of recorded channels (time excluded).
pub const N_CHANNELS: usize = BODY.len() + 4 * WHEEL.len();

/// One sample of every channel.
pub type Sample = [f64; N_CHANNELS];

/// The full channel list, in recording order, with per-wheel names expanded.
pub fn channel_list() -> Vec<(String, &'static str, String)> {
    let mut out: Vec<(String, &'static str, String)> = BODY
        .iter()
        .map(|c| (c.name.to_string(), c.unit, c.description.to_string()))
        .collect();
    for stem in WHEEL {
        for wheel in WHEEL_NAMES {
            out.push((
                format!("{}_{wheel}", stem.name),
                stem.unit,
                format!("{}, {}", stem.description, wheel.replace('_', " ")),
            ));
        }
    }
    out
}

/// Fills one sample. `initial` is (x0, y0, yaw0) of the run, for `lateral_offset`.
pub fn sample(x: &State, c: &Commands, e: &Evaluation, initial: (f64, f64, f64)) -> Sample {
    let mut s = [0.0; N_CHANNELS];
    let (vx, vy) = (x[VX], x[VY]);
    let speed = vx.hypot(vy);
    let curvature = if speed > 1e-3 {
        (vx * e.ay - vy * e.ax) / (speed * speed * speed)
    } else {
        0.0
    };
    let (x0, y0, yaw0) = initial;
    let offset = -(x[X] - x0) * yaw0.sin() + (x[Y] - y0) * yaw0.cos();
    let body = [
        x[X],
        x[Y],
        x[YAW],
        vx,
        vy,
        speed,
        x[YAW_RATE],
        e.ax,
        e.ay,
        vy.atan2(vx.abs().max(1e-9)),
        curvature,
        x[ROLL],
        x[PITCH],
        c.steer_wheel_angle,
        c.drive_request,
        c.brake_request,
        c.front_share,
        e.drag_force,
        e.downforce,
        e.axle_drive_torque[0],
        e.axle_drive_torque[1],
        e.axle_available_torque[0],
        e.axle_available_torque[1],
        offset,
    ];
    s[..BODY.len()].copy_from_slice(&body);
    let mut k = BODY.len();
    for stem in 0..WHEEL.len() {
        for i in 0..4 {
            let w = &e.wheels[i];
            s[k] = match stem {
                0 => w.fz,
                1 => w.fx,
                2 => w.fy,
                3 => w.slip_ratio,
                4 => w.tan_slip_angle.atan(),
                5 => x[WHEEL_SPEED + i],
                6 => w.steer_angle,
                7 => w.drive_torque,
                _ => w.brake_torque,
            };
            k += 1;
        }
    }
    s
}
