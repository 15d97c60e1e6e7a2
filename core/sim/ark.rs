//! An additive Runge–Kutta stepper, ARK4(3)6L[2]SA (Kennedy & Carpenter,
//! "Additive Runge–Kutta schemes for convection–diffusion–reaction
//! equations", *Applied Numerical Mathematics* 44 (2003) 139–181; sections
//! from memory, coefficients checked against the order conditions), for a
//! right-hand side split as f = (f − J·(y − yₙ)) + J·(y − yₙ):
//! the second part, linear with the matrix J of the wheels' fast spin and slip
//! equations frozen at the step's start, is taken implicitly (an L-stable,
//! stiffly accurate ESDIRK), the rest explicitly. Each implicit stage is a
//! 2 × 2 solve per wheel, no Newton iteration.
//!
//! Why: the wheel-spin / longitudinal-slip pair of each wheel has eigenvalues
//! near −37 ± 180i s⁻¹ at road speeds, which caps an explicit method's step at
//! about 15 ms whatever the tolerance. Treated implicitly, it no longer limits
//! the step; the explicit part's step is set by the tolerance and the slower
//! modes. Any J gives a consistent method of order 4: the splitting is exact,
//! and the additive order conditions hold for any split (Kennedy & Carpenter,
//! §3); a J close to the true Jacobian only lets the steps grow.
//!
//! Same interface as `ode_solvers::Dopri5Stepper` (one accepted step at a
//! time, capped at a stop time, first same as last): the derivative at the
//! end of a step is evaluated once, used for the next step's first stage and
//! for the cubic Hermite dense output of the step (Hairer, Nørsett & Wanner,
//! *Solving Ordinary Differential Equations I*, 2nd ed., §II.6, eq. (6.7)).

use ode_solvers::controller::Controller;
use ode_solvers::dop_shared::{IntegrationError, Stats, System};

use crate::model::{N_STATES, SLIP_ANGLE, SLIP_RATIO, State, WHEEL_SPEED, WheelJacobian};

/// Number of stages.
const STAGES: usize = 6;

/// Diagonal coefficient γ of the ESDIRK.
const GAMMA: f64 = 0.25;

/// The coefficients of ARK4(3)6L[2]SA (Kennedy & Carpenter 2003, Appendix C,
/// tables of ARK4(3)6L[2]SA-ERK and -ESDIRK; section from memory): stage times c, explicit and
/// implicit stage weights (strictly lower parts; the implicit diagonal is
/// [`GAMMA`] after the first stage), the weights b of the 4th-order solution
/// (shared by both parts) and b̂ of the embedded 3rd-order one. Checked
/// against the order conditions by `tests::order_conditions_hold`.
mod tableau {
    use super::STAGES;

    pub const C: [f64; STAGES] = [0.0, 0.5, 83.0 / 250.0, 31.0 / 50.0, 17.0 / 20.0, 1.0];

    pub const AE: [[f64; STAGES]; STAGES] = [
        [0.0; STAGES],
        [0.5, 0.0, 0.0, 0.0, 0.0, 0.0],
        [13861.0 / 62500.0, 6889.0 / 62500.0, 0.0, 0.0, 0.0, 0.0],
        [
            -116923316275.0 / 2393684061468.0,
            -2731218467317.0 / 15368042101831.0,
            9408046702089.0 / 11113171139209.0,
            0.0,
            0.0,
            0.0,
        ],
        [
            -451086348788.0 / 2902428689909.0,
            -2682348792572.0 / 7519795681897.0,
            12662868775082.0 / 11960479115383.0,
            3355817975965.0 / 11060851509271.0,
            0.0,
            0.0,
        ],
        [
            647845179188.0 / 3216320057751.0,
            73281519250.0 / 8382639484533.0,
            552539513391.0 / 3454668386233.0,
            3354512671639.0 / 8306763924573.0,
            4040.0 / 17871.0,
            0.0,
        ],
    ];

