//! What `evaluate(ch)` records: `metric`, `criterion` and `note` (thin calls
//! into [`RunLog`](crate::script::log::RunLog)), and the channel map `ch` it
//! receives.

use rhai::{Dynamic, Engine, Map};

use super::errors::Res;
use super::parts::Parts;
use super::values::{any_number, array, log_error, suggest};
use crate::results::RunRecord;
use crate::sim::channel_list;

/// The channels of `record` as a map name → array of floats, plus `time`.
pub(crate) fn channel_map(record: &RunRecord) -> Map {
    let mut m = Map::new();
    m.insert("time".into(), Dynamic::from_array(array(&record.time)));
    for c in &record.channels {
        m.insert(c.name.as_str().into(), Dynamic::from_array(array(&c.data)));
    }
    m
}

/// The message for reading `key` that a map does not have (an error in
/// `evaluate` only): the closest channel name when there is one.
pub(crate) fn missing_key(key: &str) -> String {
    let mut names: Vec<String> = channel_list().into_iter().map(|(n, ..)| n).collect();
    names.push("time".into());
    let names: Vec<&str> = names.iter().map(String::as_str).collect();
    match suggest(key, &names) {
        hint if hint.is_empty() => format!("no key `{key}` in the map"),
        hint => format!("no channel `{key}`{hint}; `yawdyn show FILE` lists the channels"),
    }
}

/// A criterion limit: a number, or `()` for none.
fn limit(v: &Dynamic, what: &str) -> Res<Option<f64>> {
    if v.is_unit() {
        Ok(None)
    } else {
        any_number(v, what).map(Some)
    }
}

/// Registers `metric`, `criterion` and `note`.
pub(crate) fn register(engine: &mut Engine, parts: &Parts) {
    let log = parts.log.clone();
    engine.register_fn(
        "metric",
        move |name: &str, value: Dynamic, unit: &str| -> Res<()> {
            let value = any_number(&value, "metric value")?;
            log.with(|l| l.metric(name, value, unit)).map_err(log_error)
        },
    );
    let log = parts.log.clone();
    engine.register_fn("metric", move |name: &str, value: Dynamic| -> Res<()> {
        let value = any_number(&value, "metric value")?;
        log.with(|l| l.metric(name, value, "")).map_err(log_error)
    });
    let log = parts.log.clone();
    engine.register_fn(
        "criterion",
        move |name: &str, value: Dynamic, lower: Dynamic, upper: Dynamic| -> Res<bool> {
            let value = any_number(&value, "criterion value")?;
            let lower = limit(&lower, "criterion lower limit")?;
            let upper = limit(&upper, "criterion upper limit")?;
            Ok(log.with(|l| l.criterion(name, value, lower, upper)))
        },
    );
    let log = parts.log.clone();
    engine.register_fn("note", move |name: &str, text: Dynamic| {
        let text = text.to_string();
        log.with(|l| l.note(name, &text));
    });
}
