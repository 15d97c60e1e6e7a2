//! The state of one script run and the run loop.
//!
//! A [`Session`] collects the setup the script declares, loads the vehicle
//! when first needed, and owns the [`Simulation`] once the first phase
//! starts. Each phase is a sequence of controller ticks: at a tick the
//! drivers (speed hold, path follower) and the script's controller compute
//! commands from the current state; those are held until the next tick while
//! the open-loop signals are evaluated at the solver's own times
//! (zero-order hold of closed-loop outputs). One tick is one
//! [`Simulation::advance`] call.

use std::collections::VecDeque;
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex, MutexGuard, mpsc};

use rhai::{Dynamic, EvalAltResult, FnPtr, Map, NativeCallContext, Position};

use super::{ScriptError, ScriptPosition};
use crate::manoeuvre::{DriverView, PathFollower, Signal, SpeedController};
use crate::model::{
    self, Commands, Evaluation, SLIP_RATIO, State, VX, VY, WHEEL_SPEED, X, Y, YAW, YAW_RATE,
};
use crate::params::{self, Override, Vehicle};
use crate::results::{Criterion, Metric, Provenance, RunRecord, RunStatus};
use crate::sim::{SimError, Simulation, SolverSettings};

/// Default controller tick rate, Hz.
pub const DEFAULT_TICK_RATE_HZ: f64 = 100.0;
/// Default output sample rate, Hz.
pub const DEFAULT_SAMPLE_RATE_HZ: f64 = 100.0;
/// Longest simulated time a script may run, s.
pub const MAX_SIM_TIME_S: f64 = 600.0;
/// `run_until` without `max_time` stops after this long, s.
pub const DEFAULT_MAX_PHASE_S: f64 = 60.0;

pub(crate) type Shared = Arc<Mutex<Session>>;

/// Locks the session; a poisoned lock (a panic elsewhere) still gives the data.
pub(crate) fn lock(s: &Shared) -> MutexGuard<'_, Session> {
    s.lock().unwrap_or_else(|p| p.into_inner())
}

/// A script-level error (filled with the call position by Rhai).
pub(crate) fn script_error(message: impl Into<String>) -> Box<EvalAltResult> {
    Box::new(EvalAltResult::ErrorRuntime(
        Dynamic::from(message.into()),
        Position::NONE,
    ))
}

/// The vehicle and the simulation that shares it.
struct Plant {
    sim: Option<Simulation>,
    vehicle: Arc<Vehicle>,
}

impl Plant {
    fn new(vehicle: Vehicle) -> Self {
        Self {
            sim: None,
            vehicle: Arc::new(vehicle),
        }
    }

    fn start(&mut self, initial: State, solver: SolverSettings, rate: f64) -> Result<(), SimError> {
        self.sim = Some(Simulation::new(
            Arc::clone(&self.vehicle),
            initial,
            solver,
            rate,
        )?);
        Ok(())
    }
}

/// Commands computed at a tick and held until the next one (`None` = let the
/// lower-priority source decide).
#[derive(Debug, Clone, Copy, Default)]
pub(crate) struct Held {
    pub steer: Option<f64>,
    pub drive: Option<f64>,
    pub brake: Option<f64>,
    pub front_share: Option<f64>,
    pub axle_torque: Option<[f64; 2]>,
    pub wheel_torque: [f64; 4],
    pub wheel_brake: [f64; 4],
}

impl Held {
    /// Controller outputs take priority over driver outputs.
    fn over(self, lower: Held) -> Held {
        Held {
            steer: self.steer.or(lower.steer),
            drive: self.drive.or(lower.drive),
            brake: self.brake.or(lower.brake),
            front_share: self.front_share.or(lower.front_share),
            axle_torque: self.axle_torque.or(lower.axle_torque),
            wheel_torque: self.wheel_torque,
            wheel_brake: self.wheel_brake,
        }
    }
}

/// Open-loop signals of time.
#[derive(Debug, Clone)]
pub(crate) struct OpenLoop {
    pub steer: Signal,
    pub drive: Signal,
    pub brake: Signal,
    /// `None` = the vehicle's own split.
    pub front_share: Option<Signal>,
    /// Total drive torque at the wheels, N·m, split by the front share
    /// (replaces `drive` while set).
    pub drive_torque: Option<Signal>,
}

