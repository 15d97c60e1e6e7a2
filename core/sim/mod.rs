//! Integration of the vehicle model in time with `ode_solvers`, between
//! discrete controller ticks.
//!
//! A [`Simulation`] owns the state and the recorded samples. [`Simulation::advance`]
//! integrates up to a time with the commands given by an [`InputSource`]
//! (zero-order hold for controller outputs is the caller's business: the
//! source is a pure function of time within one call). Samples are taken at
//! exact multiples of the sample period. Dopri5 integrates whole segments and
//! samples from its dense (continuous) output; Dop853 and Rk4 stop at every
//! sample time.
//!
//! A non-finite state derivative or a solver failure stops the run with the
//! time and the offending state named; everything sampled so far is kept.

mod channels;

pub use channels::{ChannelInfo, N_CHANNELS, Sample, channel_list, sample};

use std::cell::Cell;
use std::sync::Arc;

use ode_solvers::continuous_output_model::ContinuousOutputModel;
use ode_solvers::dop_shared::{OutputType, System};
use ode_solvers::{Dop853, Dopri5, Rk4};
use serde::{Deserialize, Serialize};

use crate::model::{Commands, STATE_NAMES, State, X, Y, YAW, evaluate};
use crate::params::Vehicle;
use crate::results::{Channel, Provenance, RunRecord, RunStatus};

/// Most adaptive steps the solver may take within one `advance` call (one
/// controller tick or open-loop segment). A run that needs more is stiff beyond
/// what an explicit method should be asked to do (e.g. an absurd parameter), and
/// stops with a solver failure naming the fastest-changing state instead of
/// running for minutes.
pub const MAX_STEPS_PER_SEGMENT: u32 = 100_000;

/// Integration method.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SolverKind {
    /// Dormand–Prince 5(4), adaptive, dense output (default).
    #[default]
    Dopri5,
    /// Dormand–Prince 8(5,3), adaptive.
    Dop853,
    /// Classical fourth-order Runge–Kutta with a fixed step.
    Rk4,
}

impl SolverKind {
    /// Lower-case name as used in files and scripts.
    pub fn name(self) -> &'static str {
        match self {
            Self::Dopri5 => "dopri5",
            Self::Dop853 => "dop853",
            Self::Rk4 => "rk4",
        }
    }

    /// Parses `dopri5`, `dop853` or `rk4`.
    pub fn from_name(name: &str) -> Option<Self> {
        match name {
            "dopri5" => Some(Self::Dopri5),
            "dop853" => Some(Self::Dop853),
            "rk4" => Some(Self::Rk4),
            _ => None,
        }
    }
}

/// Solver settings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolverSettings {
    /// Method. Default Dopri5.
    pub kind: SolverKind,
    /// Relative tolerance (adaptive methods). Default 1e-6.
    pub rtol: f64,
    /// Absolute tolerance (adaptive methods). Default 1e-6.
    pub atol: f64,
    /// Step of Rk4, s. Default 0.5 ms.
    pub fixed_step: f64,
}

impl Default for SolverSettings {
    fn default() -> Self {
        Self {
            kind: SolverKind::Dopri5,
            rtol: 1e-6,
            atol: 1e-6,
            fixed_step: 5e-4,
        }
    }
}

/// What gives the commands at a time; called inside the derivative, so it must
/// be cheap and must not allocate.
pub trait InputSource {
    /// The commands at time `t`, s.
    fn commands(&self, t: f64) -> Commands;
}

/// Commands held constant.
impl InputSource for Commands {
    fn commands(&self, _t: f64) -> Commands {
        *self
    }
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

/// The ODE right-hand side handed to `ode_solvers`: model, vehicle and inputs.
struct Plant<'a, I: InputSource + ?Sized> {
    vehicle: &'a Vehicle,
    inputs: &'a I,
    /// First non-finite derivative seen: (time, state index).
    bad: &'a Cell<Option<(f64, usize)>>,
}

