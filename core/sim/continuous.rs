//! Dopri5 across controller ticks: one integration that carries its step
//! size and its first-same-as-last derivative from one `advance` call to the
//! next, takes steps past a tick while the inputs stay the same, and samples
//! from the dense output (see the pseudocode in the [module docs](super)).

use nalgebra::Const;
use ode_solvers::Dopri5Stepper;
use ode_solvers::controller::Controller;
use ode_solvers::dop_shared::{IntegrationError, Stats};

use super::ark::ArkStepper;

use super::channels::{ChannelTable, N_CHANNELS, Outputs, Row};
use super::plant::{Captured, Model, Plant};
use super::recorder::{CHECK_POINT, N_NODES, NODES, interpolation_holds};
use super::{InputSource, MAX_STEPS_PER_SEGMENT, SimError, Simulation, same_time};
use crate::model::{N_STATES, STATE_NAMES, State, derive};

/// Largest step, s. Dopri5's stages sample the inputs at fractions 0, 0.2,
/// 0.3, 0.8, 0.89 and 1 of a step, so an input feature shorter than about
/// half a step could pass unseen; 50 ms keeps that below the 25 ms of any
/// steering or pedal action a script describes (common practice: a step cap
/// tied to the shortest input feature).
pub const MAX_STEP: f64 = 0.05;

/// Tolerance of the check that allows interpolated samples in a step
/// ([`interpolation_holds`]), relative to each channel's largest magnitude in
/// the step. Smooth stretches interpolate to about 1e-6 of a channel's
/// magnitude and pass; a corner inside the step (the power limit, brakes
/// fading near standstill) fails, and its samples are evaluated one by one
/// (`sim::test::interpolated_samples_*`).
pub const INTERPOLATION_CHECK: f64 = 1e-4;

/// Step-size controller of Dopri5 (Hairer, Nørsett & Wanner, *Solving
/// Ordinary Differential Equations I*, 2nd ed., §II.4, eq. (4.13), with the
/// PI stabilisation of their DOPRI5 code, from memory): h_new = h·fac with
/// fac = err^(−α)·err_old^β / SAFETY, bounded to [1/FAC_MAX, 1/FAC_MIN]
/// (ode_solvers' parameter names; its defaults).
mod control {
    /// Safety factor.
    pub const SAFETY: f64 = 0.9;
    /// β of the PI controller.
    pub const BETA: f64 = 0.04;
    /// α = 0.2 − 0.75·β (Hairer et al.'s choice for order 5).
    pub const ALPHA: f64 = 0.2 - 0.75 * BETA;
    /// α = 1/4 − 0.75·β for the additive Runge–Kutta pair, whose error
    /// estimate (of its 3rd-order solution) is of 4th order in the step.
    pub const ARK_ALPHA: f64 = 0.25 - 0.75 * BETA;
    /// Smallest step ratio.
    pub const FAC_MIN: f64 = 0.2;
    /// Largest step ratio.
    pub const FAC_MAX: f64 = 10.0;
}

/// How the samples of the current step are made.
#[derive(Debug, Clone, Copy, PartialEq)]
enum StepOutput {
    /// Not decided yet (no sample of this step recorded).
    Undecided,
    /// Each sample: the model at the dense-output state.
    Direct,
    /// Each sample interpolated from the channel values at the nodes.
    Interpolated,
}

/// The stepper of a continuous integration: Dopri5 (explicit) or the
/// additive Runge–Kutta stepper with the wheels implicit. One per
/// simulation, inside the boxed `Continuous`: the size difference between
/// the variants costs nothing.
#[allow(clippy::large_enum_variant)]
enum Stepper {
    Dopri5(Dopri5Stepper<f64, Const<N_STATES>>),
    Ark(ArkStepper),
}

impl Stepper {
    fn restart(&mut self, t: f64, y: State) {
        match self {
            Self::Dopri5(s) => s.restart(t, y),
            Self::Ark(s) => s.restart(t, y),
        }
    }

    fn stats(&self) -> Stats {
        match self {
            Self::Dopri5(s) => s.stats(),
            Self::Ark(s) => s.stats(),
        }
    }

    fn has_derivative(&self) -> bool {
        match self {
            Self::Dopri5(s) => s.has_derivative(),
            Self::Ark(s) => s.has_derivative(),
        }
    }

