//! Stage 4, powertrain and brakes: the torque each drive unit can give or
//! take now (engines under torque, power and fuel-flow limits;
//! motor-generators under their own limits and the energy store's), the
//! split of the drive demand between the axles, electric deployment, the
//! blending of regenerative and friction braking (`brakes.rs`), the
//! differentials, and the power, fuel and energy flows that result.

use super::brakes::{blend_brakes, per_axle};
use super::commands::{Commands, Deploy};
use super::state::{FUEL_USED, STORE_ENERGY, State, WHEEL_SPEED};
use super::store::{StoreLimits, energy_rate, state_of_charge, store_limits};
use super::units::{
    electrical_power, engine_available_torque, fuel_mass_flow, generator_available_torque,
    motor_available_torque, motor_generator, shaft_torque, torque_for_output_power,
    torque_from_input_power,
};
use super::wheels::STANDSTILL_WHEEL_SPEED;
use crate::params::{DifferentialKind, DriveUnit, FRONT, Machine, REAR, UnitKind, Vehicle};

/// Drive and brake torques at the wheels of one evaluation.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct WheelTorques {
    /// Powertrain torque at each wheel after the differential, torque
    /// vectoring included, N·m (negative while a motor-generator brakes it).
    pub drive: [f64; 4],
    /// Friction brake torque at each wheel (magnitude, before the standstill fade), N·m.
    pub brake: [f64; 4],
    /// Net powertrain torque at the wheels per axle [front, rear], N·m (both
    /// wheels, before vectoring; regenerative braking counts negative).
    pub axle_drive: [f64; 2],
    /// Drive torque available at the wheels per axle [front, rear], N·m.
    pub axle_available: [f64; 2],
}

/// Power, fuel and energy quantities of one evaluation. Arrays are per axle
/// [front, rear] and zero where the axle has no unit of that kind. Sums and
/// shares are methods, so that each quantity is defined once.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct PowertrainOutput {
    /// Torque at each unit's shaft, N·m (negative while generating).
    pub unit_torque: [f64; 2],
    /// Speed of each unit's shaft, ratio × mean wheel speed of its axle, rad/s.
    pub unit_speed: [f64; 2],
    /// Electrical power at each motor-generator's terminals, W (positive drawn from the store).
    pub electrical_power: [f64; 2],
    /// Fuel mass flow of each engine with a fuel model, kg/s.
    pub fuel_mass_flow: [f64; 2],
    /// Regenerative brake torque at the wheels per axle, N·m (≥ 0, both wheels).
    pub regen_brake_torque: [f64; 2],
    /// Friction brake torque per axle, N·m (both wheels, per-wheel extras included).
    pub friction_brake_torque: [f64; 2],
    /// Braking torque each axle's generator could take now at the wheels, N·m.
    pub available_regen_torque: [f64; 2],
    /// State of charge of the store, 1 (0 without a store).
    pub state_of_charge: f64,
    /// Rate of change of the stored energy, W (the derivative of `store_energy`).
    pub store_energy_rate: f64,
    /// Kind of the unit on each axle (`None`: no unit).
    pub unit_kind: [Option<UnitKind>; 2],
    /// Front share of the braking force, 1 ([`braking_front_share`](Self::braking_front_share)
    /// of the vehicle evaluated).
    pub braking_front_share: f64,
}

impl PowertrainOutput {
    /// Mechanical power at the shaft of the unit on `axle`, T·ω, W (negative while generating).
    pub fn unit_power(&self, axle: usize) -> f64 {
        self.unit_torque[axle] * self.unit_speed[axle]
    }

    /// Power at the store's terminals (sum over the motor-generators), W (positive discharging).
    pub fn store_terminal_power(&self) -> f64 {
        self.electrical_power[FRONT] + self.electrical_power[REAR]
    }

    /// Fuel mass flow of all engines, kg/s (the derivative of `fuel_used`).
    pub fn total_fuel_mass_flow(&self) -> f64 {
        self.fuel_mass_flow[FRONT] + self.fuel_mass_flow[REAR]
    }

    /// `f(axle)` summed over the axles whose unit is of `kind`.
    #[inline]
    fn sum_of(&self, kind: UnitKind, f: impl Fn(usize) -> f64) -> f64 {
        let mut sum = 0.0;
        for k in [FRONT, REAR] {
            if self.unit_kind[k] == Some(kind) {
                sum += f(k);
            }
        }
        sum
    }

    /// Torque at the engines' shafts, summed, N·m (≥ 0: an engine only drives).
    pub fn engine_torque(&self) -> f64 {
        self.sum_of(UnitKind::Engine, |k| self.unit_torque[k])
    }

    /// Shaft power of the engines, T·ω summed, W.
    pub fn engine_power(&self) -> f64 {
        self.sum_of(UnitKind::Engine, |k| self.unit_power(k))
    }

    /// Torque at the motor-generators' shafts, summed, N·m (negative generating).
    pub fn motor_generator_torque(&self) -> f64 {
        self.sum_of(UnitKind::MotorGenerator, |k| self.unit_torque[k])
    }

