//! Pure-pursuit path following with integral correction.

use std::f64::consts::PI;

use super::path::Path;
use super::{DriverError, DriverView, check};

/// Pure-pursuit path follower with integral correction of the cross-track
/// error, an optional understeer feedforward, a steering limit and
/// anti-windup.
///
/// Pure pursuit (Coulter, "Implementation of the Pure Pursuit Path Tracking
/// Algorithm", CMU-RI-TR-92-01, 1992): the goal point lies a look-ahead
/// ld = max(ld_min, k·speed) of arc length ahead of the closest path point;
/// the arc through the vehicle tangent to its heading and through the goal
/// has curvature κ = 2·sin(η)/l, with η the goal bearing from the heading
/// and l the chord to the goal (≈ ld).
///
/// Integral correction (common practice): κ_i = −(2/ld²)·∫e dt / T_i with e
/// the cross-track error. Linearising pure pursuit for small errors gives
/// ë + (2v/ld)·ė + (2v²/ld²)·e = 0 (our derivation); adding the integral gives
/// s³ + (2v/ld)s² + (2v²/ld²)s + 2v²/(ld²·T_i) = 0, stable (Routh) for
/// T_i > ld/(2v), i.e. T_i > k/2 when ld = k·v.
///
/// Output: road-wheel angle δ = atan(L·κ) (kinematic bicycle, Rajamani §2.2
/// from memory) plus the feedforward K_ff·v²·κ_path (Gillespie ch. 6 steady
/// steer δ = L/R + K·ay), limited to ±`max_road_wheel_angle`, returned as
/// steering-wheel angle δ·steering ratio.
#[derive(Debug, Clone, PartialEq)]
pub struct PathFollower {
    /// The path followed.
    pub path: Path,
    /// Minimum look-ahead distance ld_min, m. Default 4.0.
    pub lookahead_min: f64,
    /// Look-ahead time k (ld = k·speed), s. Default 0.5.
    pub lookahead_time: f64,
    /// Integral time T_i of the cross-track correction, s; `None` disables
    /// it. Default `Some(2.0)`.
    pub integral_time: Option<f64>,
    /// Understeer feedforward K_ff, rad/(m/s²) of road-wheel angle per
    /// lateral acceleration of the path. Default 0.0 (none).
    pub understeer_feedforward: f64,
    /// Road-wheel angle limit, rad. Default 0.6.
    pub max_road_wheel_angle: f64,
    integral: f64,
    last_cross_track_error: f64,
}

impl PathFollower {
    /// Follower of `path` with the default settings.
    pub fn new(path: Path) -> Self {
        Self {
            path,
            lookahead_min: 4.0,
            lookahead_time: 0.5,
            integral_time: Some(2.0),
            understeer_feedforward: 0.0,
            max_road_wheel_angle: 0.6,
            integral: 0.0,
            last_cross_track_error: 0.0,
        }
    }

    /// Forget the integral state.
    pub fn reset(&mut self) {
        self.integral = 0.0;
        self.last_cross_track_error = 0.0;
    }

    /// Check the public settings: look-ahead distance and time finite and
    /// ≥ 0, integral time > 0 when given, feedforward finite, steering limit
    /// finite in [0, π/2).
    pub fn check_settings(&self) -> Result<(), DriverError> {
        let item = "path follower";
        let ld = self.lookahead_min;
        check(item, "lookahead_min", ld, ld >= 0.0, "finite and >= 0")?;
        let k = self.lookahead_time;
        check(item, "lookahead_time", k, k >= 0.0, "finite and >= 0")?;
        if let Some(ti) = self.integral_time {
            check(item, "integral_time", ti, ti > 0.0, "finite and > 0")?;
        }
        check(
            item,
            "understeer_feedforward",
            self.understeer_feedforward,
            true,
            "finite",
        )?;
        let max = self.max_road_wheel_angle;
        let ok = (0.0..0.5 * PI).contains(&max);
        check(
            item,
            "max_road_wheel_angle",
            max,
            ok,
            "finite, in [0, π/2) rad",
        )?;
        Ok(())
    }

    /// Cross-track error seen at the last update, m (positive left).
    pub fn cross_track_error(&self) -> f64 {
        self.last_cross_track_error
    }

    /// Integral of the cross-track error, m·s.
    pub fn integral(&self) -> f64 {
        self.integral
    }

    /// One control step of `dt` s; returns the steering-wheel angle, rad
    /// (positive left). A non-finite view, a wheelbase ≤ 0 or settings that
    /// fail [`PathFollower::check_settings`] give NaN (for the caller's
    /// finiteness check) and leave the state unchanged.
    pub fn update(&mut self, view: &DriverView, dt: f64) -> f64 {
        if self.check_settings().is_err() {
            return f64::NAN;
        }
        let fields = [
            view.x,
            view.y,
            view.yaw,
            view.speed,
            view.wheelbase,
            view.steering_ratio,
            dt,
        ];
        if fields.iter().any(|v| !v.is_finite()) || view.wheelbase <= 0.0 {
            return f64::NAN;
        }
        let closest = self.path.closest(view.x, view.y);
        let e = closest.cross_track_error;
        self.last_cross_track_error = e;
        let ld = self
            .lookahead_min
            .max(self.lookahead_time * view.speed.abs())
            .max(1e-3);
        let goal = self.path.point_at(closest.s + ld);
        let (sin, cos) = view.yaw.sin_cos();
        let (dx, dy) = (goal.x - view.x, goal.y - view.y);
        let (lx, ly) = (cos * dx + sin * dy, -sin * dx + cos * dy);
        let chord = lx.hypot(ly);
        let curvature_pp = if chord > 1e-9 {
            2.0 * ly / (chord * chord) // 2·sin(η)/l with sin η = ly/l
        } else {
            0.0
        };
        let l = view.wheelbase;
        let max = self.max_road_wheel_angle;
        let integral_gain = self.integral_time.map_or(0.0, |ti| 2.0 / (ld * ld * ti));
        let feedforward = self.understeer_feedforward * view.speed * view.speed * closest.curvature;
        let steer_for =
            |integral: f64| (l * (curvature_pp - integral_gain * integral)).atan() + feedforward;

        if integral_gain > 0.0 && dt > 0.0 {
            // Conditional integration: not while saturated, unless unwinding.
            let unclamped = steer_for(self.integral);
            let inside = unclamped.abs() < max;
            // κ_i = −gain·I: a positive error lowers the steer.
            let unwinding = (unclamped >= max && e > 0.0) || (unclamped <= -max && e < 0.0);
            if inside || unwinding {
                self.integral += e * dt;
            }
            // The integral may at most command the largest curvature.
            let bound = max.tan() / l / integral_gain;
            self.integral = self.integral.clamp(-bound, bound);
        }
        let road_wheel = steer_for(self.integral).clamp(-max, max);
        road_wheel * view.steering_ratio
    }
}
