//! The linear single-track ("bicycle") model: the reference against which the
//! nonlinear vehicle's handling is judged.
//!
//! It owns the closed-form steady-state results (understeer gradient,
//! characteristic and critical speed, steady-state steer, yaw-rate and
//! sideslip gains) from Gillespie, *Fundamentals of Vehicle Dynamics* (SAE,
//! 1992), ch. 6, and the two-state lateral/yaw model with its eigenvalues from
//! Rajamani, *Vehicle Dynamics and Control*, 2nd ed., §2.3. It does not
//! integrate anything in time and knows nothing of tyres beyond one linear
//! cornering stiffness per axle.
//!
//! Conventions: ISO 8855 axes (x forward, y left, z up); road-wheel angle δ
//! positive to the left; cornering stiffnesses positive (lateral force
//! = C · slip angle, slip angle positive when the tyre's velocity points to
//! the right of its heading). All quantities SI.

use nalgebra::{Complex, Matrix2, Vector2};

use super::AnalysisError;

/// Standard gravity, m/s² (used only to express gradients per g).
pub const STANDARD_GRAVITY: f64 = 9.806_65;

/// Linear single-track vehicle. All fields SI.
///
/// ```
/// use yawdyn::analysis::BicycleModel;
/// let car = BicycleModel::new(1500.0, 2500.0, 1.2, 1.5, 80_000.0, 90_000.0).unwrap();
/// assert!(car.understeer_gradient() > 0.0); // understeers
/// ```
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BicycleModel {
    /// Vehicle mass, kg.
    pub mass: f64,
    /// Yaw moment of inertia about the CG, kg·m².
    pub yaw_inertia: f64,
    /// Distance from the CG to the front axle, m.
    pub a: f64,
    /// Distance from the CG to the rear axle, m.
    pub b: f64,
    /// Front axle cornering stiffness (both tyres together), N/rad, > 0.
    pub cornering_stiffness_front: f64,
    /// Rear axle cornering stiffness (both tyres together), N/rad, > 0.
    pub cornering_stiffness_rear: f64,
}

impl BicycleModel {
    /// Build a model, checking that every parameter is finite and positive.
    pub fn new(
        mass: f64,
        yaw_inertia: f64,
        a: f64,
        b: f64,
        cornering_stiffness_front: f64,
        cornering_stiffness_rear: f64,
    ) -> Result<Self, AnalysisError> {
        let checks = [
            ("mass", mass),
            ("yaw_inertia", yaw_inertia),
            ("a", a),
            ("b", b),
            ("cornering_stiffness_front", cornering_stiffness_front),
            ("cornering_stiffness_rear", cornering_stiffness_rear),
        ];
        for (name, value) in checks {
            if !(value.is_finite() && value > 0.0) {
                return Err(AnalysisError::InvalidParameter {
                    name,
                    value,
                    expected: "finite and > 0",
                });
            }
        }
        Ok(Self {
            mass,
            yaw_inertia,
            a,
            b,
            cornering_stiffness_front,
            cornering_stiffness_rear,
        })
    }

    /// Wheelbase L = a + b, m.
    pub fn wheelbase(&self) -> f64 {
        self.a + self.b
    }

    /// Understeer gradient K, rad/(m/s²) (road-wheel angle per lateral
    /// acceleration).
    ///
    /// SI form of Gillespie ch. 6 (eq. 6-15, number from memory),
    /// K = Wf/Cαf − Wr/Cαr with the static axle loads Wf = m·g·b/L,
    /// Wr = m·g·a/L: K = (m/L)·(b/Cf − a/Cr). K > 0 understeer, K < 0
    /// oversteer, K = 0 neutral steer.
    pub fn understeer_gradient(&self) -> f64 {
        let m = self.mass;
        let l = self.wheelbase();
        (m / l) * (self.b / self.cornering_stiffness_front - self.a / self.cornering_stiffness_rear)
    }

    /// Understeer gradient in Gillespie's units, deg/g
    /// (K_SI · g · 180/π; Gillespie ch. 6).
    pub fn understeer_gradient_deg_per_g(&self) -> f64 {
        self.understeer_gradient().to_degrees() * STANDARD_GRAVITY
    }

