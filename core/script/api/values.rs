//! Script values to Rust values and back, with messages that name the
//! argument.

use rhai::{Array, Dynamic, EvalAltResult};

use super::errors::{Res, script_error, vehicle_error};
use crate::manoeuvre::{Signal, SignalError, TurnDirection};
use crate::script::log::LogError;
use crate::script::setup::SetupError;

/// A number from an integer or float script value.
pub(crate) fn as_number(v: &Dynamic) -> Option<f64> {
    if let Ok(f) = v.as_float() {
        Some(f)
    } else {
        v.as_int().ok().map(|i| i as f64)
    }
}

/// A finite number; `what` names it in the message.
pub(crate) fn num(v: &Dynamic, what: &str) -> Res<f64> {
    match as_number(v) {
        Some(x) if x.is_finite() => Ok(x),
        Some(x) => Err(script_error(format!("{what} must be finite, got {x}"))),
        None => Err(script_error(format!(
            "{what} must be a number, got {}",
            v.type_name()
        ))),
    }
}

/// A number that may be NaN or infinite (metric and criterion values).
pub(crate) fn any_number(v: &Dynamic, what: &str) -> Res<f64> {
    as_number(v).ok_or_else(|| script_error(format!("{what} must be a number")))
}

/// An array of finite numbers.
pub(crate) fn numbers(a: &Array, what: &str) -> Res<Vec<f64>> {
    a.iter().map(|v| num(v, what)).collect()
}

/// An array of numbers (NaN allowed): channel data.
pub(crate) fn values(a: &Array, what: &str) -> Res<Vec<f64>> {
    a.iter()
        .map(|v| {
            as_number(v).ok_or_else(|| script_error(format!("{what}: arrays must hold numbers")))
        })
        .collect()
}

/// A script array of floats.
pub(crate) fn array(values: &[f64]) -> Array {
    values.iter().map(|&v| Dynamic::from_float(v)).collect()
}

/// A signal, or a number as a constant signal.
pub(crate) fn signal_of(v: &Dynamic, what: &str) -> Res<Signal> {
    if let Some(s) = v.clone().try_cast::<Signal>() {
        return Ok(s);
    }
    Signal::constant(num(v, what)?).map_err(signal_error)
}

/// A signal definition error.
pub(crate) fn signal_error(e: SignalError) -> Box<EvalAltResult> {
    script_error(e.to_string())
}

/// A setup declaration error (a vehicle problem keeps its own type).
pub(crate) fn setup_error(e: SetupError) -> Box<EvalAltResult> {
    match e {
        SetupError::Vehicle(source) => vehicle_error(source),
        other => script_error(other.to_string()),
    }
}

/// A log entry error.
pub(crate) fn log_error(e: LogError) -> Box<EvalAltResult> {
    script_error(e.to_string())
}

/// `"left"` or `"right"`.
pub(crate) fn direction(text: &str) -> Res<TurnDirection> {
    match text {
        "left" => Ok(TurnDirection::Left),
        "right" => Ok(TurnDirection::Right),
        other => Err(script_error(format!(
            "direction must be \"left\" or \"right\", got \"{other}\""
        ))),
    }
}

/// " (did you mean `x`?)" for the closest of `names`, or "".
pub(crate) fn suggest(word: &str, names: &[&str]) -> String {
    names
        .iter()
        .map(|n| (strsim::jaro_winkler(word, n), n))
        .filter(|(score, _)| *score > 0.75)
        .max_by(|a, b| a.0.total_cmp(&b.0))
        .map(|(_, n)| format!(" (did you mean `{n}`?)"))
        .unwrap_or_default()
}

/// A script value as a TOML value for an override.
pub(crate) fn toml_value(v: &Dynamic) -> Res<toml::Value> {
    if let Ok(b) = v.as_bool() {
        return Ok(toml::Value::Boolean(b));
    }
    if let Ok(i) = v.as_int() {
        return Ok(toml::Value::Integer(i));
    }
    if let Ok(f) = v.as_float() {
        return Ok(toml::Value::Float(f));
    }
    if let Some(s) = v.clone().try_cast::<rhai::ImmutableString>() {
        return Ok(toml::Value::String(s.to_string()));
    }
    Err(script_error(format!(
        "set: a value must be a number, a string or true/false, got {}",
        v.type_name()
    )))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn override_values_keep_their_toml_type() {
        assert_eq!(
            toml_value(&Dynamic::from_float(0.3)).unwrap(),
            toml::Value::Float(0.3)
        );
        assert_eq!(
            toml_value(&Dynamic::from_int(2)).unwrap(),
            toml::Value::Integer(2)
        );
        assert_eq!(
            toml_value(&Dynamic::from("locked")).unwrap(),
            toml::Value::String("locked".into())
        );
        assert!(toml_value(&Dynamic::UNIT).is_err());
    }

    #[test]
    fn suggestions_name_the_closest_word() {
        assert_eq!(
            suggest("speed_abve", &["speed_above", "steady"]),
            " (did you mean `speed_above`?)"
        );
        assert_eq!(suggest("zzz", &["speed_above"]), "");
    }
}
