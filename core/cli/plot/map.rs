//! Stability maps: the yaw/sideslip damping ratio over one or two varied
//! quantities, for both `yawdyn plot` and `yawdyn stability --plot`.

use super::*;

/// Quantity drawn on stability maps (the one `yawdyn stability --plot` draws).
const MAP_METRIC: &str = "yaw_damping_ratio";

/// A stability map as a heat map of the yaw/sideslip damping ratio with the
/// unstable points marked (a line plot for one axis), drawn by the same
/// routine as `yawdyn stability --plot`.
pub(super) fn stability_map(args: &Args, file: &Path, out: &Path) -> anyhow::Result<Drawn> {
    if !matches!(args.kind, Kind::Auto | Kind::Map) {
        return Err(bad_input(format!(
            "{} is a stability map: use --kind map (or auto)",
            file.display()
        )));
    }
    if let Some(metric) = &args.metric
        && metric != MAP_METRIC
    {
        return Err(bad_input(format!(
            "stability maps are plotted as {MAP_METRIC}; --metric {metric} is not available"
        )));
    }
    let map = yawdyn::stability::read_map(file)?;
    if map.axes.is_empty() || map.points.is_empty() {
        return Err(bad_input(format!(
            "{}: the stability map has no points",
            file.display()
        )));
    }
    let title = plot_map(&map, out)?;
    Ok(Drawn {
        kind: Kind::Map,
        title,
        series: vec![MAP_METRIC.to_string()],
        cases: Vec::new(),
        notes: Vec::new(),
    })
}

/// Readable axis title of a stability-map axis: the operating-point keys by
/// name ("lateral acceleration [g]"), parameter paths as written with
/// their unit when the map has one.
fn map_axis_label(axis: &MapAxis) -> String {
    let name = match axis.key.as_str() {
        "speed_kph" => "speed",
        "lat_accel_g" => "lateral acceleration",
        "long_accel_g" => "longitudinal acceleration",
        "front_share" => "front share of drive torque",
        other => other,
    };
    let unit = match axis.key.as_str() {
        "speed_kph" => "km/h",
        "lat_accel_g" | "long_accel_g" => "g",
        "front_share" => "1",
        _ => axis.unit.as_str(),
    };
    if unit.is_empty() {
        name.to_string()
    } else {
        format!("{name} [{}]", unit_text(unit))
    }
}

/// Draws the yaw/sideslip damping ratio of a stability map to `path`: a heat
/// map with unstable points hatched for two axes, a line with unstable points
/// marked for one. The title names the vehicle and the fixed conditions.
/// Returns the title.
pub fn plot_map(map: &StabilityMap, path: &Path) -> anyhow::Result<String> {
    let [n1, n0] = map.shape();
    let mut title = format!("Yaw/sideslip damping ratio: {}", map.vehicle_name);
    if !map.description.trim().is_empty() {
        title.push_str(&format!("; fixed: {}", map.description.trim()));
    }
    let z_label = "yaw/sideslip damping ratio [1]";
    let x_axis = Axis::new(map_axis_label(&map.axes[0]));
    let Some(y_map_axis) = map.axes.get(1) else {
        // One axis: a line plot, gaps where no trim exists.
        let x = map.axes[0].values.clone();
        let damping: Vec<f64> = map
            .points
            .iter()
            .map(|p| {
                if p.trim_found {
                    p.yaw_damping_ratio
                } else {
                    f64::NAN
                }
            })
            .collect();
        let no_trim = map.points.iter().filter(|p| !p.trim_found).count();
        let mut series = vec![Series::new(
            if no_trim > 0 {
                format!("damping ratio (no trim at {no_trim} of {n0} points: left out)")
            } else {
                "damping ratio".to_string()
            },
            x.clone(),
            damping.clone(),
        )];
        let unstable: Vec<f64> = map
            .points
            .iter()
            .zip(&damping)
            .map(|(p, &d)| {
                if p.trim_found && !p.stable {
                    d
                } else {
                    f64::NAN
                }
            })
            .collect();
        if unstable.iter().any(|v| v.is_finite()) {
            series.push(Series::new("unstable", x, unstable));
        }
        lines_with_markers(path, &title, &x_axis, &Axis::new(z_label), &series)?;
        return Ok(title);
    };
    let y_axis = Axis::new(map_axis_label(y_map_axis));
    let z: Vec<Vec<f64>> = (0..n1)
        .map(|j| {
            (0..n0)
                .map(|i| map.points[j * n0 + i].yaw_damping_ratio)
                .collect()
        })
        .collect();
    let marks: Vec<Vec<bool>> = (0..n1)
        .map(|j| {
            (0..n0)
                .map(|i| {
                    let p = &map.points[j * n0 + i];
                    p.trim_found && !p.stable
                })
                .collect()
        })
        .collect();
    heat_map(
        path,
        &title,
        &HeatMap {
            x_axis: &x_axis,
            y_axis: &y_axis,
            x: &map.axes[0].values,
            y: &y_map_axis.values,
            z: &z,
            z_label,
            highlight: Some(&marks),
            highlight_label: "unstable",
            missing_label: "no trim",
        },
    )?;
    Ok(title)
}
