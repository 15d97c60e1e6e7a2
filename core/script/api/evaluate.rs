//! What `evaluate(ch)` records: `metric`, `criterion` and `note` (thin calls
//! into [`RunLog`](crate::script::log::RunLog)), and the channel map `ch` it
//! receives.

use rhai::{Dynamic, Engine, Map};

use super::errors::Res;
use super::parts::Parts;
use super::values::{any_number, array, log_error};
use crate::results::RunRecord;

/// The channels of `record` as a map name → array of floats, plus `time`.
pub(crate) fn channel_map(record: &RunRecord) -> Map {
    let mut m = Map::new();
    m.insert("time".into(), Dynamic::from_array(array(&record.time)));
    for c in &record.channels {
        m.insert(c.name.as_str().into(), Dynamic::from_array(array(&c.data)));
    }
    m
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
