//! Integration of the vehicle model in time with `ode_solvers`, between
//! discrete controller ticks, and the output samples.
//!
//! A [`Simulation`] owns the state, the integrator and the recorded samples.
//! [`Simulation::advance`] integrates up to the next tick with the commands an
//! [`InputSource`] gives (held controller outputs and open-loop signals of
//! time). Samples are taken at exact multiples of the sample period; every
//! output channel is defined once, in [`ChannelTable`], and read from one
//! [`Outputs`] structure per sample.
//!
//! # Stepping (Dopri5, the default)
//!
//! The integration carries its step size and its first-same-as-last
//! derivative across ticks, and does not stop at a tick whose inputs did not
//! change ([`InputSource::revision`]). One `advance(t_end, inputs)`, from the
//! current time t with state x(t):
//!
//! ```text
//! rev := inputs.revision()
//! hold:      if rev is Some and equals the previous call's rev:
//!                keep the step in flight (it may already reach past t) and
//!                the derivative at its end
//!            else:
//!                restart at (t, x(t)): drop what was integrated past t and the
//!                stored derivative, keep the step size; f(t, x(t)) with the new inputs
//! integrate: while the integration has not reached t_end:
//!                one accepted Dopri5 step with open-loop signals evaluated at the
//!                solver's stage times; it may pass t_end only if rev was unchanged
//!                (then the next tick most likely keeps the inputs too), else it is
//!                cut to end exactly at t_end
//!                sample the step
//! sample:    every k/rate in the step, up to t_end:
//!                at the step's end: the solver's own evaluation there
//!                else if the step holds more than 4 samples, the commands are the
//!                same at its 5 nodes and the interpolant matches an exact evaluation
//!                at a check point (INTERPOLATION_CHECK): every channel interpolated
//!                (degree 4) from exact evaluations at the nodes (ends and 3 interior)
//!                else: the model at the dense-output state
//! state:     x(t_end) := the step's end if it ends at t_end, else its dense output
//!            t := t_end
//! ```
//!
//! The caller (the script runner) does, per tick: drivers and controller read
//! x(t) ([`Simulation::outputs_now`]) → held commands → `advance(t + tick)` →
//! `run_until` conditions on x(t + tick) → stop or next tick. A step that
//! passed a tick whose commands then changed is cut back to that tick: the
//! controller saw x(t) from the dense output, which depends only on the inputs
//! before t to the accuracy of the solution.
//!
//! Dop853 and Rk4 stop at every sample time and tick (`stepwise.rs`).
//!
//! A non-finite state derivative or a solver failure stops the run with the
//! time and the offending state named; everything sampled so far is kept.

mod ark;
mod channels;
mod continuous;
mod plant;
mod recorder;
mod settings;
mod stepwise;
#[cfg(test)]
mod test;

pub use channels::{
    CHANNEL_DEFS, ChannelDef, ChannelInfo, ChannelTable, N_CHANNELS, Outputs, Reader, Row,
    channel_list,
};
pub use continuous::{INTERPOLATION_CHECK, MAX_STEP};
pub use recorder::{CHECK_POINT, NODES, interpolation_holds, lagrange_weights};
pub use settings::{SolverKind, SolverSettings};

use std::cell::Cell;
use std::sync::Arc;

use crate::model::{
    Commands, Derived, Evaluation, Pose, Prepared, STATE_NAMES, State, SteerAngles,
};
use crate::params::Vehicle;
use crate::results::{Channel, Provenance, RunRecord, RunStatus};
use continuous::Continuous;
use plant::{Captured, Model};
use recorder::Recorder;

/// Most accepted steps the solver may take within one `advance` call (one
/// controller tick or open-loop segment). A run that needs more is stiff beyond
/// what an explicit method should be asked to do (e.g. an absurd parameter), and
/// stops with a solver failure naming the fastest-changing state instead of
/// running for minutes.
pub const MAX_STEPS_PER_SEGMENT: u32 = 100_000;