/// The commands at any time: held tick outputs over open-loop signals.
struct Inputs<'a> {
    open: &'a OpenLoop,
    held: Held,
    default_front_share: f64,
}

impl crate::sim::InputSource for Inputs<'_> {
    fn commands(&self, t: f64) -> Commands {
        let h = &self.held;
        let front_share = h.front_share.unwrap_or_else(|| {
            self.open
                .front_share
                .as_ref()
                .map_or(self.default_front_share, |s| s.value(t))
        });
        let open_axle_torque = self.open.drive_torque.as_ref().map(|signal| {
            let total = signal.value(t);
            let share = front_share.clamp(0.0, 1.0);
            [share * total, (1.0 - share) * total]
        });
        Commands {
            steer_wheel_angle: h.steer.unwrap_or_else(|| self.open.steer.value(t)),
            drive_request: h.drive.unwrap_or_else(|| self.open.drive.value(t)),
            brake_request: h.brake.unwrap_or_else(|| self.open.brake.value(t)),
            front_share,
            axle_torque: h.axle_torque.or(if h.drive.is_some() {
                None
            } else {
                open_axle_torque
            }),
            wheel_torque: h.wheel_torque,
            wheel_brake: h.wheel_brake,
            powertrain: crate::model::PowertrainCommands::default(),
        }
    }
}

/// What a controller sees at a tick (read-only copy). Angles rad, speeds m/s,
/// accelerations m/s², forces N, wheels in the order FL, FR, RL, RR.
#[derive(Debug, Clone, Copy, Default)]
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
    /// Sideslip angle at the CG, atan(vy/vx), rad.
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
}

impl TickState {
    fn new(t: f64, x: &State, c: &Commands, e: &Evaluation) -> Self {
        let mut s = TickState {
            time: t,
            x: x[X],
            y: x[Y],
            yaw: x[YAW],
            vx: x[VX],
            vy: x[VY],
            speed: x[VX].hypot(x[VY]),
            yaw_rate: x[YAW_RATE],
            ax: e.ax,
            ay: e.ay,
            sideslip: x[VY].atan2(x[VX].abs().max(1e-9)),
            steer: c.steer_wheel_angle,
            ..Default::default()
        };
        for (i, w) in e.wheels.iter().enumerate() {
            s.fz[i] = w.fz;
            s.fx[i] = w.fx;
            s.fy[i] = w.fy;
            s.slip_ratio[i] = x[SLIP_RATIO + i];
            s.slip_angle[i] = w.tan_slip_angle.atan();
            s.wheel_speed[i] = x[WHEEL_SPEED + i];
        }
        s
    }

    /// A quantity by name for `steady:` conditions.
    fn quantity(&self, name: &str) -> Option<f64> {
        Some(match name {
            "speed" => self.speed,
            "yaw_rate" => self.yaw_rate,
            "ay" | "lat_accel" => self.ay,
            "ax" => self.ax,
            "sideslip" => self.sideslip,
            "steer" => self.steer,
            _ => return None,
        })
    }
}

/// Names accepted by `steady:`.
const STEADY_NAMES: &str = "speed, yaw_rate, ay, ax, sideslip, steer";

/// When a phase ends.
#[derive(Debug, Clone)]
pub(crate) enum Until {
    /// After this many ticks.
    Ticks(u64),
    /// At the first condition met.
    Conditions(Conditions),
}

/// The conditions of `run_until` (all optional; limits in SI).
#[derive(Debug, Clone, Default)]
pub(crate) struct Conditions {
    speed_above: Option<f64>,
    speed_below: Option<f64>,
    lat_accel_above: Option<f64>,
    yaw_rate_above: Option<f64>,
    sideslip_above: Option<f64>,
    time_above: Option<f64>,
    steady: Option<String>,
    steady_window: f64,
    steady_tolerance: f64,
    max_time: f64,
    fail_on_timeout: bool,
}

/// Keys accepted by `run_until`.
const CONDITION_KEYS: [&str; 11] = [
    "speed_above",
    "speed_below",
    "lat_accel_above",
    "yaw_rate_above",
    "sideslip_above",
    "time_above",
    "steady",
    "steady_window",
    "steady_tolerance",
    "max_time",
    "fail_on_timeout",
];