    /// Characteristic speed, m/s: V_char = sqrt(L/K), the speed at which the
    /// steer angle needed is twice the Ackermann angle and the yaw-rate gain
    /// is greatest (Gillespie ch. 6: V_char = sqrt(57.3·L·g/K) with K in
    /// deg/g; eq. number from memory). `None` unless K > 0.
    pub fn characteristic_speed(&self) -> Option<f64> {
        let k = self.understeer_gradient();
        (k > 0.0).then(|| (self.wheelbase() / k).sqrt())
    }

    /// Critical speed, m/s: V_crit = sqrt(−L/K), above which an oversteering
    /// vehicle is directionally unstable (Gillespie ch. 6:
    /// V_crit = sqrt(−57.3·L·g/K) with K in deg/g; eq. number from memory).
    /// `None` unless K < 0.
    pub fn critical_speed(&self) -> Option<f64> {
        let k = self.understeer_gradient();
        (k < 0.0).then(|| (-self.wheelbase() / k).sqrt())
    }

    /// Steady-state road-wheel angle, rad, to drive a circle of `radius` (m,
    /// positive = left turn) at `speed` (m/s): δ = L/R + K·ay with
    /// ay = V²/R (Gillespie ch. 6, eq. 6-15 from memory, SI form).
    pub fn steady_state_steer(&self, speed: f64, radius: f64) -> f64 {
        let ay = speed * speed / radius;
        self.wheelbase() / radius + self.understeer_gradient() * ay
    }

    /// Steady-state yaw-rate gain r/δ, 1/s, at `speed` (m/s):
    /// (V/L)/(1 + K·V²/L) (Gillespie ch. 6, eq. 6-21 from memory, SI form).
    /// Infinite or negative above the critical speed of an oversteering car,
    /// where no stable steady state exists.
    pub fn yaw_rate_gain(&self, speed: f64) -> f64 {
        let l = self.wheelbase();
        (speed / l) / (1.0 + self.understeer_gradient() * speed * speed / l)
    }

    /// Steady-state sideslip gain β/δ (dimensionless, rad/rad) at `speed`
    /// (m/s), with β = vy/vx at the CG.
    ///
    /// Steady sideslip on radius R: β = b/R − m·a·V²/(L·Cr·R) (Gillespie ch. 6,
    /// eq. 6-20 from memory: β = 57.3·b/R − Wr·V²/(Cαr·g·R)); divided by the
    /// steady steer δ = (L + K·V²)/R.
    pub fn sideslip_gain(&self, speed: f64) -> f64 {
        let l = self.wheelbase();
        let v2 = speed * speed;
        (self.b - self.mass * self.a * v2 / (l * self.cornering_stiffness_rear))
            / (l + self.understeer_gradient() * v2)
    }

    /// State-space form ẋ = A·x + B·δ with x = [vy (m/s), r (rad/s)] and δ the
    /// road-wheel angle (rad), at forward speed `speed` = u (m/s, > 0)
    /// (Rajamani §2.3, eq. 2.31 from memory):
    ///
    /// A = [[−(Cf+Cr)/(m·u), −u − (a·Cf − b·Cr)/(m·u)],
    ///      [−(a·Cf − b·Cr)/(Iz·u), −(a²·Cf + b²·Cr)/(Iz·u)]],
    /// B = [Cf/m, a·Cf/Iz]ᵀ.
    ///
    /// The entries are non-finite for u = 0.
    pub fn state_matrix(&self, speed: f64) -> (Matrix2<f64>, Vector2<f64>) {
        let (m, iz, a, b) = (self.mass, self.yaw_inertia, self.a, self.b);
        let (cf, cr) = (
            self.cornering_stiffness_front,
            self.cornering_stiffness_rear,
        );
        let u = speed;
        let state = Matrix2::new(
            -(cf + cr) / (m * u),
            -u - (a * cf - b * cr) / (m * u),
            -(a * cf - b * cr) / (iz * u),
            -(a * a * cf + b * b * cr) / (iz * u),
        );
        let input = Vector2::new(cf / m, a * cf / iz);
        (state, input)
    }