    /// Mechanical shaft power of the motor-generators, T·ω summed, W
    /// (negative generating).
    pub fn motor_generator_mechanical_power(&self) -> f64 {
        self.sum_of(UnitKind::MotorGenerator, |k| self.unit_power(k))
    }

    /// Shaft power of the units of `kind` on `v`, summed, W.
    pub fn power_of(&self, v: &Vehicle, kind: UnitKind) -> f64 {
        [FRONT, REAR]
            .into_iter()
            .filter(|&k| {
                v.powertrain.units[k]
                    .as_ref()
                    .is_some_and(|u| u.kind() == kind)
            })
            .map(|k| self.unit_power(k))
            .sum()
    }

    /// Front share of the braking force on `v`: Σ(friction + regeneration)/R
    /// per axle, 1; the brake bias when nothing brakes.
    pub fn braking_front_share(&self, v: &Vehicle) -> f64 {
        let force = [FRONT, REAR].map(|k| {
            (self.friction_brake_torque[k] + self.regen_brake_torque[k]) / v.tyres[k].rolling_radius
        });
        let total = force[FRONT] + force[REAR];
        if total > 0.0 {
            force[FRONT] / total
        } else {
            v.brakes.front_bias
        }
    }
}

/// What each axle's unit can do now, and the store's share for each.
#[derive(Debug, Clone, Copy, Default)]
struct Availability {
    /// Shaft speed of each unit, rad/s.
    speed: [f64; 2],
    /// Drive torque available at the wheels, N·m (≥ 0).
    drive: [f64; 2],
    /// Generating (braking) torque available at the wheels, N·m (≥ 0).
    generate: [f64; 2],
    /// Share of the store's power for each motor-generator, 1.
    share: [f64; 2],
}

/// Mean wheel speed of an axle, rad/s.
#[inline]
fn axle_wheel_speed(x: &State, axle: usize) -> f64 {
    0.5 * (x[WHEEL_SPEED + 2 * axle] + x[WHEEL_SPEED + 2 * axle + 1])
}

/// Drive and generating torque each axle can give now. The store's power
/// (after the harvest limit) is shared by the motor-generators in proportion
/// to their power ratings; generating fades out below
/// [`STANDSTILL_WHEEL_SPEED`] like the friction brakes (a generator cannot
/// hold a car at rest).
#[inline]
fn availability(v: &Vehicle, x: &State, c: &Commands, limits: StoreLimits) -> Availability {
    let units = &v.powertrain.units;
    let rating = |k: usize| {
        units[k]
            .as_ref()
            .filter(|u| motor_generator(u).is_some())
            .map_or(0.0, |u| u.max_power)
    };
    let mut a = Availability::default();
    for (k, unit) in units.iter().enumerate() {
        let Some(u) = unit else { continue };
        let wheel_speed = axle_wheel_speed(x, k);
        let speed = u.ratio * wheel_speed;
        a.speed[k] = speed;
        let to_wheels = u.efficiency * u.ratio;
        match &u.machine {
            Machine::Engine(fuel) => {
                a.drive[k] = to_wheels * engine_available_torque(u, fuel.as_ref(), speed);
            }
            Machine::MotorGenerator(mg) => {
                let harvest = c
                    .powertrain
                    .harvest_limit
                    .map_or(f64::INFINITY, |h| h.max(0.0));
                a.share[k] = u.max_power / (rating(FRONT) + rating(REAR));
                let discharge = a.share[k] * limits.discharge;
                let charge = a.share[k] * limits.charge.min(harvest);
                a.drive[k] = to_wheels * motor_available_torque(u, mg, speed, discharge);
                let fade = (wheel_speed / STANDSTILL_WHEEL_SPEED).clamp(0.0, 1.0);
                a.generate[k] =
                    fade * generator_available_torque(mg, speed, charge) * u.ratio / u.efficiency;
            }
        }
    }
    a
}

/// Wheel torque (both wheels) a deployment request asks of the unit on an
/// axle holding `share` of the store, N·m.
#[inline]
fn deployed_torque(u: &DriveUnit, speed: f64, share: f64, deploy: Deploy) -> f64 {
    let Some(mg) = motor_generator(u) else {
        return 0.0;
    };
    match deploy {
        Deploy::Torque(t) => share * t,
        Deploy::Power(p) if p >= 0.0 => {
            let shaft =
                torque_from_input_power(&mg.motoring_efficiency, speed, share * p, f64::INFINITY);
            shaft * u.efficiency * u.ratio
        }
        Deploy::Power(p) => {
            let shaft = torque_for_output_power(
                &mg.generating_efficiency,
                speed,
                -share * p,
                f64::INFINITY,
            );
            -shaft * u.ratio / u.efficiency
        }
    }
}

