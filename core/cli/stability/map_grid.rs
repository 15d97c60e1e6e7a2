//! `stability --vary`: trims and modes over a grid of operating points or
//! parameters, written as a stability map.

use super::*;

/// The stability map of `vary` around `point`: a trim, its modes and
/// damping at every grid point, a table, the map file and its plot.
pub(super) fn grid(
    args: &Args,
    inputs: &Inputs<'_>,
    point: Point,
    vary: &[Vary],
) -> anyhow::Result<Outcome> {
    // Output paths are checked before the grid is computed.
    let outputs: Vec<&std::path::Path> = [&args.out, &args.plot]
        .into_iter()
        .flatten()
        .map(PathBuf::as_path)
        .collect();
    crate::cli::check_outputs(&outputs)?;
    let n0 = vary[0].values.len();
    let n1 = vary.get(1).map_or(1, |a| a.values.len());
    let mut cases = Vec::with_capacity(n0 * n1);
    for j in 0..n1 {
        for i in 0..n0 {
            let mut varied = vec![(vary[0].key.as_str(), vary[0].values[i])];
            if let Some(ax1) = vary.get(1) {
                varied.push((ax1.key.as_str(), ax1.values[j]));
            }
            cases.push(build_case(inputs, point, &varied)?);
        }
    }
    let started = Instant::now();
    let settings = TrimSettings::default();
    let progress = Progress::new(
        "stability",
        Unit::Items("points"),
        cases.len() as u64,
        args.json,
        "{elapsed_precise} [{bar:40}] {pos}/{len} points, eta {eta}",
    );
    let results: Vec<Result<StabilityReport, StabilityError>> = cases
        .par_iter()
        .map(|c| {
            let result = analyse(&c.vehicle, &c.target, &settings);
            progress.inc();
            result
        })
        .collect();
    progress.finish();
    let elapsed = started.elapsed().as_secs_f64();
    if let Some(Err(e)) = results
        .iter()
        .find(|r| matches!(r, Err(e) if e.kind() == ErrorKind::BadInput))
    {
        return Err(e.clone().into());
    }
    let points: Vec<MapPoint> = results.iter().map(MapPoint::from_result).collect();
    let describe = |key: &str| match key {
        "speed_kph" => point.speed_kph.map(|v| format!("speed {v} km/h")),
        "lat_accel_g" => point
            .lat_accel_g
            .map(|v| format!("lateral acceleration {v} g")),
        "long_accel_g" => Some(format!(
            "longitudinal acceleration {} g",
            point.long_accel_g
        )),
        "front_share" => point.front_share.map(|v| format!("front share {v}")),
        _ => None,
    };
    let fixed: Vec<String> = ["speed_kph", "lat_accel_g", "long_accel_g", "front_share"]
        .iter()
        .filter(|k| vary.iter().all(|a| a.key != **k))
        .filter_map(|k| describe(k))
        .chain(args.sets.iter().map(|s| format!("set {s}")))
        .collect();
    // The operating-point quantities not varied, as numbers.
    let value_of = |key: &str| match key {
        "speed_kph" => point.speed_kph,
        "lat_accel_g" => point.lat_accel_g,
        "long_accel_g" => Some(point.long_accel_g),
        _ => Some(
            point
                .front_share
                .unwrap_or(cases[0].vehicle.powertrain.front_share),
        ),
    };
    let fixed_numbers = CONDITION_ORDER
        .iter()
        .filter(|k| {
            vary.iter()
                .all(|a| a.key != **k && !(**k == "front_share" && a.key == "drive.front_share"))
        })
        .filter_map(|k| {
            value_of(k).map(|value| FixedCondition {
                key: k.to_string(),
                value,
                unit: unit_of(k).to_string(),
            })
        })
        .collect();
    let provenance = MapProvenance {
        yawdyn_version: yawdyn::sweep::yawdyn_version(),
        created_utc: yawdyn::sweep::utc_now(),
        vehicle_path: inputs.path.display().to_string(),
        vehicle_toml: inputs.text.to_string(),
        overrides: inputs.overrides.iter().map(Override::to_text).collect(),
        fixed: fixed_numbers,
    };
    let map = StabilityMap {
        provenance,
        vehicle_name: cases[0].vehicle.name.clone(),
        description: fixed.join("; "),
        axes: vary
            .iter()
            .map(|a| MapAxis {
                key: a.key.clone(),
                unit: unit_of(&a.key).to_string(),
                values: a.values.clone(),
            })
            .collect(),
        points,
    };
    if let Some(out) = &args.out {
        write_map(&map, out)?;
    }
    if let Some(svg) = &args.plot {
        crate::cli::plot::plot_map(&map, svg)?;
    }
    let stable = map.points.iter().filter(|p| p.stable).count();
    let no_trim = map.points.iter().filter(|p| !p.trim_found).count();
    let unstable = map.points.len() - stable - no_trim;
    if args.json {
        let pts: Vec<Value> = map
            .points
            .iter()
            .enumerate()
            .map(|(k, p)| {
                let mut at = serde_json::Map::new();
                at.insert(vary[0].key.clone(), json!(vary[0].values[k % n0]));
                if let Some(a1) = vary.get(1) {
                    at.insert(a1.key.clone(), json!(a1.values[k / n0]));
                }
                json!({"at": at, "trim_found": p.trim_found, "stable": p.stable,
                       "yaw_damping_ratio": finite(p.yaw_damping_ratio),
                       "yaw_frequency_hz": finite(p.yaw_frequency_hz),
                       "max_real_part_per_s": finite(p.max_real_part),
                       "lat_accel_g": finite(p.lat_accel / GRAVITY)})
            })
            .collect();
        let out = json!({"vehicle": map.vehicle_name, "fixed": map.description,
            "axes": vary.iter().map(|a| json!({"key": a.key, "unit": unit_of(&a.key), "values": a.values})).collect::<Vec<_>>(),
            "stable_points": stable, "unstable_points": unstable, "no_trim_points": no_trim,
            "points": pts});
        outln!("{}", serde_json::to_string_pretty(&out)?);
        return Ok(Outcome::Success);
    }
    outln!("{}", map.vehicle_name);
    outln!("fixed: {}", map.description);
    outln!();
    let head = |a: &Vary| {
        let u = unit_of(&a.key);
        if u.is_empty() {
            a.key.clone()
        } else {
            format!("{} [{u}]", a.key)
        }
    };
    let mut headers = vec![head(&vary[0])];
    if let Some(a1) = vary.get(1) {
        headers.push(head(a1));
    }
    headers.extend(
        [
            "trim",
            "stable",
            "yaw damping ratio [1]",
            "yaw frequency [Hz]",
            "max real part [1/s]",
            "ay [g]",
        ]
        .map(String::from),
    );
    let mut t = Table::new(headers);
    let opt = |x: f64| {
        if x.is_finite() {
            fmt_num(x, 4)
        } else {
            "-".to_string()
        }
    };
    for (k, p) in map.points.iter().enumerate() {
        let mut row = vec![fmt_num(vary[0].values[k % n0], 4)];
        if let Some(a1) = vary.get(1) {
            row.push(fmt_num(a1.values[k / n0], 4));
        }
        row.push(if p.trim_found { "yes" } else { "no (max ay)" }.to_string());
        row.push(
            if !p.trim_found {
                "-"
            } else if p.stable {
                "yes"
            } else {
                "NO"
            }
            .to_string(),
        );
        row.extend([
            opt(p.yaw_damping_ratio),
            opt(p.yaw_frequency_hz),
            opt(p.max_real_part),
            opt(p.lat_accel / GRAVITY),
        ]);
        t.row(row);
    }
    out!("{}", t.render());
    outln!();
    outln!(
        "{} points: {stable} stable, {unstable} unstable, {no_trim} without trim; computed in {:.3} s",
        map.points.len(),
        elapsed
    );
    Ok(Outcome::Success)
}