    pub const AI: [[f64; STAGES]; STAGES] = [
        [0.0; STAGES],
        [0.25, 0.0, 0.0, 0.0, 0.0, 0.0],
        [8611.0 / 62500.0, -1743.0 / 31250.0, 0.0, 0.0, 0.0, 0.0],
        [
            5012029.0 / 34652500.0,
            -654441.0 / 2922500.0,
            174375.0 / 388108.0,
            0.0,
            0.0,
            0.0,
        ],
        [
            15267082809.0 / 155376265600.0,
            -71443401.0 / 120774400.0,
            730878875.0 / 902184768.0,
            2285395.0 / 8070912.0,
            0.0,
            0.0,
        ],
        [
            82889.0 / 524892.0,
            0.0,
            15625.0 / 83664.0,
            69875.0 / 102672.0,
            -2260.0 / 8211.0,
            0.0,
        ],
    ];

    pub const B: [f64; STAGES] = [
        82889.0 / 524892.0,
        0.0,
        15625.0 / 83664.0,
        69875.0 / 102672.0,
        -2260.0 / 8211.0,
        0.25,
    ];

    pub const B_HAT: [f64; STAGES] = [
        4586570599.0 / 29645900160.0,
        0.0,
        178811875.0 / 945068544.0,
        814220225.0 / 1159782912.0,
        -3700637.0 / 11593932.0,
        61727.0 / 225920.0,
    ];
}

/// A right-hand side with a fast linear part: [`WheelJacobian`] at a point.
pub(super) trait SplitSystem: System<f64, State> {
    /// The wheels' Jacobian at (`t`, `y`), where the derivative was just
    /// evaluated.
    fn linear_part(&self, t: f64, y: &State) -> WheelJacobian;
}

/// `j`, or all zeros (every wheel explicit) if any entry is not finite.
fn finite_or_zero(j: WheelJacobian) -> WheelJacobian {
    let all = [
        j.spin_spin,
        j.spin_slip,
        j.slip_spin,
        j.slip_slip,
        j.lateral,
    ];
    if all.iter().flatten().all(|v| v.is_finite()) {
        j
    } else {
        WheelJacobian::default()
    }
}

/// J·v for the wheel Jacobian `j` (zero outside the wheel states).
fn apply(j: &WheelJacobian, v: &State) -> State {
    let mut out = State::zeros();
    for i in 0..4 {
        let (w, k, a) = (WHEEL_SPEED + i, SLIP_RATIO + i, SLIP_ANGLE + i);
        out[w] = j.spin_spin[i] * v[w] + j.spin_slip[i] * v[k];
        out[k] = j.slip_spin[i] * v[w] + j.slip_slip[i] * v[k];
        out[a] = j.lateral[i] * v[a];
    }
    out
}

/// Solves (I − g·J)·x = r in place (`g` = γ·h, s): a 2 × 2 solve per wheel
/// for spin and slip ratio, one division for the slip angle, identity
/// elsewhere. A wheel whose block is (nearly) singular, which needs g times
/// a positive eigenvalue near 1 (a wheel spinning up past the force peak), is
/// left explicit for that stage.
fn solve(j: &WheelJacobian, g: f64, r: &mut State) {
    for i in 0..4 {
        let (w, k, a) = (WHEEL_SPEED + i, SLIP_RATIO + i, SLIP_ANGLE + i);
        let (m11, m12) = (1.0 - g * j.spin_spin[i], -g * j.spin_slip[i]);
        let (m21, m22) = (-g * j.slip_spin[i], 1.0 - g * j.slip_slip[i]);
        let det = m11 * m22 - m12 * m21;
        if det.abs() > 1e-6 * (m11.abs() * m22.abs() + m12.abs() * m21.abs()) {
            let (rw, rk) = (r[w], r[k]);
            r[w] = (m22 * rw - m12 * rk) / det;
            r[k] = (m11 * rk - m21 * rw) / det;
        }
        let d = 1.0 - g * j.lateral[i];
        if d > 1e-6 {
            r[a] /= d;
        }
    }
}

