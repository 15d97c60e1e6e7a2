//! The controller's view `s` (type `State` in scripts): read-only getters of
//! [`TickState`], per-wheel quantities also as indexed methods.

use rhai::{Engine, INT};

use super::errors::{Res, script_error};
use super::values::array;
use crate::script::runner::TickState;

/// Registers the `State` type and its getters.
pub(crate) fn register(engine: &mut Engine) {
    engine.register_type_with_name::<TickState>("State");
    macro_rules! getters {
        ($($f:ident),*) => {
            $( engine.register_get(stringify!($f), |s: &mut TickState| s.$f); )*
        };
    }
    getters!(
        time,
        x,
        y,
        yaw,
        vx,
        vy,
        speed,
        yaw_rate,
        ax,
        ay,
        sideslip,
        steer,
        state_of_charge,
        fuel_used,
        engine_power,
        electric_power
    );
    engine.register_get("available_torque", |s: &mut TickState| {
        array(&s.available_torque)
    });
    macro_rules! wheels {
        ($($f:ident),*) => {
            $(
                engine.register_get(stringify!($f), |s: &mut TickState| array(&s.$f));
                engine.register_fn(stringify!($f), |s: &mut TickState, i: INT| -> Res<f64> {
                    usize::try_from(i)
                        .ok()
                        .and_then(|i| s.$f.get(i).copied())
                        .ok_or_else(|| script_error(format!("wheel index must be 0..3, got {i}")))
                });
            )*
        };
    }
    wheels!(fz, fx, fy, slip_ratio, slip_angle, wheel_speed);
}
