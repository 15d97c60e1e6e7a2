//! Stage 3, steering: road-wheel angles from the steering-wheel angle. A pure
//! function of the held command and the parameters, so it is computed once
//! per command ([`SteerAngles`]), not once per evaluation.

use crate::params::{Chassis, FRONT, REAR, Steering, Vehicle};

/// The road-wheel angles of one steering-wheel angle with their sines and
/// cosines (FL, FR, RL, RR): everything the evaluation needs from the
/// steering command, computed once per held command.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SteerAngles {
    /// The steering-wheel angle they belong to, rad.
    pub steer_wheel_angle: f64,
    /// Road-wheel steer angles, rad.
    pub angle: [f64; 4],
    /// sin of each angle, 1.
    pub sin: [f64; 4],
    /// cos of each angle, 1.
    pub cos: [f64; 4],
}

impl SteerAngles {
    /// The angles of `v` at steering-wheel angle `steer_wheel_angle` (rad).
    pub fn new(v: &Vehicle, steer_wheel_angle: f64) -> Self {
        let angle = road_wheel_angles(&v.steering, &v.chassis, steer_wheel_angle);
        let sin_cos = angle.map(f64::sin_cos);
        Self {
            steer_wheel_angle,
            angle,
            sin: sin_cos.map(|s| s.0),
            cos: sin_cos.map(|s| s.1),
        }
    }

    /// Whether these are the angles of `steer_wheel_angle` (bit for bit).
    #[inline]
    pub fn is_for(&self, steer_wheel_angle: f64) -> bool {
        self.steer_wheel_angle.to_bits() == steer_wheel_angle.to_bits()
    }
}

/// Road-wheel steer angles (FL, FR, RL, RR), rad, from the steering-wheel angle (rad).
///
/// Mean front angle δ = δ_sw / ratio. Geometric Ackermann angles (Gillespie,
/// *Fundamentals of Vehicle Dynamics*, ch. 6, Ackermann steering geometry):
/// tan δ_left = L·tan δ / (L − (t/2)·tan δ), tan δ_right = L·tan δ / (L + (t/2)·tan δ),
/// blended with parallel steer by the Ackermann fraction. Toe-in turns each
/// wheel's front towards the car's centre line.
#[inline]
pub fn road_wheel_angles(s: &Steering, c: &Chassis, steer_wheel_angle: f64) -> [f64; 4] {
    let delta = steer_wheel_angle / s.ratio;
    let tan_d = delta.tan();
    let l = c.wheelbase;
    let half_t = 0.5 * c.track[FRONT];
    let geo_left = (l * tan_d).atan2(l - half_t * tan_d);
    let geo_right = (l * tan_d).atan2(l + half_t * tan_d);
    let left = delta + s.ackermann * (geo_left - delta);
    let right = delta + s.ackermann * (geo_right - delta);
    [
        left - s.toe[FRONT],
        right + s.toe[FRONT],
        -s.toe[REAR],
        s.toe[REAR],
    ]
}

/// Wheel positions relative to the CG in body axes (FL, FR, RL, RR), (x, y), m.
#[inline]
pub fn wheel_positions(c: &Chassis) -> [(f64, f64); 4] {
    let (tf, tr) = (0.5 * c.track[FRONT], 0.5 * c.track[REAR]);
    [(c.a, tf), (c.a, -tf), (-c.b, tr), (-c.b, -tr)]
}
