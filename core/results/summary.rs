//! Human and machine summaries of a run, as printed by `yawdyn show`.

use serde_json::{Map, Value, json};

use super::{RunRecord, RunStatus};
use crate::table::{MISSING, Table, fmt_num};

/// Significant digits of numbers in text summaries.
const SUMMARY_DIGITS: usize = 4;

/// A text summary: provenance essentials, status, channel and sample counts,
/// duration, then metrics and criteria as aligned tables.
pub fn summary_text(record: &RunRecord) -> String {
    let prov = &record.provenance;
    let mut items: Vec<(&str, String)> = Vec::new();
    items.push((
        "status",
        match &record.status {
            RunStatus::Completed => "completed".to_string(),
            RunStatus::Failed { message, time_s } => {
                format!(
                    "failed at t = {} s: {message}",
                    fmt_num(*time_s, SUMMARY_DIGITS)
                )
            }
        },
    ));
    items.push(("script", prov.script_path.clone()));
    items.push(("vehicle", prov.vehicle_path.clone()));
    items.push((
        "overrides",
        if prov.overrides.is_empty() {
            "none".to_string()
        } else {
            prov.overrides.join(", ")
        },
    ));
    let solver = if prov.fixed_step_s > 0.0 {
        format!(
            "{} (step {} s)",
            prov.solver,
            fmt_num(prov.fixed_step_s, SUMMARY_DIGITS)
        )
    } else {
        format!(
            "{} (rtol {}, atol {})",
            prov.solver,
            fmt_num(prov.rtol, SUMMARY_DIGITS),
            fmt_num(prov.atol, SUMMARY_DIGITS)
        )
    };
    items.push(("solver", solver));
    items.push((
        "rates",
        format!(
            "output {} Hz, controller {} Hz",
            fmt_num(prov.sample_rate_hz, SUMMARY_DIGITS),
            fmt_num(prov.tick_rate_hz, SUMMARY_DIGITS)
        ),
    ));
    for (key, value) in &prov.extra {
        items.push(("extra", format!("{key} = {value}")));
    }
    items.push(("yawdyn", prov.yawdyn_version.clone()));
    items.push(("created", prov.created_utc.clone()));
    items.push(("channels", record.channels.len().to_string()));
    items.push(("samples", record.samples().to_string()));
    items.push((
        "duration",
        format!("{} s", fmt_num(record.duration_s(), SUMMARY_DIGITS)),
    ));

    let key_width = items.iter().map(|(k, _)| k.len()).max().unwrap_or(0);
    let mut out = String::new();
    for (key, value) in &items {
        out.push_str(format!("{key:<key_width$}  {value}").trim_end());
        out.push('\n');
    }

    out.push_str("\nmetrics\n");
    if record.metrics.is_empty() {
        out.push_str("(none)\n");
    } else {
        let mut table = Table::new(["name", "value", "unit"]);
        for metric in &record.metrics {
            table.row([
                metric.name.clone(),
                fmt_num(metric.value, SUMMARY_DIGITS),
                metric.unit.clone(),
            ]);
        }
        out.push_str(&table.render());
    }

    out.push_str("\ncriteria\n");
    if record.criteria.is_empty() {
        out.push_str("(none)\n");
    } else {
        let limit = |x: Option<f64>| x.map_or(MISSING.to_string(), |v| fmt_num(v, SUMMARY_DIGITS));
        let mut table = Table::new(["name", "value", "lower", "upper", "result"]);
        for criterion in &record.criteria {
            table.row([
                criterion.name.clone(),
                fmt_num(criterion.value, SUMMARY_DIGITS),
                limit(criterion.lower),
                limit(criterion.upper),
                if criterion.passed { "passed" } else { "FAILED" }.to_string(),
            ]);
        }
        out.push_str(&table.render());
    }
    out
}