/// Whether two times are the same to rounding: within 1e-12 relative (and
/// 1e-12 s absolute), far below any sample period or step. A tick time
/// `k as f64 * 0.01` and a sample time `k as f64 / 100.0` may differ in
/// the last bit; no step is taken across such a gap.
pub(crate) fn same_time(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-12 * (1.0 + a.abs().max(b.abs()))
}

/// What gives the commands at a time; called inside the derivative, so it must
/// be cheap and must not allocate.
pub trait InputSource {
    /// The commands at time `t`, s.
    fn commands(&self, t: f64) -> Commands;

    /// Changes whenever the function of time that `commands` describes changes
    /// (new held commands, new signals). Equal values on consecutive
    /// `Simulation::advance` calls promise the same inputs, so the integrator may
    /// continue without restarting; `None` (the default) means "unknown: restart".
    fn revision(&self) -> Option<u64> {
        None
    }
}

/// Commands held constant.
impl InputSource for Commands {
    fn commands(&self, _t: f64) -> Commands {
        *self
    }

    /// A hash of the bit patterns of every field: equal commands give equal
    /// revisions; different ones differ unless 64-bit hashes collide.
    fn revision(&self) -> Option<u64> {
        Some(commands_hash(self))
    }
}

/// FxHash-style mix of the bit patterns of every command field.
fn commands_hash(c: &Commands) -> u64 {
    const K: u64 = 0x517c_c1b7_2722_0a95;
    let mix = |h: u64, v: f64| (h.rotate_left(5) ^ v.to_bits()).wrapping_mul(K);
    let mut h = 0;
    for v in [
        c.steer_wheel_angle,
        c.drive_request,
        c.brake_request,
        c.front_share,
    ] {
        h = mix(h, v);
    }
    match c.axle_torque {
        Some([front, rear]) => h = mix(mix(mix(h, 1.0), front), rear),
        None => h = mix(h, 0.0),
    }
    for v in c.wheel_torque.iter().chain(&c.wheel_brake) {
        h = mix(h, *v);
    }
    let p = &c.powertrain;
    h = match p.deploy {
        Some(crate::model::Deploy::Power(w)) => mix(mix(h, 1.0), w),
        Some(crate::model::Deploy::Torque(t)) => mix(mix(h, 2.0), t),
        None => mix(h, 0.0),
    };
    h = mix(h, p.blending.map_or(-1.0, |b| b as u8 as f64));
    h = mix(h, p.harvest_limit.map_or(-1.0, |w| w));
    mix(
        h,
        p.spare_torque_to_other_axle
            .map_or(-1.0, |b| f64::from(u8::from(b))),
    )
}

/// Why a run stopped early.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SimError {
    /// A state or its derivative became NaN or infinite.
    #[error("state `{state}` became non-finite at t = {time:.4} s")]
    NonFinite {
        /// Simulation time, s.
        time: f64,
        /// Name of the first non-finite state.
        state: &'static str,
    },
    /// The solver gave up (step-size collapse, too many steps).
    #[error("solver failed at t = {time:.4} s ({message}); fastest-changing state `{state}`")]
    Solver {
        /// Simulation time, s.
        time: f64,
        /// The solver's message.
        message: String,
        /// The state with the largest scaled derivative at that time.
        state: &'static str,
    },
    /// The settings make no sense (checked before integrating).
    #[error("bad simulation settings: {0}")]
    Settings(String),
}

impl SimError {
    /// Simulation time of the failure, s (0 for settings errors).
    pub fn time(&self) -> f64 {
        match self {
            Self::NonFinite { time, .. } | Self::Solver { time, .. } => *time,
            Self::Settings(_) => 0.0,
        }
    }
}

impl crate::error::Classify for SimError {
    /// A run that diverged or that the solver gave up on failed; settings that
    /// make no sense are bad input.
    fn kind(&self) -> crate::error::ErrorKind {
        match self {
            Self::NonFinite { .. } | Self::Solver { .. } => crate::error::ErrorKind::Failed,
            Self::Settings(_) => crate::error::ErrorKind::BadInput,
        }
    }
}

