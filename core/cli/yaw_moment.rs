//! `yawdyn yaw-moment VEHICLE --speed-kph V [...]`: the yaw-moment diagram
//! (moment method) of a vehicle at one speed, free rolling, on power or
//! braking, for one front torque share or a sweep of shares; tables or
//! `--json`, an HDF5 file (`--out`) and SVG diagrams (`--plot`).

use std::path::{Path, PathBuf};
use std::time::Instant;

use rayon::prelude::*;
use serde_json::{Value, json};
use yawdyn::params::{GRAVITY, Override, Vehicle, load_vehicle};
use yawdyn::plot::{Axis, Series, YawMomentFigure, stacked, yaw_moment_diagram as draw};
use yawdyn::quasi_static::file::FileInfo;
use yawdyn::quasi_static::{
    Condition, DiagramSettings, Longitudinal, YawMomentDiagram, write_yaw_moment,
    yaw_moment_diagram,
};
use yawdyn::table::{Table, fmt_num};

use super::values::parse_values;
use super::{Outcome, parse_overrides};

/// Arguments of `yawdyn yaw-moment`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Vehicle parameter file (TOML).
    vehicle: PathBuf,
    /// Forward speed, km/h.
    #[arg(long)]
    speed_kph: f64,
    /// Body sideslip grid at the CG, deg: V1,V2,... or START:STOP:COUNT.
    #[arg(long, default_value = "-10:10:21", allow_hyphen_values = true)]
    sideslip_deg: String,
    /// Road-wheel steer grid (steering-wheel angle over ratio), deg.
    #[arg(long, default_value = "-10:10:21", allow_hyphen_values = true)]
    steer_deg: String,
    /// Hold this rate of change of speed, g: drive torque (positive) or brake
    /// torque (negative) is solved at every point. Default: free rolling.
    #[arg(long, allow_hyphen_values = true, conflicts_with = "drive_torque")]
    long_accel_g: Option<f64>,
    /// Apply this total drive torque at the wheels, N*m (split by the front share).
    #[arg(long)]
    drive_torque: Option<f64>,
    /// Front share of the drive torque: one value or a sweep (V1,V2,... or
    /// START:STOP:COUNT), one diagram per share. Default: the vehicle's.
    #[arg(long)]
    front_share: Option<String>,
    /// Override a parameter by dotted path (repeatable).
    #[arg(long = "set", value_name = "KEY=VALUE")]
    sets: Vec<String>,
    /// Write the diagrams to this HDF5 file.
    #[arg(long, value_name = "FILE.h5")]
    out: Option<PathBuf>,
    /// Draw the diagram to this SVG file; with several shares, one file per
    /// share (`NAME_front_share_S.svg`) and a summary (`NAME_summary.svg`).
    #[arg(long, value_name = "FILE.svg")]
    plot: Option<PathBuf>,
    /// Print JSON instead of tables.
    #[arg(long)]
    json: bool,
}