/// A JSON summary for scripts (`yawdyn show --json`).
///
/// Keys: `status` (`"completed"`/`"failed"`), `status_message`,
/// `failure_time_s` (null when completed), `metrics` (name → value),
/// `metric_units` (name → unit), `criteria` (list of `{name, value, lower,
/// upper, passed}`, absent limits null), `provenance` (every provenance
/// field; `extra` as an object), `channels` (list of `{name, units}`),
/// `samples`, `duration_s`. Non-finite numbers appear as null, since JSON has
/// no NaN.
pub fn summary_json(record: &RunRecord) -> Value {
    let prov = &record.provenance;
    let (status, message, failure_time_s) = match &record.status {
        RunStatus::Completed => ("completed", "", Value::Null),
        RunStatus::Failed { message, time_s } => ("failed", message.as_str(), number(*time_s)),
    };
    let mut metrics = Map::new();
    let mut metric_units = Map::new();
    for metric in &record.metrics {
        metrics.insert(metric.name.clone(), number(metric.value));
        metric_units.insert(metric.name.clone(), Value::from(metric.unit.clone()));
    }
    let criteria: Vec<Value> = record
        .criteria
        .iter()
        .map(|c| {
            json!({
                "name": c.name,
                "value": number(c.value),
                "lower": c.lower.map_or(Value::Null, number),
                "upper": c.upper.map_or(Value::Null, number),
                "passed": c.passed,
            })
        })
        .collect();
    let extra: Map<String, Value> = prov
        .extra
        .iter()
        .map(|(k, v)| (k.clone(), Value::from(v.clone())))
        .collect();
    let channels: Vec<Value> = record
        .channels
        .iter()
        .map(|c| json!({ "name": c.name, "units": c.unit }))
        .collect();
    json!({
        "status": status,
        "status_message": message,
        "failure_time_s": failure_time_s,
        "metrics": metrics,
        "metric_units": metric_units,
        "criteria": criteria,
        "provenance": {
            "yawdyn_version": prov.yawdyn_version,
            "created_utc": prov.created_utc,
            "script_path": prov.script_path,
            "script_text": prov.script_text,
            "vehicle_path": prov.vehicle_path,
            "vehicle_toml": prov.vehicle_toml,
            "overrides": prov.overrides,
            "solver": prov.solver,
            "rtol": number(prov.rtol),
            "atol": number(prov.atol),
            "fixed_step_s": number(prov.fixed_step_s),
            "sample_rate_hz": number(prov.sample_rate_hz),
            "tick_rate_hz": number(prov.tick_rate_hz),
            "extra": extra,
        },
        "channels": channels,
        "samples": record.samples(),
        "duration_s": number(record.duration_s()),
    })
}

/// A JSON number, or null for NaN and infinities.
fn number(x: f64) -> Value {
    serde_json::Number::from_f64(x).map_or(Value::Null, Value::Number)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn non_finite_numbers_become_json_null() {
        assert_eq!(number(f64::NAN), Value::Null);
        assert_eq!(number(f64::INFINITY), Value::Null);
        assert_eq!(number(1.5), json!(1.5));
    }

    #[test]
    fn completed_run_with_nothing_measured_says_none() {
        let record = RunRecord {
            time: vec![0.0, 0.5],
            channels: Vec::new(),
            provenance: super::super::Provenance {
                solver: "rk4".to_string(),
                fixed_step_s: 0.001,
                ..Default::default()
            },
            status: RunStatus::Completed,
            metrics: Vec::new(),
            criteria: Vec::new(),
        };
        let text = summary_text(&record);
        assert!(text.starts_with("status     completed\n"), "{text}");
        assert!(text.contains("rk4 (step 0.001 s)"), "{text}");
        assert!(text.contains("duration   0.5 s"), "{text}");
        assert!(text.contains("metrics\n(none)\n"), "{text}");
        assert!(text.contains("criteria\n(none)\n"), "{text}");
        assert!(text.lines().all(|l| l == l.trim_end()), "{text}");
    }
}
