//! `yawdyn plot FILE [--channels a,b,...] [--x CHANNEL] [--out FILE.svg]
//! [--kind auto|time|xy|handling|gg|sweep|map] [--metric NAME] [--by PARAM]`:
//! an SVG plot of a yawdyn HDF5 file, chosen by the file's root `format`
//! attribute.
//!
//! Results files: stacked time histories in engineering units (deg, deg/s,
//! km/h, g), a cross-plot against `--x`, the handling diagram, or the
//! friction-usage (g-g) plot. Stability maps: heat map of the yaw/sideslip
//! damping ratio with unstable points marked. Sweep files: a metric against
//! a varied parameter, one line per value of the others (`--metric`, `--by`).
//!
//! Exit 0 when the plot was written; 2 for bad input (unreadable file,
//! unknown channel, kind that does not fit the file, unwritable output).

use std::path::{Path, PathBuf};

use yawdyn::analysis::bicycle::STANDARD_GRAVITY;
use yawdyn::plot::figures::{
    HandlingMethod, axis_label, channel_data, closest_names, engineering_unit, file_format,
    handling_data, stored_vehicle, sweep_lines,
};
use yawdyn::plot::{Axis, Series, gg, handling_diagram, lines_with_markers, stacked};
use yawdyn::results::{FORMAT_NAME, RunRecord, read_hdf5};

use super::{Outcome, bad_input};

/// Channels plotted when `--channels` is not given.
const DEFAULT_CHANNELS: [&str; 5] = ["speed", "yaw_rate", "ay", "sideslip", "steer_wheel_angle"];

/// Range of the handling-diagram fit, g: 2 m/s², the low-lateral-acceleration
/// range of the shipped circle script's own `understeer_gradient` metric, so
/// that the plot and the metric agree (0.4 g is a common wider choice).
const LINEAR_RANGE_G: f64 = 2.0 / 9.80665;

use yawdyn::stability::map::MAP_FORMAT;
use yawdyn::sweep::FORMAT_NAME as SWEEP_FORMAT;

/// What to draw.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Kind {
    /// From the file: handling diagram for results whose script path
    /// contains "circle", time histories for other results, metric lines for
    /// sweeps, heat map for stability maps.
    Auto,
    /// Stacked time histories.
    Time,
    /// Cross-plot of the channels against `--x`.
    Xy,
    /// Handling diagram: road-wheel angle against lateral acceleration.
    Handling,
    /// Friction usage: longitudinal against lateral acceleration.
    Gg,
    /// A metric against a swept parameter (sweep files).
    Sweep,
    /// A stability map (stability-map files).
    Map,
}

/// Arguments of `yawdyn plot`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// yawdyn HDF5 file: results, sweep or stability map.
    file: PathBuf,
    /// Channels to plot, comma-separated (default: speed, yaw_rate, ay, sideslip, steer_wheel_angle).
    #[arg(long, value_delimiter = ',')]
    channels: Vec<String>,
    /// Channel on the x axis (cross-plot) instead of time.
    #[arg(long, value_name = "CHANNEL")]
    x: Option<String>,
    /// SVG file to write (default: the input file name with .svg).
    #[arg(long)]
    out: Option<PathBuf>,
    /// Kind of plot.
    #[arg(long, value_enum, default_value_t = Kind::Auto)]
    kind: Kind,
    /// Metric to plot (sweep files).
    #[arg(long)]
    metric: Option<String>,
    /// Second swept parameter: one line per value (sweep files).
    #[arg(long, value_name = "PARAM")]
    by: Option<String>,
    /// Handling diagram: fit the understeer gradient over |ay| up to this, g
    /// (default 2 m/s² ≈ 0.204 g, as the circle script's metric).
    #[arg(long, value_name = "G", default_value_t = LINEAR_RANGE_G)]
    fit_max_g: f64,
    /// Handling diagram: use only the samples from this time on, s (e.g. the
    /// start of the quasi-steady phase, leaving out the turn-in transient).
    /// Default: the start of the run's `speed_sweep` phase when it has one.
    #[arg(long, value_name = "S")]
    from: Option<f64>,
}

