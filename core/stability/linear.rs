//! Linearisation of the full nonlinear model about a trim, its eigenvalues,
//! eigenvectors and the naming of modes by participation.

use nalgebra::{Complex, DMatrix, DVector};

use crate::model::{
    AY_GEOMETRIC, Commands, PITCH, PITCH_RATE, ROLL, ROLL_RATE, SLIP_ANGLE, SLIP_RATIO, State, VX,
    VY, WHEEL_SPEED, YAW_RATE, evaluate,
};
use crate::params::Vehicle;

/// States of the linear model, in matrix order: every state but the cyclic
/// X, Y and YAW (the model's derivatives do not depend on them) and the
/// energy integrators `FUEL_USED` and `STORE_ENERGY` (pure integrators of
/// power flows: they take no part in the handling modes, and the stored
/// energy is held at its trim value as a parameter).
pub const LINEAR_STATES: [usize; 20] = [
    VX,
    VY,
    YAW_RATE,
    ROLL,
    ROLL_RATE,
    PITCH,
    PITCH_RATE,
    WHEEL_SPEED,
    WHEEL_SPEED + 1,
    WHEEL_SPEED + 2,
    WHEEL_SPEED + 3,
    SLIP_ANGLE,
    SLIP_ANGLE + 1,
    SLIP_ANGLE + 2,
    SLIP_ANGLE + 3,
    SLIP_RATIO,
    SLIP_RATIO + 1,
    SLIP_RATIO + 2,
    SLIP_RATIO + 3,
    AY_GEOMETRIC,
];

/// Typical magnitude of state `i` at forward speed `speed` (m/s), in the
/// state's unit, used as the floor of finite-difference steps.
pub fn typical_scale(vehicle: &Vehicle, i: usize, speed: f64) -> f64 {
    match i {
        VX => speed.abs().max(1.0),
        VY => 1.0,
        YAW_RATE | ROLL_RATE | PITCH_RATE => 0.1,
        ROLL | PITCH => 0.01,
        AY_GEOMETRIC => 1.0,
        _ if (WHEEL_SPEED..WHEEL_SPEED + 4).contains(&i) => {
            (speed.abs() / vehicle.tyres[(i - WHEEL_SPEED) / 2].rolling_radius).max(1.0)
        }
        _ => 0.01,
    }
}

/// Default relative step of the central differences, cbrt(ε) ≈ 6.1e-6: the
/// step that balances truncation error O(h²) against rounding error O(ε/h)
/// (Press et al., *Numerical Recipes*, 3rd ed., §5.7, from memory).
pub fn default_relative_step() -> f64 {
    f64::EPSILON.cbrt()
}

/// State matrix A = ∂f/∂x (20 × 20, order [`LINEAR_STATES`], units of
/// derivative per unit of state) of the full model at `state` with the
/// commands held, by central differences with steps
/// h_i = `relative_step`·max(|x_i|, [`typical_scale`]_i).
pub fn state_matrix(
    vehicle: &Vehicle,
    state: &State,
    commands: &Commands,
    relative_step: f64,
) -> DMatrix<f64> {
    let n = LINEAR_STATES.len();
    let mut a = DMatrix::zeros(n, n);
    for (col, &j) in LINEAR_STATES.iter().enumerate() {
        let h = relative_step * state[j].abs().max(typical_scale(vehicle, j, state[VX]));
        let (mut xp, mut xm) = (*state, *state);
        xp[j] += h;
        xm[j] -= h;
        let dp = evaluate(vehicle, &xp, commands).derivative;
        let dm = evaluate(vehicle, &xm, commands).derivative;
        let width = xp[j] - xm[j];
        for (row, &i) in LINEAR_STATES.iter().enumerate() {
            a[(row, col)] = (dp[i] - dm[i]) / width;
        }
    }
    a
}

/// Groups of states used to name modes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum StateGroup {
    /// vy and yaw rate.
    YawSideslip,
    /// Roll angle and rate.
    Roll,
    /// Pitch angle and rate.
    Pitch,
    /// vx.
    Longitudinal,
    /// The four wheel speeds.
    WheelSpin,
    /// The eight relaxed slip states.
    TyreLag,
    /// The filtered lateral acceleration of the roll-centre load transfer.
    LoadTransferFilter,
}

impl StateGroup {
    /// All groups in report order.
    pub const ALL: [StateGroup; 7] = [
        StateGroup::YawSideslip,
        StateGroup::Roll,
        StateGroup::Pitch,
        StateGroup::Longitudinal,
        StateGroup::WheelSpin,
        StateGroup::TyreLag,
        StateGroup::LoadTransferFilter,
    ];

    /// Group of model state index `i`.
    pub fn of_state(i: usize) -> StateGroup {
        match i {
            VY | YAW_RATE => StateGroup::YawSideslip,
            ROLL | ROLL_RATE => StateGroup::Roll,
            PITCH | PITCH_RATE => StateGroup::Pitch,
            VX => StateGroup::Longitudinal,
            AY_GEOMETRIC => StateGroup::LoadTransferFilter,
            _ if (WHEEL_SPEED..WHEEL_SPEED + 4).contains(&i) => StateGroup::WheelSpin,
            _ => StateGroup::TyreLag,
        }
    }

