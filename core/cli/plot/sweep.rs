//! A sweep metric against a varied parameter, one line per combination of
//! the other varied parameters.

use super::*;

/// A metric of a sweep against one varied parameter, one line per
/// combination of the other varied parameters (`--by` names the parameter
/// that makes the lines; the x axis is the first other one).
pub(super) fn sweep(args: &Args, file: &Path, out: &Path) -> anyhow::Result<Drawn> {
    if !matches!(args.kind, Kind::Auto | Kind::Sweep) {
        return Err(bad_input(format!(
            "{} is a sweep file: use --kind sweep (or auto), or --case to overlay cases",
            file.display()
        )));
    }
    let sweep = yawdyn::sweep::read_sweep(file)?;
    let summary = &sweep.summary;
    let keys: Vec<&str> = summary.parameters.iter().map(|(k, _)| k.as_str()).collect();
    let names: Vec<&str> = summary.metrics.iter().map(|m| m.name.as_str()).collect();
    let metric = match &args.metric {
        Some(name) => summary.metric(name).ok_or_else(|| {
            bad_input(format!(
                "metric `{name}` is not in the sweep (closest: {})",
                closest_names(name, names.iter().copied(), 5).join(", ")
            ))
        })?,
        None => match summary.metrics.as_slice() {
            [only] => only,
            _ => {
                return Err(bad_input(format!(
                    "choose a metric with --metric: {}",
                    if names.is_empty() {
                        "(the sweep has none)".to_string()
                    } else {
                        names.join(", ")
                    }
                )));
            }
        },
    };
    if let Some(by) = &args.by
        && !keys.contains(&by.as_str())
    {
        return Err(bad_input(format!(
            "--by {by}: not a varied parameter of the sweep (varied: {})",
            keys.join(", ")
        )));
    }
    let x_key = keys
        .iter()
        .find(|k| args.by.as_deref() != Some(**k))
        .copied()
        .ok_or_else(|| bad_input("the sweep varies no parameter other than --by"))?;
    let eng = engineering_unit(&metric.unit);
    let y: Vec<f64> = metric.values.iter().map(|v| v * eng.factor).collect();
    let lines = sweep_lines(&summary.parameters, x_key, &y)
        .ok_or_else(|| bad_input("the sweep summary columns differ in length"))?;
    let series: Vec<Series> = lines
        .into_iter()
        .map(|l| {
            let label = if l.label.is_empty() {
                metric.name.replace('_', " ")
            } else {
                l.label
            };
            Series::new(label, l.x, l.y)
        })
        .collect();
    let spec = &sweep.spec;
    // The varied parameter with its unit when the sweep file stores one.
    let x_label = match spec.grid.axes.iter().find(|a| a.key == x_key) {
        Some(axis) if !axis.unit.is_empty() => format!("{x_key} [{}]", unit_text(&axis.unit)),
        _ => x_key.to_string(),
    };
    let mut title = format!(
        "{}: {} against {x_key}",
        stem_of(&spec.script_path),
        metric.name.replace('_', " ")
    );
    let vehicle = sweep_vehicle(spec);
    if !vehicle.is_empty() {
        title.push_str(&format!("; vehicle {}", stem_of(&vehicle)));
    }
    for o in &spec.base_overrides {
        title.push_str(&format!(", {}", o.to_text()));
    }
    lines_with_markers(
        out,
        &title,
        &Axis::new(x_label),
        &Axis::new(axis_label(&metric.name, &eng.unit)),
        &series,
    )?;
    Ok(Drawn {
        kind: Kind::Sweep,
        title,
        series: series.iter().map(|s| s.label.clone()).collect(),
        cases: Vec::new(),
        notes: Vec::new(),
    })
}

/// The vehicle file of a sweep: `--vehicle` when given, else the path the
/// script names in its `vehicle("...")` call (empty when neither is found).
pub(super) fn sweep_vehicle(spec: &yawdyn::sweep::SweepSpec) -> String {
    if !spec.vehicle_path.is_empty() {
        return spec.vehicle_path.clone();
    }
    spec.script_text
        .lines()
        .map(str::trim_start)
        .filter(|l| !l.starts_with("//"))
        .find_map(|l| {
            let rest = l.strip_prefix("vehicle(")?.trim_start();
            let quoted = rest.strip_prefix('"')?;
            quoted.split_once('"').map(|(path, _)| path.to_string())
        })
        .unwrap_or_default()
}