    /// Eigenvalues (1/s) of the state matrix at `speed` (m/s), from the
    /// closed form for a 2×2 matrix: λ = tr/2 ± sqrt((tr/2)² − det).
    /// Returned with the larger real part (or, for a complex pair, the
    /// positive imaginary part) first.
    pub fn eigenvalues(&self, speed: f64) -> [Complex<f64>; 2] {
        let (a, _) = self.state_matrix(speed);
        let half_trace = 0.5 * (a[(0, 0)] + a[(1, 1)]);
        let det = a[(0, 0)] * a[(1, 1)] - a[(0, 1)] * a[(1, 0)];
        let disc = half_trace * half_trace - det;
        if disc >= 0.0 {
            let root = disc.sqrt();
            [
                Complex::new(half_trace + root, 0.0),
                Complex::new(half_trace - root, 0.0),
            ]
        } else {
            let root = (-disc).sqrt();
            [
                Complex::new(half_trace, root),
                Complex::new(half_trace, -root),
            ]
        }
    }

    /// True when both eigenvalues at `speed` (m/s) have a negative real part
    /// (false for non-finite eigenvalues, e.g. at zero speed).
    pub fn is_stable(&self, speed: f64) -> bool {
        self.eigenvalues(speed)
            .iter()
            .all(|l| l.re.is_finite() && l.im.is_finite() && l.re < 0.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// Invented understeering car.
    fn understeerer() -> BicycleModel {
        BicycleModel::new(1500.0, 2500.0, 1.2, 1.5, 80_000.0, 90_000.0).unwrap()
    }

    /// Invented oversteering car (weak rear axle).
    fn oversteerer() -> BicycleModel {
        BicycleModel::new(1500.0, 2500.0, 1.4, 1.3, 90_000.0, 60_000.0).unwrap()
    }

    /// Steady state of the state-space model, x = −A⁻¹·B per unit δ.
    fn steady_state(car: &BicycleModel, speed: f64) -> Vector2<f64> {
        let (a, b) = car.state_matrix(speed);
        -(a.try_inverse().unwrap() * b)
    }

    #[test]
    fn gillespie_deg_per_g_form_equals_si_form() {
        // Gillespie ch. 6: K = Wf/Cαf − Wr/Cαr, W in N, Cα in N/deg, K in deg/g.
        for car in [understeerer(), oversteerer()] {
            let g = STANDARD_GRAVITY;
            let l = car.wheelbase();
            let wf = car.mass * g * car.b / l;
            let wr = car.mass * g * car.a / l;
            let cf_per_deg = car.cornering_stiffness_front.to_radians();
            let cr_per_deg = car.cornering_stiffness_rear.to_radians();
            let k_gillespie = wf / cf_per_deg - wr / cr_per_deg;
            assert_relative_eq!(
                car.understeer_gradient_deg_per_g(),
                k_gillespie,
                max_relative = 1e-12
            );
        }
    }

    #[test]
    fn speeds_match_gillespie_deg_per_g_formulas() {
        // Gillespie ch. 6: V_char = sqrt(57.3·L·g/K), V_crit = sqrt(−57.3·L·g/K).
        let g = STANDARD_GRAVITY;
        let u = understeerer();
        let expected = (u.wheelbase().to_degrees() * g / u.understeer_gradient_deg_per_g()).sqrt();
        assert_relative_eq!(
            u.characteristic_speed().unwrap(),
            expected,
            max_relative = 1e-12
        );
        assert!(u.critical_speed().is_none());
        let o = oversteerer();
        let expected = (-o.wheelbase().to_degrees() * g / o.understeer_gradient_deg_per_g()).sqrt();
        assert_relative_eq!(o.critical_speed().unwrap(), expected, max_relative = 1e-12);
        assert!(o.characteristic_speed().is_none());
    }

    #[test]
    fn oversteerer_unstable_above_critical_speed_only() {
        // Gillespie ch. 6 / Rajamani §2.3: K < 0 gives a positive real
        // eigenvalue above V_crit.
        let car = oversteerer();
        assert!(car.understeer_gradient() < 0.0);
        let v_crit = car.critical_speed().unwrap();
        for factor in [0.3, 0.7, 0.95, 0.999] {
            assert!(
                car.is_stable(factor * v_crit),
                "unstable at {factor}·V_crit"
            );
        }
        for factor in [1.001, 1.05, 1.5, 3.0] {
            let v = factor * v_crit;
            assert!(!car.is_stable(v), "stable at {factor}·V_crit");
            let [l1, _] = car.eigenvalues(v);
            assert!(l1.im == 0.0 && l1.re > 0.0);
        }
        // det A changes sign at V_crit: one eigenvalue passes through zero.
        let [l1, _] = car.eigenvalues(v_crit);
        assert!(l1.re.abs() < 1e-9, "λ at V_crit = {l1}");
        // The understeering car is stable at every speed.
        let u = understeerer();
        for v in [1.0, 10.0, 30.0, 60.0, 100.0] {
            assert!(u.is_stable(v));
        }
        assert!(!u.is_stable(0.0));
    }

    #[test]
    fn yaw_rate_gain_at_characteristic_speed_is_half_neutral_gain() {
        // Gillespie ch. 6: at V_char the yaw-rate gain is half that of a
        // neutral-steer car, (V/L)/2. Checked on the state-space steady state.
        let car = understeerer();
        let v = car.characteristic_speed().unwrap();
        let r_per_delta = steady_state(&car, v)[1];
        assert_relative_eq!(r_per_delta, 0.5 * v / car.wheelbase(), max_relative = 1e-10);
        assert_relative_eq!(
            car.yaw_rate_gain(v),
            0.5 * v / car.wheelbase(),
            max_relative = 1e-12
        );
    }

    #[test]
    fn closed_form_gains_agree_with_state_space_steady_state() {
        // Gillespie ch. 6 closed forms vs x = −A⁻¹B (Rajamani §2.3).
        for car in [understeerer(), oversteerer()] {
            for v in [5.0, 15.0, 25.0] {
                let x = steady_state(&car, v);
                assert_relative_eq!(car.yaw_rate_gain(v), x[1], max_relative = 1e-10);
                assert_relative_eq!(car.sideslip_gain(v), x[0] / v, max_relative = 1e-10);
                // Steady steer for radius R: δ such that r = V/R.
                let radius = 80.0;
                let delta = car.steady_state_steer(v, radius);
                assert_relative_eq!(delta * x[1], v / radius, max_relative = 1e-10);
            }
        }
    }

    #[test]
    fn eigenvalues_match_general_eigen_solver() {
        for car in [understeerer(), oversteerer()] {
            for v in [2.0, 10.0, 20.0, 35.0, 60.0] {
                let (a, _) = car.state_matrix(v);
                let mut reference: Vec<Complex<f64>> =
                    a.complex_eigenvalues().iter().copied().collect();
                let mut ours = car.eigenvalues(v).to_vec();
                let key = |c: &Complex<f64>| (c.re, c.im);
                reference.sort_by(|p, q| key(p).partial_cmp(&key(q)).unwrap());
                ours.sort_by(|p, q| key(p).partial_cmp(&key(q)).unwrap());
                for (x, y) in ours.iter().zip(&reference) {
                    let scale = 1.0 + y.norm();
                    assert!((x - y).norm() < 1e-9 * scale, "{x} vs {y} at {v} m/s");
                }
            }
        }
    }

    #[test]
    fn rejects_non_physical_parameters() {
        assert!(BicycleModel::new(-1.0, 2500.0, 1.2, 1.5, 8e4, 9e4).is_err());
        assert!(BicycleModel::new(1500.0, f64::NAN, 1.2, 1.5, 8e4, 9e4).is_err());
        assert!(BicycleModel::new(1500.0, 2500.0, 1.2, 0.0, 8e4, 9e4).is_err());
    }
}
