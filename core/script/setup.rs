//! What a run declares before its first phase, checked once into a
//! [`RunConfig`].
//!
//! [`Setup`] collects the caller's choices ([`RunOptions`](crate::script::RunOptions):
//! vehicle file, overrides, manoeuvre parameters) and the script's
//! declarations (`vehicle`, `set`, `sample_rate`, `tick_rate`, `solver`,
//! `fixed_step`, `start_speed`). Each declaration is range-checked where it is
//! made. The vehicle is loaded at its first use (`vehicle_info()`, the first
//! phase), after which `vehicle`/`set` are refused; the whole setup is frozen
//! into a [`RunConfig`] at the first phase, after which every declaration is
//! refused. The raw declarations → checked configuration split follows the
//! habit of a command line's raw flags → checked arguments.
//!
//! Knows nothing of the script engine or of the simulation loop.

use std::path::{Component, Path, PathBuf};
use std::sync::Arc;
use std::time::Instant;

pub use super::budget::{Limits, MAX_SIM_TIME_S};
use super::facts::VehicleFacts;
use crate::params::{self, Override, ParamError, Vehicle};
use crate::sim::{MAX_STEPS_PER_SEGMENT, SolverKind, SolverSettings};

/// Default controller tick rate, Hz.
pub const DEFAULT_TICK_RATE_HZ: f64 = 100.0;
/// Default output sample rate, Hz.
pub const DEFAULT_SAMPLE_RATE_HZ: f64 = 100.0;
/// Output sample rates accepted, Hz: (0, this].
pub const MAX_SAMPLE_RATE_HZ: f64 = 100_000.0;
/// Controller tick rates accepted, Hz.
pub const TICK_RATE_RANGE_HZ: (f64, f64) = (1.0, 10_000.0);
/// Smallest `rk4` step accepted, s (1 µs).
pub const MIN_FIXED_STEP_S: f64 = 1e-6;

/// Overrides whose key starts with this prefix are manoeuvre parameters read
/// by the script with `param("name", default)`, not vehicle parameters:
/// `--set manoeuvre.exit_torque=3000`.
pub const MANOEUVRE_PREFIX: &str = "manoeuvre.";

/// The checked configuration of a run, fixed at its first phase.
#[derive(Debug, Clone)]
pub struct RunConfig {
    /// The vehicle, with every override applied.
    pub vehicle: Arc<Vehicle>,
    /// The numbers of the vehicle the drivers and scripts use.
    pub facts: VehicleFacts,
    /// The vehicle file.
    pub vehicle_path: PathBuf,
    /// Every vehicle override in the order applied (script's, then caller's).
    pub overrides: Vec<Override>,
    /// Output sample rate, Hz.
    pub sample_rate_hz: f64,
    /// Controller tick rate, Hz.
    pub tick_rate_hz: f64,
    /// Integrator settings.
    pub solver: SolverSettings,
    /// Initial forward speed, m/s (straight running).
    pub start_speed: f64,
    /// Limits of the run.
    pub limits: Limits,
    /// When the run began: its wall-clock budget counts from here.
    pub started: Instant,
}

impl RunConfig {
    /// A configuration with the defaults of a script that declares nothing
    /// but its vehicle (for runs driven from Rust).
    pub fn new(vehicle: Vehicle, vehicle_path: &Path) -> Self {
        Self {
            facts: VehicleFacts::of(&vehicle),
            vehicle: Arc::new(vehicle),
            vehicle_path: vehicle_path.to_path_buf(),
            overrides: Vec::new(),
            sample_rate_hz: DEFAULT_SAMPLE_RATE_HZ,
            tick_rate_hz: DEFAULT_TICK_RATE_HZ,
            solver: SolverSettings::default(),
            start_speed: 0.0,
            limits: Limits::default(),
            started: Instant::now(),
        }
    }
}