    fn derivative(&mut self, plant: &Plant) {
        match self {
            Self::Dopri5(s) => {
                s.derivative(plant);
            }
            Self::Ark(s) => {
                s.derivative(plant);
            }
        }
    }

    fn step(&mut self, plant: &Plant, stop: Option<f64>) -> Result<(), IntegrationError> {
        match self {
            Self::Dopri5(s) => s.step(plant, stop),
            Self::Ark(s) => s.step(plant, stop),
        }
    }

    fn x(&self) -> f64 {
        match self {
            Self::Dopri5(s) => s.x(),
            Self::Ark(s) => s.x(),
        }
    }

    fn x_old(&self) -> f64 {
        match self {
            Self::Dopri5(s) => s.x_old(),
            Self::Ark(s) => s.x_old(),
        }
    }

    fn y(&self) -> &State {
        match self {
            Self::Dopri5(s) => s.y(),
            Self::Ark(s) => s.y(),
        }
    }

    fn dense(&self, t: f64) -> State {
        match self {
            Self::Dopri5(s) => s.dense(t),
            Self::Ark(s) => s.dense(t),
        }
    }
}

/// Integration state carried between `advance` calls.
pub(super) struct Continuous {
    stepper: Stepper,
    /// Revision of the inputs of the last call (`None` = unknown).
    revision: Option<u64>,
    /// Exact evaluations at the start and the end of the last accepted step
    /// (the end one is also the derivative the next step starts from).
    at_start: Option<Captured>,
    at_end: Option<Captured>,
    output: StepOutput,
    /// Channel values at the interpolation nodes of the last step.
    nodes: Box<[Row; N_NODES]>,
    /// Time of the last node of `nodes` when it holds the channel values of
    /// the current `at_start` (the next step starts from it).
    nodes_end: Option<f64>,
    /// Channel values of the samples of one step (scratch, reused).
    batch: Vec<Row>,
    /// Where an output evaluation is made in place (scratch, reused).
    scratch: Box<Outputs>,
}

impl Continuous {
    /// `scratch` may hold any outputs (it is overwritten before every use).
    pub fn new(time: f64, state: State, rtol: f64, atol: f64, ark: bool, scratch: Outputs) -> Self {
        use control::*;
        let stepper = if ark {
            let controller =
                Controller::new(ARK_ALPHA, BETA, FAC_MAX, FAC_MIN, MAX_STEP, SAFETY, 1.0);
            Stepper::Ark(ArkStepper::new(time, state, rtol, atol, controller))
        } else {
            let controller = Controller::new(ALPHA, BETA, FAC_MAX, FAC_MIN, MAX_STEP, SAFETY, 1.0);
            Stepper::Dopri5(Dopri5Stepper::new(time, state, rtol, atol, controller))
        };
        Self {
            stepper,
            revision: None,
            at_start: None,
            at_end: None,
            output: StepOutput::Undecided,
            nodes: Box::new([[0.0; N_CHANNELS]; N_NODES]),
            nodes_end: None,
            batch: Vec::new(),
            scratch: Box::new(scratch),
        }
    }

    /// Drops whatever was integrated beyond (`time`, `state`) and the stored
    /// derivative; keeps the step size.
    pub fn restart(&mut self, time: f64, state: State) {
        self.stepper.restart(time, state);
        self.at_start = None;
        self.at_end = None;
        self.nodes_end = None;
        self.output = StepOutput::Undecided;
    }

    /// Derivative evaluations so far.
    pub fn evaluations(&self) -> u64 {
        u64::from(self.stepper.stats().num_eval)
    }
}

impl Simulation {
    /// Dopri5 from the current time to `t_end` (see the module docs).
    pub(super) fn advance_continuous(
        &mut self,
        t_end: f64,
        inputs: &dyn InputSource,
    ) -> Result<(), SimError> {
        let revision = inputs.revision();
        let Some(mut run) = self.continuous.take() else {
            return Err(SimError::Settings("no Dopri5 integrator".into()));
        };
        // Hold: unchanged inputs keep the step in flight and its derivative;
        // changed or unknown ones restart from the tick.
        let unchanged = revision.is_some() && revision == run.revision;
        if !unchanged {
            run.restart(self.time, self.state);
        }
        run.revision = revision;
        // A step may pass the tick only while the inputs stay the same: the
        // next tick will then most likely not need a restart either.
        let stop = if unchanged { None } else { Some(t_end) };
        self.recorder.reserve_until(t_end);
        let result = self.integrate_continuous(&mut run, t_end, stop, inputs);
        self.continuous = Some(run);
        result
    }

