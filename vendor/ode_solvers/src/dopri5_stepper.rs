//! yawdyn patch: Dopri5 driven one step at a time (not in upstream 0.6.2).
//!
//! [`Dopri5`](crate::Dopri5) integrates between two fixed ends in one call and
//! starts afresh on every call: it evaluates the derivative at the start again
//! and keeps nothing of the step size it found. A caller that must stop often
//! (a controller reading the state at every tick) and then continues with the
//! same right-hand side loses a derivative evaluation per stop and a well-sized
//! step. [`Dopri5Stepper`] keeps between calls what a continued integration
//! needs: the current point, the step size the controller proposed and the
//! controller's memory, the derivative at the current point (first same as
//! last, FSAL) and the dense-output coefficients of the last accepted step. The
//! caller owns the loop: it says where a step may end at the latest, and calls
//! [`Dopri5Stepper::restart`] when the right-hand side changed.
//!
//! Method, coefficients, error norm, initial step and step-size controller are
//! those of [`Dopri5`](crate::Dopri5): Dormand–Prince 5(4) with Shampine's
//! dense output of order 4 (Hairer, Nørsett & Wanner, *Solving Ordinary
//! Differential Equations I*, 2nd ed., §II.4 (initial step), §II.5 (method and
//! table 5.2), §II.6 (dense output)). Forward integration only.

use crate::butcher_tableau::dopri54;
use crate::constants::initial_step;
use crate::controller::Controller;
use crate::dop_shared::{FloatNumber, IntegrationError, Stats, System};
use nalgebra::{DefaultAllocator, Dim, OVector, allocator::Allocator};

/// Dopri5 as a stepper whose state lives between calls.
pub struct Dopri5Stepper<T, D>
where
    T: FloatNumber,
    D: Dim,
    DefaultAllocator: Allocator<D>,
{
    /// Current point: end of the last accepted step.
    x: T,
    y: OVector<T, D>,
    /// Start and size of the last accepted step (size 0 before the first).
    x_old: T,
    h_old: T,
    /// Size of the next step to try; 0 = choose with the initial-step rule.
    h: T,
    rtol: T,
    atol: T,
    uround: T,
    controller: Controller<T>,
    /// Stage derivatives of the step; `k[0]` is the derivative at (x, y)
    /// when `fsal` is true.
    k: [OVector<T, D>; 7],
    fsal: bool,
    /// Dense-output coefficients of the last accepted step.
    rcont: [OVector<T, D>; 5],
    stats: Stats,
}