/// A vehicle handed to a [`Simulation`]: a reference (copied once) or a shared `Arc`.
pub trait SharedVehicle {
    /// The vehicle as a shared pointer.
    fn into_shared(self) -> Arc<Vehicle>;
}

impl SharedVehicle for &Vehicle {
    fn into_shared(self) -> Arc<Vehicle> {
        Arc::new(self.clone())
    }
}

impl SharedVehicle for Arc<Vehicle> {
    fn into_shared(self) -> Arc<Vehicle> {
        self
    }
}

/// A running simulation: vehicle, state, time, integrator and the samples
/// recorded so far.
///
/// ```
/// use yawdyn::model::{Commands, straight_running};
/// use yawdyn::params::load_vehicle;
/// use yawdyn::sim::{Simulation, SolverSettings};
///
/// let v = load_vehicle("scripts/vehicles/hybrid_crossover.toml".as_ref(), &[]).unwrap();
/// let mut sim = Simulation::new(&v, straight_running(&v, 20.0), SolverSettings::default(), 100.0)
///     .unwrap();
/// let mut commands = Commands::neutral(&v);
/// commands.steer_wheel_angle = 0.5;
/// for tick in 1..=100 {
///     sim.advance(tick as f64 * 0.01, &commands).unwrap(); // 100 Hz ticks, 1 s
/// }
/// let yaw_rate = sim.channel("yaw_rate").unwrap();
/// assert_eq!(yaw_rate.len(), 101);
/// assert!(yaw_rate[100] > 0.1, "turning left");
/// ```
pub struct Simulation {
    vehicle: Arc<Vehicle>,
    /// The vehicle's constants prepared for the inner loop.
    prepared: Arc<Prepared>,
    /// Steering angles of the last steering command evaluated.
    steer: SteerAngles,
    settings: SolverSettings,
    /// Time the caller advanced to, s, and the state there.
    time: f64,
    state: State,
    sample_rate: f64,
    /// The line `lateral_offset` is measured from: the initial pose.
    reference: Pose,
    /// Interpolate the samples of long steps (see the module docs).
    interpolate_output: bool,
    /// Dopri5's integration state (`None` for the other methods).
    continuous: Option<Box<Continuous>>,
    /// Step size Dop853 proposed at its last stop, s.
    dop853_step: f64,
    recorder: Recorder,
    /// Derivative evaluations made by the solver.
    evaluations: u64,
    /// Model evaluations made only for output samples.
    output_evaluations: u64,
    /// An exact evaluation at (time, state), if one was made.
    exact: Option<Captured>,
    failure: Option<SimError>,
}

impl Simulation {
    /// Starts at t = 0 in `initial` state, sampling at `sample_rate_hz`.
    pub fn new(
        vehicle: impl SharedVehicle,
        initial: State,
        settings: SolverSettings,
        sample_rate_hz: f64,
    ) -> Result<Self, SimError> {
        if !(sample_rate_hz.is_finite() && sample_rate_hz > 0.0 && sample_rate_hz <= 1e5) {
            return Err(SimError::Settings(format!(
                "sample rate must be in (0, 100000] Hz, got {sample_rate_hz}"
            )));
        }
        if !(settings.rtol > 0.0 && settings.atol > 0.0 && settings.fixed_step > 0.0) {
            return Err(SimError::Settings(
                "tolerances and the fixed step must be positive".into(),
            ));
        }
        if let Some(i) = initial.iter().position(|v| !v.is_finite()) {
            return Err(SimError::Settings(format!(
                "initial state `{}` is not finite",
                STATE_NAMES[i].0
            )));
        }
        let vehicle = vehicle.into_shared();
        let prepared = Prepared::new(&vehicle);
        if let Err(name) = prepared.check() {
            return Err(SimError::Settings(format!(
                "the vehicle's {name} gives a non-finite constant"
            )));
        }
        let ark = settings.kind == SolverKind::Ark436;
        let continuous = (settings.kind == SolverKind::Dopri5 || ark).then(|| {
            // Any outputs do for the scratch: it is overwritten before use.
            let scratch = Outputs {
                time: 0.0,
                state: initial,
                commands: Commands::neutral(&vehicle),
                evaluation: Evaluation::default(),
                derived: Derived::default(),
            };
            Box::new(Continuous::new(
                0.0,
                initial,
                settings.rtol,
                settings.atol,
                ark,
                scratch,
            ))
        });
        Ok(Self {
            steer: SteerAngles::new(&vehicle, 0.0),
            prepared: Arc::new(prepared),
            vehicle,
            settings,
            time: 0.0,
            state: initial,
            sample_rate: sample_rate_hz,
            reference: Pose::of(&initial),
            interpolate_output: true,
            continuous,
            dop853_step: 0.0,
            recorder: Recorder::new(sample_rate_hz),
            evaluations: 0,
            output_evaluations: 0,
            exact: None,
            failure: None,
        })
    }