/// Drive torque asked of each axle, N·m at the wheels, within its limits
/// [−generating, drive] available.
///
/// Request mode: T = request × (sum of available torques), sent front/rear
/// by the share. Axle-torque mode: the given torques. A deployment request
/// replaces the motor-generators' demand; the drive request then asks each
/// other unit for that fraction of its own available torque. With spare
/// torque on (and no deployment), the positive demand one axle cannot meet
/// goes to the other axle, so a full request delivers all available torque.
#[inline]
fn drive_demand(v: &Vehicle, c: &Commands, a: &Availability) -> [f64; 2] {
    let units = &v.powertrain.units;
    let deploy = c.powertrain.deploy;
    let request = c.drive_request.clamp(0.0, 1.0);
    let mut demand = match (c.axle_torque, deploy) {
        (Some(t), _) => t,
        (None, Some(_)) => [request * a.drive[FRONT], request * a.drive[REAR]],
        (None, None) => {
            let share = c.front_share.clamp(0.0, 1.0);
            let total = request * (a.drive[FRONT] + a.drive[REAR]);
            [share * total, (1.0 - share) * total]
        }
    };
    if let Some(d) = deploy {
        for (k, unit) in units.iter().enumerate() {
            if let Some(u) = unit.as_ref().filter(|u| motor_generator(u).is_some()) {
                demand[k] = deployed_torque(u, a.speed[k], a.share[k], d);
            }
        }
    }
    let mut torque = per_axle(|k| demand[k].clamp(-a.generate[k], a.drive[k]));
    let spare = c
        .powertrain
        .spare_torque_to_other_axle
        .unwrap_or(v.powertrain.spare_torque_to_other_axle);
    if spare && deploy.is_none() {
        let unmet = per_axle(|k| (demand[k] - torque[k]).max(0.0));
        for (k, other) in [(FRONT, REAR), (REAR, FRONT)] {
            torque[other] = (torque[other] + unmet[k]).min(a.drive[other].max(torque[other]));
        }
    }
    torque
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

/// The powertrain and brakes stage: drive and brake torque at every wheel,
/// and the power, fuel and energy flows (see the module documentation and
/// each function for the equations).
#[inline(always)]
pub fn powertrain(v: &Vehicle, x: &State, c: &Commands) -> (WheelTorques, PowertrainOutput) {
    let pt = &v.powertrain;
    let mut out = PowertrainOutput::default();
    let mut limits = StoreLimits::default();
    if let Some(s) = &pt.store {
        out.state_of_charge = state_of_charge(s, x[STORE_ENERGY]);
        limits = store_limits(s, x[STORE_ENERGY]);
    }
    let a = availability(v, x, c, limits);
    let drive_torque = drive_demand(v, c, &a);
    // Regenerative capacity left on each axle after its drive command.
    let capacity = per_axle(|k| (a.generate[k] + drive_torque[k]).max(0.0));
    let rule = c.powertrain.blending.unwrap_or(v.brakes.blending);
    let split = blend_brakes(&v.brakes, rule, c.brake_request, capacity);
    let mut wheels = WheelTorques {
        axle_available: a.drive,
        ..WheelTorques::default()
    };
    for (k, unit) in pt.units.iter().enumerate() {
        let Some(u) = unit else { continue };
        let net = drive_torque[k] - split.regen[k];
        wheels.axle_drive[k] = net;
        let (left, right) =
            differential_split(u, net, x[WHEEL_SPEED + 2 * k], x[WHEEL_SPEED + 2 * k + 1]);
        wheels.drive[2 * k] = left;
        wheels.drive[2 * k + 1] = right;
        unit_flows(u, k, net, a.speed[k], &mut out);
    }
    for i in 0..4 {
        wheels.drive[i] += c.wheel_torque[i];
        wheels.brake[i] = 0.5 * split.friction[i / 2] + c.wheel_brake[i].max(0.0);
    }
    out.regen_brake_torque = split.regen;
    out.available_regen_torque = a.generate;
    out.friction_brake_torque = per_axle(|k| wheels.brake[2 * k] + wheels.brake[2 * k + 1]);
    if let Some(s) = &pt.store {
        out.store_energy_rate = energy_rate(s, out.store_terminal_power());
    }
    out.braking_front_share = out.braking_front_share(v);
    (wheels, out)
}

/// Shaft torque and speed, electrical power and fuel flow of the unit on
/// axle `k` giving net wheel torque `net` (N·m) at shaft speed `speed` (rad/s).
#[inline]
fn unit_flows(u: &DriveUnit, k: usize, net: f64, speed: f64, out: &mut PowertrainOutput) {
    let torque = shaft_torque(u, net);
    out.unit_torque[k] = torque;
    out.unit_speed[k] = speed;
    out.unit_kind[k] = Some(u.kind());
    match &u.machine {
        Machine::Engine(Some(f)) => out.fuel_mass_flow[k] = fuel_mass_flow(f, speed, torque),
        Machine::Engine(None) => {}
        Machine::MotorGenerator(mg) => {
            out.electrical_power[k] = electrical_power(mg, speed, torque)
        }
    }
}

/// Writes the derivatives of fuel used (kg) and stored energy (J) into `d`.
#[inline(always)]
pub fn energy_equations(out: &PowertrainOutput, d: &mut State) {
    d[FUEL_USED] = out.total_fuel_mass_flow();
    d[STORE_ENERGY] = out.store_energy_rate;
}