impl<T, D> Dopri5Stepper<T, D>
where
    f64: From<T>,
    T: FloatNumber,
    D: Dim,
    DefaultAllocator: Allocator<D>,
{
    /// A stepper at (`x`, `y`) with relative and absolute tolerances and a
    /// step-size controller (e.g. `Controller::new(0.17, 0.04, 10.0, 0.2,
    /// h_max, 0.9, 1.0)` for the values [`Dopri5`](crate::Dopri5) uses).
    pub fn new(x: T, y: OVector<T, D>, rtol: T, atol: T, controller: Controller<T>) -> Self {
        let (rows, cols) = y.shape_generic();
        let zeros = || OVector::zeros_generic(rows, cols);
        Self {
            x,
            y,
            x_old: x,
            h_old: T::zero(),
            h: T::zero(),
            rtol,
            atol,
            uround: T::from(f64::EPSILON).unwrap(),
            controller,
            k: [zeros(), zeros(), zeros(), zeros(), zeros(), zeros(), zeros()],
            fsal: false,
            rcont: [zeros(), zeros(), zeros(), zeros(), zeros()],
            stats: Stats::new(),
        }
    }

    /// Moves to (`x`, `y`) with a right-hand side that may differ from the one
    /// used so far: the stored derivative and dense output are dropped, the
    /// proposed step size and the controller's memory are kept.
    pub fn restart(&mut self, x: T, y: OVector<T, D>) {
        self.x = x;
        self.y = y;
        self.x_old = x;
        self.h_old = T::zero();
        self.fsal = false;
    }

    /// Sets the size of the next step to try (0 = choose it automatically).
    pub fn set_step_size(&mut self, h: T) {
        self.h = h.abs();
    }

    /// Current point (end of the last accepted step).
    pub fn x(&self) -> T {
        self.x
    }

    /// Solution at the current point.
    pub fn y(&self) -> &OVector<T, D> {
        &self.y
    }

    /// Start of the last accepted step (equals [`x`](Self::x) after a restart).
    pub fn x_old(&self) -> T {
        self.x_old
    }

    /// Size of the next step to try (0 before the first step).
    pub fn step_size(&self) -> T {
        self.h
    }

    /// Whether the derivative at the current point is stored (no restart since
    /// the last accepted step).
    pub fn has_derivative(&self) -> bool {
        self.fsal
    }

    /// Evaluations, accepted and rejected steps so far.
    pub fn stats(&self) -> Stats {
        self.stats
    }

    /// The derivative at the current point, evaluated now if it is not stored.
    pub fn derivative<F: System<T, OVector<T, D>>>(&mut self, f: &F) -> &OVector<T, D> {
        if !self.fsal {
            f.system(self.x, &self.y, &mut self.k[0]);
            self.stats.num_eval += 1;
            self.fsal = true;
        }
        &self.k[0]
    }

    /// Takes one accepted step (retrying with smaller steps after rejections)
    /// that ends at `x_stop` at the latest. A step cut short to end exactly
    /// at `x_stop` does not shrink the next one unless its own error asks for it.
    pub fn step<F: System<T, OVector<T, D>>>(
        &mut self,
        f: &F,
        x_stop: Option<T>,
    ) -> Result<(), IntegrationError> {
        self.derivative(f);
        if self.h == T::zero() {
            self.h = self.initial_step(f, x_stop);
            self.stats.num_eval += 2;
        }
        loop {
            // Step size underflow.
            if T::from(0.1).unwrap() * self.h.abs() <= self.uround * self.x.abs() {
                return Err(IntegrationError::StepSizeUnderflow {
                    x: f64::from(self.x),
                });
            }
            // End exactly at x_stop when the step would reach (almost) past it.
            let wanted = self.h;
            let (h, clipped) = match x_stop {
                Some(stop) if self.x + T::from(1.01).unwrap() * wanted > stop => {
                    (stop - self.x, true)
                }
                _ => (wanted, false),
            };
            let y_next = self.stages(f, h);
            let err = self.error_norm(h, &y_next);
            if !err.is_finite() {
                return Err(IntegrationError::NonFinite {
                    x: f64::from(self.x),
                });
            }
            let mut h_new = T::zero();
            if !self.controller.accept(err, h, &mut h_new) {
                self.stats.rejected_steps += 1;
                self.h = h_new;
                continue;
            }
            // Accepted: dense-output coefficients, then move to the new point.
            self.stats.accepted_steps += 1;
            self.dense_coefficients(h, &y_next);
            self.k[0] = self.k[6].clone();
            self.y = y_next;
            self.x_old = self.x;
            self.x = if clipped { x_stop.unwrap_or(self.x + h) } else { self.x + h };
            self.h_old = h;
            self.h = if clipped && h_new >= h {
                h_new.max(wanted)
            } else {
                h_new
            };
            return Ok(());
        }
    }

    /// The six stages after the first for a step of size `h`; the last is at
    /// (x + h, y_next). Returns y_next, the 5th-order solution.
    fn stages<F: System<T, OVector<T, D>>>(&mut self, f: &F, h: T) -> OVector<T, D> {
        let mut y_next = self.y.clone();
        for s in 1..7 {
            y_next.copy_from(&self.y);
            for j in 0..s {
                y_next += &self.k[j] * h * dopri54::a::<T>(s + 1, j + 1);
            }
            f.system(self.x + h * dopri54::c::<T>(s + 1), &y_next, &mut self.k[s]);
        }
        self.stats.num_eval += 6;
        y_next
    }

    /// Shampine's dense-output coefficients of the step of size `h` from
    /// (x, y) to y_next (as in [`Dopri5`](crate::Dopri5)).
    fn dense_coefficients(&mut self, h: T, y_next: &OVector<T, D>) {
        let k = &self.k;
        let ydiff = y_next - &self.y;
        let bspl = &k[0] * h - &ydiff;
        self.rcont[4] = (&k[0] * dopri54::d::<T>(1)
            + &k[2] * dopri54::d::<T>(3)
            + &k[3] * dopri54::d::<T>(4)
            + &k[4] * dopri54::d::<T>(5)
            + &k[5] * dopri54::d::<T>(6)
            + &k[6] * dopri54::d::<T>(7))
            * h;
        self.rcont[3] = -&k[6] * h + &ydiff - &bspl;
        self.rcont[0] = self.y.clone();
        self.rcont[1] = ydiff;
        self.rcont[2] = bspl;
    }

    /// Scaled RMS norm of the error of the embedded 4th-order solution.
    fn error_norm(&self, h: T, y_next: &OVector<T, D>) -> T {
        let k = &self.k;
        let dim = self.y.len();
        let mut err = T::zero();
        for i in 0..dim {
            let e = h
                * (k[0][i] * dopri54::e::<T>(1)
                    + k[2][i] * dopri54::e::<T>(3)
                    + k[3][i] * dopri54::e::<T>(4)
                    + k[4][i] * dopri54::e::<T>(5)
                    + k[5][i] * dopri54::e::<T>(6)
                    + k[6][i] * dopri54::e::<T>(7));
            let sc = self.atol + self.y[i].abs().max(y_next[i].abs()) * self.rtol;
            err += (e / sc) * (e / sc);
        }
        (err / T::from(dim).unwrap()).sqrt()
    }

    /// The dense output of the last accepted step at `x` in
    /// [`x_old`](Self::x_old)..=[`x`](Self::x); the current solution if no
    /// step was taken since the last restart.
    pub fn dense(&self, x: T) -> OVector<T, D> {
        if self.h_old == T::zero() {
            return self.y.clone();
        }
        let theta = (x - self.x_old) / self.h_old;
        let theta1 = T::one() - theta;
        let r = &self.rcont;
        &r[0] + (&r[1] + (&r[2] + (&r[3] + &r[4] * theta1) * theta) * theta1) * theta
    }

    /// Initial step size (Hairer, Nørsett & Wanner, §II.4, algorithm after
    /// eq. (4.13)), as in [`Dopri5`](crate::Dopri5); uses the stored derivative
    /// and one more evaluation.
    fn initial_step<F: System<T, OVector<T, D>>>(&self, f: &F, x_stop: Option<T>) -> T {
        let f0 = &self.k[0];
        let dim = self.y.len();
        let (mut d0, mut d1) = (T::zero(), T::zero());
        for i in 0..dim {
            let sc = self.atol + self.y[i].abs() * self.rtol;
            d0 += (self.y[i] / sc) * (self.y[i] / sc);
            d1 += (f0[i] / sc) * (f0[i] / sc);
        }
        let tol = initial_step::min_tolerance();
        let mut h0 = if d0 < tol || d1 < tol {
            initial_step::default_initial_step()
        } else {
            initial_step::safety_factor::<T>() * (d0 / d1).sqrt()
        };
        let mut h_max = self.controller.h_max();
        if let Some(stop) = x_stop {
            h_max = h_max.min(stop - self.x);
        }
        h0 = h0.min(h_max);
        let y1 = &self.y + f0 * h0;
        let mut f1 = f0.clone();
        f.system(self.x + h0, &y1, &mut f1);
        let mut d2 = T::zero();
        for i in 0..dim {
            let sc = self.atol + self.y[i].abs() * self.rtol;
            d2 += ((f1[i] - f0[i]) / sc) * ((f1[i] - f0[i]) / sc);
        }
        d2 = d2.sqrt() / h0;
        let h1 = if d1.sqrt().max(d2.abs()) <= T::from(1.0E-15).unwrap() {
            T::from(1.0E-6).unwrap().max(h0 * T::from(1.0E-3).unwrap())
        } else {
            (T::from(0.01).unwrap() / d1.sqrt().max(d2)).powf(T::from(0.2).unwrap())
        };
        (T::from(100.0).unwrap() * h0).min(h1).min(h_max)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{Dopri5, Vector1};

    /// y' = −3t²·e^y, y(0) = 0: exact solution y = −ln(1 + t³).
    struct Decay;

    impl System<f64, Vector1<f64>> for Decay {
        fn system(&self, t: f64, y: &Vector1<f64>, dy: &mut Vector1<f64>) {
            dy[0] = -3.0 * t * t * y[0].exp();
        }
    }

    fn stepper(rtol: f64) -> Dopri5Stepper<f64, nalgebra::U1> {
        let controller = Controller::new(0.2 - 0.04 * 0.75, 0.04, 10.0, 0.2, 10.0, 0.9, 1.0);
        Dopri5Stepper::new(0.0, Vector1::new(0.0), rtol, rtol, controller)
    }

    /// Stepping to an end gives the same solution as one `Dopri5` call with the
    /// same settings, bit for bit, and the same number of evaluations.
    #[test]
    fn same_as_one_dopri5_call() {
        let mut s = stepper(1e-8);
        while s.x() < 2.0 {
            s.step(&Decay, Some(2.0)).unwrap();
        }
        let mut d = Dopri5::from_param(
            Decay,
            0.0,
            2.0,
            2.0,
            Vector1::new(0.0),
            1e-8,
            1e-8,
            0.9,
            0.04,
            0.2,
            10.0,
            10.0,
            0.0,
            100000,
            u32::MAX,
            crate::OutputType::Sparse,
        );
        let stats = d.integrate().unwrap();
        assert_eq!(s.x(), 2.0);
        assert_eq!(s.y()[0], d.y_out().last().unwrap()[0]);
        assert_eq!(s.stats().num_eval, stats.num_eval);
        assert_eq!(s.stats().accepted_steps, stats.accepted_steps);
    }

    /// Dense output matches the exact solution within the tolerance, and the
    /// derivative at the end of a step is reused for the next (6 evaluations
    /// per accepted step after the first).
    #[test]
    fn dense_output_and_first_same_as_last() {
        let mut s = stepper(1e-9);
        s.step(&Decay, None).unwrap();
        let first = s.stats().num_eval;
        for _ in 0..20 {
            let before = s.stats();
            s.step(&Decay, None).unwrap();
            let after = s.stats();
            let tries = (after.accepted_steps + after.rejected_steps)
                - (before.accepted_steps + before.rejected_steps);
            assert_eq!(after.num_eval - before.num_eval, 6 * tries);
            let mid = 0.5 * (s.x_old() + s.x());
            let exact = -(1.0 + mid.powi(3)).ln();
            assert!((s.dense(mid)[0] - exact).abs() < 1e-7, "at {mid}");
        }
        assert!(first >= 7);
        s.restart(s.x(), *s.y());
        assert!(!s.has_derivative());
        let before = s.stats().num_eval;
        s.step(&Decay, None).unwrap();
        assert!(s.stats().num_eval - before >= 7, "a restart evaluates anew");
    }
}
