//! Summaries of every kind of file, as `yawdyn show` prints them: aligned
//! text for people, JSON for scripts.

use std::path::Path;

use serde_json::{Value, json};

use super::{FileError, FileKind, file_kind};
use crate::results::{read_hdf5, summary_json, summary_text};
use crate::stability::{StabilityMap, read_map};
use crate::sweep::{CaseStatus, SweepFile, read_sweep};
use crate::table::{MISSING, Table, fmt_num};

/// Significant digits of numbers in text summaries.
const DIGITS: usize = 4;

/// The text summary of the file at `path`, whatever its kind.
pub fn show_text(path: &Path) -> Result<String, FileError> {
    Ok(match file_kind(path)? {
        FileKind::Results => summary_text(&read_hdf5(path)?),
        FileKind::Sweep => sweep_text(&read_sweep(path)?),
        FileKind::StabilityMap => map_text(&read_map(path)?),
    })
}

/// The JSON summary of the file at `path`, whatever its kind; its key
/// `format` names the kind (the root `format` attribute).
///
/// Results files: [`summary_json`]. Sweep files: `script_path`,
/// `vehicle_path`, `yawdyn_version`, `created_utc`, `shard` (`[K, N]`),
/// `case_total`, `cases`, `grid` (list of `{key, unit, start, stop,
/// count}`), `base_overrides`, `channels` (list of `{name, units}`),
/// `status_counts`, `metrics` (list of `{name, units, min, max, cases}`),
/// `criteria` (list of `{name, passed, failed, not_evaluated}`). Maps:
/// `vehicle_name`, `vehicle_path`, `yawdyn_version`, `created_utc`,
/// `overrides`, `fixed` (list of `{key, value, unit}`), `axes` (list of
/// `{key, unit, values}`), `points`, `stable_points`, `unstable_points`,
/// `no_trim_points`, `yaw_damping_ratio_range` (`[min, max]` over the points
/// with a trim). Non-finite numbers are null.
pub fn show_json(path: &Path) -> Result<Value, FileError> {
    let kind = file_kind(path)?;
    let mut value = match kind {
        FileKind::Results => summary_json(&read_hdf5(path)?),
        FileKind::Sweep => sweep_json(&read_sweep(path)?),
        FileKind::StabilityMap => map_json(&read_map(path)?),
    };
    value["format"] = json!(kind.format_name());
    Ok(value)
}

/// A JSON number, or null for NaN and infinities.
fn number(x: f64) -> Value {
    serde_json::Number::from_f64(x).map_or(Value::Null, Value::Number)
}

/// Smallest and largest finite value, and how many there are.
fn range(values: impl Iterator<Item = f64>) -> (f64, f64, usize) {
    values
        .filter(|v| v.is_finite())
        .fold((f64::NAN, f64::NAN, 0), |(lo, hi, n), v| {
            (lo.min(v), hi.max(v), n + 1)
        })
}

/// `key = value` lines, keys aligned.
fn items(items: &[(&str, String)]) -> String {
    let width = items.iter().map(|(k, _)| k.len()).max().unwrap_or(0);
    items
        .iter()
        .map(|(k, v)| format!("{k:<width$}  {v}").trim_end().to_string() + "\n")
        .collect()
}

/// Count of each status, in the order of [`CaseStatus`].
fn status_counts(sweep: &SweepFile) -> Vec<(CaseStatus, usize)> {
    [
        CaseStatus::Completed,
        CaseStatus::CriteriaFailed,
        CaseStatus::Failed,
        CaseStatus::Error,
    ]
    .into_iter()
    .map(|status| {
        let n = sweep
            .summary
            .status
            .iter()
            .filter(|&&s| s == status)
            .count();
        (status, n)
    })
    .collect()
}

/// Passed, failed and not-evaluated counts of criterion column `passed`.
fn criterion_counts(passed: &[i8]) -> [usize; 3] {
    let count = |x: i8| passed.iter().filter(|&&p| p == x).count();
    [count(1), count(0), count(-1)]
}

