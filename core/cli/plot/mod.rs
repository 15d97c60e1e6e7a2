//! `yawdyn plot FILE... [--case LIST] [--channels a,b,...] [--x CHANNEL]
//! [--out FILE.svg|FILE.png] [--png] [--kind auto|time|xy|handling|gg|sweep|map]
//! [--metric NAME] [--by PARAM] [--json]`: a plot of yawdyn HDF5 files,
//! chosen by each file's root `format` attribute.
//!
//! One results file: stacked time histories in engineering units (deg,
//! deg/s, km/h, g), a cross-plot against `--x`, the handling diagram, or the
//! friction-usage (g-g) plot. Several results files, or sweep cases picked
//! with `--case`: the same time histories or cross-plot with one line per
//! file or case and a legend naming each. Stability maps: heat map of the
//! yaw/sideslip damping ratio with unstable points marked (a line plot for a
//! one-axis map). Sweep files: a metric against a varied parameter, one line
//! per value of the others (`--metric`, `--by`).
//!
//! SVG by default; PNG when `--out` ends in `.png`, or beside the SVG with
//! `--png`. Exit 0 when the plot was written; 2 for bad input (unreadable
//! file, unknown channel or case, kind that does not fit the files,
//! unwritable output).

use std::path::{Path, PathBuf};

use serde_json::json;
use yawdyn::analysis::bicycle::STANDARD_GRAVITY;
use yawdyn::plot::figures::{
    HandlingMethod, axis_label, channel_data, closest_names, engineering_unit, file_format,
    handling_data, stored_vehicle, sweep_lines, unit_text,
};
use yawdyn::plot::{
    Axis, HeatMap, Series, gg, handling_diagram, heat_map, lines, lines_with_markers, stacked,
};
use yawdyn::results::{FORMAT_NAME, Provenance, RunRecord, RunStatus, read_hdf5};
use yawdyn::stability::{MapAxis, StabilityMap};

use super::{Outcome, bad_input};

mod map;
mod overlay;
mod sweep;

pub use map::plot_map;
use map::stability_map;
use overlay::{Source, overlay_plot};
use sweep::{sweep, sweep_vehicle};

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
    /// From the files: handling diagram for one results file whose script
    /// path contains "circle", time histories for other results and for
    /// overlays, metric lines for sweeps, heat map for stability maps.
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

impl Kind {
    fn name(self) -> &'static str {
        match self {
            Kind::Auto => "auto",
            Kind::Time => "time",
            Kind::Xy => "xy",
            Kind::Handling => "handling",
            Kind::Gg => "gg",
            Kind::Sweep => "sweep",
            Kind::Map => "map",
        }
    }
}

/// Arguments of `yawdyn plot`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// yawdyn HDF5 files: results, sweep or stability map. Several results
    /// files (or sweep files with --case) are overlaid on one plot.
    #[arg(required = true, num_args = 1..)]
    files: Vec<PathBuf>,
    /// Sweep cases to overlay, by case index, comma-separated (e.g. 3,7,12):
    /// their channels as time histories or a cross-plot, one line per case.
    #[arg(long, value_delimiter = ',', value_name = "INDEX")]
    case: Vec<usize>,
    /// Channels to plot, comma-separated (default: speed, yaw_rate, ay, sideslip, steer_wheel_angle).
    #[arg(long, value_delimiter = ',')]
    channels: Vec<String>,
    /// Channel on the x axis (cross-plot) instead of time.
    #[arg(long, value_name = "CHANNEL")]
    x: Option<String>,
    /// File to write: SVG, or PNG when it ends in .png (default: the first
    /// input with .svg; `<stem>_overlay.svg` for overlays).
    #[arg(long)]
    out: Option<PathBuf>,
    /// Also write a PNG beside the SVG (same name, .png), rasterised with the
    /// embedded font at twice the SVG's pixel size.
    #[arg(long)]
    png: bool,
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
    /// Print a JSON summary (files written, kind, series, cases) instead of text.
    #[arg(long)]
    json: bool,
}

/// What a plot command drew, for the closing report.
struct Drawn {
    kind: Kind,
    title: String,
    series: Vec<String>,
    cases: Vec<usize>,
    notes: Vec<String>,
}

