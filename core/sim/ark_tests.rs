//! Tests of the additive Runge–Kutta stepper.

use super::tableau::{AE, AI, B, B_HAT, C};
use super::*;

/// The order conditions of an additive Runge–Kutta pair up to order 4,
/// with every combination of the explicit and implicit tableaux
/// (Kennedy & Carpenter 2003, §3, table 2, from memory): the 4th-order weights meet
/// them all, the 3rd-order embedded weights those up to order 3.
#[test]
fn order_conditions_hold() {
    let ai: Vec<[f64; STAGES]> = (0..STAGES)
        .map(|i| std::array::from_fn(|k| if k == i && i > 0 { GAMMA } else { AI[i][k] }))
        .collect();
    let tables = [AE.to_vec(), ai];
    let mat_vec = |a: &Vec<[f64; STAGES]>, v: &[f64; STAGES]| -> [f64; STAGES] {
        std::array::from_fn(|i| (0..STAGES).map(|k| a[i][k] * v[k]).sum())
    };
    let dot =
        |b: &[f64; STAGES], v: &[f64; STAGES]| -> f64 { (0..STAGES).map(|i| b[i] * v[i]).sum() };
    let ones = [1.0; STAGES];
    for a in &tables {
        // Stage times are the row sums of both tableaux.
        let sums = mat_vec(a, &ones);
        for i in 0..STAGES {
            assert!(
                (sums[i] - C[i]).abs() < 1e-14,
                "row {i}: {} vs {}",
                sums[i],
                C[i]
            );
        }
    }
    let c2: [f64; STAGES] = std::array::from_fn(|i| C[i] * C[i]);
    let c3: [f64; STAGES] = std::array::from_fn(|i| C[i] * C[i] * C[i]);
    for (weights, order) in [(B, 4), (B_HAT, 3)] {
        let b = &weights;
        assert!((dot(b, &ones) - 1.0).abs() < 1e-14);
        assert!((dot(b, &C) - 0.5).abs() < 1e-14);
        assert!((dot(b, &c2) - 1.0 / 3.0).abs() < 1e-14);
        for a in &tables {
            assert!((dot(b, &mat_vec(a, &C)) - 1.0 / 6.0).abs() < 1e-13);
        }
        if order < 4 {
            continue;
        }
        assert!((dot(b, &c3) - 0.25).abs() < 1e-13);
        for a in &tables {
            let ac = mat_vec(a, &C);
            let cac: [f64; STAGES] = std::array::from_fn(|i| C[i] * ac[i]);
            assert!((dot(b, &cac) - 1.0 / 8.0).abs() < 1e-13);
            assert!((dot(b, &mat_vec(a, &c2)) - 1.0 / 12.0).abs() < 1e-13);
            for a2 in &tables {
                assert!((dot(b, &mat_vec(a, &mat_vec(a2, &C))) - 1.0 / 24.0).abs() < 1e-13);
            }
        }
    }
}

/// y′ = J·(y − g(t)) + g′(t) on one wheel's spin and slip ratio, with
/// g = (sin t, cos t): the Prothero–Robinson test problem (Prothero &
/// Robinson, "On the stability and accuracy of one-step methods for
/// solving stiff systems of ordinary differential equations", *Math.
/// Comp.* 28 (1974) 145–162, from memory), whose exact solution from
/// y(0) = g(0) is y = g(t) whatever the stiffness of J.
struct ProtheroRobinson {
    /// The true matrix [[a, b], [c, d]] (wheel 0's spin and slip rows).
    j: [f64; 4],
    /// The matrix handed to the stepper as the linear part.
    given: WheelJacobian,
}

impl ProtheroRobinson {
    fn new(j: [f64; 4], tell: bool) -> Self {
        let mut given = WheelJacobian::default();
        if tell {
            given.spin_spin[0] = j[0];
            given.spin_slip[0] = j[1];
            given.slip_spin[0] = j[2];
            given.slip_slip[0] = j[3];
        }
        Self { j, given }
    }
}

impl System<f64, State> for ProtheroRobinson {
    fn system(&self, t: f64, y: &State, dy: &mut State) {
        let (w, k) = (WHEEL_SPEED, SLIP_RATIO);
        let (e1, e2) = (y[w] - t.sin(), y[k] - t.cos());
        *dy = State::zeros();
        dy[w] = self.j[0] * e1 + self.j[1] * e2 + t.cos();
        dy[k] = self.j[2] * e1 + self.j[3] * e2 - t.sin();
    }
}

