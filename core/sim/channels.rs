//! The output channels: one table in which each channel is one entry with its
//! name, SI unit, description and the function that reads its value from
//! [`Outputs`], the one structure computed per sample.
//!
//! Everything that reads a channel by name goes through [`ChannelTable`]: the
//! results record, the script controller's view, `run_until` conditions and
//! the script's `evaluate(ch)`. A per-wheel entry is one line here and expands
//! to four channels `<name>_<wheel>` (wheels in [`WHEEL_NAMES`] order).

use std::sync::LazyLock;

use crate::model::{self, Commands, Derived, Evaluation, Pose, State, WHEEL_NAMES};
use crate::model::{
    FUEL_USED, PITCH, ROLL, SLIP_RATIO, STORE_ENERGY, VX, VY, WHEEL_SPEED, X, Y, YAW, YAW_RATE,
};
use crate::params::{FRONT, REAR, Vehicle};

/// Everything one output sample reads: the state, the commands in force, the
/// model evaluated there and the derived quantities.
#[derive(Debug, Clone, Copy)]
pub struct Outputs {
    /// Simulation time, s.
    pub time: f64,
    /// State.
    pub state: State,
    /// Commands in force at `time`.
    pub commands: Commands,
    /// The model evaluated at (`state`, `commands`).
    pub evaluation: Evaluation,
    /// Speed, sideslip, path curvature and lateral offset.
    pub derived: Derived,
}

impl Outputs {
    /// Evaluates the model at (`state`, `commands`) and derives the rest;
    /// lateral offset from the line through `reference`.
    pub fn compute(
        vehicle: &Vehicle,
        time: f64,
        state: &State,
        commands: &Commands,
        reference: &Pose,
    ) -> Self {
        let evaluation = model::evaluate(vehicle, state, commands);
        Self::from_evaluation(time, state, commands, evaluation, reference)
    }

    /// As [`compute`](Self::compute) with the evaluation already at hand.
    pub fn from_evaluation(
        time: f64,
        state: &State,
        commands: &Commands,
        evaluation: Evaluation,
        reference: &Pose,
    ) -> Self {
        Self {
            time,
            state: *state,
            commands: *commands,
            derived: model::derive(state, &evaluation, reference),
            evaluation,
        }
    }

    /// The value of the channel called `name` (e.g. `yaw_rate`, `fz_rear_left`).
    pub fn channel(&self, name: &str) -> Option<f64> {
        let table = ChannelTable::get();
        table.index(name).map(|i| table.read(i, self))
    }
}

/// How a channel's value is read from [`Outputs`].
#[derive(Clone, Copy)]
pub enum Reader {
    /// One value.
    Body(fn(&Outputs) -> f64),
    /// One value per wheel, index 0..4 in [`WHEEL_NAMES`] order.
    Wheel(fn(&Outputs, usize) -> f64),
}

/// One entry of the channel table.
#[derive(Clone, Copy)]
pub struct ChannelDef {
    /// Channel name (the stem for per-wheel channels).
    pub name: &'static str,
    /// SI unit.
    pub unit: &'static str,
    /// One-line description (a per-wheel one gets the wheel appended).
    pub description: &'static str,
    /// How the value is read.
    pub read: Reader,
}

const fn body(
    name: &'static str,
    unit: &'static str,
    description: &'static str,
    read: fn(&Outputs) -> f64,
) -> ChannelDef {
    ChannelDef {
        name,
        unit,
        description,
        read: Reader::Body(read),
    }
}

const fn wheel(
    name: &'static str,
    unit: &'static str,
    description: &'static str,
    read: fn(&Outputs, usize) -> f64,
) -> ChannelDef {
    ChannelDef {
        name,
        unit,
        description,
        read: Reader::Wheel(read),
    }
}