    fn integrate_continuous(
        &mut self,
        run: &mut Continuous,
        t_end: f64,
        stop: Option<f64>,
        inputs: &dyn InputSource,
    ) -> Result<(), SimError> {
        let (vehicle, prepared, steer) = self.model_parts();
        let model = Model {
            vehicle: &vehicle,
            prepared: &prepared,
            steer: &steer,
        };
        let result = self.integrate_with(run, t_end, stop, inputs, model);
        self.steer = steer.get();
        result
    }

    fn integrate_with(
        &mut self,
        run: &mut Continuous,
        t_end: f64,
        stop: Option<f64>,
        inputs: &dyn InputSource,
        model: Model,
    ) -> Result<(), SimError> {
        let plant = Plant::new(model, inputs);
        // The evaluation at the current point, made in an earlier call: the
        // additive stepper's wheel Jacobian reads it instead of evaluating the
        // model again (after a restart the derivative is evaluated again and
        // replaces it). Dopri5 does not need it.
        if let (Stepper::Ark(_), Some(c)) = (&run.stepper, run.at_end) {
            plant.remember(c);
        }
        let mut steps = 0_u32;
        loop {
            // Derivative at the current point after a restart (captured for samples).
            if !run.stepper.has_derivative() {
                run.stepper.derivative(&plant);
                let (x, y) = (run.stepper.x(), *run.stepper.y());
                run.at_end = plant.last_at(x, &y);
            }
            // Samples of the current step up to the tick.
            self.sample_step(run, t_end, inputs, model);
            if run.stepper.x() >= t_end || same_time(run.stepper.x(), t_end) {
                break;
            }
            // Integrate: one accepted step.
            if steps >= MAX_STEPS_PER_SEGMENT {
                let message = format!("more than {MAX_STEPS_PER_SEGMENT} steps in one tick");
                return Err(self.solver_error(message, run.stepper.x(), inputs));
            }
            steps += 1;
            let outcome = run.stepper.step(&plant, stop);
            if let Some((time, i)) = plant.bad() {
                self.evaluations = run.evaluations();
                return Err(SimError::NonFinite {
                    time,
                    state: STATE_NAMES[i].0,
                });
            }
            if let Err(e) = outcome {
                self.evaluations = run.evaluations();
                let time = match e {
                    IntegrationError::StepSizeUnderflow { x }
                    | IntegrationError::NonFinite { x }
                    | IntegrationError::MaxNumStepReached { x, .. }
                    | IntegrationError::StiffnessDetected { x } => x,
                };
                return Err(self.solver_error(e.to_string(), time, inputs));
            }
            let (x, y) = (run.stepper.x(), *run.stepper.y());
            run.at_start = run.at_end.take();
            run.at_end = plant.last_at(x, &y);
            run.output = StepOutput::Undecided;
        }
        self.evaluations = run.evaluations();
        // The state at the tick: the step's end, or its dense output.
        let at_end = same_time(run.stepper.x(), t_end);
        let x = if at_end {
            *run.stepper.y()
        } else {
            run.stepper.dense(t_end)
        };
        self.check_finite(t_end, &x)?;
        self.state = x;
        self.time = t_end;
        self.exact = if at_end { run.at_end } else { None };
        Ok(())
    }

    /// Records the samples of the last accepted step that are due by `until`.
    fn sample_step(
        &mut self,
        run: &mut Continuous,
        until: f64,
        inputs: &dyn InputSource,
        model: Model,
    ) {
        let t1 = run.stepper.x();
        let limit = until.min(t1);
        if !self.recorder.due(limit) {
            return;
        }
        if run.output == StepOutput::Undecided {
            run.output = self.choose_output(run, inputs, model);
        }
        if run.output == StepOutput::Interpolated {
            let t0 = run.stepper.x_old();
            self.recorder.push_interpolated(t0, t1, limit, &run.nodes);
            return;
        }
        // Every sample of the step due by `limit`, evaluated together (the
        // steering angles of a held command computed once) and recorded
        // channel-major in one pass.
        let table = ChannelTable::get();
        let mut batch = std::mem::take(&mut run.batch);
        batch.clear();
        let first = self.recorder.next_index();
        for k in first..first + self.recorder.count_due(limit) {
            let ts = self.recorder.time_of(k);
            batch.push([0.0; N_CHANNELS]);
            let row = batch.last_mut().expect("just pushed");
            // At the step's end (within rounding): the solver's own evaluation.
            match run
                .at_end
                .filter(|_| (ts - t1).abs() <= 1e-9 / self.sample_rate)
            {
                Some(end) => table.fill(&self.outputs_of(ts, &end), row),
                None => {
                    self.output_evaluations += 1;
                    let x = run.stepper.dense(ts);
                    self.row_at(model, inputs, ts, &x, &mut run.scratch, row);
                }
            }
        }
        self.recorder.push_rows(&batch);
        run.batch = batch;
    }

