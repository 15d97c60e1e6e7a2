//! The commands of a run: open-loop signals of time, the closed-loop drivers
//! and the commands held from the last tick, combined into
//! [`Commands`](crate::model::Commands) at any time.
//!
//! Priority: controller output › driver output › open-loop signal.

use super::view::TickState;
use crate::manoeuvre::{DriverView, PathFollower, Signal, SpeedController};
use crate::model::{Commands, Deploy, PowertrainCommands};
use crate::params::BlendingRule;
use crate::sim::InputSource;

/// Commands computed at a tick and held until the next one (`None` = let the
/// lower-priority source decide).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Held {
    /// Steering-wheel angle, rad.
    pub steer: Option<f64>,
    /// Drive request, 0..1.
    pub drive: Option<f64>,
    /// Brake request, 0..1.
    pub brake: Option<f64>,
    /// Front share of the drive request, 0..1.
    pub front_share: Option<f64>,
    /// Axle drive torques at the wheels [front, rear], N·m.
    pub axle_torque: Option<[f64; 2]>,
    /// Extra drive torque per wheel, N·m.
    pub wheel_torque: [f64; 4],
    /// Extra brake torque per wheel (≥ 0), N·m.
    pub wheel_brake: [f64; 4],
    /// Electric deployment request (power W or wheel torque N·m).
    pub deploy: Option<Deploy>,
    /// Blending of regenerative and friction braking.
    pub blending: Option<BlendingRule>,
    /// Largest electrical power the generators may feed into the store, W (≥ 0).
    pub harvest_limit: Option<f64>,
    /// Whether an axle's unmet drive torque goes to the other axle.
    pub spare_torque_to_other_axle: Option<bool>,
}

impl Held {
    /// `self` over `lower`: the keys `self` sets win.
    pub fn over(self, lower: Held) -> Held {
        Held {
            steer: self.steer.or(lower.steer),
            drive: self.drive.or(lower.drive),
            brake: self.brake.or(lower.brake),
            front_share: self.front_share.or(lower.front_share),
            axle_torque: self.axle_torque.or(lower.axle_torque),
            wheel_torque: self.wheel_torque,
            wheel_brake: self.wheel_brake,
            deploy: self.deploy.or(lower.deploy),
            blending: self.blending.or(lower.blending),
            harvest_limit: self.harvest_limit.or(lower.harvest_limit),
            spare_torque_to_other_axle: self
                .spare_torque_to_other_axle
                .or(lower.spare_torque_to_other_axle),
        }
    }
}

/// Which quantity an open-loop deployment signal requests.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DeployKind {
    /// Electrical power at the terminals, W (positive drawn from the store).
    Power,
    /// Torque at the wheels of the motor-generator's axle, N·m (positive drives).
    Torque,
}

impl DeployKind {
    /// The request for value `value` of this kind.
    pub fn request(self, value: f64) -> Deploy {
        match self {
            DeployKind::Power => Deploy::Power(value),
            DeployKind::Torque => Deploy::Torque(value),
        }
    }
}

/// Open-loop settings of a hybrid powertrain (`None`: the vehicle file's).
#[derive(Debug, Clone, Default)]
pub struct OpenPowertrain {
    /// Electric deployment request and its kind.
    pub deploy: Option<(DeployKind, Signal)>,
    /// Blending rule.
    pub blending: Option<BlendingRule>,
    /// Harvest limit, W (≥ 0).
    pub harvest_limit: Option<Signal>,
    /// Spare torque to the other axle.
    pub spare_torque_to_other_axle: Option<bool>,
}

impl OpenPowertrain {
    /// The commands at time `t`, s.
    fn at(&self, t: f64) -> PowertrainCommands {
        PowertrainCommands {
            deploy: self.deploy.as_ref().map(|(k, s)| k.request(s.value(t))),
            blending: self.blending,
            harvest_limit: self.harvest_limit.as_ref().map(|s| s.value(t)),
            spare_torque_to_other_axle: self.spare_torque_to_other_axle,
        }
    }
}

/// Open-loop signals of time.
#[derive(Debug, Clone)]
pub struct OpenLoop {
    /// Steering-wheel angle, rad.
    pub steer: Signal,
    /// Drive request, 0..1.
    pub drive: Signal,
    /// Brake request, 0..1.
    pub brake: Signal,
    /// Front share; `None` = the vehicle's own split.
    pub front_share: Option<Signal>,
    /// Total drive torque at the wheels, N·m, split by the front share
    /// (replaces `drive` while set).
    pub drive_torque: Option<Signal>,
    /// Hybrid powertrain settings.
    pub powertrain: OpenPowertrain,
}