impl Conditions {
    /// Reads a `run_until` map.
    pub(crate) fn from_map(map: &Map) -> Result<Self, Box<EvalAltResult>> {
        let mut c = Conditions {
            steady_window: 1.0,
            steady_tolerance: 0.01,
            max_time: DEFAULT_MAX_PHASE_S,
            ..Default::default()
        };
        for (key, value) in map {
            let num = || -> Result<f64, Box<EvalAltResult>> {
                super::api::as_number(value)
                    .ok_or_else(|| script_error(format!("run_until: `{key}` must be a number")))
            };
            match key.as_str() {
                "speed_above" => c.speed_above = Some(num()?),
                "speed_below" => c.speed_below = Some(num()?),
                "lat_accel_above" => c.lat_accel_above = Some(num()?),
                "yaw_rate_above" => c.yaw_rate_above = Some(num()?),
                "sideslip_above" => c.sideslip_above = Some(num()?),
                "time_above" => c.time_above = Some(num()?),
                "steady_window" => c.steady_window = num()?,
                "steady_tolerance" => c.steady_tolerance = num()?,
                "max_time" => c.max_time = num()?,
                "fail_on_timeout" => {
                    c.fail_on_timeout = value.as_bool().map_err(|_| {
                        script_error("run_until: `fail_on_timeout` must be true or false")
                    })?
                }
                "steady" => {
                    let name = value
                        .clone()
                        .into_string()
                        .map_err(|_| script_error("run_until: `steady` must be a quantity name"))?;
                    if TickState::default().quantity(&name).is_none() {
                        return Err(script_error(format!(
                            "run_until: steady: unknown quantity `{name}` (one of {STEADY_NAMES})"
                        )));
                    }
                    c.steady = Some(name);
                }
                other => {
                    return Err(script_error(format!(
                        "run_until: unknown condition `{other}`{}; conditions are {}",
                        suggest(other, &CONDITION_KEYS),
                        CONDITION_KEYS.join(", ")
                    )));
                }
            }
        }
        if !(c.max_time.is_finite() && c.max_time > 0.0) {
            return Err(script_error(
                "run_until: `max_time` must be a positive number",
            ));
        }
        if !(c.steady_window > 0.0 && c.steady_tolerance > 0.0) {
            return Err(script_error(
                "run_until: `steady_window` and `steady_tolerance` must be positive",
            ));
        }
        Ok(c)
    }

    /// The first condition met, by name.
    fn met(
        &self,
        s: &TickState,
        history: &VecDeque<(f64, f64)>,
        phase_t: f64,
    ) -> Option<&'static str> {
        let above = |v: f64, lim: Option<f64>| lim.is_some_and(|l| v >= l);
        if above(s.speed, self.speed_above) {
            return Some("speed_above");
        }
        if self.speed_below.is_some_and(|l| s.speed <= l) {
            return Some("speed_below");
        }
        if above(s.ay.abs(), self.lat_accel_above) {
            return Some("lat_accel_above");
        }
        if above(s.yaw_rate.abs(), self.yaw_rate_above) {
            return Some("yaw_rate_above");
        }
        if above(s.sideslip.abs(), self.sideslip_above) {
            return Some("sideslip_above");
        }
        if above(s.time, self.time_above) {
            return Some("time_above");
        }
        if self.steady.is_some() && phase_t >= self.steady_window - 1e-9 {
            let (lo, hi, sum) = history.iter().fold(
                (f64::INFINITY, f64::NEG_INFINITY, 0.0),
                |(lo, hi, sum), &(_, v)| (lo.min(v), hi.max(v), sum + v),
            );
            let mean = sum / history.len().max(1) as f64;
            // Relative band around the mean, with a floor of 1e-3 in the quantity's unit.
            let band = (self.steady_tolerance * mean.abs()).max(1e-3);
            if !history.is_empty() && hi - lo <= band {
                return Some("steady");
            }
        }
        None
    }
}

/// " (did you mean `x`?)" for the closest of `names`, or "".
pub(crate) fn suggest(word: &str, names: &[&str]) -> String {
    names
        .iter()
        .map(|n| (strsim::jaro_winkler(word, n), n))
        .filter(|(score, _)| *score > 0.75)
        .max_by(|a, b| a.0.total_cmp(&b.0))
        .map(|(_, n)| format!(" (did you mean `{n}`?)"))
        .unwrap_or_default()
}

