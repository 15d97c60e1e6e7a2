//! The analysis functions a script's `evaluate(ch)` can call: ISO 7401
//! step response, ISO 4138 understeer gradient, FMVSS 126 sine with dwell
//! (from [`crate::analysis`]), and array helpers (`max`, `min`, `max_abs`,
//! `mean`, `value_at`, `between`, `first_time_above`, `distance_from`,
//! `abs_values`, `is_nan`). Pure functions of their arguments.

use rhai::{Array, Dynamic, Engine, Map};

use super::errors::{Res, script_error};
use super::values::{any_number, values};
use crate::analysis::{self, SineDwellTrace, StepResponseOptions};

fn map_of(items: &[(&str, f64)]) -> Map {
    items
        .iter()
        .map(|(k, v)| ((*k).into(), Dynamic::from_float(*v)))
        .collect()
}

/// Linear interpolation of `y(x)` at `t` (clamped to the ends); NaN if empty.
fn interpolate(x: &[f64], y: &[f64], t: f64) -> f64 {
    let n = x.len().min(y.len());
    if n == 0 {
        return f64::NAN;
    }
    if t <= x[0] {
        return y[0];
    }
    if t >= x[n - 1] {
        return y[n - 1];
    }
    let i = x[..n].partition_point(|&v| v <= t);
    let (x0, x1, y0, y1) = (x[i - 1], x[i], y[i - 1], y[i]);
    if x1 > x0 {
        y0 + (y1 - y0) * (t - x0) / (x1 - x0)
    } else {
        y0
    }
}

/// Registers the analysis functions and array helpers.
pub(crate) fn register(engine: &mut Engine) {
    register_standards(engine);
    register_sine_with_dwell(engine);
    register_arrays(engine);
}

/// ISO 7401 step response and ISO 4138 understeer gradient.
fn register_standards(engine: &mut Engine) {
    engine.register_fn(
        "step_response",
        |time: Array, steer: Array, response: Array| -> Res<Map> {
            let r = analysis::step_response(
                &values(&time, "step_response")?,
                &values(&steer, "step_response")?,
                &values(&response, "step_response")?,
                StepResponseOptions::default(),
            )
            .map_err(|e| script_error(format!("step_response: {e}")))?;
            Ok(map_of(&[
                ("t0", r.t0),
                ("steer_steady", r.steer_steady),
                ("response_steady", r.response_steady),
                ("response_time", r.response_time),
                (
                    "peak_response_time",
                    r.peak_response_time.unwrap_or(f64::NAN),
                ),
                ("peak_value", r.peak_value),
                ("overshoot", r.overshoot),
                ("steady_state_gain", r.steady_state_gain),
            ]))
        },
    );
    engine.register_fn(
        "understeer_gradient",
        |ay: Array,
         steer: Array,
         ratio: Dynamic,
         wheelbase: Dynamic,
         radius: Dynamic,
         ay_max: Dynamic|
         -> Res<Map> {
            let fit = analysis::understeer_gradient(
                &values(&ay, "understeer_gradient")?,
                &values(&steer, "understeer_gradient")?,
                any_number(&ratio, "steering ratio")?,
                any_number(&wheelbase, "wheelbase")?,
                any_number(&radius, "radius")?,
                any_number(&ay_max, "lateral acceleration limit")?,
            )
            .ok_or_else(|| {
                script_error(
                    "understeer_gradient: no fit (bad parameters or fewer than three points)",
                )
            })?;
            Ok(map_of(&[
                ("gradient", fit.gradient),
                ("gradient_deg_per_g", fit.gradient_deg_per_g),
                ("ackermann_angle", fit.ackermann_angle),
                ("slope", fit.fit.slope),
                ("intercept", fit.fit.intercept),
                ("r_squared", fit.fit.r_squared),
                ("count", fit.fit.count as f64),
            ]))
        },
    );
}