    /// Mode name for a mode dominated by this group.
    pub fn name(self) -> &'static str {
        match self {
            StateGroup::YawSideslip => "yaw/sideslip",
            StateGroup::Roll => "roll",
            StateGroup::Pitch => "pitch",
            StateGroup::Longitudinal => "longitudinal",
            StateGroup::WheelSpin => "wheel spin",
            StateGroup::TyreLag => "tyre lag",
            StateGroup::LoadTransferFilter => "load-transfer filter",
        }
    }
}

/// Eigenvalues of `a`, sorted by real part descending, then imaginary part
/// descending (deterministic order), 1/s.
pub fn eigenvalues(a: &DMatrix<f64>) -> Vec<Complex<f64>> {
    let mut ev: Vec<Complex<f64>> = a.complex_eigenvalues().iter().copied().collect();
    ev.sort_by(|p, q| q.re.total_cmp(&p.re).then(q.im.total_cmp(&p.im)));
    ev
}

/// Eigenvector of `a` for the eigenvalue `lambda` by inverse iteration on
/// the complex shifted matrix A − μI, μ = λ + small offset (Golub & Van Loan,
/// *Matrix Computations*, §7.6.1, from memory). Normalised to unit 2-norm.
pub fn eigenvector(a: &DMatrix<f64>, lambda: Complex<f64>) -> DVector<Complex<f64>> {
    let n = a.nrows();
    let scale = 1.0 + lambda.norm();
    let mut offset = 1e-10 * scale;
    let ac: DMatrix<Complex<f64>> = a.map(|v| Complex::new(v, 0.0));
    for _ in 0..6 {
        let mu = lambda + Complex::new(offset, offset);
        let shifted = &ac - DMatrix::<Complex<f64>>::identity(n, n) * mu;
        let lu = shifted.lu();
        let mut v = DVector::from_fn(n, |i, _| Complex::new(1.0 + 0.1 * i as f64, 0.0));
        let mut ok = true;
        for _ in 0..3 {
            match lu.solve(&v) {
                Some(w) if w.iter().all(|c| c.re.is_finite() && c.im.is_finite()) => {
                    let norm = w.norm();
                    if norm == 0.0 {
                        ok = false;
                        break;
                    }
                    v = w.unscale(norm);
                }
                _ => {
                    ok = false;
                    break;
                }
            }
        }
        if ok {
            return v;
        }
        offset *= 1e3;
    }
    DVector::from_element(n, Complex::new(f64::NAN, f64::NAN))
}

/// Participation factors of the mode `lambda`: p_i = |v_i·u_i| / Σ|v_k·u_k|
/// with v the right and u the left eigenvector (Pérez-Arriaga, Verghese &
/// Schweppe, "Selective modal analysis", IEEE Trans. PAS-101, 1982, from
/// memory). Independent of the states' units; sums to 1.
pub fn participation(a: &DMatrix<f64>, lambda: Complex<f64>) -> Vec<f64> {
    let right = eigenvector(a, lambda);
    let left = eigenvector(&a.transpose(), lambda);
    let p: Vec<f64> = right
        .iter()
        .zip(left.iter())
        .map(|(v, u)| (v * u).norm())
        .collect();
    let sum: f64 = p.iter().sum();
    p.into_iter().map(|x| x / sum).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A block-triangular 3 × 3 matrix with known eigenvalues −1 ± 2i and −5
    /// (invented): eigenvectors satisfy A·v = λ·v and participation of the
    /// decoupled state in the pair is zero (Pérez-Arriaga et al. 1982: a state
    /// that the mode does not reach has no participation).
    #[test]
    fn eigenvectors_and_participation_of_known_matrix() {
        let a = DMatrix::from_row_slice(3, 3, &[-1.0, 2.0, 0.0, -2.0, -1.0, 0.0, 0.3, 0.7, -5.0]);
        let ev = eigenvalues(&a);
        assert!((ev[0] - Complex::new(-1.0, 2.0)).norm() < 1e-12);
        assert!((ev[1] - Complex::new(-1.0, -2.0)).norm() < 1e-12);
        assert!((ev[2] - Complex::new(-5.0, 0.0)).norm() < 1e-12);
        let ac = a.map(|v| Complex::new(v, 0.0));
        for &l in &ev {
            let v = eigenvector(&a, l);
            assert!((&ac * &v - &v * l).norm() < 1e-8);
        }
        let p = participation(&a, ev[0]);
        assert!((p.iter().sum::<f64>() - 1.0).abs() < 1e-12);
        assert!(p[2] < 1e-10, "{p:?}");
        assert!((p[0] - 0.5).abs() < 1e-9 && (p[1] - 0.5).abs() < 1e-9);
        let p = participation(&a, ev[2]);
        assert!((p[2] - 1.0).abs() < 1e-9, "{p:?}");
    }
}