/// Why the script was stopped before its end (not bad input).
#[derive(Debug, Clone)]
pub(crate) enum Stop {
    /// The integration failed; the simulation remembers why.
    SimFailed,
    /// A `run_until` with `fail_on_timeout` ran out of time.
    Timeout { message: String, time: f64 },
}

/// Everything one script run holds.
pub(crate) struct Session {
    script_path: PathBuf,
    script_dir: PathBuf,
    script_text: String,
    /// Vehicle file given by the caller (wins over the script's).
    caller_vehicle: Option<PathBuf>,
    caller_overrides: Vec<Override>,
    /// Vehicle file chosen by the script, resolved against its directory.
    script_vehicle: Option<PathBuf>,
    pub script_overrides: Vec<Override>,
    pub sample_rate: f64,
    pub tick_rate: f64,
    pub solver: SolverSettings,
    pub start_speed: f64,
    plant: Option<Plant>,
    vehicle_path: PathBuf,
    pub open: OpenLoop,
    pub speed_hold: Option<(SpeedController, Signal)>,
    /// Largest |cross-track error| of the path follower since the last reset, m.
    pub max_cross_track_error: f64,
    pub follower: Option<PathFollower>,
    pub controller: Option<FnPtr>,
    /// Outputs of the drivers and of the controller at the last tick.
    driver_out: Held,
    controller_out: Held,
    /// Index of the next controller tick.
    tick: u64,
    last_state: TickState,
    pub phases: Vec<(String, f64)>,
    pub remembered: Vec<(String, f64)>,
    /// Manoeuvre parameters given by the caller (`manoeuvre.<name>=value`).
    pub manoeuvre_params: Vec<(String, toml::Value)>,
    /// Parameters the script read with `param`, with the value it got.
    pub params_read: Vec<(String, f64)>,
    pub metrics: Vec<Metric>,
    pub criteria: Vec<Criterion>,
    pub stop: Option<Stop>,
    progress: Option<mpsc::Sender<(f64, f64)>>,
}

impl Session {
    pub(crate) fn new(
        text: &str,
        path: &Path,
        caller_vehicle: Option<PathBuf>,
        caller_overrides: Vec<Override>,
        progress: Option<mpsc::Sender<(f64, f64)>>,
    ) -> Self {
        let zero = || Signal::Constant(0.0);
        let (manoeuvre, caller_overrides): (Vec<Override>, Vec<Override>) = caller_overrides
            .into_iter()
            .partition(|o| o.path.starts_with(super::MANOEUVRE_PREFIX));
        let manoeuvre_params = manoeuvre
            .into_iter()
            .map(|o| (o.path[super::MANOEUVRE_PREFIX.len()..].to_string(), o.value))
            .collect();
        Self {
            manoeuvre_params,
            params_read: Vec::new(),
            script_path: path.to_path_buf(),
            script_dir: path.parent().map(Path::to_path_buf).unwrap_or_default(),
            script_text: text.to_string(),
            caller_vehicle,
            caller_overrides,
            script_vehicle: None,
            script_overrides: Vec::new(),
            sample_rate: DEFAULT_SAMPLE_RATE_HZ,
            tick_rate: DEFAULT_TICK_RATE_HZ,
            solver: SolverSettings::default(),
            start_speed: 0.0,
            plant: None,
            vehicle_path: PathBuf::new(),
            open: OpenLoop {
                steer: zero(),
                drive: zero(),
                brake: zero(),
                front_share: None,
                drive_torque: None,
            },
            speed_hold: None,
            max_cross_track_error: 0.0,
            follower: None,
            controller: None,
            driver_out: Held::default(),
            controller_out: Held::default(),
            tick: 0,
            last_state: TickState::default(),
            phases: Vec::new(),
            remembered: Vec::new(),
            metrics: Vec::new(),
            criteria: Vec::new(),
            stop: None,
            progress,
        }
    }

    /// Error unless the vehicle is still to be chosen.
    pub(crate) fn check_setup(&self, what: &str) -> Result<(), Box<EvalAltResult>> {
        if self.plant.is_some() {
            return Err(script_error(format!(
                "{what} must come before the vehicle is used (vehicle_info() or the first phase)"
            )));
        }
        Ok(())
    }

    /// Error once the simulation has started.
    pub(crate) fn check_not_started(&self, what: &str) -> Result<(), Box<EvalAltResult>> {
        if self.started() {
            return Err(script_error(format!(
                "{what} must come before the first phase"
            )));
        }
        Ok(())
    }