/// Runs `yawdyn plot`.
pub fn run(args: Args) -> anyhow::Result<Outcome> {
    let first = args.files[0].clone();
    let overlay = args.files.len() > 1 || !args.case.is_empty();
    let out = match &args.out {
        Some(p) => p.clone(),
        None if overlay => {
            let stem = first
                .file_stem()
                .map_or_else(|| "plot".into(), |s| s.to_string_lossy().into_owned());
            first.with_file_name(format!("{stem}_overlay.svg"))
        }
        None => first.with_extension("svg"),
    };
    if args.png && yawdyn::plot::is_png_path(&out) {
        return Err(bad_input(format!(
            "--png writes a PNG beside the SVG; --out {} is already a PNG",
            out.display()
        )));
    }
    yawdyn::results::check_output_path(&out)?;
    let png = args.png.then(|| out.with_extension("png"));
    if let Some(p) = &png {
        yawdyn::results::check_output_path(p)?;
    }
    let drawn = if overlay {
        overlay_plot(&args, &out)?
    } else {
        single(&args, &first, &out)?
    };
    let mut written = vec![out.clone()];
    if let Some(p) = png {
        let svg = std::fs::read_to_string(&out).map_err(|source| yawdyn::plot::PlotError::Io {
            path: out.clone(),
            source,
        })?;
        let bytes =
            yawdyn::plot::svg_to_png(&svg).map_err(|message| yawdyn::plot::PlotError::Draw {
                path: p.clone(),
                message,
            })?;
        std::fs::write(&p, bytes).map_err(|source| yawdyn::plot::PlotError::Io {
            path: p.clone(),
            source,
        })?;
        written.push(p);
    }
    if args.json {
        let summary = json!({
            "files_written": written.iter().map(|p| p.display().to_string()).collect::<Vec<_>>(),
            "inputs": args.files.iter().map(|p| p.display().to_string()).collect::<Vec<_>>(),
            "kind": drawn.kind.name(),
            "title": drawn.title,
            "series": drawn.series,
            "cases": drawn.cases,
            "notes": drawn.notes,
        });
        outln!("{}", serde_json::to_string_pretty(&summary)?);
    } else {
        for note in &drawn.notes {
            outln!("{note}");
        }
        for p in &written {
            outln!("wrote {}", p.display());
        }
    }
    Ok(Outcome::Success)
}

/// One input file, one plot: chosen by the file's format and `--kind`.
fn single(args: &Args, file: &Path, out: &Path) -> anyhow::Result<Drawn> {
    let format = file_format(file)?;
    match format.as_str() {
        FORMAT_NAME => {}
        MAP_FORMAT => return stability_map(args, file, out),
        SWEEP_FORMAT => return sweep(args, file, out),
        other => {
            return Err(bad_input(format!(
                "{}: not a yawdyn file this command can plot (format {other:?})",
                file.display()
            )));
        }
    }
    let record = read_hdf5(file)?;
    let kind = match args.kind {
        Kind::Auto if record.provenance.script_path.contains("circle") => Kind::Handling,
        Kind::Auto if args.x.is_some() => Kind::Xy,
        Kind::Auto => Kind::Time,
        Kind::Sweep | Kind::Map => {
            return Err(bad_input(format!(
                "--kind {} needs a sweep or stability-map file; {} is a results file",
                args.kind.name(),
                file.display()
            )));
        }
        k => k,
    };
    let title = run_title(file, &record);
    match kind {
        Kind::Time | Kind::Xy => {
            let source = Source {
                label: file_label(file),
                record,
            };
            histories(args, std::slice::from_ref(&source), &title, out, kind)
        }
        Kind::Handling => {
            let record = match args.from {
                Some(t) if t.is_finite() => from_time(record, t),
                Some(t) => return Err(bad_input(format!("--from must be finite, got {t}"))),
                None => match phase_start(&record, "speed_sweep") {
                    Some(t) => from_time(record, t),
                    None => record,
                },
            };
            handling(&record, &title, out, args.fit_max_g)
        }
        Kind::Gg => friction_usage(&record, &title, out),
        Kind::Auto | Kind::Sweep | Kind::Map => unreachable!("resolved above"),
    }
}

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

/// The record restricted to the samples at or after `t0`, s.
fn from_time(mut record: RunRecord, t0: f64) -> RunRecord {
    let start = record.time.partition_point(|&t| t < t0);
    record.time.drain(..start);
    for channel in &mut record.channels {
        channel.data.drain(..start.min(channel.data.len()));
    }
    record
}

/// File name without folders and extension.
fn stem_of(path: &str) -> String {
    Path::new(path)
        .file_stem()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default()
}

/// Legend text of a results file: its stem.
fn file_label(file: &Path) -> String {
    file.file_stem().map_or_else(
        || file.display().to_string(),
        |s| s.to_string_lossy().into_owned(),
    )
}

/// The vehicle of a record by name: the stored vehicle's own name, else its
/// file stem.
fn vehicle_name(record: &RunRecord) -> String {
    stored_vehicle(record)
        .ok()
        .map(|v| v.name)
        .filter(|n| !n.trim().is_empty())
        .unwrap_or_else(|| stem_of(&record.provenance.vehicle_path))
}

/// The operating point of a run: start speed and the `--set` overrides.
fn operating_point(record: &RunRecord) -> Vec<String> {
    let mut parts = Vec::new();
    if let Some((_, v)) = record
        .provenance
        .extra
        .iter()
        .find(|(k, _)| k == "start_speed")
        && let Ok(speed) = v.parse::<f64>()
        && speed.is_finite()
    {
        parts.push(format!("start {} km/h", round_to(speed * 3.6, 1)));
    }
    parts.extend(record.provenance.overrides.iter().cloned());
    parts
}

fn round_to(value: f64, decimals: i32) -> f64 {
    let scale = 10f64.powi(decimals);
    (value * scale).round() / scale
}