    /// The vehicle being simulated.
    pub fn vehicle(&self) -> &Vehicle {
        &self.vehicle
    }

    /// Current simulation time, s.
    pub fn time(&self) -> f64 {
        self.time
    }

    /// Current state.
    pub fn state(&self) -> &State {
        &self.state
    }

    /// Replaces the current state (e.g. to set initial conditions before the
    /// first advance); the integration restarts from it.
    pub fn set_state(&mut self, state: State) {
        self.state = state;
        self.exact = None;
        if let Some(c) = &mut self.continuous {
            c.restart(self.time, state);
        }
        if self.recorder.times().is_empty() {
            self.reference = Pose::of(&state);
        }
    }

    /// Whether samples inside a step that holds more than 4 of them are
    /// interpolated from exact evaluations at 5 nodes (default true; see the
    /// module docs). `false` evaluates the model at every sample.
    pub fn set_output_interpolation(&mut self, on: bool) {
        self.interpolate_output = on;
    }

    /// Sample period, s.
    pub fn sample_period(&self) -> f64 {
        1.0 / self.sample_rate
    }

    /// Number of derivative evaluations the solver made so far.
    pub fn evaluations(&self) -> u64 {
        self.evaluations
    }

    /// Number of model evaluations made only for output samples so far.
    pub fn output_evaluations(&self) -> u64 {
        self.output_evaluations
    }

    /// The failure that stopped the run, if any.
    pub fn failure(&self) -> Option<&SimError> {
        self.failure.as_ref()
    }

    /// Sample times recorded so far, s.
    pub fn times(&self) -> &[f64] {
        self.recorder.times()
    }

    /// The samples of the channel called `name` so far (one per entry of
    /// [`times`](Self::times)).
    pub fn channel(&self, name: &str) -> Option<&[f64]> {
        ChannelTable::get()
            .index(name)
            .map(|i| self.recorder.channel(i))
    }

    /// The samples of channel `index` (in [`ChannelTable`] order) so far.
    pub fn channel_data(&self, index: usize) -> &[f64] {
        self.recorder.channel(index)
    }

    /// Makes room at once for every sample up to time `t`, s: a hint from a
    /// caller that knows how long the run or phase will go on. Without it the
    /// sample vectors (one per channel) grow as `advance` calls need them, by
    /// doubling, each growth a copy of every channel; with 100 Hz ticks and
    /// 1 kHz output that is about 11 copies of every channel in 10 s. Only memory is reserved: the samples recorded are the same.
    /// A time at or before the samples already recorded does nothing.
    pub fn reserve_samples_until(&mut self, t: f64) {
        self.recorder.reserve_exact_until(t);
    }