/// Why a declaration was refused.
#[derive(Debug, thiserror::Error)]
pub enum SetupError {
    /// A declaration after the point where it could take effect.
    #[error("{what} must come before {until}")]
    TooLate {
        /// The declaration, e.g. `sample_rate(...)`.
        what: &'static str,
        /// What fixed it, e.g. "the first phase".
        until: &'static str,
    },
    /// A value out of its range.
    #[error("{0}")]
    Invalid(String),
    /// No vehicle was chosen.
    #[error("no vehicle: call vehicle(\"file.toml\") in the script or give one to the run")]
    NoVehicle,
    /// The vehicle file or an override is wrong.
    #[error("bad vehicle parameters")]
    Vehicle(#[source] Arc<ParamError>),
}

/// A manoeuvre parameter given by the caller (`manoeuvre.<name>=value`).
#[derive(Debug, Clone, PartialEq)]
pub struct GivenParameter {
    /// The name after `manoeuvre.`.
    pub name: String,
    /// The value as given.
    pub value: toml::Value,
}

/// The setup of one run while the script declares it.
#[derive(Debug)]
pub struct Setup {
    script_dir: PathBuf,
    caller_vehicle: Option<PathBuf>,
    caller_overrides: Vec<Override>,
    script_vehicle: Option<PathBuf>,
    script_overrides: Vec<Override>,
    given: Vec<GivenParameter>,
    /// Parameters the script read with `param`, with the value it got.
    read: Vec<(String, f64)>,
    sample_rate_hz: f64,
    tick_rate_hz: f64,
    solver: SolverSettings,
    start_speed: f64,
    /// The vehicle once loaded (first use), with its file.
    vehicle: Option<(Arc<Vehicle>, PathBuf)>,
    /// The configuration once fixed (first phase).
    config: Option<Arc<RunConfig>>,
    limits: Limits,
    started: Instant,
}

/// Splits the caller's overrides into manoeuvre parameters and vehicle overrides.
pub fn split_overrides(overrides: &[Override]) -> (Vec<GivenParameter>, Vec<Override>) {
    let (manoeuvre, vehicle): (Vec<&Override>, Vec<&Override>) = overrides
        .iter()
        .partition(|o| o.path.starts_with(MANOEUVRE_PREFIX));
    let given = manoeuvre
        .into_iter()
        .map(|o| GivenParameter {
            name: o.path[MANOEUVRE_PREFIX.len()..].to_string(),
            value: o.value.clone(),
        })
        .collect();
    (given, vehicle.into_iter().cloned().collect())
}

impl Setup {
    /// The defaults, with the caller's vehicle file and overrides
    /// (`manoeuvre.*` keys become manoeuvre parameters). `script` names the
    /// script: its folder resolves the vehicle file the script names.
    pub fn new(script: &Path, caller_vehicle: Option<PathBuf>, overrides: &[Override]) -> Self {
        let (given, caller_overrides) = split_overrides(overrides);
        Self {
            script_dir: script.parent().map(Path::to_path_buf).unwrap_or_default(),
            caller_vehicle,
            caller_overrides,
            script_vehicle: None,
            script_overrides: Vec::new(),
            given,
            read: Vec::new(),
            sample_rate_hz: DEFAULT_SAMPLE_RATE_HZ,
            tick_rate_hz: DEFAULT_TICK_RATE_HZ,
            solver: SolverSettings::default(),
            start_speed: 0.0,
            vehicle: None,
            config: None,
            limits: Limits::default(),
            started: Instant::now(),
        }
    }

    /// The run's limits, and when it began (its wall-clock budget counts
    /// from there).
    pub fn with_limits(mut self, limits: Limits, started: Instant) -> Self {
        self.limits = limits;
        self.started = started;
        self
    }

    /// Error unless the vehicle is still to be loaded.
    fn before_vehicle(&self, what: &'static str) -> Result<(), SetupError> {
        match self.vehicle {
            Some(_) => Err(SetupError::TooLate {
                what,
                until: "the vehicle is used (vehicle_info() or the first phase)",
            }),
            None => Ok(()),
        }
    }

    /// Error once the configuration is fixed.
    fn before_start(&self, what: &'static str) -> Result<(), SetupError> {
        match self.config {
            Some(_) => Err(SetupError::TooLate {
                what,
                until: "the first phase",
            }),
            None => Ok(()),
        }
    }

    /// `vehicle(file)`: the vehicle file, relative to the script's folder
    /// and inside it (no absolute path, no `..`), so that a script reads no
    /// file elsewhere on the machine and cannot probe whether one exists;
    /// a caller's `--vehicle` wins and may be anywhere.
    pub fn choose_vehicle(&mut self, file: &str) -> Result<(), SetupError> {
        self.before_vehicle("vehicle(...)")?;
        let inside = Path::new(file)
            .components()
            .all(|c| matches!(c, Component::Normal(_) | Component::CurDir));
        if file.is_empty() || !inside {
            return Err(SetupError::Invalid(format!(
                "vehicle(\"{file}\"): a script names its vehicle file relative to its own \
                 folder and inside it (no absolute path, no `..`); give a file elsewhere \
                 with --vehicle"
            )));
        }
        self.script_vehicle = Some(self.script_dir.join(file));
        Ok(())
    }

