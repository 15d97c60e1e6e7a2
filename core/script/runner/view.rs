//! What a controller sees at a tick: [`TickState`], read through the one
//! channel table ([`crate::sim::ChannelTable`]) from the [`Outputs`] of the
//! tick, so that every quantity (speed, sideslip, accelerations, tyre forces)
//! has the one definition the results file uses.

use crate::model::WHEEL_NAMES;
use crate::sim::{ChannelTable, Outputs};

/// What a controller sees at a tick (read-only copy). Angles rad, speeds m/s,
/// accelerations m/s², forces N, wheels in the order FL, FR, RL, RR. Each
/// field equals the recorded channel of the same name (`steer` is
/// `steer_wheel_angle`; wheel arrays are `<name>_<wheel>`).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct TickState {
    /// Simulation time, s.
    pub time: f64,
    /// Position x (earth), m.
    pub x: f64,
    /// Position y (earth), m.
    pub y: f64,
    /// Yaw angle, rad.
    pub yaw: f64,
    /// Longitudinal velocity (body), m/s.
    pub vx: f64,
    /// Lateral velocity (body), m/s.
    pub vy: f64,
    /// Speed, m/s.
    pub speed: f64,
    /// Yaw rate, rad/s.
    pub yaw_rate: f64,
    /// Longitudinal acceleration (body), m/s².
    pub ax: f64,
    /// Lateral acceleration (body), m/s².
    pub ay: f64,
    /// Sideslip angle at the CG, rad (the `sideslip` channel).
    pub sideslip: f64,
    /// Steering-wheel angle applied over the last tick, rad.
    pub steer: f64,
    /// Vertical tyre loads, N.
    pub fz: [f64; 4],
    /// Longitudinal tyre forces, N.
    pub fx: [f64; 4],
    /// Lateral tyre forces, N.
    pub fy: [f64; 4],
    /// Longitudinal slip ratios, 1.
    pub slip_ratio: [f64; 4],
    /// Slip angles, rad.
    pub slip_angle: [f64; 4],
    /// Wheel spin speeds, rad/s.
    pub wheel_speed: [f64; 4],
    /// State of charge of the energy store, 1 (0 without a store).
    pub state_of_charge: f64,
    /// Fuel burnt since the start, kg.
    pub fuel_used: f64,
    /// Engine shaft power, W (the `engine_power` channel).
    pub engine_power: f64,
    /// Electrical power at the motor-generator terminals, W, positive drawn
    /// from the store (the `motor_generator_electrical_power` channel).
    pub electric_power: f64,
    /// Drive torque available at the wheels per axle [front, rear], N·m
    /// (`available_torque_front_axle`, `available_torque_rear_axle`).
    pub available_torque: [f64; 2],
}

/// Reads one quantity of the view.
pub type Reader = fn(&TickState) -> f64;

/// Names accepted by `run_until`'s `steady:`, with the quantity each reads.
pub const STEADY_QUANTITIES: [(&str, Reader); 7] = [
    ("speed", |s| s.speed),
    ("yaw_rate", |s| s.yaw_rate),
    ("ay", |s| s.ay),
    ("lat_accel", |s| s.ay),
    ("ax", |s| s.ax),
    ("sideslip", |s| s.sideslip),
    ("steer", |s| s.steer),
];

impl TickState {
    /// A quantity by name for `steady:` conditions (see [`STEADY_QUANTITIES`]).
    pub fn quantity(&self, name: &str) -> Option<f64> {
        STEADY_QUANTITIES
            .iter()
            .find(|(n, _)| *n == name)
            .map(|(_, read)| read(self))
    }
}

/// Body quantities of the view and the channel each is read from.
const BODY: [&str; 17] = [
    "x",
    "y",
    "yaw",
    "vx",
    "vy",
    "speed",
    "yaw_rate",
    "ax",
    "ay",
    "sideslip",
    "steer_wheel_angle",
    "state_of_charge",
    "fuel_used",
    "engine_power",
    "motor_generator_electrical_power",
    "available_torque_front_axle",
    "available_torque_rear_axle",
];