/// One ARK4(3)6L[2]SA integration, stepped one accepted step at a time.
pub(super) struct ArkStepper {
    t: f64,
    y: State,
    /// Derivative at (t, y) when `fsal`.
    f: State,
    fsal: bool,
    t_old: f64,
    y_old: State,
    /// Coefficients r₁, r₂, r₃ of the last step's dense output (see
    /// [`dense`](Self::dense)).
    hermite: [State; 3],
    /// Size of the last accepted step (0 after a restart: no dense output).
    h_old: f64,
    /// Size of the next step to try (0 = choose).
    h: f64,
    rtol: f64,
    atol: f64,
    controller: Controller<f64>,
    stats: Stats,
}

impl ArkStepper {
    /// A stepper at (`t`, `y`) with relative and absolute tolerances and a
    /// step-size controller.
    pub fn new(t: f64, y: State, rtol: f64, atol: f64, controller: Controller<f64>) -> Self {
        Self {
            t,
            y,
            f: State::zeros(),
            fsal: false,
            t_old: t,
            y_old: y,
            hermite: [State::zeros(); 3],
            h_old: 0.0,
            h: 0.0,
            rtol,
            atol,
            controller,
            stats: Stats {
                num_eval: 0,
                accepted_steps: 0,
                rejected_steps: 0,
            },
        }
    }

    /// Moves to (`t`, `y`): drops the stored derivative and the dense output,
    /// keeps the step size and the controller's memory.
    pub fn restart(&mut self, t: f64, y: State) {
        self.t = t;
        self.y = y;
        self.t_old = t;
        self.h_old = 0.0;
        self.fsal = false;
    }

    pub fn x(&self) -> f64 {
        self.t
    }

    pub fn y(&self) -> &State {
        &self.y
    }

    pub fn x_old(&self) -> f64 {
        self.t_old
    }

    pub fn has_derivative(&self) -> bool {
        self.fsal
    }

    pub fn stats(&self) -> Stats {
        self.stats
    }

    /// The derivative at the current point, evaluated now if not stored.
    pub fn derivative<F: SplitSystem>(&mut self, f: &F) -> &State {
        if !self.fsal {
            f.system(self.t, &self.y, &mut self.f);
            self.stats.num_eval += 1;
            self.fsal = true;
        }
        &self.f
    }

    /// Initial step size: the first guess of Hairer, Nørsett & Wanner
    /// (§II.4, algorithm after eq. (4.13), step (b)), h = 0.01·‖y‖/‖f‖ in the
    /// tolerance-scaled norm, bounded by the largest step; the controller
    /// corrects it from the first error estimate.
    fn initial_step(&self, stop: Option<f64>) -> f64 {
        let (mut d0, mut d1) = (0.0, 0.0);
        for i in 0..N_STATES {
            let sc = self.atol + self.y[i].abs() * self.rtol;
            d0 += (self.y[i] / sc).powi(2);
            d1 += (self.f[i] / sc).powi(2);
        }
        let mut h = if d0 < 1e-10 || d1 < 1e-10 {
            1e-6
        } else {
            0.01 * (d0 / d1).sqrt()
        };
        h = h.min(self.controller.h_max());
        if let Some(stop) = stop {
            h = h.min(stop - self.t);
        }
        h
    }

    /// Takes one accepted step (retrying with smaller steps after rejections)
    /// that ends at `stop` at the latest; as `Dopri5Stepper::step`.
    pub fn step<F: SplitSystem>(
        &mut self,
        f: &F,
        stop: Option<f64>,
    ) -> Result<(), IntegrationError> {
        self.derivative(f);
        // A non-finite derivative at the start: stop here, before any stage
        // is evaluated at a state made of it.
        if !self.f.sum().is_finite() {
            return Err(IntegrationError::NonFinite { x: self.t });
        }
        if self.h == 0.0 {
            self.h = self.initial_step(stop);
        }
        let jacobian = finite_or_zero(f.linear_part(self.t, &self.y));
        loop {
            if 0.1 * self.h.abs() <= f64::EPSILON * self.t.abs() {
                return Err(IntegrationError::StepSizeUnderflow { x: self.t });
            }
            let wanted = self.h;
            let (h, clipped) = match stop {
                Some(stop) if self.t + 1.01 * wanted > stop => (stop - self.t, true),
                _ => (wanted, false),
            };
            let (y_next, err) = self.stages(f, &jacobian, h);
            if !err.is_finite() {
                return Err(IntegrationError::NonFinite { x: self.t });
            }
            let mut h_new = 0.0;
            if !self.controller.accept(err, h, &mut h_new) {
                self.stats.rejected_steps += 1;
                self.h = h_new;
                continue;
            }
            self.stats.accepted_steps += 1;
            let t_next = if clipped {
                stop.unwrap_or(self.t + h)
            } else {
                self.t + h
            };
            self.t_old = self.t;
            self.y_old = self.y;
            let f_old = self.f;
            self.t = t_next;
            self.y = y_next;
            self.fsal = false;
            self.derivative(f);
            self.h_old = self.t - self.t_old;
            self.set_dense_output(&f_old);
            self.h = if clipped && h_new >= h {
                h_new.max(wanted)
            } else {
                h_new
            };
            return Ok(());
        }
    }