    /// `set(key, value)`: a vehicle override (the caller's are applied after).
    pub fn set(&mut self, key: &str, value: toml::Value) -> Result<(), SetupError> {
        self.before_vehicle("set(...)")?;
        self.script_overrides.push(Override {
            path: key.to_string(),
            value,
        });
        Ok(())
    }

    /// `sample_rate(hz)`.
    pub fn sample_rate(&mut self, hz: f64) -> Result<(), SetupError> {
        self.before_start("sample_rate(...)")?;
        if !(hz > 0.0 && hz <= MAX_SAMPLE_RATE_HZ) {
            return Err(SetupError::Invalid(format!(
                "sample rate must be in (0, {MAX_SAMPLE_RATE_HZ}] Hz, got {hz}"
            )));
        }
        self.sample_rate_hz = hz;
        Ok(())
    }

    /// `tick_rate(hz)`.
    pub fn tick_rate(&mut self, hz: f64) -> Result<(), SetupError> {
        self.before_start("tick_rate(...)")?;
        let (lo, hi) = TICK_RATE_RANGE_HZ;
        if !(lo..=hi).contains(&hz) {
            return Err(SetupError::Invalid(format!(
                "tick rate must be in [{lo}, {hi}] Hz, got {hz}"
            )));
        }
        self.tick_rate_hz = hz;
        Ok(())
    }

    /// `solver(name)` and `solver(name, rtol, atol)`.
    pub fn solver(&mut self, name: &str, tolerances: Option<(f64, f64)>) -> Result<(), SetupError> {
        self.before_start("solver(...)")?;
        let kind = SolverKind::from_name(name).ok_or_else(|| {
            SetupError::Invalid(format!(
                "unknown solver \"{name}\" (dopri5, dop853, rk4 or ark436)"
            ))
        })?;
        if let Some((rtol, atol)) = tolerances {
            if !(rtol > 0.0 && atol > 0.0) {
                return Err(SetupError::Invalid(
                    "solver tolerances must be positive".into(),
                ));
            }
            self.solver.rtol = rtol;
            self.solver.atol = atol;
        }
        self.solver.kind = kind;
        Ok(())
    }

    /// `fixed_step(s)`: the step of `rk4`, at least [`MIN_FIXED_STEP_S`].
    pub fn fixed_step(&mut self, dt: f64) -> Result<(), SetupError> {
        self.before_start("fixed_step(...)")?;
        if dt.is_nan() || dt < MIN_FIXED_STEP_S {
            return Err(SetupError::Invalid(format!(
                "fixed step must be at least {MIN_FIXED_STEP_S} s, got {dt}"
            )));
        }
        self.solver.fixed_step = dt;
        Ok(())
    }

    /// `start_speed(mps)`.
    pub fn start_speed(&mut self, speed: f64) -> Result<(), SetupError> {
        self.before_start("start_speed(...)")?;
        if speed.is_nan() || speed < 0.0 {
            return Err(SetupError::Invalid("start speed must be ≥ 0".into()));
        }
        self.start_speed = speed;
        Ok(())
    }

    /// `param(name, default)`: the caller's value of the manoeuvre parameter,
    /// else `default`; remembered for provenance.
    pub fn param(&mut self, name: &str, default: f64) -> Result<f64, SetupError> {
        let given = self.given.iter().find(|p| p.name == name);
        let value = match given.map(|p| &p.value) {
            Some(toml::Value::Float(x)) => *x,
            Some(toml::Value::Integer(i)) => *i as f64,
            Some(other) => {
                return Err(SetupError::Invalid(format!(
                    "manoeuvre parameter `{name}` must be a number, got {other}"
                )));
            }
            None => default,
        };
        if !value.is_finite() {
            return Err(SetupError::Invalid(format!(
                "manoeuvre parameter `{name}` is not finite"
            )));
        }
        if !self.read.iter().any(|(n, _)| n == name) {
            self.read.push((name.to_string(), value));
        }
        Ok(value)
    }

    /// The manoeuvre parameters the caller gave.
    pub fn given_parameters(&self) -> &[GivenParameter] {
        &self.given
    }

    /// The manoeuvre parameters read so far, with their values.
    pub fn parameters_read(&self) -> &[(String, f64)] {
        &self.read
    }

    /// Every vehicle override in the order applied (script's, then caller's).
    pub fn overrides(&self) -> Vec<Override> {
        self.script_overrides
            .iter()
            .chain(&self.caller_overrides)
            .cloned()
            .collect()
    }

