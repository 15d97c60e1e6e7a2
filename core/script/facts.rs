//! The numbers of the vehicle that the script layer uses, read in this one
//! place (drivers, the default torque split, `vehicle_info()`), so that a
//! change in the layout of [`Vehicle`] touches one function.

use crate::model::linear::bicycle_model;
use crate::params::Vehicle;

/// Vehicle numbers for drivers and scripts. SI units; angles rad.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VehicleFacts {
    /// Mass, kg.
    pub mass: f64,
    /// Yaw moment of inertia, kg·m².
    pub yaw_inertia: f64,
    /// Wheelbase, m.
    pub wheelbase: f64,
    /// CG to front axle, m.
    pub cg_to_front_axle: f64,
    /// CG to rear axle, m.
    pub cg_to_rear_axle: f64,
    /// CG height, m.
    pub cg_height: f64,
    /// Track widths [front, rear], m.
    pub track: [f64; 2],
    /// Steering ratio (steering-wheel angle / mean road-wheel angle), 1.
    pub steering_ratio: f64,
    /// The vehicle's own front share of the drive request, 0..1.
    pub front_share: f64,
    /// Rolling radii [front, rear], m.
    pub rolling_radius: [f64; 2],
    /// Total brake torque at full request, N·m.
    pub brake_max_torque: f64,
    /// Static axle loads [front, rear], N.
    pub static_load: [f64; 2],
    /// Linear single-track understeer gradient, rad/(m/s²).
    pub understeer_gradient: f64,
    /// The same in deg/g.
    pub understeer_gradient_deg_per_g: f64,
    /// Axle cornering stiffnesses of the linear single-track model [front, rear], N/rad.
    pub cornering_stiffness: [f64; 2],
}

impl VehicleFacts {
    /// The facts of `v` (the linear single-track model at static load, see
    /// [`crate::model::linear`]).
    pub fn of(v: &Vehicle) -> Self {
        let bike = bicycle_model(v);
        Self {
            mass: v.chassis.mass,
            yaw_inertia: v.chassis.yaw_inertia,
            wheelbase: v.chassis.wheelbase,
            cg_to_front_axle: v.chassis.a,
            cg_to_rear_axle: v.chassis.b,
            cg_height: v.chassis.cg_height,
            track: v.chassis.track,
            steering_ratio: v.steering.ratio,
            front_share: v.powertrain.front_share,
            rolling_radius: [v.tyres[0].rolling_radius, v.tyres[1].rolling_radius],
            brake_max_torque: v.brakes.max_torque,
            static_load: crate::model::static_axle_loads(&v.chassis),
            understeer_gradient: bike.understeer_gradient(),
            understeer_gradient_deg_per_g: bike.understeer_gradient_deg_per_g(),
            cornering_stiffness: [
                bike.cornering_stiffness_front,
                bike.cornering_stiffness_rear,
            ],
        }
    }
}