/// Runs `yawdyn plot`.
pub fn run(args: Args) -> anyhow::Result<Outcome> {
    let format = file_format(&args.file)?;
    let out = args
        .out
        .clone()
        .unwrap_or_else(|| args.file.with_extension("svg"));
    match format.as_str() {
        FORMAT_NAME => {}
        MAP_FORMAT => return stability_map(&args, &out),
        SWEEP_FORMAT => return sweep(&args, &out),
        other => {
            return Err(bad_input(format!(
                "{}: not a yawdyn file this command can plot (format {other:?})",
                args.file.display()
            )));
        }
    }
    let record = read_hdf5(&args.file)?;
    let kind = match args.kind {
        Kind::Auto if record.provenance.script_path.contains("circle") => Kind::Handling,
        Kind::Auto if args.x.is_some() => Kind::Xy,
        Kind::Auto => Kind::Time,
        Kind::Sweep | Kind::Map => {
            return Err(bad_input(format!(
                "--kind {} needs a sweep or stability-map file; {} is a results file",
                if args.kind == Kind::Sweep {
                    "sweep"
                } else {
                    "map"
                },
                args.file.display()
            )));
        }
        k => k,
    };
    let title = title_of(&args.file, &record);
    match kind {
        Kind::Time | Kind::Xy => histories(&args, &record, &title, &out)?,
        Kind::Handling => {
            let record = match args.from {
                Some(t) if t.is_finite() => from_time(record, t),
                Some(t) => return Err(bad_input(format!("--from must be finite, got {t}"))),
                None => match phase_start(&record, "speed_sweep") {
                    Some(t) => from_time(record, t),
                    None => record,
                },
            };
            handling(&record, &title, &out, args.fit_max_g)?
        }
        Kind::Gg => friction_usage(&record, &title, &out)?,
        Kind::Auto | Kind::Sweep | Kind::Map => unreachable!("resolved above"),
    }
    outln!("wrote {}", out.display());
    Ok(Outcome::Success)
}

/// Quantity drawn on stability maps (the one `yawdyn stability --plot` draws).
const MAP_METRIC: &str = "yaw_damping_ratio";

/// A stability map as a heat map of the yaw/sideslip damping ratio with the
/// unstable points marked, drawn by the same routine as `yawdyn stability --plot`.
fn stability_map(args: &Args, out: &Path) -> anyhow::Result<Outcome> {
    if !matches!(args.kind, Kind::Auto | Kind::Map) {
        return Err(bad_input(format!(
            "{} is a stability map: use --kind map (or auto)",
            args.file.display()
        )));
    }
    if let Some(metric) = &args.metric
        && metric != MAP_METRIC
    {
        return Err(bad_input(format!(
            "stability maps are plotted as {MAP_METRIC}; --metric {metric} is not available"
        )));
    }
    let map = yawdyn::stability::read_map(&args.file)?;
    if map.axes.is_empty() || map.points.is_empty() {
        return Err(bad_input(format!(
            "{}: the stability map has no points",
            args.file.display()
        )));
    }
    super::stability::plot_map(&map, out)?;
    outln!("wrote {}", out.display());
    Ok(Outcome::Success)
}

/// The record restricted to the samples at or after `t0`, s.
/// Start time of the phase `name` recorded in the provenance, s.
fn phase_start(record: &RunRecord, name: &str) -> Option<f64> {
    let key = format!("phase.{name}");
    record
        .provenance
        .extra
        .iter()
        .find(|(k, _)| *k == key)
        .and_then(|(_, v)| v.parse().ok())
}

fn from_time(mut record: RunRecord, t0: f64) -> RunRecord {
    let start = record.time.partition_point(|&t| t < t0);
    record.time.drain(..start);
    for channel in &mut record.channels {
        channel.data.drain(..start.min(channel.data.len()));
    }
    record
}

