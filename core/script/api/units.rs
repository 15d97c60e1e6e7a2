//! Unit conversions: `deg`, `kph`, `g` into SI and `to_deg`, `to_kph`,
//! `to_g` out of it. NaN and infinities convert to themselves (a NaN metric
//! stays NaN in any unit). Also `clamp(x, lo, hi)`, to keep a controller's
//! command in its range.

use rhai::{Dynamic, Engine};

use super::errors::{Res, script_error};
use super::values::{any_number, num};
use crate::params::GRAVITY;

/// Registers the conversions.
pub(crate) fn register(engine: &mut Engine) {
    let unit = |engine: &mut Engine, name: &str, factor: f64| {
        engine.register_fn(name, move |x: Dynamic| -> Res<f64> {
            Ok(any_number(&x, "the argument")? * factor)
        });
    };
    unit(engine, "deg", std::f64::consts::PI / 180.0);
    unit(engine, "to_deg", 180.0 / std::f64::consts::PI);
    unit(engine, "kph", 1.0 / 3.6);
    unit(engine, "to_kph", 3.6);
    unit(engine, "g", GRAVITY);
    unit(engine, "to_g", 1.0 / GRAVITY);
    engine.register_fn(
        "clamp",
        |x: Dynamic, lo: Dynamic, hi: Dynamic| -> Res<f64> {
            let (x, lo, hi) = (
                num(&x, "clamp value")?,
                num(&lo, "lower")?,
                num(&hi, "upper")?,
            );
            if lo > hi {
                return Err(script_error(format!("clamp: lower {lo} above upper {hi}")));
            }
            Ok(x.clamp(lo, hi))
        },
    );
}