/// Runs `yawdyn yaw-moment`.
pub fn run(args: Args) -> anyhow::Result<Outcome> {
    let overrides = parse_overrides(&args.sets)?;
    let vehicle = load_vehicle(&args.vehicle, &overrides)?;
    let outputs: Vec<&std::path::Path> = [&args.out, &args.plot]
        .into_iter()
        .flatten()
        .map(PathBuf::as_path)
        .collect();
    super::check_outputs(&outputs)?;
    let deg = |option: &str, text: &str| -> anyhow::Result<Vec<f64>> {
        Ok(parse_values(option, text)?
            .into_iter()
            .map(f64::to_radians)
            .collect())
    };
    let sideslip = deg("sideslip-deg", &args.sideslip_deg)?;
    let steer = deg("steer-deg", &args.steer_deg)?;
    let shares = match &args.front_share {
        Some(text) => parse_values("front-share", text)?,
        None => vec![vehicle.powertrain.front_share],
    };
    let longitudinal = match (args.long_accel_g, args.drive_torque) {
        (Some(a), _) => Longitudinal::Accel(a * GRAVITY),
        (None, Some(t)) => Longitudinal::DriveTorque(t),
        (None, None) => Longitudinal::FreeRolling,
    };
    let conditions: Vec<Condition> = shares
        .iter()
        .map(|&front_share| Condition {
            speed: args.speed_kph / 3.6,
            front_share,
            longitudinal,
        })
        .collect();
    let settings = DiagramSettings::default();
    let started = Instant::now();
    let diagrams = conditions
        .par_iter()
        .map(|c| yaw_moment_diagram(&vehicle, c, &sideslip, &steer, &settings))
        .collect::<Result<Vec<_>, _>>()?;
    let elapsed = started.elapsed().as_secs_f64();
    let failure = failure_message(&diagrams);
    if let Some(out) = &args.out {
        let info = FileInfo {
            vehicle_name: vehicle.name.clone(),
            vehicle_path: args.vehicle.display().to_string(),
            vehicle_toml: vehicle.to_toml(),
            overrides: overrides.iter().map(Override::to_text).collect(),
            failure: failure.clone(),
        };
        write_yaw_moment(out, &diagrams, &info)?;
    }
    if let Some(svg) = &args.plot {
        plot(svg, &vehicle, &diagrams)?;
    }
    if args.json {
        let out = summary_json(&vehicle, &args, &diagrams, elapsed);
        outln!("{}", serde_json::to_string_pretty(&out)?);
    } else {
        print_tables(&vehicle, &args, &diagrams, elapsed);
    }
    match failure {
        None => Ok(Outcome::Success),
        Some(message) => {
            eprintln!("yaw-moment: {message}");
            Ok(Outcome::Failed)
        }
    }
}

/// Why the result is incomplete, if it is: a diagram without a trim or a limit.
fn failure_message(diagrams: &[YawMomentDiagram]) -> Option<String> {
    let missing: Vec<String> = diagrams
        .iter()
        .filter(|d| d.trim_limit.is_none() || d.limit.is_none())
        .map(|d| format!("{}", d.condition.front_share))
        .collect();
    (!missing.is_empty()).then(|| {
        format!(
            "no trim or no limit found for front share {} (grid too small, or the condition is beyond the vehicle)",
            missing.join(", ")
        )
    })
}

/// Text naming the longitudinal case, e.g. "free rolling", "ax 0.20 g".
fn case_text(l: Longitudinal) -> String {
    match l {
        Longitudinal::FreeRolling => "free rolling".to_string(),
        Longitudinal::DriveTorque(t) => format!("drive {} N*m", fmt_num(t, 4)),
        Longitudinal::Accel(a) => format!("ax {} g", fmt_num(a / GRAVITY, 3)),
    }
}

fn opt(x: Option<f64>, digits: usize) -> String {
    x.map_or_else(|| "-".to_string(), |v| fmt_num(v, digits))
}

fn print_tables(v: &Vehicle, args: &Args, diagrams: &[YawMomentDiagram], elapsed: f64) {
    let first = &diagrams[0];
    outln!("{}", v.name);
    outln!(
        "yaw-moment diagram at {} km/h, {}; {} sideslip x {} steer points",
        fmt_num(args.speed_kph, 4),
        case_text(first.condition.longitudinal),
        first.sideslip.len(),
        first.steer.len()
    );
    outln!();
    let mut t = Table::new([
        "front share",
        "solved",
        "trim limit ay [g]",
        "limit ay [g]",
        "limit balance [N*m]",
        "limit balance C_N [1]",
        "limit on grid edge",
    ]);
    for d in diagrams {
        t.row([
            fmt_num(d.condition.front_share, 3),
            format!("{}/{}", d.solved_count(), d.solved.len()),
            opt(d.trim_limit.map(|l| l.lat_accel / GRAVITY), 4),
            opt(d.limit.map(|l| l.lat_accel / GRAVITY), 4),
            opt(d.limit.map(|l| l.balance), 4),
            opt(d.limit_balance_coefficient(), 3),
            d.limit
                .map_or("-", |l| if l.on_grid_edge { "yes" } else { "no" })
                .to_string(),
        ]);
    }
    out!("{}", t.render());
    if diagrams.len() == 1 {
        outln!();
        let mut trim = Table::new([
            "trim ay [g]",
            "steer [deg]",
            "sideslip [deg]",
            "dN/dbeta [N*m/deg]",
            "dN/dsteer [N*m/deg]",
            "day/dsteer [g/deg]",
        ]);
        // Round-off below 1e-9 (the solver's tolerance) prints as 0.
        let clean = |x: f64| if x.abs() < 1e-9 { 0.0 } else { x };
        for p in &first.trim {
            trim.row([
                fmt_num(clean(p.lat_accel / GRAVITY), 4),
                fmt_num(clean(p.steer.to_degrees()), 4),
                fmt_num(clean(p.sideslip.to_degrees()), 4),
                fmt_num(p.yaw_moment_per_sideslip.to_radians(), 4),
                fmt_num(p.yaw_moment_per_steer.to_radians(), 4),
                fmt_num(p.lat_accel_per_steer.to_radians() / GRAVITY, 4),
            ]);
        }
        out!("{}", trim.render());
    }
    outln!();
    outln!(
        "ISO 8855 signs: N positive nose-left; limit balance positive = oversteer moment; \
         dN/dbeta positive = directionally stable. Computed in {:.3} s.",
        elapsed
    );
}