fn sweep_text(sweep: &SweepFile) -> String {
    let spec = &sweep.spec;
    let s = &sweep.summary;
    let mut out = items(&[
        ("format", "yawdyn-sweep".to_string()),
        ("script", spec.script_path.clone()),
        (
            "vehicle",
            if spec.vehicle_path.is_empty() {
                "(named by the script)".to_string()
            } else {
                spec.vehicle_path.clone()
            },
        ),
        (
            "overrides",
            if spec.base_overrides.is_empty() {
                "none".to_string()
            } else {
                let list: Vec<String> = spec.base_overrides.iter().map(|o| o.to_text()).collect();
                list.join(", ")
            },
        ),
        ("yawdyn", sweep.yawdyn_version.clone()),
        ("created", sweep.created_utc.clone()),
        (
            "cases",
            format!(
                "{} (shard {} of the grid's {})",
                s.len(),
                sweep.shard,
                sweep.case_total
            ),
        ),
        ("channels", sweep.channel_names().join(", ")),
    ]);
    let counts: Vec<String> = status_counts(sweep)
        .iter()
        .map(|(status, n)| format!("{} {n}", status.name()))
        .collect();
    out.push_str(&items(&[("status", counts.join(", "))]));

    out.push_str("\ngrid\n");
    let mut grid = Table::new(["key", "unit", "start", "stop", "count"]);
    for a in &spec.grid.axes {
        grid.row([
            a.key.clone(),
            if a.unit.is_empty() {
                MISSING.to_string()
            } else {
                a.unit.clone()
            },
            fmt_num(a.start, DIGITS),
            fmt_num(a.stop, DIGITS),
            a.count.to_string(),
        ]);
    }
    out.push_str(&grid.render());

    out.push_str("\nmetrics over the cases\n");
    if s.metrics.is_empty() {
        out.push_str("(none)\n");
    } else {
        let mut table = Table::new(["name", "unit", "min", "max", "cases"]);
        for m in &s.metrics {
            let (lo, hi, n) = range(m.values.iter().copied());
            table.row([
                m.name.clone(),
                m.unit.clone(),
                fmt_num(lo, DIGITS),
                fmt_num(hi, DIGITS),
                n.to_string(),
            ]);
        }
        out.push_str(&table.render());
    }
    if !s.criteria.is_empty() {
        out.push_str("\ncriteria over the cases\n");
        let mut table = Table::new(["name", "passed", "failed", "not evaluated"]);
        for c in &s.criteria {
            let [passed, failed, none] = criterion_counts(&c.passed);
            table.row([
                c.name.clone(),
                passed.to_string(),
                failed.to_string(),
                none.to_string(),
            ]);
        }
        out.push_str(&table.render());
    }
    out.push_str("\n(the table of cases: yawdyn export FILE; their channels: yawdyn export FILE --table channels)\n");
    out
}

fn sweep_json(sweep: &SweepFile) -> Value {
    let spec = &sweep.spec;
    let s = &sweep.summary;
    let grid: Vec<Value> = spec
        .grid
        .axes
        .iter()
        .map(|a| json!({"key": a.key, "unit": a.unit, "start": number(a.start), "stop": number(a.stop), "count": a.count}))
        .collect();
    let channels: Vec<Value> = sweep
        .channel_names()
        .into_iter()
        .zip(sweep.channel_units())
        .map(|(name, unit)| json!({"name": name, "units": unit}))
        .collect();
    let counts: serde_json::Map<String, Value> = status_counts(sweep)
        .into_iter()
        .map(|(status, n)| (status.name().to_string(), json!(n)))
        .collect();
    let metrics: Vec<Value> = s
        .metrics
        .iter()
        .map(|m| {
            let (lo, hi, n) = range(m.values.iter().copied());
            json!({"name": m.name, "units": m.unit, "min": number(lo), "max": number(hi), "cases": n})
        })
        .collect();
    let criteria: Vec<Value> = s
        .criteria
        .iter()
        .map(|c| {
            let [passed, failed, none] = criterion_counts(&c.passed);
            json!({"name": c.name, "passed": passed, "failed": failed, "not_evaluated": none})
        })
        .collect();
    json!({
        "script_path": spec.script_path,
        "vehicle_path": spec.vehicle_path,
        "yawdyn_version": sweep.yawdyn_version,
        "created_utc": sweep.created_utc,
        "shard": [sweep.shard.index, sweep.shard.count],
        "case_total": sweep.case_total,
        "cases": s.len(),
        "grid": grid,
        "base_overrides": spec.base_overrides.iter().map(|o| o.to_text()).collect::<Vec<_>>(),
        "channels": channels,
        "status_counts": counts,
        "metrics": metrics,
        "criteria": criteria,
    })
}

