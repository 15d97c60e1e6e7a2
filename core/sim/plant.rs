//! The right-hand side handed to `ode_solvers`: model, vehicle and inputs, and
//! the last evaluation it made (so that an output sample at a step's end
//! reuses the evaluation the solver made there).

use std::cell::{Cell, RefCell};

use ode_solvers::dop_shared::System;

use super::InputSource;
use super::ark::SplitSystem;
use crate::model::{Commands, Evaluation, N_STATES, Prepared, State, SteerAngles};
use crate::model::{WheelJacobian, evaluate_prepared, evaluate_prepared_into, wheel_jacobian};
use crate::params::Vehicle;

/// The model of one simulation: the vehicle, its prepared constants and the
/// steering angles of the last steering command seen (computed again only
/// when the command changes: once per held command).
#[derive(Clone, Copy)]
pub(super) struct Model<'a> {
    pub vehicle: &'a Vehicle,
    pub prepared: &'a Prepared,
    pub steer: &'a Cell<SteerAngles>,
}

impl Model<'_> {
    /// The model evaluated at `state` with `commands`.
    #[inline]
    pub fn evaluate(&self, state: &State, commands: &Commands) -> Evaluation {
        let steer = self.steer_for(commands);
        evaluate_prepared(self.vehicle, self.prepared, &steer, state, commands)
    }

    /// [`Model::evaluate`] written into `out`.
    #[inline]
    pub fn evaluate_into(&self, state: &State, commands: &Commands, out: &mut Evaluation) {
        let steer = self.steer_for(commands);
        evaluate_prepared_into(self.vehicle, self.prepared, &steer, state, commands, out);
    }

    /// The steering angles of `commands`, computed when the command changes.
    #[inline]
    fn steer_for(&self, commands: &Commands) -> SteerAngles {
        let mut steer = self.steer.get();
        if !steer.is_for(commands.steer_wheel_angle) {
            steer = SteerAngles::new(self.vehicle, commands.steer_wheel_angle);
            self.steer.set(steer);
        }
        steer
    }
}

/// One evaluation of the model with what it was evaluated at.
#[derive(Debug, Clone, Copy)]
pub(super) struct Captured {
    /// Time, s.
    pub t: f64,
    /// State.
    pub state: State,
    /// Commands at `t`.
    pub commands: Commands,
    /// The model's evaluation.
    pub evaluation: Evaluation,
}

impl Captured {
    /// Evaluates the model at (`t`, `state`) with the inputs' commands.
    #[inline]
    pub fn evaluate(model: Model, inputs: &dyn InputSource, t: f64, state: &State) -> Self {
        let commands = inputs.commands(t);
        Self {
            t,
            state: *state,
            commands,
            evaluation: model.evaluate(state, &commands),
        }
    }

    /// Whether this evaluation was made at exactly (`t`, `state`).
    pub fn is_at(&self, t: f64, state: &State) -> bool {
        self.t == t && self.state == *state
    }
}

/// The ODE right-hand side: derivative of the state under the inputs.
pub(super) struct Plant<'a> {
    model: Model<'a>,
    inputs: &'a dyn InputSource,
    /// First non-finite value seen: (time, state index).
    bad: Cell<Option<(f64, usize)>>,
    /// The last evaluation made. After the first, each evaluation is made
    /// in place here and the solver's derivative copied from it, instead of
    /// building a `Captured` and copying it in (about 1 % of the instructions
    /// of a 10 s cornering run).
    last: RefCell<Option<Captured>>,
}

impl<'a> Plant<'a> {
    pub fn new(model: Model<'a>, inputs: &'a dyn InputSource) -> Self {
        Self {
            model,
            inputs,
            bad: Cell::new(None),
            last: RefCell::new(None),
        }
    }

    /// First non-finite derivative or state seen: (time, state index).
    pub fn bad(&self) -> Option<(f64, usize)> {
        self.bad.get()
    }

    /// Takes `captured` as the last evaluation made (one from an earlier
    /// plant of the same simulation).
    pub fn remember(&self, captured: Captured) {
        *self.last.borrow_mut() = Some(captured);
    }

    /// The last evaluation made, if it was at exactly (`t`, `state`).
    pub fn last_at(&self, t: f64, state: &State) -> Option<Captured> {
        (*self.last.borrow()).filter(|c| c.is_at(t, state))
    }
}

impl System<f64, State> for Plant<'_> {
    fn system(&self, t: f64, x: &State, dx: &mut State) {
        let mut last = self.last.borrow_mut();
        let captured = match &mut *last {
            // Into the slot: no copy of the whole capture.
            Some(c) => {
                c.t = t;
                c.state = *x;
                c.commands = self.inputs.commands(t);
                self.model.evaluate_into(x, &c.commands, &mut c.evaluation);
                c
            }
            None => last.insert(Captured::evaluate(self.model, self.inputs, t, x)),
        };
        *dx = captured.evaluation.derivative;
        // A NaN or infinity anywhere makes the sum non-finite (one pass, no
        // branch per element); only then is the offending state looked for.
        if !(dx.sum() + x.sum()).is_finite() && self.bad.get().is_none() {
            if let Some(i) = dx.iter().chain(x.iter()).position(|v| !v.is_finite()) {
                self.bad.set(Some((t, i % N_STATES)));
            }
        }
    }

    fn solout(&mut self, _t: f64, _x: &State, _dx: &State) -> bool {
        self.bad.get().is_some()
    }
}

impl SplitSystem for Plant<'_> {
    fn linear_part(&self, t: f64, y: &State) -> WheelJacobian {
        // The evaluation just made at (t, y), borrowed, not copied.
        let last = self.last.borrow();
        let fresh;
        let evaluation = match &*last {
            Some(c) if c.is_at(t, y) => &c.evaluation,
            _ => {
                fresh = Captured::evaluate(self.model, self.inputs, t, y);
                &fresh.evaluation
            }
        };
        let w = &evaluation.wheels;
        wheel_jacobian(
            self.model.prepared,
            y,
            &w.map(|w| w.fz),
            &w.map(|w| w.contact_speed),
            &w.map(|w| w.fx),
            &w.map(|w| w.brake_torque),
        )
    }
}

/// The solvers that take their system by value get a reference.
impl System<f64, State> for &Plant<'_> {
    fn system(&self, t: f64, x: &State, dx: &mut State) {
        (**self).system(t, x, dx);
    }

    fn solout(&mut self, _t: f64, _x: &State, _dx: &State) -> bool {
        self.bad.get().is_some()
    }
}