/// Defines [`CHANNEL_DEFS`] from one list of entries, and [`fill_row`] with
/// the same readers called directly (inlined, where the table's function
/// pointers are called one by one).
macro_rules! channel_table {
    ($($kind:ident($name:literal, $unit:literal, $description:literal, $read:expr),)*) => {
        /// Every output channel, in recording order.
        pub const CHANNEL_DEFS: [ChannelDef; [$($name),*].len()] = [
            $($kind($name, $unit, $description, $read),)*
        ];

        /// Every channel's value in `outputs`, in recording order (the
        /// readers of [`CHANNEL_DEFS`], each called directly).
        #[inline]
        // Each reader is the table's closure, called where it is written.
        #[allow(clippy::redundant_closure_call)]
        fn fill_row(outputs: &Outputs, row: &mut Row) {
            let mut k = 0;
            $(channel_table!(@put $kind, $read, outputs, row, k);)*
            debug_assert_eq!(k, N_CHANNELS);
        }
    };
    (@put body, $read:expr, $o:ident, $row:ident, $k:ident) => {
        let read: fn(&Outputs) -> f64 = $read;
        $row[$k] = read($o);
        $k += 1;
    };
    (@put wheel, $read:expr, $o:ident, $row:ident, $k:ident) => {
        let read: fn(&Outputs, usize) -> f64 = $read;
        for i in 0..WHEEL_NAMES.len() {
            $row[$k + i] = read($o, i);
        }
        $k += WHEEL_NAMES.len();
    };
}