    pub(crate) fn set_script_vehicle(&mut self, file: &str) {
        self.script_vehicle = Some(self.script_dir.join(file));
    }

    fn started(&self) -> bool {
        self.plant.as_ref().is_some_and(|p| p.sim.is_some())
    }

    /// The vehicle, loading it on first use.
    pub(crate) fn vehicle(&mut self) -> Result<Arc<Vehicle>, Box<EvalAltResult>> {
        if self.plant.is_none() {
            let path = match (&self.caller_vehicle, &self.script_vehicle) {
                (Some(p), _) | (None, Some(p)) => p.clone(),
                (None, None) => {
                    return Err(script_error(
                        "no vehicle: call vehicle(\"file.toml\") in the script or give one to the run",
                    ));
                }
            };
            let overrides: Vec<Override> = self
                .script_overrides
                .iter()
                .chain(&self.caller_overrides)
                .cloned()
                .collect();
            let vehicle = params::load_vehicle(&path, &overrides).map_err(|e| {
                Box::new(EvalAltResult::ErrorRuntime(
                    Dynamic::from(VehicleFailure(Arc::new(e))),
                    Position::NONE,
                ))
            })?;
            self.vehicle_path = path;
            self.plant = Some(Plant::new(vehicle));
        }
        match &self.plant {
            Some(p) => Ok(p.vehicle.clone()),
            None => Err(script_error("vehicle not loaded")),
        }
    }

    /// Starts the simulation (straight running at the start speed) if needed.
    fn ensure_started(&mut self) -> Result<(), Box<EvalAltResult>> {
        if self.started() {
            return Ok(());
        }
        let vehicle = self.vehicle()?;
        let initial = model::straight_running(&vehicle, self.start_speed);
        let (solver, rate) = (self.solver, self.sample_rate);
        if let Some(plant) = self.plant.as_mut() {
            plant
                .start(initial, solver, rate)
                .map_err(|e| script_error(e.to_string()))?;
        }
        let c = self.commands_now();
        if let Some(sim) = self.sim() {
            let e = sim.evaluate_now(&c);
            let s = TickState::new(sim.time(), sim.state(), &c, &e);
            self.last_state = s;
        }
        Ok(())
    }

    fn sim(&self) -> Option<&Simulation> {
        self.plant.as_ref().and_then(|p| p.sim.as_ref())
    }

    fn default_front_share(&self) -> f64 {
        self.plant
            .as_ref()
            .map_or(0.0, |p| p.vehicle.powertrain.front_share)
    }

