//! The vehicle's parameters prepared for the inner loop: reciprocals, sums
//! and the tyre coefficients with camber and road friction folded in, built
//! once per vehicle (when a simulation starts) instead of once per evaluation.
//!
//! [`Prepared`] holds only numbers derived from a [`Vehicle`]; the stages read
//! it beside the vehicle's own groups. It is rebuilt from the vehicle, never
//! edited: change the vehicle and prepare it again.

use crate::params::{FRONT, REAR, Vehicle};
use crate::tyre::TyreLanes;

/// Per-wheel constants (FL, FR, RL, RR).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WheelConstants {
    /// Rolling radius R, m.
    pub radius: [f64; 4],
    /// 1 / wheel spin inertia, 1/(kg·m²).
    pub inv_inertia: [f64; 4],
    /// Rolling-resistance torque per unit load f_r·R, m.
    pub rolling_arm: [f64; 4],
    /// 1 / longitudinal relaxation length, 1/m.
    pub inv_relaxation_longitudinal: [f64; 4],
    /// 1 / lateral relaxation length, 1/m.
    pub inv_relaxation_lateral: [f64; 4],
    /// Wheel position relative to the CG in body axes, x, m.
    pub px: [f64; 4],
    /// Wheel position relative to the CG in body axes, y, m.
    pub py: [f64; 4],
}

/// Body constants.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ChassisConstants {
    /// 1 / mass, 1/kg.
    pub inv_mass: f64,
    /// 1 / yaw, roll and pitch inertia, 1/(kg·m²).
    pub inv_yaw_inertia: f64,
    /// See `inv_yaw_inertia`.
    pub inv_roll_inertia: f64,
    /// See `inv_yaw_inertia`.
    pub inv_pitch_inertia: f64,
    /// 1 / wheelbase, 1/m.
    pub inv_wheelbase: f64,
    /// 1 / track [front, rear], 1/m.
    pub inv_track: [f64; 2],
    /// CG height above the roll axis H, m.
    pub roll_arm: f64,
    /// Total roll stiffness KΦ, N·m/rad, and damping CΦ, N·m·s/rad.
    pub roll_stiffness: f64,
    /// See `roll_stiffness`.
    pub roll_damping: f64,
}

/// A vehicle's derived constants for [`evaluate_prepared`](super::evaluate_prepared).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Prepared {
    /// The four tyres, one per lane, with camber and road friction folded in.
    pub tyres: TyreLanes,
    /// Per-wheel constants.
    pub wheels: WheelConstants,
    /// Body constants.
    pub chassis: ChassisConstants,
}

impl Prepared {
    /// Derives the constants of `v`. The left wheels take the axle's static
    /// camber as given, the right ones mirrored (tyre axes).
    pub fn new(v: &Vehicle) -> Self {
        let c = &v.chassis;
        let tyre = |i: usize| &v.tyres[i / 2];
        let per_wheel = |f: &dyn Fn(usize) -> f64| -> [f64; 4] { std::array::from_fn(f) };
        let positions = super::wheel_positions(c);
        Self {
            tyres: TyreLanes::new(
                [0, 1, 2, 3].map(|i| &tyre(i).model),
                per_wheel(&|i| {
                    if i % 2 == 0 {
                        tyre(i).camber
                    } else {
                        -tyre(i).camber
                    }
                }),
                v.road.friction,
                [0, 1, 2, 3].map(|i| tyre(i).combined_slip),
            ),
            wheels: WheelConstants {
                radius: per_wheel(&|i| tyre(i).rolling_radius),
                inv_inertia: per_wheel(&|i| 1.0 / tyre(i).wheel_inertia),
                rolling_arm: per_wheel(&|i| tyre(i).rolling_resistance * tyre(i).rolling_radius),
                inv_relaxation_longitudinal: per_wheel(&|i| 1.0 / tyre(i).relaxation_longitudinal),
                inv_relaxation_lateral: per_wheel(&|i| 1.0 / tyre(i).relaxation_lateral),
                px: positions.map(|p| p.0),
                py: positions.map(|p| p.1),
            },
            chassis: ChassisConstants {
                inv_mass: 1.0 / c.mass,
                inv_yaw_inertia: 1.0 / c.yaw_inertia,
                inv_roll_inertia: 1.0 / c.roll_inertia,
                inv_pitch_inertia: 1.0 / c.pitch_inertia,
                inv_wheelbase: 1.0 / c.wheelbase,
                inv_track: [1.0 / c.track[FRONT], 1.0 / c.track[REAR]],
                roll_arm: c.roll_arm(),
                roll_stiffness: c.roll_stiffness[FRONT] + c.roll_stiffness[REAR],
                roll_damping: c.roll_damping[FRONT] + c.roll_damping[REAR],
            },
        }
    }

    /// Checks that every derived constant is finite (a vehicle that passed
    /// its file checks always does; one edited in code may not). Returns the
    /// name of the first that is not.
    pub fn check(&self) -> Result<(), &'static str> {
        let w = &self.wheels;
        let c = &self.chassis;
        let wheels: [(&'static str, &[f64; 4]); 5] = [
            ("wheel inertia", &w.inv_inertia),
            (
                "relaxation length (longitudinal)",
                &w.inv_relaxation_longitudinal,
            ),
            ("relaxation length (lateral)", &w.inv_relaxation_lateral),
            ("rolling radius", &w.radius),
            ("rolling resistance", &w.rolling_arm),
        ];
        for (name, values) in wheels {
            if !values.iter().all(|v| v.is_finite()) {
                return Err(name);
            }
        }
        let body = [
            ("mass", c.inv_mass),
            ("yaw inertia", c.inv_yaw_inertia),
            ("roll inertia", c.inv_roll_inertia),
            ("pitch inertia", c.inv_pitch_inertia),
            ("wheelbase", c.inv_wheelbase),
            ("front track", c.inv_track[FRONT]),
            ("rear track", c.inv_track[REAR]),
        ];
        match body.iter().find(|(_, v)| !v.is_finite()) {
            Some((name, _)) => Err(name),
            None => Ok(()),
        }
    }
}