#[rustfmt::skip]
channel_table! {
    body("x", "m", "global x position of the CG", |o| o.state[X]),
    body("y", "m", "global y position of the CG", |o| o.state[Y]),
    body("yaw", "rad", "heading angle (ISO 8855, positive anticlockwise from above)", |o| o.state[YAW]),
    body("vx", "m/s", "longitudinal velocity of the CG in body axes", |o| o.state[VX]),
    body("vy", "m/s", "lateral velocity of the CG in body axes (positive left)", |o| o.state[VY]),
    body("speed", "m/s", "magnitude of the CG velocity", |o| o.derived.speed),
    body("yaw_rate", "rad/s", "yaw rate (positive anticlockwise from above)", |o| o.state[YAW_RATE]),
    body("ax", "m/s^2", "longitudinal acceleration of the CG in body axes", |o| o.evaluation.ax),
    body("ay", "m/s^2", "lateral acceleration of the CG in body axes (positive left)", |o| o.evaluation.ay),
    body("sideslip", "rad", "vehicle sideslip angle at the CG, atan(vy/vx)", |o| o.derived.sideslip),
    body("path_curvature", "1/m", "curvature of the CG path (positive turning left)", |o| o.derived.path_curvature),
    body("roll", "rad", "body roll angle (ISO 8855, positive right side down)", |o| o.state[ROLL]),
    body("pitch", "rad", "body pitch angle (ISO 8855, positive nose down)", |o| o.state[PITCH]),
    body("steer_wheel_angle", "rad", "steering-wheel angle (positive left)", |o| o.commands.steer_wheel_angle),
    body("drive_request", "1", "drive request, 0..1", |o| o.commands.drive_request),
    body("brake_request", "1", "brake request, 0..1", |o| o.commands.brake_request),
    body("front_share", "1", "front share of the drive request, 0 = all rear", |o| o.commands.front_share),
    body("drag_force", "N", "aerodynamic drag along body x (negative when moving forward)", |o| o.evaluation.drag_force),
    body("downforce", "N", "total aerodynamic downforce", |o| o.evaluation.downforce),
    body("drive_torque_front_axle", "N*m", "drive torque at the front wheels, both wheels", |o| o.evaluation.axle_drive_torque[0]),
    body("drive_torque_rear_axle", "N*m", "drive torque at the rear wheels, both wheels", |o| o.evaluation.axle_drive_torque[1]),
    body("available_torque_front_axle", "N*m", "drive torque the front unit could give now", |o| o.evaluation.axle_available_torque[0]),
    body("available_torque_rear_axle", "N*m", "drive torque the rear unit could give now", |o| o.evaluation.axle_available_torque[1]),
    body("lateral_offset", "m", "lateral displacement of the CG from the initial heading line", |o| o.derived.lateral_offset),
    body("engine_torque", "N*m", "torque at the engine shaft (engines summed)", |o| o.evaluation.powertrain.engine_torque()),
    body("engine_power", "W", "engine shaft power, torque times shaft speed (engines summed)", |o| o.evaluation.powertrain.engine_power()),
    body("fuel_mass_flow", "kg/s", "fuel mass flow of the engines", |o| o.evaluation.powertrain.total_fuel_mass_flow()),
    body("fuel_used", "kg", "fuel burnt since the start", |o| o.state[FUEL_USED]),
    body("motor_generator_torque", "N*m", "torque at the motor-generator shaft, negative generating (machines summed)", |o| o.evaluation.powertrain.motor_generator_torque()),
    body("motor_generator_mechanical_power", "W", "motor-generator shaft power, negative generating (machines summed)", |o| o.evaluation.powertrain.motor_generator_mechanical_power()),
    body("motor_generator_electrical_power", "W", "electrical power at the motor-generator terminals, positive drawn from the store", |o| o.evaluation.powertrain.store_terminal_power()),
    body("store_energy", "J", "energy in the store", |o| o.state[STORE_ENERGY]),
    body("state_of_charge", "1", "state of charge of the store (0 without a store)", |o| o.evaluation.powertrain.state_of_charge),
    body("regen_brake_torque_front_axle", "N*m", "regenerative brake torque at the front wheels, both wheels", |o| o.evaluation.powertrain.regen_brake_torque[FRONT]),
    body("regen_brake_torque_rear_axle", "N*m", "regenerative brake torque at the rear wheels, both wheels", |o| o.evaluation.powertrain.regen_brake_torque[REAR]),
    body("friction_brake_torque_front_axle", "N*m", "friction brake torque at the front wheels, both wheels", |o| o.evaluation.powertrain.friction_brake_torque[FRONT]),
    body("friction_brake_torque_rear_axle", "N*m", "friction brake torque at the rear wheels, both wheels", |o| o.evaluation.powertrain.friction_brake_torque[REAR]),
    body("braking_front_share", "1", "front share of the braking force, friction and regenerative (the brake bias when nothing brakes)", |o| o.evaluation.powertrain.braking_front_share),
    wheel("fz", "N", "vertical tyre load", |o, i| o.evaluation.wheels[i].fz),
    wheel("fx", "N", "longitudinal tyre force in wheel axes", |o, i| o.evaluation.wheels[i].fx),
    wheel("fy", "N", "lateral tyre force in wheel axes", |o, i| o.evaluation.wheels[i].fy),
    wheel("slip_ratio", "1", "longitudinal slip ratio (positive driving)", |o, i| o.state[SLIP_RATIO + i]),
    wheel("slip_angle", "rad", "tyre slip angle (positive gives leftward force)", |o, i| o.evaluation.wheels[i].tan_slip_angle.atan()),
    wheel("wheel_speed", "rad/s", "wheel spin speed", |o, i| o.state[WHEEL_SPEED + i]),
    wheel("steer_angle", "rad", "road-wheel steer angle (positive left)", |o, i| o.evaluation.wheels[i].steer_angle),
    wheel("drive_torque", "N*m", "drive torque applied to the wheel", |o, i| o.evaluation.wheels[i].drive_torque),
    wheel("brake_torque", "N*m", "brake torque applied to the wheel", |o, i| o.evaluation.wheels[i].brake_torque),
}

/// Number of recorded channels, per-wheel entries counted four times (time excluded).
pub const N_CHANNELS: usize = {
    let mut n = 0;
    let mut i = 0;
    while i < CHANNEL_DEFS.len() {
        n += match CHANNEL_DEFS[i].read {
            Reader::Body(_) => 1,
            Reader::Wheel(_) => WHEEL_NAMES.len(),
        };
        i += 1;
    }
    n
};

/// One value of every channel, in table order.
pub type Row = [f64; N_CHANNELS];

/// One recorded channel of the expanded table.
#[derive(Debug, Clone)]
pub struct ChannelInfo {
    /// Full name, e.g. `yaw_rate` or `fz_front_left`.
    pub name: String,
    /// SI unit.
    pub unit: &'static str,
    /// One-line description.
    pub description: String,
}