    fn inputs(&self) -> Inputs<'_> {
        Inputs {
            open: &self.open,
            held: self.controller_out.over(self.driver_out),
            default_front_share: self.default_front_share(),
        }
    }

    /// The commands in force at the current time.
    pub(crate) fn commands_now(&self) -> Commands {
        use crate::sim::InputSource;
        self.inputs().commands(self.time())
    }

    /// Current simulation time, s (0 before the first phase).
    pub(crate) fn time(&self) -> f64 {
        self.sim().map_or(0.0, |s| s.time())
    }

    /// The state at the current time (starting the simulation if needed).
    pub(crate) fn state_now(&mut self) -> Result<TickState, Box<EvalAltResult>> {
        self.ensure_started()?;
        Ok(self.last_state)
    }

    fn tick_period(&self) -> f64 {
        1.0 / self.tick_rate
    }

    /// Runs the drivers at the current tick; returns the state they saw.
    fn drivers_tick(&mut self) -> TickState {
        let dt = self.tick_period();
        let s = self.last_state;
        let mut out = Held::default();
        if let Some((controller, target)) = self.speed_hold.as_mut() {
            let (drive, brake) = controller.update(target.value(s.time), s.speed, dt);
            out.drive = Some(drive);
            out.brake = Some(brake);
        }
        if let (Some(f), Some(p)) = (self.follower.as_mut(), self.plant.as_ref()) {
            let view = DriverView {
                x: s.x,
                y: s.y,
                yaw: s.yaw,
                speed: s.speed,
                wheelbase: p.vehicle.chassis.wheelbase,
                steering_ratio: p.vehicle.steering.ratio,
            };
            out.steer = Some(f.update(&view, dt));
            self.max_cross_track_error =
                self.max_cross_track_error.max(f.cross_track_error().abs());
        }
        self.driver_out = out;
        s
    }

    /// Integrates one tick; records the state at its end.
    fn advance_tick(&mut self) -> Result<(), Box<EvalAltResult>> {
        let t_next = (self.tick + 1) as f64 / self.tick_rate;
        if t_next > MAX_SIM_TIME_S + 1e-9 {
            return Err(script_error(format!(
                "simulation time limit of {MAX_SIM_TIME_S} s exceeded"
            )));
        }
        let default_front_share = self.default_front_share();
        let inputs = Inputs {
            open: &self.open,
            held: self.controller_out.over(self.driver_out),
            default_front_share,
        };
        let c_end;
        let result = {
            let Some(sim) = self.plant.as_mut().and_then(|p| p.sim.as_mut()) else {
                return Err(script_error("simulation not started"));
            };
            let r = sim.advance(t_next, &inputs);
            use crate::sim::InputSource;
            c_end = inputs.commands(t_next);
            r.map(|()| {
                let e = sim.evaluate_now(&c_end);
                TickState::new(sim.time(), sim.state(), &c_end, &e)
            })
        };
        match result {
            Ok(s) => {
                self.tick += 1;
                self.last_state = s;
                Ok(())
            }
            Err(_) => {
                self.stop = Some(Stop::SimFailed);
                Err(terminated())
            }
        }
    }

    /// Stores the controller's returned commands.
    fn apply_controller(&mut self, out: Dynamic) -> Result<(), Box<EvalAltResult>> {
        self.controller_out = super::api::controller_output(out)?;
        Ok(())
    }

    /// Stores a named value (shown in provenance, read back with `recall`).
    pub(crate) fn remember(&mut self, name: &str, value: f64) {
        self.remembered.push((name.to_string(), value));
    }

    fn report_progress(&self, end: f64) {
        if let Some(tx) = &self.progress {
            // A closed receiver only means nobody listens any more.
            let _ = tx.send((self.time(), end));
        }
    }

    /// Builds the record (consumes the simulation).
    pub(crate) fn take_record(&mut self) -> Option<RunRecord> {
        let provenance = self.provenance();
        let plant = self.plant.as_mut()?;
        let vehicle_toml = plant.vehicle.to_toml();
        let sim = plant.sim.take()?;
        let mut record = sim.into_record(Provenance {
            vehicle_toml,
            ..provenance
        });
        if let Some(Stop::Timeout { message, time }) = &self.stop {
            record.status = RunStatus::Failed {
                message: message.clone(),
                time_s: *time,
            };
        }
        Some(record)
    }

    fn provenance(&self) -> Provenance {
        let overrides = self
            .script_overrides
            .iter()
            .chain(&self.caller_overrides)
            .map(Override::to_text)
            .collect();
        let mut extra: Vec<(String, String)> = self
            .phases
            .iter()
            .map(|(name, t)| (format!("phase.{name}"), format!("{t}")))
            .collect();
        extra.extend(
            self.remembered
                .iter()
                .map(|(name, v)| (format!("value.{name}"), format!("{v}"))),
        );
        extra.push(("start_speed".into(), format!("{}", self.start_speed)));
        extra.extend(
            self.params_read
                .iter()
                .map(|(name, v)| (format!("param.{name}"), format!("{v}"))),
        );
        Provenance {
            yawdyn_version: super::version_text(),
            created_utc: super::now_utc(),
            script_path: self.script_path.display().to_string(),
            script_text: self.script_text.clone(),
            vehicle_path: self.vehicle_path.display().to_string(),
            vehicle_toml: String::new(),
            overrides,
            solver: self.solver.kind.name().to_string(),
            rtol: self.solver.rtol,
            atol: self.solver.atol,
            fixed_step_s: if self.solver.kind == crate::sim::SolverKind::Rk4 {
                self.solver.fixed_step
            } else {
                0.0
            },
            sample_rate_hz: self.sample_rate,
            tick_rate_hz: self.tick_rate,
            extra,
        }
    }
}

/// A vehicle-file error travelling through Rhai as an error value.
#[derive(Debug, Clone)]
pub(crate) struct VehicleFailure(pub Arc<params::ParamError>);

/// The error that unwinds the script after the run was stopped (not bad input).
fn terminated() -> Box<EvalAltResult> {
    Box::new(EvalAltResult::ErrorTerminated(
        Dynamic::from("run stopped"),
        Position::NONE,
    ))
}