/// Stable, unstable and no-trim point counts.
fn map_counts(map: &StabilityMap) -> [usize; 3] {
    let stable = map.points.iter().filter(|p| p.stable).count();
    let no_trim = map.points.iter().filter(|p| !p.trim_found).count();
    [stable, map.points.len() - stable - no_trim, no_trim]
}

fn map_text(map: &StabilityMap) -> String {
    let prov = &map.provenance;
    let fixed: Vec<String> = prov
        .fixed
        .iter()
        .map(|c| format!("{} = {} {}", c.key, fmt_num(c.value, DIGITS), c.unit))
        .collect();
    let [stable, unstable, no_trim] = map_counts(map);
    let (lo, hi, _) = range(
        map.points
            .iter()
            .filter(|p| p.trim_found)
            .map(|p| p.yaw_damping_ratio),
    );
    let mut out = items(&[
        ("format", "yawdyn-stability-map".to_string()),
        ("vehicle", map.vehicle_name.clone()),
        ("vehicle file", prov.vehicle_path.clone()),
        (
            "overrides",
            if prov.overrides.is_empty() {
                "none".to_string()
            } else {
                prov.overrides.join(", ")
            },
        ),
        (
            "fixed",
            if fixed.is_empty() {
                map.description.clone()
            } else {
                fixed.join(", ")
            },
        ),
        ("yawdyn", prov.yawdyn_version.clone()),
        ("created", prov.created_utc.clone()),
        (
            "points",
            format!(
                "{} ({stable} stable, {unstable} unstable, {no_trim} without trim)",
                map.points.len()
            ),
        ),
        (
            "yaw damping",
            format!(
                "{} .. {} (points with a trim)",
                fmt_num(lo, DIGITS),
                fmt_num(hi, DIGITS)
            ),
        ),
    ]);
    out.push_str("\naxes (grids are stored [axis 1, axis 0])\n");
    let mut table = Table::new(["axis", "key", "unit", "first", "last", "count"]);
    for (k, a) in map.axes.iter().enumerate() {
        table.row([
            k.to_string(),
            a.key.clone(),
            if a.unit.is_empty() {
                MISSING.to_string()
            } else {
                a.unit.clone()
            },
            fmt_num(a.values.first().copied().unwrap_or(f64::NAN), DIGITS),
            fmt_num(a.values.last().copied().unwrap_or(f64::NAN), DIGITS),
            a.values.len().to_string(),
        ]);
    }
    out.push_str(&table.render());
    out.push_str("\n(every point: yawdyn export FILE)\n");
    out
}

fn map_json(map: &StabilityMap) -> Value {
    let prov = &map.provenance;
    let [stable, unstable, no_trim] = map_counts(map);
    let (lo, hi, _) = range(
        map.points
            .iter()
            .filter(|p| p.trim_found)
            .map(|p| p.yaw_damping_ratio),
    );
    json!({
        "vehicle_name": map.vehicle_name,
        "description": map.description,
        "vehicle_path": prov.vehicle_path,
        "yawdyn_version": prov.yawdyn_version,
        "created_utc": prov.created_utc,
        "overrides": prov.overrides,
        "fixed": prov.fixed.iter().map(|c| json!({"key": c.key, "value": number(c.value), "unit": c.unit})).collect::<Vec<_>>(),
        "axes": map.axes.iter().map(|a| json!({"key": a.key, "unit": a.unit, "values": a.values.iter().map(|v| number(*v)).collect::<Vec<_>>()})).collect::<Vec<_>>(),
        "points": map.points.len(),
        "stable_points": stable,
        "unstable_points": unstable,
        "no_trim_points": no_trim,
        "yaw_damping_ratio_range": [number(lo), number(hi)],
    })
}