/// Title of a one-run plot: script, vehicle and operating point, e.g.
/// "step_steer: Hybrid crossover (invented demo), start 100 km/h".
fn run_title(file: &Path, record: &RunRecord) -> String {
    let script = stem_of(&record.provenance.script_path);
    let mut title = if script.is_empty() {
        file_label(file)
    } else {
        script
    };
    let vehicle = vehicle_name(record);
    if !vehicle.is_empty() {
        title.push_str(": ");
        title.push_str(&vehicle);
    }
    for part in operating_point(record) {
        title.push_str(", ");
        title.push_str(&part);
    }
    title
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

/// Stacked time histories (or one cross-plot against `--x`) of the chosen
/// channels, one line per source in every panel.
fn histories(
    args: &Args,
    sources: &[Source],
    title: &str,
    out: &Path,
    kind: Kind,
) -> anyhow::Result<Drawn> {
    let names: Vec<String> = if args.channels.is_empty() {
        DEFAULT_CHANNELS.iter().map(|s| s.to_string()).collect()
    } else {
        args.channels.clone()
    };
    let with_source = |label: &str, e: anyhow::Error| {
        if sources.len() > 1 {
            e.context(format!("in {label}"))
        } else {
            e
        }
    };
    let mut xs = Vec::with_capacity(sources.len());
    let mut x_label = "time [s]".to_string();
    for s in sources {
        match (&args.x, kind) {
            (Some(name), Kind::Xy) | (Some(name), Kind::Auto) => {
                let (x, label) =
                    display_channel(&s.record, name).map_err(|e| with_source(&s.label, e))?;
                x_label = label;
                xs.push(x);
            }
            (None, Kind::Xy) => {
                return Err(bad_input("--kind xy needs --x CHANNEL"));
            }
            _ => xs.push(s.record.time.clone()),
        }
    }
    let mut panels = Vec::with_capacity(names.len());
    for name in &names {
        let mut label = String::new();
        let mut series = Vec::with_capacity(sources.len());
        for (s, x) in sources.iter().zip(&xs) {
            let (y, l) = display_channel(&s.record, name).map_err(|e| with_source(&s.label, e))?;
            label = l;
            let legend = if sources.len() > 1 {
                s.label.clone()
            } else {
                name.replace('_', " ")
            };
            series.push(Series::new(legend, x.clone(), y));
        }
        panels.push((Axis::new(label), series));
    }
    if kind == Kind::Xy && panels.len() == 1 {
        let (axis, series) = &panels[0];
        lines(out, title, &Axis::new(&x_label), axis, series)?;
    } else {
        stacked(out, title, &Axis::new(x_label), &panels)?;
    }
    Ok(Drawn {
        kind,
        title: title.to_string(),
        series: sources.iter().map(|s| s.label.clone()).collect(),
        cases: Vec::new(),
        notes: Vec::new(),
    })
}

fn handling(record: &RunRecord, title: &str, out: &Path, fit_max_g: f64) -> anyhow::Result<Drawn> {
    if !(fit_max_g.is_finite() && fit_max_g > 0.0) {
        return Err(bad_input(format!(
            "--fit-max-g must be finite and positive, got {fit_max_g}"
        )));
    }
    let data = handling_data(record, fit_max_g * STANDARD_GRAVITY)?;
    let fit = data.fit;
    let (method, y_label) = match data.method {
        HandlingMethod::ConstantRadius { radius_m } => (
            format!("handling diagram, R = {radius_m} m"),
            "road-wheel angle [deg]",
        ),
        HandlingMethod::AckermannCorrected => (
            "handling diagram, road-wheel angle less the Ackermann angle L*curvature".to_string(),
            "road-wheel angle - Ackermann angle [deg]",
        ),
    };
    let title = format!("{title}; {method}");
    handling_diagram(
        out,
        &title,
        y_label,
        &data.lat_accel_g,
        &data.steer_deg,
        Some((fit.gradient_deg_per_g, fit.intercept_deg, fit.ay_max_g)),
    )?;
    let note = format!(
        "understeer gradient {:.3} deg/g ({} points, |ay| <= {fit_max_g:.3} g, R^2 {:.4})",
        fit.gradient_deg_per_g, fit.count, fit.r_squared
    );
    Ok(Drawn {
        kind: Kind::Handling,
        title,
        series: vec!["simulation".into(), "linear fit".into()],
        cases: Vec::new(),
        notes: vec![note],
    })
}

fn friction_usage(record: &RunRecord, title: &str, out: &Path) -> anyhow::Result<Drawn> {
    let g = STANDARD_GRAVITY;
    let ax: Vec<f64> = channel_data(record, "ax")?.iter().map(|a| a / g).collect();
    let ay: Vec<f64> = channel_data(record, "ay")?.iter().map(|a| a / g).collect();
    // Reference circle at the road friction of the stored vehicle, if any.
    let mu = stored_vehicle(record)
        .ok()
        .map(|v| v.road.friction)
        .filter(|m| m.is_finite() && *m > 0.0);
    gg(out, title, &ax, &ay, mu)?;
    Ok(Drawn {
        kind: Kind::Gg,
        title: title.to_string(),
        series: vec!["acceleration".into()],
        cases: Vec::new(),
        notes: Vec::new(),
    })
}