/// The expanded channel table: per-wheel entries as four channels each.
pub struct ChannelTable {
    info: Vec<ChannelInfo>,
    /// Entry and wheel of each channel.
    source: Vec<(Reader, usize)>,
}

static TABLE: LazyLock<ChannelTable> = LazyLock::new(ChannelTable::build);

impl ChannelTable {
    /// The table (built once).
    pub fn get() -> &'static ChannelTable {
        &TABLE
    }

    fn build() -> Self {
        let mut info = Vec::with_capacity(N_CHANNELS);
        let mut source = Vec::with_capacity(N_CHANNELS);
        for def in &CHANNEL_DEFS {
            match def.read {
                Reader::Body(_) => {
                    info.push(ChannelInfo {
                        name: def.name.to_string(),
                        unit: def.unit,
                        description: def.description.to_string(),
                    });
                    source.push((def.read, 0));
                }
                Reader::Wheel(_) => {
                    for (i, wheel) in WHEEL_NAMES.iter().enumerate() {
                        info.push(ChannelInfo {
                            name: format!("{}_{wheel}", def.name),
                            unit: def.unit,
                            description: format!(
                                "{}, {}",
                                def.description,
                                wheel.replace('_', " ")
                            ),
                        });
                        source.push((def.read, i));
                    }
                }
            }
        }
        Self { info, source }
    }

    /// Number of channels ([`N_CHANNELS`]).
    pub fn len(&self) -> usize {
        self.info.len()
    }

    /// Always false: there are channels.
    pub fn is_empty(&self) -> bool {
        self.info.is_empty()
    }

    /// Name, unit and description of every channel, in recording order.
    pub fn channels(&self) -> &[ChannelInfo] {
        &self.info
    }

    /// Position of the channel called `name`.
    pub fn index(&self, name: &str) -> Option<usize> {
        self.info.iter().position(|c| c.name == name)
    }

    /// Value of channel `index` in `outputs`.
    #[inline]
    pub fn read(&self, index: usize, outputs: &Outputs) -> f64 {
        match self.source[index] {
            (Reader::Body(f), _) => f(outputs),
            (Reader::Wheel(f), wheel) => f(outputs, wheel),
        }
    }

    /// Every channel's value in `outputs`, in recording order.
    #[inline]
    pub fn row(&self, outputs: &Outputs) -> Row {
        let mut row = [0.0; N_CHANNELS];
        fill_row(outputs, &mut row);
        row
    }

    /// As [`row`](Self::row), written into `row` (no copy of the row).
    #[inline]
    pub fn fill(&self, outputs: &Outputs, row: &mut Row) {
        fill_row(outputs, row);
    }
}

/// The full channel list, in recording order: (name, unit, description).
pub fn channel_list() -> Vec<(String, &'static str, String)> {
    ChannelTable::get()
        .channels()
        .iter()
        .map(|c| (c.name.clone(), c.unit, c.description.clone()))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Names are unique, units are given, and a per-wheel entry reads each
    /// wheel (the table and the values cannot drift apart by position).
    #[test]
    fn table_is_consistent() {
        let t = ChannelTable::get();
        assert_eq!(t.len(), N_CHANNELS);
        for (i, c) in t.channels().iter().enumerate() {
            assert_eq!(t.index(&c.name), Some(i), "{} is unique", c.name);
            assert!(
                !c.unit.is_empty() && !c.description.is_empty(),
                "{}",
                c.name
            );
        }
        let v = crate::params::load_vehicle("scripts/vehicles/hybrid_crossover.toml".as_ref(), &[])
            .unwrap();
        let mut x = model::straight_running(&v, 20.0);
        x[WHEEL_SPEED + 2] = 70.0;
        let o = Outputs::compute(&v, 0.0, &x, &Commands::neutral(&v), &Pose::default());
        let row = t.row(&o);
        for (i, value) in row.iter().enumerate() {
            assert_eq!(value.to_bits(), t.read(i, &o).to_bits());
        }
        assert_eq!(o.channel("wheel_speed_rear_left"), Some(70.0));
        assert_eq!(o.channel("speed"), Some(20.0));
        assert_eq!(o.channel("nope"), None);
    }
}
