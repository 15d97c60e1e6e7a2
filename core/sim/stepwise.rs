//! Dop853 and Rk4: integrate to every sample time and tick, and sample at the
//! ends. Dop853 carries the step size its controller proposed from one stop
//! to the next; each stop evaluates the derivative at its start again (these
//! methods have no dense output here).

use ode_solvers::dop_shared::{IntegrationError, OutputType, Stats};
use ode_solvers::{Dop853, Rk4};

use super::plant::{Captured, Model, Plant};
use super::{InputSource, MAX_STEPS_PER_SEGMENT, SimError, Simulation, SolverKind, same_time};
use crate::model::{STATE_NAMES, State};

/// Step-size controller of Dop853 (Hairer, Nørsett & Wanner, *Solving
/// Ordinary Differential Equations I*, 2nd ed., §II.10, and their DOP853
/// code's defaults, from memory): safety 0.9, no PI term (β = 0), step ratio
/// within [1/3, 6].
mod control {
    /// Safety factor.
    pub const SAFETY: f64 = 0.9;
    /// β of the PI controller.
    pub const BETA: f64 = 0.0;
    /// Smallest step ratio.
    pub const FAC_MIN: f64 = 0.333;
    /// Largest step ratio.
    pub const FAC_MAX: f64 = 6.0;
}

impl Simulation {
    /// Dop853 or Rk4 to `t_end`, stopping at every sample time.
    pub(super) fn advance_stepwise(
        &mut self,
        t_end: f64,
        inputs: &dyn InputSource,
    ) -> Result<(), SimError> {
        let (vehicle, prepared, steer) = self.model_parts();
        let model = Model {
            vehicle: &vehicle,
            prepared: &prepared,
            steer: &steer,
        };
        let result = self.stepwise_with(t_end, inputs, model);
        self.steer = steer.get();
        result
    }

    fn stepwise_with(
        &mut self,
        t_end: f64,
        inputs: &dyn InputSource,
        model: Model,
    ) -> Result<(), SimError> {
        self.recorder.reserve_until(t_end);
        if self.recorder.due(self.time) {
            let c = Captured::evaluate(model, inputs, self.time, &self.state);
            self.output_evaluations += 1;
            let outputs = self.outputs_of(self.time, &c);
            self.recorder.push(&outputs);
        }
        while self.time < t_end {
            if same_time(self.time, t_end) {
                // A gap of rounding only: no step across it.
                self.time = t_end;
                break;
            }
            let next_sample = self.recorder.next_time();
            let stop =
                if next_sample > self.time && next_sample < t_end && !same_time(next_sample, t_end)
                {
                    next_sample
                } else {
                    t_end
                };
            let plant = Plant::new(model, inputs);
            // Integrate to the stop, then sample there.
            let (outcome, last) = self.integrate_span(&plant, stop);
            if let Ok(s) = &outcome {
                self.evaluations += u64::from(s.num_eval);
            }
            if let Some((time, i)) = plant.bad() {
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
            // The solver's last evaluation is at (stop, x) for Dop853 (first
            // same as last); Rk4's is not, so it is evaluated here.
            let exact = plant.last_at(stop, &x);
            self.state = x;
            self.time = stop;
            self.exact = exact;
            if self.recorder.due(stop) {
                let c = exact.unwrap_or_else(|| {
                    self.output_evaluations += 1;
                    Captured::evaluate(model, inputs, stop, &x)
                });
                let outputs = self.outputs_of(self.recorder.next_time(), &c);
                self.recorder.push(&outputs);
            }
        }
        Ok(())
    }

    /// One call of Dop853 or Rk4 from the current time to `stop`: its
    /// statistics and the state at `stop`.
    fn integrate_span(
        &mut self,
        plant: &Plant,
        stop: f64,
    ) -> (Result<Stats, IntegrationError>, Option<State>) {
        let span = stop - self.time;
        if self.settings.kind == SolverKind::Rk4 {
            let n = (span / self.settings.fixed_step).ceil().max(1.0);
            let mut s = Rk4::new(plant, self.time, self.state, stop, span / n);
            return (s.integrate(), s.y_out().last().copied());
        }
        // Dop853 starts with the step its controller proposed at the last stop.
        let h0 = if self.dop853_step > 0.0 {
            self.dop853_step.min(span)
        } else {
            0.0
        };
        let mut s = Dop853::from_param(
            plant,
            self.time,
            stop,
            span,
            self.state,
            self.settings.rtol,
            self.settings.atol,
            control::SAFETY,
            control::BETA,
            control::FAC_MIN,
            control::FAC_MAX,
            span,
            h0,
            MAX_STEPS_PER_SEGMENT,
            u32::MAX,
            OutputType::Sparse,
        );
        let outcome = s.integrate();
        if outcome.is_ok() {
            self.dop853_step = s.step_size().abs();
        }
        (outcome, s.y_out().last().copied())
    }
}