impl<I: InputSource + ?Sized> System<f64, State> for Plant<'_, I> {
    fn system(&self, t: f64, x: &State, dx: &mut State) {
        let c = self.inputs.commands(t);
        *dx = evaluate(self.vehicle, x, &c).derivative;
        if self.bad.get().is_none() {
            if let Some(i) = dx.iter().chain(x.iter()).position(|v| !v.is_finite()) {
                self.bad.set(Some((t, i % crate::model::N_STATES)));
            }
        }
    }

    fn solout(&mut self, _t: f64, _x: &State, _dx: &State) -> bool {
        self.bad.get().is_some()
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

/// A running simulation: vehicle, state, time and the samples recorded so far.
pub struct Simulation {
    vehicle: Arc<Vehicle>,
    settings: SolverSettings,
    time: f64,
    state: State,
    sample_period: f64,
    sample_rate: f64,
    /// Index of the next sample to record (its time is index × period).
    next_sample: u64,
    /// Step-size hint for the next Dopri5 segment, s.
    step_hint: f64,
    initial_pose: (f64, f64, f64),
    times: Vec<f64>,
    samples: Vec<Sample>,
    evaluations: u64,
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
        Ok(Self {
            vehicle: vehicle.into_shared(),
            settings,
            time: 0.0,
            state: initial,
            sample_period: 1.0 / sample_rate_hz,
            sample_rate: sample_rate_hz,
            next_sample: 0,
            step_hint: 0.0,
            initial_pose: (initial[X], initial[Y], initial[YAW]),
            times: Vec::new(),
            samples: Vec::new(),
            evaluations: 0,
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

    /// Replaces the current state (e.g. to set initial conditions before the first advance).
    pub fn set_state(&mut self, state: State) {
        self.state = state;
        if self.times.is_empty() {
            self.initial_pose = (state[X], state[Y], state[YAW]);
        }
    }

    /// Sample period, s.
    pub fn sample_period(&self) -> f64 {
        self.sample_period
    }

    /// Number of derivative evaluations so far.
    pub fn evaluations(&self) -> u64 {
        self.evaluations
    }

    /// The failure that stopped the run, if any.
    pub fn failure(&self) -> Option<&SimError> {
        self.failure.as_ref()
    }

    /// Sample times recorded so far, s.
    pub fn times(&self) -> &[f64] {
        &self.times
    }

    /// Samples recorded so far (one per entry of [`times`](Self::times)).
    pub fn samples(&self) -> &[Sample] {
        &self.samples
    }

    /// Integrates from the current time to `t_end` with the given inputs,
    /// recording every sample time in (current time, t_end] (and t = 0 on the first call).
    pub fn advance(&mut self, t_end: f64, inputs: &dyn InputSource) -> Result<(), SimError> {
        if let Some(f) = &self.failure {
            return Err(f.clone());
        }
        if self.times.is_empty() && self.next_sample == 0 {
            self.record(0.0, self.state, inputs);
            self.next_sample = 1;
        }
        if !(t_end.is_finite()) || t_end <= self.time + 1e-12 {
            return Ok(());
        }
        let result = match self.settings.kind {
            SolverKind::Dopri5 => self.advance_dense(t_end, inputs),
            SolverKind::Dop853 | SolverKind::Rk4 => self.advance_stepwise(t_end, inputs),
        };
        if let Err(e) = &result {
            self.failure = Some(e.clone());
        }
        result
    }

    /// Time of sample `k`, s: k / rate (divided, not multiplied by the period,
    /// so that e.g. sample 35 at 200 Hz is exactly 0.175).
    fn sample_time(&self, k: u64) -> f64 {
        k as f64 / self.sample_rate
    }

    fn record(&mut self, t: f64, x: State, inputs: &dyn InputSource) {
        let c = inputs.commands(t);
        let e = evaluate(&self.vehicle, &x, &c);
        self.times.push(t);
        self.samples.push(sample(&x, &c, &e, self.initial_pose));
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
        let d = evaluate(&self.vehicle, &self.state, &c).derivative;
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

    /// Dopri5 over the whole segment, sampling from the continuous output model.
    fn advance_dense(&mut self, t_end: f64, inputs: &dyn InputSource) -> Result<(), SimError> {
        let flag = Cell::new(None);
        let plant = Plant {
            vehicle: &self.vehicle,
            inputs,
            bad: &flag,
        };
        let span = t_end - self.time;
        let h0 = if self.step_hint > 0.0 {
            self.step_hint.min(span)
        } else {
            0.0
        };
        let mut solver = Dopri5::from_param(
            plant,
            self.time,
            t_end,
            span,
            self.state,
            self.settings.rtol,
            self.settings.atol,
            0.9,
            0.04,
            0.2,
            10.0,
            span,
            h0,
            MAX_STEPS_PER_SEGMENT,
            u32::MAX,
            OutputType::Continuous,
        );
        let mut dense = ContinuousOutputModel::default();
        let outcome = solver.integrate_with_continuous_output_model(&mut dense);
        let (bad, stats) = (flag.get(), outcome.as_ref().ok().copied());
        if let Some(s) = stats {
            self.evaluations += u64::from(s.num_eval);
            if s.accepted_steps > 0 {
                self.step_hint = span / f64::from(s.accepted_steps);
            }
        }
        let last = solver.y_out().last().copied();
        let last_t = solver.x_out().last().copied().unwrap_or(self.time);
        drop(solver);
        // Record every sample the solver covered.
        let covered_end = if bad.is_some() || outcome.is_err() {
            last_t
        } else {
            t_end
        };
        while self.sample_time(self.next_sample) <= covered_end + 1e-9 * self.sample_period {
            let ts = self.sample_time(self.next_sample);
            let x = if (ts - t_end).abs() <= 1e-9 * self.sample_period {
                last.unwrap_or(self.state)
            } else {
                match dense.evaluate(ts) {
                    Some(x) => x,
                    None => break,
                }
            };
            if x.iter().any(|v| !v.is_finite()) {
                break;
            }
            self.record(ts, x, inputs);
            self.next_sample += 1;
        }
        if let Some((time, i)) = bad {
            return Err(SimError::NonFinite {
                time,
                state: STATE_NAMES[i].0,
            });
        }
        if let Err(e) = outcome {
            return Err(self.solver_error(e.to_string(), last_t, inputs));
        }
        let x_end = last.unwrap_or(self.state);
        self.check_finite(t_end, &x_end)?;
        self.state = x_end;
        self.time = t_end;
        Ok(())
    }

    /// Dop853 or Rk4, stopping at every sample time in the segment.
    fn advance_stepwise(&mut self, t_end: f64, inputs: &dyn InputSource) -> Result<(), SimError> {
        while self.time < t_end - 1e-12 {
            let next_sample_t = self.sample_time(self.next_sample);
            let stop = next_sample_t.min(t_end);
            let stop = if stop <= self.time + 1e-12 {
                t_end
            } else {
                stop
            };
            let flag = Cell::new(None);
            let plant = Plant {
                vehicle: &self.vehicle,
                inputs,
                bad: &flag,
            };
            let span = stop - self.time;
            let (outcome, last) = match self.settings.kind {
                SolverKind::Rk4 => {
                    let n = (span / self.settings.fixed_step).ceil().max(1.0);
                    let mut s = Rk4::new(plant, self.time, self.state, stop, span / n);
                    let o = s.integrate();
                    (o, s.y_out().last().copied())
                }
                _ => {
                    let mut s = Dop853::from_param(
                        plant,
                        self.time,
                        stop,
                        span,
                        self.state,
                        self.settings.rtol,
                        self.settings.atol,
                        0.9,
                        0.0,
                        0.333,
                        6.0,
                        span,
                        if self.step_hint > 0.0 {
                            self.step_hint.min(span)
                        } else {
                            0.0
                        },
                        MAX_STEPS_PER_SEGMENT,
                        u32::MAX,
                        OutputType::Sparse,
                    );
                    let o = s.integrate();
                    if let Ok(st) = &o {
                        if st.accepted_steps > 0 {
                            self.step_hint = span / f64::from(st.accepted_steps);
                        }
                    }
                    (o, s.y_out().last().copied())
                }
            };
            if let Ok(s) = &outcome {
                self.evaluations += u64::from(s.num_eval);
            }
            if let Some((time, i)) = flag.get() {
                return Err(SimError::NonFinite {
                    time,
                    state: STATE_NAMES[i].0,
                });
            }
            if let Err(e) = outcome {
                return Err(self.solver_error(e.to_string(), self.time, inputs));
            }
            let x = last.unwrap_or(self.state);
            self.check_finite(stop, &x)?;
            self.state = x;
            self.time = stop;
            if (stop - next_sample_t).abs() <= 1e-9 * self.sample_period {
                self.record(next_sample_t, x, inputs);
                self.next_sample += 1;
            }
        }
        self.time = t_end;
        Ok(())
    }

    /// The model evaluated at the current state with `commands`.
    pub fn evaluate_now(&self, commands: &Commands) -> crate::model::Evaluation {
        evaluate(&self.vehicle, &self.state, commands)
    }

    /// Turns the recorded samples into a [`RunRecord`] with the given provenance;
    /// the status is `failed` when the run stopped early.
    pub fn into_record(self, provenance: Provenance) -> RunRecord {
        let list = channel_list();
        let mut channels: Vec<Channel> = list
            .into_iter()
            .map(|(name, unit, description)| Channel {
                name,
                unit: unit.to_string(),
                description,
                data: Vec::with_capacity(self.samples.len()),
            })
            .collect();
        for s in &self.samples {
            for (c, v) in channels.iter_mut().zip(s.iter()) {
                c.data.push(*v);
            }
        }
        let status = match &self.failure {
            None => RunStatus::Completed,
            Some(e) => RunStatus::Failed {
                message: e.to_string(),
                time_s: e.time(),
            },
        };
        RunRecord {
            time: self.times,
            channels,
            provenance,
            status,
            metrics: Vec::new(),
            criteria: Vec::new(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{VX, YAW_RATE, straight_running};
    use crate::params::load_vehicle;

    fn crossover() -> Vehicle {
        load_vehicle("scripts/vehicles/hybrid_crossover.toml".as_ref(), &[]).unwrap()
    }

    fn turning(v: &Vehicle) -> Commands {
        let mut c = Commands::neutral(v);
        c.steer_wheel_angle = 0.5;
        c.drive_request = 0.2;
        c
    }

    /// The three integrators solve the same equations: Dop853 and Rk4 agree
    /// with Dopri5 to well within the tolerances used (a numerical cross-check).
    #[test]
    fn integrators_agree() {
        let v = crossover();
        let c = turning(&v);
        let run = |kind| {
            let settings = SolverSettings {
                kind,
                rtol: 1e-8,
                atol: 1e-8,
                fixed_step: 2e-4,
            };
            let mut sim = Simulation::new(&v, straight_running(&v, 20.0), settings, 100.0).unwrap();
            sim.advance(3.0, &c).unwrap();
            assert_eq!(sim.times().len(), 301, "{kind:?} samples");
            *sim.state()
        };
        let a = run(SolverKind::Dopri5);
        for kind in [SolverKind::Dop853, SolverKind::Rk4] {
            let b = run(kind);
            for i in [VX, YAW_RATE] {
                assert!(
                    (a[i] - b[i]).abs() < 1e-5 * a[i].abs().max(1.0),
                    "{kind:?} {i}: {} vs {}",
                    a[i],
                    b[i]
                );
            }
        }
    }

    /// Samples land on exact multiples of the sample period whatever the tick length.
    #[test]
    fn samples_at_exact_period_multiples() {
        let v = crossover();
        let c = turning(&v);
        let mut sim = Simulation::new(
            &v,
            straight_running(&v, 20.0),
            SolverSettings::default(),
            200.0,
        )
        .unwrap();
        let mut t = 0.0;
        for _ in 0..37 {
            t += 0.0137;
            sim.advance(t, &c).unwrap();
        }
        for (k, time) in sim.times().iter().enumerate() {
            assert_eq!(*time, k as f64 / 200.0);
        }
        assert_eq!(sim.times().len(), (t * 200.0).floor() as usize + 1);
    }

    /// A non-finite value stops the run with the time and the state named, and
    /// keeps every sample computed before.
    #[test]
    fn non_finite_input_stops_with_time_and_state() {
        let v = crossover();
        let c = turning(&v);
        let mut sim = Simulation::new(
            &v,
            straight_running(&v, 20.0),
            SolverSettings::default(),
            100.0,
        )
        .unwrap();
        sim.advance(1.0, &c).unwrap();
        let mut bad = c;
        bad.steer_wheel_angle = f64::NAN;
        let err = sim.advance(2.0, &bad).unwrap_err();
        match &err {
            SimError::NonFinite { time, state } => {
                assert!((1.0..=2.0).contains(time), "{time}");
                assert!(STATE_NAMES.iter().any(|(n, _)| n == state));
            }
            other => panic!("unexpected {other:?}"),
        }
        assert!(
            sim.times().len() >= 101,
            "samples up to the failure are kept"
        );
        assert!(
            sim.samples()
                .iter()
                .all(|s| s.iter().all(|x| x.is_finite()))
        );
        let record = sim.into_record(Provenance::default());
        assert!(matches!(record.status, RunStatus::Failed { .. }));
    }
}