impl Default for OpenLoop {
    fn default() -> Self {
        Self {
            steer: Signal::Constant(0.0),
            drive: Signal::Constant(0.0),
            brake: Signal::Constant(0.0),
            front_share: None,
            drive_torque: None,
            powertrain: OpenPowertrain::default(),
        }
    }
}

/// Which open-loop input a signal replaces.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OpenInput {
    /// `steer(...)`: stops the path follower.
    Steer,
    /// `drive(...)`: stops the speed hold; ends a `drive_torque`.
    Drive,
    /// `drive_torque(...)`: stops the speed hold.
    DriveTorque,
    /// `brake(...)`: stops the speed hold.
    Brake,
    /// `front_share(...)`.
    FrontShare,
    /// `deploy_power(...)`: replaces a `deploy_torque`.
    DeployPower,
    /// `deploy_torque(...)`: replaces a `deploy_power`.
    DeployTorque,
    /// `harvest_limit(...)`.
    HarvestLimit,
}

/// Everything that decides the commands: signals, drivers, held tick outputs.
///
/// [`revision`](Self::revision) changes whenever the function of time these
/// inputs describe changes (a signal replaced, a driver switched, the held
/// commands changed value), so the integrator may carry on across ticks
/// where it did not.
#[derive(Debug, Clone, Default)]
pub struct Inputs {
    open: OpenLoop,
    speed_hold: Option<(SpeedController, Signal)>,
    follower: Option<PathFollower>,
    /// Largest |cross-track error| since the last follow or reset, m.
    max_cross_track_error: f64,
    driver_out: Held,
    controller_out: Held,
    /// Controller over drivers, as held now.
    held: Held,
    /// The vehicle's own front share, used when nothing sets one.
    default_front_share: f64,
    revision: u64,
}

impl Inputs {
    /// Inputs with the vehicle's front share as default split.
    pub fn with_front_share(mut self, front_share: f64) -> Self {
        self.default_front_share = front_share;
        self.revision += 1;
        self
    }

    /// The revision of the inputs (see the type's documentation).
    pub fn revision(&self) -> u64 {
        self.revision
    }

    /// Replaces one open-loop signal (and stops the driver it overrides).
    pub fn set_open(&mut self, input: OpenInput, signal: Signal) {
        let stops_speed_hold = matches!(
            input,
            OpenInput::Drive | OpenInput::DriveTorque | OpenInput::Brake
        );
        if stops_speed_hold && self.speed_hold.take().is_some() {
            self.open.drive = Signal::Constant(0.0);
            self.open.brake = Signal::Constant(0.0);
        }
        match input {
            OpenInput::Steer => {
                self.follower = None;
                self.open.steer = signal;
            }
            OpenInput::Drive => {
                self.open.drive = signal;
                self.open.drive_torque = None;
            }
            OpenInput::DriveTorque => self.open.drive_torque = Some(signal),
            OpenInput::Brake => self.open.brake = signal,
            OpenInput::FrontShare => self.open.front_share = Some(signal),
            OpenInput::DeployPower => {
                self.open.powertrain.deploy = Some((DeployKind::Power, signal))
            }
            OpenInput::DeployTorque => {
                self.open.powertrain.deploy = Some((DeployKind::Torque, signal))
            }
            OpenInput::HarvestLimit => self.open.powertrain.harvest_limit = Some(signal),
        }
        self.revision += 1;
    }

    /// `release_deploy`: no open-loop deployment request.
    pub fn release_deploy(&mut self) {
        self.open.powertrain.deploy = None;
        self.revision += 1;
    }

    /// `blending(rule)`: the blending rule from now on.
    pub fn set_blending(&mut self, rule: BlendingRule) {
        self.open.powertrain.blending = Some(rule);
        self.revision += 1;
    }

    /// `spare_torque_to_other_axle(on)`: the spare-torque setting from now on.
    pub fn set_spare_torque(&mut self, on: bool) {
        self.open.powertrain.spare_torque_to_other_axle = Some(on);
        self.revision += 1;
    }