/// A metric of a sweep against one varied parameter, one line per
/// combination of the other varied parameters (`--by` names the parameter
/// that makes the lines; the x axis is the first other one).
fn sweep(args: &Args, out: &Path) -> anyhow::Result<Outcome> {
    if !matches!(args.kind, Kind::Auto | Kind::Sweep) {
        return Err(bad_input(format!(
            "{} is a sweep file: use --kind sweep (or auto)",
            args.file.display()
        )));
    }
    let file = yawdyn::sweep::read_sweep(&args.file)?;
    let summary = &file.summary;
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
    let name = args
        .file
        .file_name()
        .map_or_else(String::new, |n| n.to_string_lossy().into_owned());
    lines_with_markers(
        out,
        &format!("{name}: {} against {x_key}", metric.name),
        &Axis::new(x_key),
        &Axis::new(axis_label(&metric.name, &eng.unit)),
        &series,
    )?;
    outln!("wrote {}", out.display());
    Ok(Outcome::Success)
}

fn title_of(file: &Path, record: &RunRecord) -> String {
    let name = file
        .file_name()
        .map_or_else(String::new, |n| n.to_string_lossy().into_owned());
    // File names only: full paths make titles too long for the plot.
    let script = Path::new(&record.provenance.script_path)
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    if script.is_empty() { name } else { script }
}

/// A channel's samples in display units, with its axis title.
fn display_channel(record: &RunRecord, name: &str) -> anyhow::Result<(Vec<f64>, String)> {
    let data = channel_data(record, name)?;
    let unit = record.channel(name).map_or("", |c| c.unit.as_str());
    let eng = engineering_unit(unit);
    Ok((
        data.iter().map(|v| v * eng.factor).collect(),
        axis_label(name, &eng.unit),
    ))
}

fn histories(args: &Args, record: &RunRecord, title: &str, out: &Path) -> anyhow::Result<()> {
    let names: Vec<String> = if args.channels.is_empty() {
        DEFAULT_CHANNELS.iter().map(|s| s.to_string()).collect()
    } else {
        args.channels.clone()
    };
    let (x, x_label) = match &args.x {
        Some(name) => display_channel(record, name)?,
        None => (record.time.clone(), "time [s]".to_string()),
    };
    let mut panels = Vec::with_capacity(names.len());
    for name in &names {
        let (y, label) = display_channel(record, name)?;
        let series = Series::new(name.replace('_', " "), x.clone(), y);
        panels.push((Axis::new(label), vec![series]));
    }
    stacked(out, title, &Axis::new(x_label), &panels)?;
    Ok(())
}

fn handling(record: &RunRecord, title: &str, out: &Path, fit_max_g: f64) -> anyhow::Result<()> {
    if !(fit_max_g.is_finite() && fit_max_g > 0.0) {
        return Err(bad_input(format!(
            "--fit-max-g must be finite and positive, got {fit_max_g}"
        )));
    }
    let data = handling_data(record, fit_max_g * STANDARD_GRAVITY)?;
    let fit = data.fit;
    let method = match data.method {
        HandlingMethod::ConstantRadius { radius_m } => {
            format!("handling diagram, R = {radius_m} m")
        }
        HandlingMethod::AckermannCorrected => {
            "road-wheel angle minus Ackermann angle L*curvature".to_string()
        }
    };
    handling_diagram(
        out,
        &format!("{title}: {method}"),
        &data.lat_accel_g,
        &data.steer_deg,
        Some((fit.gradient_deg_per_g, fit.intercept_deg, fit.ay_max_g)),
    )?;
    outln!(
        "understeer gradient {:.3} deg/g ({} points, |ay| <= {fit_max_g:.3} g, R^2 {:.4})",
        fit.gradient_deg_per_g,
        fit.count,
        fit.r_squared
    );
    Ok(())
}

fn friction_usage(record: &RunRecord, title: &str, out: &Path) -> anyhow::Result<()> {
    let g = STANDARD_GRAVITY;
    let ax: Vec<f64> = channel_data(record, "ax")?.iter().map(|a| a / g).collect();
    let ay: Vec<f64> = channel_data(record, "ay")?.iter().map(|a| a / g).collect();
    // Reference circle at the road friction of the stored vehicle, if any.
    let mu = stored_vehicle(record)
        .ok()
        .map(|v| v.road.friction)
        .filter(|m| m.is_finite() && *m > 0.0);
    gg(out, title, &ax, &ay, mu)?;
    Ok(())
}