fn summary_json(v: &Vehicle, args: &Args, diagrams: &[YawMomentDiagram], elapsed: f64) -> Value {
    let first = &diagrams[0];
    let g = GRAVITY;
    let degs = |x: &[f64]| x.iter().map(|r| r.to_degrees()).collect::<Vec<_>>();
    let (case, value) = match first.condition.longitudinal {
        Longitudinal::FreeRolling => ("free_rolling", None),
        Longitudinal::DriveTorque(t) => ("drive_torque_nm", Some(t)),
        Longitudinal::Accel(a) => ("long_accel_g", Some(a / g)),
    };
    let per: Vec<Value> = diagrams
        .iter()
        .map(|d| {
            let trim: Vec<Value> = d
                .trim
                .iter()
                .map(|p| {
                    json!({"lat_accel_g": p.lat_accel / g, "steer_deg": p.steer.to_degrees(),
                           "sideslip_deg": p.sideslip.to_degrees(),
                           "yaw_moment_per_sideslip_nm_per_deg": p.yaw_moment_per_sideslip.to_radians(),
                           "yaw_moment_per_steer_nm_per_deg": p.yaw_moment_per_steer.to_radians(),
                           "lat_accel_per_steer_g_per_deg": p.lat_accel_per_steer.to_radians() / g,
                           "lat_accel_per_sideslip_g_per_deg": p.lat_accel_per_sideslip.to_radians() / g})
                })
                .collect();
            json!({
                "front_share": d.condition.front_share,
                "solved_points": d.solved_count(),
                "total_points": d.solved.len(),
                "turn": d.turn,
                "trim_limit_lat_accel_g": d.trim_limit.map(|t| t.lat_accel / g),
                "trim_limit_steer_deg": d.trim_limit.map(|t| t.steer.to_degrees()),
                "trim_limit_sideslip_deg": d.trim_limit.map(|t| t.sideslip.to_degrees()),
                "limit_lat_accel_g": d.limit.map(|l| l.lat_accel / g),
                "limit_yaw_moment_nm": d.limit.map(|l| l.yaw_moment),
                "limit_balance_nm": d.limit.map(|l| l.balance),
                "limit_balance_coefficient": d.limit_balance_coefficient(),
                "limit_steer_deg": d.limit.map(|l| l.steer.to_degrees()),
                "limit_sideslip_deg": d.limit.map(|l| l.sideslip.to_degrees()),
                "limit_on_grid_edge": d.limit.map(|l| l.on_grid_edge),
                "trim": trim,
            })
        })
        .collect();
    json!({
        "vehicle": v.name,
        "speed_kph": args.speed_kph,
        "longitudinal": {"case": case, "value": value},
        "moment_reference_nm": first.moment_reference,
        "sideslip_deg": degs(&first.sideslip),
        "steer_deg": degs(&first.steer),
        "diagrams": per,
        "elapsed_s": elapsed,
    })
}

/// The vehicle name up to its first parenthesis, at most 32 characters.
pub fn short_name(name: &str) -> String {
    let head = name.split(" (").next().unwrap_or(name).trim();
    let cut: String = head.chars().take(32).collect();
    if cut.len() < head.len() {
        format!("{cut}...")
    } else {
        cut
    }
}