impl SplitSystem for ProtheroRobinson {
    fn linear_part(&self, _t: f64, _y: &State) -> WheelJacobian {
        self.given
    }
}

/// Integrates to t = 2 s at rtol = atol = `tol`; returns the largest error
/// against the exact solution at the step ends and the steps taken.
fn integrate(problem: &ProtheroRobinson, tol: f64) -> (f64, u32) {
    let mut y = State::zeros();
    y[SLIP_RATIO] = 1.0;
    let controller = Controller::new(0.22, 0.04, 10.0, 0.2, 0.5, 0.9, 1.0);
    let mut stepper = ArkStepper::new(0.0, y, tol, tol, controller);
    let mut worst: f64 = 0.0;
    while stepper.x() < 2.0 {
        stepper.step(problem, Some(2.0)).unwrap();
        let (t, y) = (stepper.x(), stepper.y());
        worst = worst
            .max((y[WHEEL_SPEED] - t.sin()).abs())
            .max((y[SLIP_RATIO] - t.cos()).abs());
    }
    (worst, stepper.stats().accepted_steps)
}

/// A very stiff block (eigenvalues −1e5 and −10 s⁻¹) given as the linear
/// part is followed to the tolerance; left to the explicit part (J = 0),
/// the same problem is outside the explicit stability region at any step
/// the controller allows, and the error is 1,000× larger.
#[test]
fn stiff_block_is_stable_where_the_explicit_part_is_not() {
    let j = [-1e5, 0.0, 0.0, -10.0];
    let (implicit, _) = integrate(&ProtheroRobinson::new(j, true), 1e-6);
    let (explicit, _) = integrate(&ProtheroRobinson::new(j, false), 1e-6);
    assert!(implicit < 1e-5, "error {implicit}");
    assert!(explicit > 1e-3, "error {explicit}");
}

/// A stiff oscillatory block like the wheel mode but 10× faster
/// (eigenvalues −370 ± 1,800i s⁻¹). Its forcing g varies in time and is
/// taken explicitly, so the stiff components' error, not stability, sets
/// the step: at rtol = atol = 1e-4 the linear part halves the steps and
/// the error; at 1e-6 it takes more steps than the explicit part alone
/// (2,631 against 1,004, measured; the reason the default stays Dopri5).
#[test]
fn stiff_oscillatory_block_at_a_loose_tolerance() {
    let j = [-370.0, -1800.0, 1800.0, -370.0];
    let (implicit, with) = integrate(&ProtheroRobinson::new(j, true), 1e-4);
    let (explicit, without) = integrate(&ProtheroRobinson::new(j, false), 1e-4);
    assert!(implicit < explicit, "errors {implicit} vs {explicit}");
    assert!(2 * with < 3 * without / 2, "steps {with} vs {without}");
    assert!(implicit < 1e-3, "error {implicit}");
}

/// The split is exact for any linear part: on a non-stiff problem the
/// right matrix and none (all explicit) give the same accuracy.
#[test]
fn any_linear_part_gives_the_same_solution() {
    let mild = [-2.0, -3.0, 3.0, -2.0];
    let (told, _) = integrate(&ProtheroRobinson::new(mild, true), 1e-6);
    let (untold, _) = integrate(&ProtheroRobinson::new(mild, false), 1e-6);
    assert!(told < 1e-5 && untold < 1e-5, "{told} {untold}");
}

/// The dense output reproduces a cubic exactly (Hermite interpolation of
/// degree 3) between the ends of a step.
#[test]
fn dense_output_is_cubic_hermite() {
    let mut s = ArkStepper::new(
        0.0,
        State::zeros(),
        1e-6,
        1e-6,
        Controller::new(0.22, 0.04, 10.0, 0.2, 1.0, 0.9, 1.0),
    );
    let p = |t: f64| 1.0 + 2.0 * t - 3.0 * t * t + 0.5 * t * t * t;
    let dp = |t: f64| 2.0 - 6.0 * t + 1.5 * t * t;
    let (t0, t1) = (0.3, 0.8);
    s.t_old = t0;
    s.t = t1;
    s.h_old = t1 - t0;
    s.y_old[0] = p(t0);
    s.y[0] = p(t1);
    s.f[0] = dp(t1);
    let mut f_old = State::zeros();
    f_old[0] = dp(t0);
    s.set_dense_output(&f_old);
    for k in 0..=10 {
        let t = t0 + (t1 - t0) * k as f64 / 10.0;
        assert!((s.dense(t)[0] - p(t)).abs() < 1e-14, "at {t}");
    }
}
