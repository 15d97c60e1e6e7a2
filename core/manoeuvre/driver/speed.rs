//! PI speed control with anti-windup.

use super::{DriverError, check};

/// PI speed controller producing a drive request and a brake request, each
/// 0..1, never both non-zero.
///
/// The PI output u = kp·e + ki·∫e dt (e = target − speed, m/s) is clamped to
/// [−1, 1]; u > 0 is a drive request, u < 0 a brake request (common
/// practice). Anti-windup by conditional integration: the error is
/// integrated only while the unclamped output is inside [−1, 1] or the error
/// drives it back inside; the integral term itself is also bounded to
/// [−1, 1].
#[derive(Debug, Clone, PartialEq)]
pub struct SpeedController {
    /// Proportional gain, 1/(m/s). Default 0.5 (full demand at 2 m/s error).
    pub kp: f64,
    /// Integral gain, 1/(m/s·s) = 1/m. Default 0.15.
    pub ki: f64,
    integral: f64,
}

impl Default for SpeedController {
    fn default() -> Self {
        Self {
            kp: 0.5,
            ki: 0.15,
            integral: 0.0,
        }
    }
}

impl SpeedController {
    /// Controller with gains `kp` (1/(m/s)) and `ki` (1/m), both finite and
    /// ≥ 0.
    pub fn new(kp: f64, ki: f64) -> Result<Self, DriverError> {
        Ok(Self {
            kp: check("speed controller", "kp", kp, kp >= 0.0, "finite and >= 0")?,
            ki: check("speed controller", "ki", ki, ki >= 0.0, "finite and >= 0")?,
            integral: 0.0,
        })
    }

    /// Forget the integral state.
    pub fn reset(&mut self) {
        self.integral = 0.0;
    }

    /// One control step: `target` and `speed` in m/s, `dt` in s. Returns
    /// (drive, brake), each in 0..1, at most one non-zero. Non-finite input
    /// or negative gains give (0, 0) and leave the state unchanged.
    pub fn update(&mut self, target: f64, speed: f64, dt: f64) -> (f64, f64) {
        let inputs = [target, speed, dt, self.kp, self.ki];
        if inputs.iter().any(|v| !v.is_finite()) || self.kp < 0.0 || self.ki < 0.0 {
            return (0.0, 0.0);
        }
        let error = target - speed;
        if dt > 0.0 {
            let candidate = self.integral + error * dt;
            let unclamped = self.kp * error + self.ki * candidate;
            let inside = (-1.0..=1.0).contains(&unclamped);
            let unwinding = (unclamped > 1.0 && error < 0.0) || (unclamped < -1.0 && error > 0.0);
            if inside || unwinding {
                self.integral = candidate;
            }
            if self.ki > 0.0 {
                let bound = 1.0 / self.ki;
                self.integral = self.integral.clamp(-bound, bound);
            }
        }
        let u = (self.kp * error + self.ki * self.integral).clamp(-1.0, 1.0);
        if u > 0.0 { (u, 0.0) } else { (0.0, -u) }
    }
}