/// Plot data of one diagram (a_y in g, C_N).
fn figure(d: &YawMomentDiagram) -> YawMomentFigure {
    let (nb, nd) = (d.sideslip.len(), d.steer.len());
    let g = GRAVITY;
    let cn = |k: usize| d.yaw_moment[k] / d.moment_reference;
    let ay = |k: usize| d.lat_accel[k] / g;
    let line = |label: String, ks: Vec<usize>| {
        Series::new(
            label,
            ks.iter().map(|&k| ay(k)).collect(),
            ks.iter().map(|&k| cn(k)).collect(),
        )
    };
    let range = |v: &[f64]| {
        format!(
            "{} to {} deg, {} lines",
            fmt_num(v[0].to_degrees(), 3),
            fmt_num(v[v.len() - 1].to_degrees(), 3),
            v.len()
        )
    };
    YawMomentFigure {
        sideslip_lines: (0..nb)
            .map(|i| line(format!("{i}"), (0..nd).map(|j| j * nb + i).collect()))
            .collect(),
        steer_lines: (0..nd)
            .map(|j| line(format!("{j}"), (0..nb).map(|i| j * nb + i).collect()))
            .collect(),
        sideslip_label: format!("constant sideslip, {}", range(&d.sideslip)),
        steer_label: format!("constant steer, {}", range(&d.steer)),
        trim: d.trim.iter().map(|t| t.lat_accel / g).collect(),
        trim_limit: d.trim_limit.map(|t| t.lat_accel / g),
        limit: d
            .limit
            .map(|l| (l.lat_accel / g, l.yaw_moment / d.moment_reference)),
    }
}

/// `path` with `_suffix` added to its stem.
fn with_suffix(path: &Path, suffix: &str) -> PathBuf {
    let stem = path
        .file_stem()
        .map_or_else(String::new, |s| s.to_string_lossy().into_owned());
    path.with_file_name(format!("{stem}_{suffix}.svg"))
}

/// Writes the diagram(s) and, for several shares, the summary plot.
fn plot(path: &Path, v: &Vehicle, diagrams: &[YawMomentDiagram]) -> anyhow::Result<()> {
    let name = short_name(&v.name);
    let first = &diagrams[0];
    let speed = fmt_num(first.condition.speed * 3.6, 4);
    let case = case_text(first.condition.longitudinal);
    if diagrams.len() == 1 {
        let title = format!("{name}: {speed} km/h, {case}");
        draw(path, &title, &figure(first))?;
        return Ok(());
    }
    for d in diagrams {
        let share = fmt_num(d.condition.front_share, 3);
        let title = format!("{name}: {speed} km/h, {case}, share {share}");
        draw(
            &with_suffix(path, &format!("front_share_{share}")),
            &title,
            &figure(d),
        )?;
    }
    let shares: Vec<f64> = diagrams.iter().map(|d| d.condition.front_share).collect();
    let column = |f: &dyn Fn(&YawMomentDiagram) -> Option<f64>| -> Vec<f64> {
        diagrams.iter().map(|d| f(d).unwrap_or(f64::NAN)).collect()
    };
    let panels = vec![
        (
            Axis::new("lateral acceleration [g]"),
            vec![
                Series::new(
                    "trim limit (N = 0)",
                    shares.clone(),
                    column(&|d| d.trim_limit.map(|t| t.lat_accel / GRAVITY)),
                ),
                Series::new(
                    "largest on the diagram",
                    shares.clone(),
                    column(&|d| d.limit.map(|l| l.lat_accel / GRAVITY)),
                ),
            ],
        ),
        (
            Axis::new("limit balance C_N [1]"),
            vec![Series::new(
                "positive = oversteer",
                shares.clone(),
                column(&|d| d.limit_balance_coefficient()),
            )],
        ),
    ];
    let title = format!("{name}: {speed} km/h, {case}");
    stacked(
        &with_suffix(path, "summary"),
        &title,
        &Axis::new("front share of drive torque [1]"),
        &panels,
    )?;
    Ok(())
}
