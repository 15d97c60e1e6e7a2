//! The runner: owns the [`Simulation`], the drivers, the held commands and
//! the tick loop of one run. It knows nothing of the script engine, so it can
//! be driven from Rust alone ([`Runner::run_phase`]); the script glue drives
//! the same loop one tick at a time ([`Runner::poll`], [`Runner::advance`])
//! so that it can call the script's controller between ticks.
//!
//! One phase, in ticks of `1/tick_rate` s (k = tick index, tₖ = k/tick_rate):
//!
//! ```text
//! loop {
//!     if the phase's end rule is met by sₖ (ticks done, or a run_until
//!         condition on sₖ and the steady window)         → phase ends
//!     drivers (speed hold, path follower) see sₖ          → driver commands
//!     controller f(sₖ) (script or Rust)                   → controller commands
//!     held = controller › drivers, constant on [tₖ, tₖ₊₁)  (zero-order hold)
//!     if tₖ₊₁ > time limit, or the wall-clock budget is spent → run stops, failed
//!     Simulation::advance(tₖ₊₁, inputs): integrate with held commands and
//!         open-loop signals evaluated at the solver's own times; samples at
//!         j/sample_rate in (tₖ, tₖ₊₁]                     → on failure: run stops, failed
//!     sₖ₊₁ = view of the model at tₖ₊₁ (the recorded channels' definitions)
//! }
//! ```
//!
//! The inputs report a [`revision`](crate::sim::InputSource::revision) that
//! moves only when signals, drivers or held values change.

mod commands;
mod until;
mod view;

#[cfg(test)]
mod tests;

pub use commands::{DeployKind, Held, Inputs, OpenInput, OpenLoop, OpenPowertrain};
pub use until::{Conditions, DEFAULT_MAX_PHASE_S, Phase, Until};
pub use view::{STEADY_QUANTITIES, TickState, ViewIndex};

use std::collections::VecDeque;
use std::sync::Arc;

use super::budget::{Exceeded, sample_bytes};
use super::setup::RunConfig;
use crate::manoeuvre::{Path, PathFollower};
use crate::model::straight_running;
use crate::results::{Provenance, RunRecord, RunStatus};
use crate::sim::{InputSource, SimError, Simulation};

/// Why a run stopped before the script's end (the input was valid).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum RunStop {
    /// The integration failed (a non-finite state, a solver failure).
    #[error("{0}")]
    Diverged(SimError),
    /// A `run_until` with `fail_on_timeout` met no condition within `max_time`.
    #[error("run_until: no condition met within max_time = {max_time} s")]
    Timeout {
        /// The phase's `max_time`, s.
        max_time: f64,
        /// Simulation time, s.
        time: f64,
    },
    /// The next tick would pass the run's simulated-time limit.
    #[error("simulation time limit of {limit} s reached")]
    TimeLimit {
        /// The limit, s.
        limit: f64,
        /// Simulation time, s.
        time: f64,
    },
    /// A budget of the run (wall-clock time, sample memory) is spent.
    #[error("{exceeded}")]
    Budget {
        /// Which budget.
        exceeded: Exceeded,
        /// Simulation time, s.
        time: f64,
    },
}

impl RunStop {
    /// Simulation time of the stop, s.
    pub fn time(&self) -> f64 {
        match self {
            Self::Diverged(e) => e.time(),
            Self::Timeout { time, .. }
            | Self::TimeLimit { time, .. }
            | Self::Budget { time, .. } => *time,
        }
    }
}