/// Runs one phase: ticks until `until` says stop. Returns the name of the
/// condition met (`"time"` for fixed durations).
pub(crate) fn run_phase(
    session: &Shared,
    ctx: &NativeCallContext,
    until: Until,
) -> Result<String, Box<EvalAltResult>> {
    let (start_tick, rate) = {
        let mut s = lock(session);
        s.ensure_started()?;
        (s.tick, s.tick_rate)
    };
    let start_t = start_tick as f64 / rate;
    let planned_end = match &until {
        Until::Ticks(n) => (start_tick + n) as f64 / rate,
        Until::Conditions(c) => start_t + c.max_time,
    };
    let mut history: VecDeque<(f64, f64)> = VecDeque::new();
    loop {
        // End of phase?
        {
            let s = lock(session);
            let phase_t = (s.tick - start_tick) as f64 / rate;
            match &until {
                Until::Ticks(n) => {
                    if s.tick >= start_tick + n {
                        return Ok("time".into());
                    }
                }
                Until::Conditions(c) => {
                    if let Some(name) = c.met(&s.last_state, &history, phase_t) {
                        return Ok(name.into());
                    }
                    if phase_t >= c.max_time - 1e-9 {
                        if c.fail_on_timeout {
                            drop(s);
                            let mut s = lock(session);
                            let time = s.time();
                            s.stop = Some(Stop::Timeout {
                                message: format!(
                                    "run_until: no condition met within max_time = {} s",
                                    c.max_time
                                ),
                                time,
                            });
                            return Err(terminated());
                        }
                        return Ok("max_time".into());
                    }
                }
            }
        }
        let (tick_state, controller) = {
            let mut s = lock(session);
            let st = s.drivers_tick();
            (st, s.controller.clone())
        };
        if let Some(f) = controller {
            let out: Dynamic = f.call_within_context(ctx, (tick_state,))?;
            lock(session).apply_controller(out)?;
        }
        let mut s = lock(session);
        s.advance_tick()?;
        s.report_progress(planned_end);
        if let Until::Conditions(c) = &until {
            if let Some(name) = &c.steady {
                let st = s.last_state;
                if let Some(v) = st.quantity(name) {
                    history.push_back((st.time, v));
                }
                while history
                    .front()
                    .is_some_and(|(t, _)| *t < st.time - c.steady_window - 1e-9)
                {
                    history.pop_front();
                }
            }
        }
    }
}

/// Runs a script to its end and builds the record.
pub(crate) fn execute(session: Shared, text: &str, path: &Path) -> Result<RunRecord, ScriptError> {
    let engine = super::api::engine(session.clone());
    let ast = engine.compile(text).map_err(|e| {
        let pos = e.1;
        ScriptError::Syntax {
            at: position(path, pos),
            message: e.0.to_string(),
        }
    })?;
    let outcome = engine.run_ast(&ast);
    if let Err(err) = outcome {
        if lock(&session).stop.is_none() {
            return Err(runtime_error(path, *err, &engine));
        }
    }
    let (mut record, stopped) = {
        let mut s = lock(&session);
        let stopped = s.stop.is_some();
        match s.take_record() {
            Some(r) => (r, stopped),
            None => {
                return Err(ScriptError::Runtime {
                    at: position(path, Position::NONE),
                    message: "the script ran no phase (call run_for or run_until)".into(),
                });
            }
        }
    };
    if !stopped {
        let has_evaluate = ast
            .iter_functions()
            .any(|f| f.name == "evaluate" && f.params.len() == 1);
        if has_evaluate {
            let channels = super::evaluate::channel_map(&record);
            let mut scope = rhai::Scope::new();
            let options = rhai::CallFnOptions::new().eval_ast(false);
            let result = engine.call_fn_with_options::<Dynamic>(
                options,
                &mut scope,
                &ast,
                "evaluate",
                (channels,),
            );
            if let Err(err) = result {
                return Err(runtime_error(path, *err, &engine));
            }
        }
    }
    let mut s = lock(&session);
    let unread: Vec<&str> = s
        .manoeuvre_params
        .iter()
        .filter(|(name, _)| !s.params_read.iter().any(|(r, _)| r == name))
        .map(|(name, _)| name.as_str())
        .collect();
    if !unread.is_empty() {
        let known: Vec<String> = s
            .params_read
            .iter()
            .map(|(n, _)| format!("`{n}`"))
            .collect();
        return Err(ScriptError::Runtime {
            at: position(path, Position::NONE),
            message: format!(
                "unknown manoeuvre parameter(s) {}; this script reads: {}",
                unread.join(", "),
                if known.is_empty() {
                    "none".to_string()
                } else {
                    known.join(", ")
                }
            ),
        });
    }
    record.metrics = std::mem::take(&mut s.metrics);
    record.criteria = std::mem::take(&mut s.criteria);
    record
        .provenance
        .extra
        .retain(|(k, _)| !k.starts_with("value."));
    record.provenance.extra.extend(
        s.remembered
            .iter()
            .map(|(name, v)| (format!("value.{name}"), format!("{v}"))),
    );
    Ok(record)
}