    /// Integrates from the current time to `t_end` with the given inputs,
    /// recording every sample time in (current time, t_end] (and t = 0 on the
    /// first call). See the module docs for how ticks are stepped.
    pub fn advance(&mut self, t_end: f64, inputs: &dyn InputSource) -> Result<(), SimError> {
        if let Some(f) = &self.failure {
            return Err(f.clone());
        }
        let first = self.recorder.times().is_empty();
        if !t_end.is_finite() || (t_end <= self.time + 1e-12 && !first) {
            return Ok(());
        }
        let t_end = t_end.max(self.time);
        let result = match self.settings.kind {
            SolverKind::Dopri5 | SolverKind::Ark436 => self.advance_continuous(t_end, inputs),
            SolverKind::Dop853 | SolverKind::Rk4 => self.advance_stepwise(t_end, inputs),
        };
        if let Err(e) = &result {
            self.failure = Some(e.clone());
        }
        result
    }

    /// The model evaluated at the current state with `commands` (the solver's
    /// own evaluation when it made one there with these commands).
    pub fn evaluate_now(&self, commands: &Commands) -> Evaluation {
        match self.exact {
            Some(c)
                if c.commands == *commands
                    && c.state == self.state
                    && same_time(c.t, self.time) =>
            {
                c.evaluation
            }
            _ => {
                let steer = Cell::new(self.steer);
                self.model(&steer).evaluate(&self.state, commands)
            }
        }
    }

    /// The model of this simulation with the steering cache `steer`.
    fn model<'a>(&'a self, steer: &'a Cell<SteerAngles>) -> Model<'a> {
        Model {
            vehicle: &self.vehicle,
            prepared: &self.prepared,
            steer,
        }
    }

    /// Shared handles of the vehicle and its constants, and a steering cache
    /// seeded from the last one, for a model that does not borrow `self`.
    fn model_parts(&self) -> (Arc<Vehicle>, Arc<Prepared>, Cell<SteerAngles>) {
        (
            Arc::clone(&self.vehicle),
            Arc::clone(&self.prepared),
            Cell::new(self.steer),
        )
    }

    /// Every output quantity at the current state with `commands`: what a
    /// controller and `run_until` conditions read, by field or by channel name
    /// ([`Outputs::channel`]).
    pub fn outputs_now(&self, commands: &Commands) -> Outputs {
        let evaluation = self.evaluate_now(commands);
        Outputs::from_evaluation(
            self.time,
            &self.state,
            commands,
            evaluation,
            &self.reference,
        )
    }

    fn check_finite(&self, t: f64, x: &State) -> Result<(), SimError> {
        match x.iter().position(|v| !v.is_finite()) {
            Some(i) => Err(SimError::NonFinite {
                time: t,
                state: STATE_NAMES[i].0,
            }),
            None => Ok(()),
        }
    }

    fn solver_error(&self, message: String, time: f64, inputs: &dyn InputSource) -> SimError {
        let c = inputs.commands(time);
        let steer = Cell::new(self.steer);
        let d = self.model(&steer).evaluate(&self.state, &c).derivative;
        let scale =
            |i: usize| d[i].abs() / (self.settings.atol + self.settings.rtol * self.state[i].abs());
        let worst = (0..crate::model::N_STATES)
            .max_by(|&a, &b| scale(a).total_cmp(&scale(b)))
            .unwrap_or(0);
        SimError::Solver {
            time,
            message,
            state: STATE_NAMES[worst].0,
        }
    }

    /// Turns the recorded samples into a [`RunRecord`] with the given
    /// provenance (the channel vectors move, nothing is copied); the status is
    /// `failed` when the run stopped early.
    pub fn into_record(self, provenance: Provenance) -> RunRecord {
        let status = match &self.failure {
            None => RunStatus::Completed,
            Some(e) => RunStatus::Failed {
                message: e.to_string(),
                time_s: e.time(),
            },
        };
        let (time, data) = self.recorder.into_parts();
        let channels = ChannelTable::get()
            .channels()
            .iter()
            .zip(data)
            .map(|(info, data)| Channel {
                name: info.name.clone(),
                unit: info.unit.to_string(),
                description: info.description.clone(),
                data,
            })
            .collect();
        RunRecord {
            time,
            channels,
            provenance,
            status,
            metrics: Vec::new(),
            criteria: Vec::new(),
        }
    }
}