/// What a phase does at the current tick. (Returned by value once per tick;
/// boxing the state would allocate at every tick.)
#[allow(clippy::large_enum_variant)]
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum TickStep {
    /// The phase ends: `"time"` after `run_for`, a condition's name, or `"max_time"`.
    End(&'static str),
    /// The drivers ran; the controller sees this state and then the tick is
    /// integrated ([`Runner::advance`]).
    Control(TickState),
}

/// Simulated time ahead of a phase's start for which [`Runner::begin`]
/// reserves the sample memory at once, s. A phase's end is known in advance
/// for `run_for` (its ticks) but is only a bound for `run_until` (its
/// `max_time`, 60 s by default and any length allowed): a phase that ends
/// early would keep what was reserved for the rest unused until the run ends.
/// 60 s covers the whole of the usual phase (seconds to tens of seconds) and
/// at most 60 s × rate × (channels + 1) × 8 bytes, e.g. about 36 MB at 1 kHz,
/// never more than the sample-memory budget checked for the phase; beyond it
/// the sample vectors grow by doubling again, as without the hint.
pub const RESERVE_AHEAD_S: f64 = 60.0;

/// One run's simulation and commands.
pub struct Runner {
    config: Arc<RunConfig>,
    sim: Simulation,
    inputs: Inputs,
    view: ViewIndex,
    /// Index of the next controller tick.
    tick: u64,
    last_state: TickState,
    stop: Option<RunStop>,
}

impl Runner {
    /// Starts in straight running at the configured start speed, t = 0, with
    /// the inputs declared so far.
    pub fn start(config: Arc<RunConfig>, inputs: Inputs) -> Result<Self, SimError> {
        let initial = straight_running(&config.vehicle, config.start_speed);
        let sim = Simulation::new(
            config.vehicle.clone(),
            initial,
            config.solver,
            config.sample_rate_hz,
        )?;
        let view = ViewIndex::new().map_err(SimError::Settings)?;
        let inputs = inputs.with_front_share(config.facts.front_share);
        let c = inputs.commands(0.0);
        let last_state = view.view(&sim.outputs_now(&c));
        Ok(Self {
            config,
            sim,
            inputs,
            view,
            tick: 0,
            last_state,
            stop: None,
        })
    }

    /// The run's configuration.
    pub fn config(&self) -> &RunConfig {
        &self.config
    }

    /// Current simulation time, s.
    pub fn time(&self) -> f64 {
        self.sim.time()
    }

    /// The state at the current tick.
    pub fn state(&self) -> TickState {
        self.last_state
    }

    /// The inputs (signals, drivers, held commands).
    pub fn inputs(&self) -> &Inputs {
        &self.inputs
    }

    /// The inputs, to change them between ticks.
    pub fn inputs_mut(&mut self) -> &mut Inputs {
        &mut self.inputs
    }

    /// Why the run stopped, if it did.
    pub fn stopped(&self) -> Option<&RunStop> {
        self.stop.as_ref()
    }

    /// The simulation (samples so far, derivative evaluations).
    pub fn simulation(&self) -> &Simulation {
        &self.sim
    }

    /// Follows `path` with the path follower, with the feedforward of the
    /// linear understeer (Gillespie, *Fundamentals of Vehicle Dynamics*,
    /// ch. 6: δ = L/R + K·ay; no feedforward for an oversteering car).
    pub fn follow(&mut self, path: Path) {
        let mut f = PathFollower::new(path);
        f.understeer_feedforward = self.config.facts.understeer_gradient.max(0.0);
        self.inputs.follow(f);
    }

    /// Ticks in `seconds`, rounded to whole ticks.
    pub fn ticks_for(&self, seconds: f64) -> u64 {
        (seconds * self.config.tick_rate_hz).round() as u64
    }

    /// A phase that starts at the current tick. The run stops (sample
    /// memory budget) if the samples up to the phase's planned end (or the
    /// simulated-time limit, if earlier) would take more memory than the
    /// budget allows; otherwise the memory for them is reserved at once (at
    /// most [`RESERVE_AHEAD_S`] ahead).
    pub fn begin(&mut self, until: Until) -> Result<Phase, RunStop> {
        if let Some(stop) = &self.stop {
            return Err(stop.clone());
        }
        let rate = self.config.tick_rate_hz;
        let planned_end = match &until {
            Until::Ticks(n) => self.tick.saturating_add(*n) as f64 / rate,
            Until::Conditions(c) => self.tick as f64 / rate + c.max_time,
        };
        let samples = self.samples_until(planned_end);
        let (bytes, limit) = (sample_bytes(samples), self.config.limits.max_sample_bytes);
        if bytes > limit {
            let exceeded = Exceeded::SampleMemory {
                end_s: planned_end.min(self.config.limits.max_sim_time_s),
                samples,
                bytes,
                limit,
            };
            let time = self.time();
            return Err(self.stop_with(RunStop::Budget { exceeded, time }));
        }
        // The samples of the phase in one reservation, instead of the
        // sample vectors growing by doubling as the ticks advance.
        let reserve_end = planned_end
            .min(self.config.limits.max_sim_time_s)
            .min(self.time() + RESERVE_AHEAD_S);
        self.sim.reserve_samples_until(reserve_end);
        Ok(Phase {
            until,
            start_tick: self.tick,
            history: VecDeque::new(),
            planned_end,
        })
    }

    /// Samples recorded from t = 0 up to `end` (s, at most the simulated-time limit).
    pub fn samples_until(&self, end: f64) -> u64 {
        let end = end.min(self.config.limits.max_sim_time_s).max(0.0);
        (end * self.config.sample_rate_hz).floor() as u64 + 1
    }

    /// Whether `phase` ends at the current tick; if not, runs the drivers and
    /// returns the state the controller sees.
    pub fn poll(&mut self, phase: &mut Phase) -> Result<TickStep, RunStop> {
        if let Some(stop) = &self.stop {
            return Err(stop.clone());
        }
        let rate = self.config.tick_rate_hz;
        let phase_t = (self.tick - phase.start_tick) as f64 / rate;
        match &phase.until {
            Until::Ticks(n) if self.tick >= phase.start_tick + n => {
                return Ok(TickStep::End("time"));
            }
            Until::Ticks(_) => {}
            Until::Conditions(c) => {
                if let Some(name) = c.met(&self.last_state, &phase.history, phase_t) {
                    return Ok(TickStep::End(name));
                }
                if phase_t >= c.max_time - 1e-9 {
                    if !c.fail_on_timeout {
                        return Ok(TickStep::End("max_time"));
                    }
                    return Err(self.stop_with(RunStop::Timeout {
                        max_time: c.max_time,
                        time: self.time(),
                    }));
                }
            }
        }
        let s = self.last_state;
        let facts = &self.config.facts;
        self.inputs
            .drivers_tick(&s, 1.0 / rate, facts.wheelbase, facts.steering_ratio);
        Ok(TickStep::Control(s))
    }

    /// Integrates one tick with the commands held now; the state at its end
    /// becomes the current state.
    pub fn advance(&mut self, phase: &mut Phase) -> Result<(), RunStop> {
        let t_next = (self.tick + 1) as f64 / self.config.tick_rate_hz;
        let limits = self.config.limits;
        if t_next > limits.max_sim_time_s + 1e-9 {
            return Err(self.stop_with(RunStop::TimeLimit {
                limit: limits.max_sim_time_s,
                time: self.time(),
            }));
        }
        if self.config.started.elapsed().as_secs_f64() > limits.max_wall_s {
            let exceeded = Exceeded::WallTime {
                limit_s: limits.max_wall_s,
            };
            let time = self.time();
            return Err(self.stop_with(RunStop::Budget { exceeded, time }));
        }
        if let Err(e) = self.sim.advance(t_next, &self.inputs) {
            return Err(self.stop_with(RunStop::Diverged(e)));
        }
        let c = self.inputs.commands(t_next);
        self.last_state = self.view.view(&self.sim.outputs_now(&c));
        self.tick += 1;
        phase.observe(&self.last_state);
        Ok(())
    }

    fn stop_with(&mut self, stop: RunStop) -> RunStop {
        self.stop = Some(stop.clone());
        stop
    }

    /// Runs one phase with a controller written in Rust (`|_| Held::default()`
    /// for none). Returns how the phase ended (see [`TickStep::End`]).
    ///
    /// ```
    /// use std::path::Path;
    /// use std::sync::Arc;
    /// use yawdyn::params::load_vehicle;
    /// use yawdyn::manoeuvre::Signal;
    /// use yawdyn::script::{Held, Inputs, OpenInput, RunConfig, Runner, Until};
    /// let file = Path::new("scripts/vehicles/hybrid_crossover.toml");
    /// let mut config = RunConfig::new(load_vehicle(file, &[])?, file);
    /// config.start_speed = 20.0;
    /// let mut runner = Runner::start(Arc::new(config), Inputs::default())?;
    /// runner.inputs_mut().set_open(OpenInput::Steer, Signal::constant(0.5)?);
    /// let end = runner.run_phase(Until::Ticks(100), |_| Held::default())?;
    /// assert_eq!(end, "time");
    /// assert!(runner.state().yaw_rate > 0.0);
    /// # Ok::<(), Box<dyn std::error::Error>>(())
    /// ```
    pub fn run_phase(
        &mut self,
        until: Until,
        mut controller: impl FnMut(&TickState) -> Held,
    ) -> Result<&'static str, RunStop> {
        let mut phase = self.begin(until)?;
        loop {
            let s = match self.poll(&mut phase)? {
                TickStep::End(name) => return Ok(name),
                TickStep::Control(s) => s,
            };
            let out = controller(&s);
            self.inputs.hold_controller(out);
            self.advance(&mut phase)?;
        }
    }

    /// The record of the run with `provenance`: channels up to the end or the
    /// stop; status `failed` with the stop's message (prefixed by `context`
    /// when given, e.g. the script position) when the run stopped.
    pub fn into_record(self, provenance: Provenance, context: Option<&str>) -> RunRecord {
        let mut record = self.sim.into_record(provenance);
        if let Some(stop) = &self.stop {
            let message = match context {
                Some(at) => format!("{at}: {stop}"),
                None => stop.to_string(),
            };
            record.status = RunStatus::Failed {
                message,
                time_s: stop.time(),
            };
        }
        record
    }
}
