//! Stage 3, steering: road-wheel angles from the steering-wheel angle. A pure
//! function of the held command and the parameters (it can be computed once
//! per command).

use crate::params::{Chassis, FRONT, REAR, Steering};

/// Road-wheel steer angles (FL, FR, RL, RR), rad, from the steering-wheel angle (rad).
///
/// Mean front angle δ = δ_sw / ratio. Geometric Ackermann angles (Gillespie,
/// *Fundamentals of Vehicle Dynamics*, ch. 6, Ackermann steering geometry):
/// tan δ_left = L·tan δ / (L − (t/2)·tan δ), tan δ_right = L·tan δ / (L + (t/2)·tan δ),
/// blended with parallel steer by the Ackermann fraction. Toe-in turns each
/// wheel's front towards the car's centre line.
#[inline(always)]
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