    /// `hold_speed`: the speed controller on drive and brake towards `target`
    /// (m/s, read at each tick); a running controller keeps its state.
    pub fn hold_speed(&mut self, target: Signal) {
        match self.speed_hold.as_mut() {
            Some((_, t)) => *t = target,
            None => self.speed_hold = Some((SpeedController::default(), target)),
        }
        self.revision += 1;
    }

    /// `release_speed`: speed controller off, drive, drive torque and brake 0.
    pub fn release_speed(&mut self) {
        self.speed_hold = None;
        self.open.drive = Signal::Constant(0.0);
        self.open.drive_torque = None;
        self.open.brake = Signal::Constant(0.0);
        self.revision += 1;
    }

    /// Starts following a path (replacing any follower); resets the largest
    /// cross-track error.
    pub fn follow(&mut self, follower: PathFollower) {
        self.follower = Some(follower);
        self.max_cross_track_error = 0.0;
        self.revision += 1;
    }

    /// Stops the path follower and holds the steering-wheel angle `angle`, rad.
    pub fn release_steering(&mut self, angle: Signal) {
        self.follower = None;
        self.open.steer = angle;
        self.revision += 1;
    }

    /// The path follower's current cross-track error, m (0 without one).
    pub fn cross_track_error(&self) -> f64 {
        self.follower
            .as_ref()
            .map_or(0.0, PathFollower::cross_track_error)
    }

    /// Largest |cross-track error| since the last follow or reset, m.
    pub fn max_cross_track_error(&self) -> f64 {
        self.max_cross_track_error
    }

    /// Forgets the largest cross-track error.
    pub fn reset_max_cross_track_error(&mut self) {
        self.max_cross_track_error = 0.0;
    }

    /// Runs the drivers on the state `s` at a tick of length `dt`, s;
    /// `wheelbase` m and `steering_ratio` for the path follower.
    pub fn drivers_tick(&mut self, s: &TickState, dt: f64, wheelbase: f64, steering_ratio: f64) {
        let mut out = Held::default();
        if let Some((controller, target)) = self.speed_hold.as_mut() {
            let (drive, brake) = controller.update(target.value(s.time), s.speed, dt);
            out.drive = Some(drive);
            out.brake = Some(brake);
        }
        if let Some(f) = self.follower.as_mut() {
            let view = DriverView {
                x: s.x,
                y: s.y,
                yaw: s.yaw,
                speed: s.speed,
                wheelbase,
                steering_ratio,
            };
            out.steer = Some(f.update(&view, dt));
            self.max_cross_track_error =
                self.max_cross_track_error.max(f.cross_track_error().abs());
        }
        self.driver_out = out;
        self.rehold();
    }

    /// Holds the controller's output of this tick (`Held::default()` for none).
    pub fn hold_controller(&mut self, out: Held) {
        self.controller_out = out;
        self.rehold();
    }

    /// Combines the tick outputs; a change of value is a new revision.
    fn rehold(&mut self) {
        let held = self.controller_out.over(self.driver_out);
        if held != self.held {
            self.held = held;
            self.revision += 1;
        }
    }

    /// The steering-wheel angle in force at time `t`, rad.
    pub fn steer_at(&self, t: f64) -> f64 {
        self.held.steer.unwrap_or_else(|| self.open.steer.value(t))
    }
}

impl InputSource for Inputs {
    fn commands(&self, t: f64) -> Commands {
        let h = &self.held;
        let front_share = h.front_share.unwrap_or_else(|| {
            self.open
                .front_share
                .as_ref()
                .map_or(self.default_front_share, |s| s.value(t))
        });
        // An open-loop drive torque applies unless a tick output sets the drive.
        let open_axle_torque = match (&self.open.drive_torque, h.drive) {
            (Some(signal), None) => {
                let total = signal.value(t);
                let share = front_share.clamp(0.0, 1.0);
                Some([share * total, (1.0 - share) * total])
            }
            _ => None,
        };
        Commands {
            steer_wheel_angle: self.steer_at(t),
            drive_request: h.drive.unwrap_or_else(|| self.open.drive.value(t)),
            brake_request: h.brake.unwrap_or_else(|| self.open.brake.value(t)),
            front_share,
            axle_torque: h.axle_torque.or(open_axle_torque),
            wheel_torque: h.wheel_torque,
            wheel_brake: h.wheel_brake,
            powertrain: held_powertrain(h, self.open.powertrain.at(t)),
        }
    }

    fn revision(&self) -> Option<u64> {
        Some(self.revision)
    }
}