    /// The vehicle, loaded at the first call.
    pub fn vehicle(&mut self) -> Result<Arc<Vehicle>, SetupError> {
        if let Some((v, _)) = &self.vehicle {
            return Ok(v.clone());
        }
        let path = self
            .caller_vehicle
            .as_ref()
            .or(self.script_vehicle.as_ref())
            .ok_or(SetupError::NoVehicle)?
            .clone();
        let vehicle = params::load_vehicle(&path, &self.overrides())
            .map_err(|e| SetupError::Vehicle(Arc::new(e)))?;
        let vehicle = Arc::new(vehicle);
        self.vehicle = Some((vehicle.clone(), path));
        Ok(vehicle)
    }

    /// The checked configuration, fixed at the first call.
    pub fn config(&mut self) -> Result<Arc<RunConfig>, SetupError> {
        if let Some(c) = &self.config {
            return Ok(c.clone());
        }
        self.check_steps_per_tick()?;
        let vehicle = self.vehicle()?;
        let vehicle_path = self.vehicle.as_ref().map(|(_, p)| p.clone());
        let config = Arc::new(RunConfig {
            facts: VehicleFacts::of(&vehicle),
            vehicle,
            vehicle_path: vehicle_path.unwrap_or_default(),
            overrides: self.overrides(),
            sample_rate_hz: self.sample_rate_hz,
            tick_rate_hz: self.tick_rate_hz,
            solver: self.solver,
            start_speed: self.start_speed,
            limits: self.limits,
            started: self.started,
        });
        self.config = Some(config.clone());
        Ok(config)
    }
}

impl Setup {
    /// `rk4` integrates each tick in equal steps and keeps every step of a
    /// tick in memory: at most [`MAX_STEPS_PER_SEGMENT`] per tick.
    fn check_steps_per_tick(&self) -> Result<(), SetupError> {
        if self.solver.kind != SolverKind::Rk4 {
            return Ok(());
        }
        let steps = (1.0 / self.tick_rate_hz / self.solver.fixed_step).ceil();
        if steps > f64::from(MAX_STEPS_PER_SEGMENT) {
            return Err(SetupError::Invalid(format!(
                "rk4 with fixed_step({}) at tick_rate({}) takes {steps} steps per tick; \
                 at most {MAX_STEPS_PER_SEGMENT} (raise the fixed step or the tick rate)",
                self.solver.fixed_step, self.tick_rate_hz
            )));
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn setup() -> Setup {
        let overrides = [
            Override::parse("manoeuvre.radius=40").unwrap(),
            Override::parse("chassis.mass=1900").unwrap(),
        ];
        Setup::new(Path::new("scripts/x.rhai"), None, &overrides)
    }

    /// The caller's `manoeuvre.*` keys become parameters; the rest vehicle overrides.
    #[test]
    fn manoeuvre_keys_are_parameters_and_the_rest_overrides() {
        let mut s = setup();
        assert_eq!(s.given_parameters().len(), 1);
        assert_eq!(s.param("radius", 50.0).unwrap(), 40.0);
        assert_eq!(s.param("lat_accel", 5.0).unwrap(), 5.0);
        assert_eq!(
            s.parameters_read(),
            [("radius".to_string(), 40.0), ("lat_accel".to_string(), 5.0)]
        );
        s.set("drive.front_share", toml::Value::Float(0.3)).unwrap();
        let texts: Vec<String> = s.overrides().iter().map(Override::to_text).collect();
        assert_eq!(texts, ["drive.front_share=0.3", "chassis.mass=1900"]);
    }

    /// Ranges are checked where declared; declarations after the first phase
    /// are refused; the vehicle resolves against the script's folder.
    #[test]
    fn declarations_are_checked_and_frozen() {
        let mut s = setup();
        assert!(s.sample_rate(0.0).is_err());
        assert!(s.tick_rate(20_000.0).is_err());
        assert!(s.solver("euler", None).is_err());
        assert!(matches!(s.config(), Err(SetupError::NoVehicle)));
        s.choose_vehicle("vehicles/hybrid_crossover.toml").unwrap();
        s.sample_rate(200.0).unwrap();
        let c = s.config().unwrap();
        assert_eq!(c.sample_rate_hz, 200.0);
        assert_eq!(c.vehicle.chassis.mass, 1900.0);
        assert_eq!(
            c.vehicle_path,
            Path::new("scripts/vehicles/hybrid_crossover.toml")
        );
        let late = s.sample_rate(100.0).unwrap_err().to_string();
        assert!(late.contains("before the first phase"), "{late}");
        assert!(s.set("chassis.mass", toml::Value::Float(1.0)).is_err());
    }
}