    /// Direct or interpolated samples for the last step; fills the nodes for
    /// interpolation. Interpolation needs more samples in the step than the 4
    /// evaluations it costs, the same commands at every node (a command that
    /// changes inside the step may have a corner no polynomial follows), both
    /// end evaluations, and the interpolant must match an exact evaluation at
    /// the check point.
    fn choose_output(
        &mut self,
        run: &mut Continuous,
        inputs: &dyn InputSource,
        model: Model,
    ) -> StepOutput {
        // Samples interpolated ahead in the step before are not this step's.
        self.recorder.new_step();
        let (t0, t1) = (run.stepper.x_old(), run.stepper.x());
        let samples = self.recorder.count_due(t1);
        let (Some(start), Some(end)) = (run.at_start, run.at_end) else {
            return StepOutput::Direct;
        };
        // Interpolation costs the 3 interior nodes and the check point.
        if !self.interpolate_output
            || samples <= (N_NODES - 1) as u64
            || start.t != t0
            || end.t != t1
        {
            return StepOutput::Direct;
        }
        let h = t1 - t0;
        let times: [f64; N_NODES] = std::array::from_fn(|j| t0 + NODES[j] * h);
        let same = times[1..N_NODES - 1]
            .iter()
            .all(|&t| inputs.commands(t) == start.commands)
            && end.commands == start.commands;
        if !same {
            return StepOutput::Direct;
        }
        let table = ChannelTable::get();
        // The first node is the last one of the step before when that step
        // filled its nodes (the same evaluation, `at_start`).
        if run.nodes_end == Some(t0) {
            run.nodes[0] = run.nodes[N_NODES - 1];
        } else {
            table.fill(&self.outputs_of(t0, &start), &mut run.nodes[0]);
        }
        table.fill(&self.outputs_of(t1, &end), &mut run.nodes[N_NODES - 1]);
        run.nodes_end = Some(t1);
        for (j, &t) in times.iter().enumerate().take(N_NODES - 1).skip(1) {
            let x = run.stepper.dense(t);
            self.row_at(model, inputs, t, &x, &mut run.scratch, &mut run.nodes[j]);
        }
        let t = t0 + CHECK_POINT * h;
        let mut check = [0.0; N_CHANNELS];
        let x = run.stepper.dense(t);
        self.row_at(model, inputs, t, &x, &mut run.scratch, &mut check);
        self.output_evaluations += (N_NODES - 1) as u64;
        if !interpolation_holds(&run.nodes, &check, INTERPOLATION_CHECK) {
            return StepOutput::Direct;
        }
        StepOutput::Interpolated
    }

    /// Writes into `row` the channel values at (`t`, `state`) with the
    /// inputs' commands: the model evaluated in place in `scratch`, so that
    /// no evaluation is copied (the same values as [`Captured::evaluate`]
    /// followed by [`Simulation::outputs_of`], bit for bit).
    #[inline]
    pub(super) fn row_at(
        &self,
        model: Model,
        inputs: &dyn InputSource,
        t: f64,
        state: &State,
        scratch: &mut Outputs,
        row: &mut Row,
    ) {
        scratch.time = t;
        scratch.state = *state;
        scratch.commands = inputs.commands(t);
        model.evaluate_into(&scratch.state, &scratch.commands, &mut scratch.evaluation);
        scratch.derived = derive(&scratch.state, &scratch.evaluation, &self.reference);
        ChannelTable::get().fill(scratch, row);
    }

    /// The outputs of an evaluation, sampled at time `t`.
    pub(super) fn outputs_of(&self, t: f64, c: &Captured) -> Outputs {
        Outputs::from_evaluation(t, &c.state, &c.commands, c.evaluation, &self.reference)
    }
}