/// The held tick outputs over the open-loop powertrain settings.
fn held_powertrain(h: &Held, open: PowertrainCommands) -> PowertrainCommands {
    PowertrainCommands {
        deploy: h.deploy.or(open.deploy),
        blending: h.blending.or(open.blending),
        harvest_limit: h.harvest_limit.or(open.harvest_limit),
        spare_torque_to_other_axle: h
            .spare_torque_to_other_axle
            .or(open.spare_torque_to_other_axle),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn controller_outputs_override_driver_outputs() {
        let ctl = Held {
            steer: Some(0.1),
            ..Default::default()
        };
        let drv = Held {
            steer: Some(0.5),
            drive: Some(0.3),
            ..Default::default()
        };
        let h = ctl.over(drv);
        assert_eq!(h.steer, Some(0.1));
        assert_eq!(h.drive, Some(0.3));
        assert_eq!(h.brake, None);
    }

    /// The revision moves when a signal is replaced or the held commands
    /// change value, and only then.
    #[test]
    fn revision_moves_only_when_the_inputs_change() {
        let mut inputs = Inputs::default().with_front_share(0.4);
        let r0 = inputs.revision();
        inputs.hold_controller(Held::default());
        assert_eq!(inputs.revision(), r0, "same held commands");
        let steer = Held {
            steer: Some(0.2),
            ..Default::default()
        };
        inputs.hold_controller(steer);
        let r1 = inputs.revision();
        assert!(r1 > r0);
        inputs.hold_controller(steer);
        assert_eq!(inputs.revision(), r1, "same value again");
        inputs.set_open(OpenInput::Brake, Signal::Constant(0.1));
        assert!(inputs.revision() > r1);
        let c = inputs.commands(1.0);
        assert_eq!(c.steer_wheel_angle, 0.2);
        assert_eq!(c.brake_request, 0.1);
        assert_eq!(c.front_share, 0.4);
    }

    /// An open-loop drive torque is split by the front share, and a held
    /// drive request replaces it.
    #[test]
    fn drive_torque_is_split_by_the_front_share() {
        let mut inputs = Inputs::default().with_front_share(0.25);
        inputs.set_open(OpenInput::DriveTorque, Signal::Constant(1000.0));
        assert_eq!(inputs.commands(0.0).axle_torque, Some([250.0, 750.0]));
        inputs.hold_controller(Held {
            drive: Some(0.5),
            ..Default::default()
        });
        let c = inputs.commands(0.0);
        assert_eq!(c.axle_torque, None);
        assert_eq!(c.drive_request, 0.5);
    }

    /// Powertrain commands: an open-loop deployment signal is read at time
    /// t, one kind replaces the other, a controller key wins over the signal
    /// for its tick, and release ends the request.
    #[test]
    fn powertrain_commands_follow_priority() {
        let mut inputs = Inputs::default();
        assert_eq!(
            inputs.commands(0.0).powertrain,
            PowertrainCommands::default()
        );
        inputs.set_open(
            OpenInput::DeployPower,
            Signal::ramp(0.0, 1000.0, None).unwrap(),
        );
        assert_eq!(
            inputs.commands(2.0).powertrain.deploy,
            Some(Deploy::Power(2000.0))
        );
        inputs.set_open(OpenInput::DeployTorque, Signal::Constant(300.0));
        inputs.set_open(OpenInput::HarvestLimit, Signal::Constant(5e3));
        inputs.set_blending(BlendingRule::RegenerationFirst);
        inputs.set_spare_torque(false);
        let p = inputs.commands(2.0).powertrain;
        assert_eq!(p.deploy, Some(Deploy::Torque(300.0)));
        assert_eq!(p.harvest_limit, Some(5e3));
        assert_eq!(p.blending, Some(BlendingRule::RegenerationFirst));
        assert_eq!(p.spare_torque_to_other_axle, Some(false));
        inputs.hold_controller(Held {
            deploy: Some(Deploy::Power(-1e4)),
            blending: Some(BlendingRule::BalanceKept),
            ..Default::default()
        });
        let p = inputs.commands(2.0).powertrain;
        assert_eq!(p.deploy, Some(Deploy::Power(-1e4)));
        assert_eq!(p.blending, Some(BlendingRule::BalanceKept));
        assert_eq!(p.harvest_limit, Some(5e3));
        inputs.hold_controller(Held::default());
        inputs.release_deploy();
        assert_eq!(inputs.commands(2.0).powertrain.deploy, None);
    }
}