/// Per-wheel quantities of the view, as channel stems (`<stem>_<wheel>`).
const WHEEL: [&str; 6] = ["fz", "fx", "fy", "slip_ratio", "slip_angle", "wheel_speed"];

/// Where each quantity of the view sits in the channel table, found once by name.
#[derive(Debug, Clone)]
pub struct ViewIndex {
    body: [usize; BODY.len()],
    wheel: [[usize; 4]; WHEEL.len()],
}

impl ViewIndex {
    /// The index over the channel table; `Err` names a channel that is missing.
    pub fn new() -> Result<Self, String> {
        let table = ChannelTable::get();
        let find = |name: &str| {
            table
                .index(name)
                .ok_or_else(|| format!("internal: no channel `{name}` for the controller view"))
        };
        let mut body = [0; BODY.len()];
        for (slot, name) in body.iter_mut().zip(BODY) {
            *slot = find(name)?;
        }
        let mut wheel = [[0; 4]; WHEEL.len()];
        for (slots, stem) in wheel.iter_mut().zip(WHEEL) {
            for (slot, w) in slots.iter_mut().zip(WHEEL_NAMES) {
                *slot = find(&format!("{stem}_{w}"))?;
            }
        }
        Ok(Self { body, wheel })
    }

    /// The view of one tick's outputs.
    pub fn view(&self, o: &Outputs) -> TickState {
        let table = ChannelTable::get();
        let [
            x,
            y,
            yaw,
            vx,
            vy,
            speed,
            yaw_rate,
            ax,
            ay,
            sideslip,
            steer,
            state_of_charge,
            fuel_used,
            engine_power,
            electric_power,
            available_front,
            available_rear,
        ] = self.body.map(|i| table.read(i, o));
        let [fz, fx, fy, slip_ratio, slip_angle, wheel_speed] =
            self.wheel.map(|idx| idx.map(|i| table.read(i, o)));
        TickState {
            time: o.time,
            x,
            y,
            yaw,
            vx,
            vy,
            speed,
            yaw_rate,
            ax,
            ay,
            sideslip,
            steer,
            fz,
            fx,
            fy,
            slip_ratio,
            slip_angle,
            wheel_speed,
            state_of_charge,
            fuel_used,
            engine_power,
            electric_power,
            available_torque: [available_front, available_rear],
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Commands, Pose, straight_running};
    use crate::params::load_vehicle;

    /// Every quantity of the view is the recorded channel of the same name.
    #[test]
    fn every_view_quantity_is_a_channel() {
        let v = load_vehicle("scripts/vehicles/hybrid_crossover.toml".as_ref(), &[]).unwrap();
        let mut x = straight_running(&v, 20.0);
        x[crate::model::VY] = 0.3;
        let mut c = Commands::neutral(&v);
        c.steer_wheel_angle = 0.2;
        let o = Outputs::compute(&v, 1.5, &x, &c, &Pose::of(&x));
        let view = ViewIndex::new().unwrap().view(&o);
        assert_eq!(view.time, 1.5);
        assert_eq!(Some(view.sideslip), o.channel("sideslip"));
        assert_eq!(Some(view.steer), o.channel("steer_wheel_angle"));
        assert_eq!(Some(view.fz[2]), o.channel("fz_rear_left"));
        assert_eq!(
            Some(view.wheel_speed[1]),
            o.channel("wheel_speed_front_right")
        );
        assert_eq!(view.quantity("lat_accel"), Some(view.ay));
        assert_eq!(Some(view.state_of_charge), o.channel("state_of_charge"));
        assert!(view.state_of_charge > 0.0, "the crossover has a store");
        assert_eq!(Some(view.fuel_used), o.channel("fuel_used"));
        assert_eq!(Some(view.engine_power), o.channel("engine_power"));
        assert_eq!(
            Some(view.electric_power),
            o.channel("motor_generator_electrical_power")
        );
        assert_eq!(
            Some(view.available_torque[1]),
            o.channel("available_torque_rear_axle")
        );
        assert_eq!(view.quantity("roll"), None);
    }
}