/// FMVSS 126 sine with dwell.
fn register_sine_with_dwell(engine: &mut Engine) {
    engine.register_fn(
        "sine_with_dwell_result",
        |time: Array, steer: Array, yaw_rate: Array, lateral: Array, mass: Dynamic| -> Res<Map> {
            let (t, d, r, y) = (
                values(&time, "sine_with_dwell_result")?,
                values(&steer, "sine_with_dwell_result")?,
                values(&yaw_rate, "sine_with_dwell_result")?,
                values(&lateral, "sine_with_dwell_result")?,
            );
            let trace = SineDwellTrace {
                time: &t,
                steer_wheel_angle: &d,
                yaw_rate: &r,
                lateral_displacement: &y,
            };
            let res = analysis::evaluate_sine_with_dwell(&trace, any_number(&mass, "gross mass")?)
                .map_err(|e| script_error(format!("sine_with_dwell_result: {e}")))?;
            let flag = |b: bool| if b { 1.0 } else { 0.0 };
            Ok(map_of(&[
                ("direction", res.direction),
                ("beginning_of_steer", res.beginning_of_steer),
                ("completion_of_steer", res.completion_of_steer),
                ("peak_yaw_rate", res.peak_yaw_rate),
                ("peak_yaw_rate_time", res.peak_yaw_rate_time),
                ("yaw_rate_ratio_1_00", res.yaw_rate_ratio_1_00),
                ("yaw_rate_ratio_1_75", res.yaw_rate_ratio_1_75),
                ("lateral_displacement_1_07", res.lateral_displacement_1_07),
                ("displacement_limit", res.displacement_limit),
                ("passes_yaw_rate_1_00", flag(res.passes_yaw_rate_1_00)),
                ("passes_yaw_rate_1_75", flag(res.passes_yaw_rate_1_75)),
                (
                    "passes_lateral_displacement",
                    flag(res.passes_lateral_displacement),
                ),
            ]))
        },
    );
}

/// Reductions and helpers over channel arrays.
fn register_arrays(engine: &mut Engine) {
    let reduce = |engine: &mut Engine, name: &'static str, f: fn(&[f64]) -> f64| {
        engine.register_fn(name, move |a: Array| -> Res<f64> {
            let x = values(&a, name)?;
            if x.is_empty() {
                return Err(script_error(format!("{name}: empty array")));
            }
            Ok(f(&x))
        });
    };
    reduce(engine, "max", |x| {
        x.iter().copied().fold(f64::NEG_INFINITY, f64::max)
    });
    reduce(engine, "min", |x| {
        x.iter().copied().fold(f64::INFINITY, f64::min)
    });
    reduce(engine, "max_abs", |x| {
        x.iter().fold(0.0, |m, v| v.abs().max(m))
    });
    reduce(engine, "mean", |x| x.iter().sum::<f64>() / x.len() as f64);
    engine.register_fn(
        "value_at",
        |time: Array, y: Array, t: Dynamic| -> Res<f64> {
            Ok(interpolate(
                &values(&time, "value_at")?,
                &values(&y, "value_at")?,
                any_number(&t, "time")?,
            ))
        },
    );
    engine.register_fn(
        "between",
        |time: Array, y: Array, t0: Dynamic, t1: Dynamic| -> Res<Array> {
            let (t0, t1) = (any_number(&t0, "start time")?, any_number(&t1, "end time")?);
            let t = values(&time, "between")?;
            let y = values(&y, "between")?;
            Ok(t.iter()
                .zip(&y)
                .filter(|(t, _)| **t >= t0 - 1e-9 && **t <= t1 + 1e-9)
                .map(|(_, v)| Dynamic::from_float(*v))
                .collect())
        },
    );
    engine.register_fn(
        "first_time_above",
        |time: Array, y: Array, level: Dynamic| -> Res<f64> {
            let level = any_number(&level, "level")?;
            let t = values(&time, "first_time_above")?;
            let y = values(&y, "first_time_above")?;
            Ok(t.iter()
                .zip(&y)
                .find(|(_, v)| **v >= level)
                .map_or(f64::NAN, |(t, _)| *t))
        },
    );
    engine.register_fn(
        "distance_from",
        |x: Array, y: Array, cx: Dynamic, cy: Dynamic| -> Res<Array> {
            let (cx, cy) = (any_number(&cx, "centre x")?, any_number(&cy, "centre y")?);
            let x = values(&x, "distance_from")?;
            let y = values(&y, "distance_from")?;
            Ok(x.iter()
                .zip(&y)
                .map(|(x, y)| Dynamic::from_float((x - cx).hypot(y - cy)))
                .collect())
        },
    );
    engine.register_fn("abs_values", |a: Array| -> Res<Array> {
        Ok(values(&a, "abs_values")?
            .iter()
            .map(|v| Dynamic::from_float(v.abs()))
            .collect())
    });
    engine.register_fn("is_nan", |x: f64| x.is_nan());
}

#[cfg(test)]
mod tests {
    use super::interpolate;

    /// Linear interpolation between samples, clamped at the ends.
    #[test]
    fn interpolation_is_linear_and_clamped() {
        let x = [0.0, 1.0, 2.0];
        let y = [0.0, 10.0, 30.0];
        assert_eq!(interpolate(&x, &y, 0.5), 5.0);
        assert_eq!(interpolate(&x, &y, 1.5), 20.0);
        assert_eq!(interpolate(&x, &y, -1.0), 0.0);
        assert_eq!(interpolate(&x, &y, 3.0), 30.0);
    }
}