fn position(path: &Path, pos: Position) -> ScriptPosition {
    ScriptPosition {
        file: path.to_path_buf(),
        line: pos.line().unwrap_or(0),
        column: pos.position().unwrap_or(0),
    }
}

/// Turns a Rhai error into a [`ScriptError`] at the innermost script position.
fn runtime_error(path: &Path, err: EvalAltResult, engine: &rhai::Engine) -> ScriptError {
    let mut err = err;
    let mut calls = Vec::new();
    let mut outer_pos = Position::NONE;
    loop {
        match err {
            EvalAltResult::ErrorInFunctionCall(name, _, inner, pos) => {
                if outer_pos.is_none() {
                    outer_pos = pos;
                }
                calls.push(name);
                err = *inner;
            }
            other => {
                err = other;
                break;
            }
        }
    }
    let mut pos = err.position();
    if pos.is_none() {
        pos = outer_pos;
    }
    if let EvalAltResult::ErrorRuntime(value, _) = &err {
        if let Some(v) = value.clone().try_cast::<VehicleFailure>() {
            let source = Arc::try_unwrap(v.0).unwrap_or_else(|a| clone_param_error(&a));
            return ScriptError::Vehicle { source };
        }
    }
    let mut message = match &err {
        EvalAltResult::ErrorTooManyOperations(_) => format!(
            "operation limit of {} exceeded (an endless loop?); the script was stopped",
            engine.max_operations()
        ),
        EvalAltResult::ErrorRuntime(value, _) => value.to_string(),
        other => {
            let mut text = other.to_string();
            // Rhai appends " (line l, position c)"; the position is given separately.
            if let Some(i) = text.rfind(" (line ") {
                text.truncate(i);
            }
            text
        }
    };
    if !calls.is_empty() {
        message.push_str(&format!(" (in function {})", calls.join(" <- ")));
    }
    ScriptError::Runtime {
        at: position(path, pos),
        message,
    }
}

/// ParamError is not Clone; rebuild it from its parts.
fn clone_param_error(e: &params::ParamError) -> params::ParamError {
    match e {
        params::ParamError::Read { path, source } => params::ParamError::Read {
            path: path.clone(),
            source: std::io::Error::new(source.kind(), source.to_string()),
        },
        params::ParamError::Invalid { path, issues } => params::ParamError::Invalid {
            path: path.clone(),
            issues: issues.clone(),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unknown_run_until_condition_suggests_the_closest() {
        let mut map = Map::new();
        map.insert("speed_abve".into(), Dynamic::from_float(10.0));
        let err = Conditions::from_map(&map).unwrap_err().to_string();
        assert!(err.contains("did you mean `speed_above`"), "{err}");
    }

    #[test]
    fn steady_needs_a_full_window_within_the_band() {
        let mut map = Map::new();
        map.insert("steady".into(), Dynamic::from("yaw_rate"));
        let c = Conditions::from_map(&map).unwrap();
        let s = TickState::default();
        let flat: VecDeque<(f64, f64)> = (0..=100).map(|i| (i as f64 * 0.01, 0.2)).collect();
        assert_eq!(c.met(&s, &flat, 0.5), None, "window not yet full");
        assert_eq!(c.met(&s, &flat, 1.0), Some("steady"));
        let rising: VecDeque<(f64, f64)> = (0..=100)
            .map(|i| (i as f64 * 0.01, 0.2 + 0.001 * i as f64))
            .collect();
        assert_eq!(c.met(&s, &rising, 1.0), None, "10 % change is not steady");
    }

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
}