    /// The stages of a step of size `h` from the current point; returns the
    /// 4th-order solution and the scaled RMS norm of the difference from the
    /// embedded 3rd-order one (the error norm of `Dopri5Stepper`).
    fn stages<F: SplitSystem>(&mut self, f: &F, j: &WheelJacobian, h: f64) -> (State, f64) {
        use tableau::{AE, AI, B, B_HAT, C};
        // Explicit and implicit parts of each stage's derivative.
        let mut fe = [State::zeros(); STAGES];
        let mut fi = [State::zeros(); STAGES];
        let mut full = [State::zeros(); STAGES];
        fe[0] = self.f;
        full[0] = self.f;
        for s in 1..STAGES {
            let mut delta = State::zeros();
            for k in 0..s {
                delta += fe[k] * (h * AE[s][k]) + fi[k] * (h * AI[s][k]);
            }
            solve(j, GAMMA * h, &mut delta);
            let z = self.y + delta;
            fi[s] = apply(j, &delta);
            f.system(self.t + C[s] * h, &z, &mut full[s]);
            fe[s] = full[s] - fi[s];
        }
        self.stats.num_eval += (STAGES - 1) as u32;
        let mut y_next = self.y;
        let mut e = State::zeros();
        for s in 0..STAGES {
            y_next += full[s] * (h * B[s]);
            e += full[s] * (h * (B[s] - B_HAT[s]));
        }
        let mut sum = 0.0;
        for i in 0..N_STATES {
            let sc = self.atol + self.y[i].abs().max(y_next[i].abs()) * self.rtol;
            sum += (e[i] / sc).powi(2);
        }
        (y_next, (sum / N_STATES as f64).sqrt())
    }

    /// The coefficients of the cubic Hermite interpolant of the last step
    /// (Hairer, Nørsett & Wanner, §II.6, eq. (6.7), from memory), from the derivative
    /// `f_old` at its start and the stored one at its end, in the nested form
    /// y(θ) = y₀ + θ·(r₁ + (1 − θ)·(r₂ + θ·r₃)) with r₁ = y₁ − y₀,
    /// r₂ = h·f₀ − r₁, r₃ = r₁ − r₂ − h·f₁ (the ends and end slopes match).
    fn set_dense_output(&mut self, f_old: &State) {
        let h = self.h_old;
        let r1 = self.y - self.y_old;
        let r2 = f_old * h - r1;
        let r3 = r1 - r2 - self.f * h;
        self.hermite = [r1, r2, r3];
    }

    /// The cubic Hermite dense output of the last accepted step at `t` in
    /// [`x_old`](Self::x_old)..=[`x`](Self::x); the current solution if no
    /// step was taken since the last restart.
    pub fn dense(&self, t: f64) -> State {
        if self.h_old == 0.0 {
            return self.y;
        }
        let theta = (t - self.t_old) / self.h_old;
        let [r1, r2, r3] = &self.hermite;
        self.y_old + (r1 + (r2 + r3 * theta) * (1.0 - theta)) * theta
    }
}

#[cfg(test)]
#[path = "ark_tests.rs"]
mod tests;
