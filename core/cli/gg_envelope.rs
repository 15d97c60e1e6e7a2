//! `yawdyn gg-envelope VEHICLE --speed-kph V [...]`: the g-g-V envelope, the
//! boundary of quasi-steady (a_x, a_y) with zero yaw moment at each speed;
//! tables or `--json`, an HDF5 file (`--out`) and an SVG plot (`--plot`).

use std::path::PathBuf;
use std::time::Instant;

use rayon::prelude::*;
use serde_json::{Value, json};
use yawdyn::params::{GRAVITY, Override, Vehicle, load_vehicle};
use yawdyn::plot::{Series, gg_envelope};
use yawdyn::quasi_static::file::FileInfo;
use yawdyn::quasi_static::{
    Envelope, EnvelopeSettings, LimitKind, envelope_at_speed, write_envelope,
};
use yawdyn::table::{Table, fmt_num};

use super::values::parse_values;
use super::yaw_moment::short_name;
use super::{Outcome, parse_overrides};

/// Arguments of `yawdyn gg-envelope`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Vehicle parameter file (TOML).
    vehicle: PathBuf,
    /// Forward speeds, km/h: V, V1,V2,... or START:STOP:COUNT.
    #[arg(long)]
    speed_kph: String,
    /// Number of directions in the acceleration plane, evenly spaced.
    #[arg(long, default_value_t = 72)]
    directions: usize,
    /// Front share of the drive torque, 0..1. Default: the vehicle's.
    #[arg(long)]
    front_share: Option<f64>,
    /// Override a parameter by dotted path (repeatable).
    #[arg(long = "set", value_name = "KEY=VALUE")]
    sets: Vec<String>,
    /// Write the envelopes to this HDF5 file.
    #[arg(long, value_name = "FILE.h5")]
    out: Option<PathBuf>,
    /// Draw the envelopes (one closed curve per speed) to this SVG file.
    #[arg(long, value_name = "FILE.svg")]
    plot: Option<PathBuf>,
    /// Print JSON instead of tables.
    #[arg(long)]
    json: bool,
}

/// One speed's envelope with the time it took on its thread.
struct Timed {
    envelope: Envelope,
    seconds: f64,
}

/// Runs `yawdyn gg-envelope`.
pub fn run(args: Args) -> anyhow::Result<Outcome> {
    let overrides = parse_overrides(&args.sets)?;
    let vehicle = load_vehicle(&args.vehicle, &overrides)?;
    let outputs: Vec<&std::path::Path> = [&args.out, &args.plot]
        .into_iter()
        .flatten()
        .map(PathBuf::as_path)
        .collect();
    super::check_outputs(&outputs)?;
    let speeds = parse_values("speed-kph", &args.speed_kph)?;
    let share = args.front_share.unwrap_or(vehicle.powertrain.front_share);
    let settings = EnvelopeSettings {
        directions: args.directions,
        ..EnvelopeSettings::default()
    };
    let started = Instant::now();
    let results = speeds
        .par_iter()
        .map(|kph| {
            let t = Instant::now();
            let envelope = envelope_at_speed(&vehicle, kph / 3.6, share, &settings)?;
            Ok(Timed {
                envelope,
                seconds: t.elapsed().as_secs_f64(),
            })
        })
        .collect::<Result<Vec<Timed>, yawdyn::quasi_static::QuasiStaticError>>()?;
    let elapsed = started.elapsed().as_secs_f64();
    let envelopes: Vec<Envelope> = results.iter().map(|r| r.envelope.clone()).collect();
    let unsolved = envelopes
        .iter()
        .flat_map(|e| &e.points)
        .filter(|p| p.limit == LimitKind::Unsolved)
        .count();
    let failure = (unsolved > 0).then(|| format!("{unsolved} direction(s) could not be solved"));
    if let Some(out) = &args.out {
        let info = FileInfo {
            vehicle_name: vehicle.name.clone(),
            vehicle_path: args.vehicle.display().to_string(),
            vehicle_toml: vehicle.to_toml(),
            overrides: overrides.iter().map(Override::to_text).collect(),
            failure: failure.clone(),
        };
        write_envelope(out, &envelopes, &info)?;
    }
    if let Some(svg) = &args.plot {
        let curves: Vec<Series> = envelopes
            .iter()
            .map(|e| {
                Series::new(
                    format!("{} km/h", fmt_num(e.speed * 3.6, 4)),
                    e.points.iter().map(|p| p.lat_accel / GRAVITY).collect(),
                    e.points.iter().map(|p| p.long_accel / GRAVITY).collect(),
                )
            })
            .collect();
        let title = format!(
            "{}: g-g-V, front share {}",
            short_name(&vehicle.name),
            fmt_num(share, 3)
        );
        gg_envelope(svg, &title, &curves)?;
    }
    if args.json {
        outln!(
            "{}",
            serde_json::to_string_pretty(&to_json(&vehicle, share, &results, elapsed))?
        );
    } else {
        print_table(&vehicle, share, &results, elapsed);
    }
    match failure {
        None => Ok(Outcome::Success),
        Some(message) => {
            eprintln!("gg-envelope: {message}");
            Ok(Outcome::Failed)
        }
    }
}

/// The extreme point of an envelope by `key` (largest), with its limit.
fn extreme(e: &Envelope, key: impl Fn(f64, f64) -> f64) -> (f64, LimitKind) {
    e.points
        .iter()
        .map(|p| (key(p.long_accel, p.lat_accel), p.limit))
        .max_by(|a, b| a.0.total_cmp(&b.0))
        .unwrap_or((f64::NAN, LimitKind::Unsolved))
}

fn limit_name(l: LimitKind) -> &'static str {
    match l {
        LimitKind::Grip => "grip",
        LimitKind::Drive => "drive",
        LimitKind::Brake => "brake",
        LimitKind::Ceiling => "ceiling",
        LimitKind::Unsolved => "unsolved",
    }
}

fn print_table(v: &Vehicle, share: f64, results: &[Timed], elapsed: f64) {
    outln!("{}", v.name);
    outln!(
        "g-g-V envelope: zero yaw moment, front share {}, {} directions",
        fmt_num(share, 3),
        results.first().map_or(0, |r| r.envelope.points.len())
    );
    outln!();
    let mut t = Table::new([
        "speed [km/h]",
        "accel [g]",
        "braking [g]",
        "lateral left [g]",
        "lateral right [g]",
        "limited by (accel/brake/left)",
        "time [s]",
    ]);
    for r in results {
        let e = &r.envelope;
        let g = GRAVITY;
        let accel = extreme(e, |ax, _| ax);
        let brake = extreme(e, |ax, _| -ax);
        let left = extreme(e, |_, ay| ay);
        let right = extreme(e, |_, ay| -ay);
        t.row([
            fmt_num(e.speed * 3.6, 4),
            fmt_num(accel.0 / g, 3),
            fmt_num(brake.0 / g, 3),
            fmt_num(left.0 / g, 3),
            fmt_num(right.0 / g, 3),
            format!(
                "{}/{}/{}",
                limit_name(accel.1),
                limit_name(brake.1),
                limit_name(left.1)
            ),
            fmt_num(r.seconds, 3),
        ]);
    }
    out!("{}", t.render());
    outln!();
    outln!(
        "Each speed on one thread; the time column is that thread's time. Total {:.3} s.",
        elapsed
    );
}

fn to_json(v: &Vehicle, share: f64, results: &[Timed], elapsed: f64) -> Value {
    let g = GRAVITY;
    let speeds: Vec<Value> = results
        .iter()
        .map(|r| {
            let e = &r.envelope;
            let points: Vec<Value> = e
                .points
                .iter()
                .map(|p| {
                    json!({"direction_deg": p.direction.to_degrees(),
                           "long_accel_g": p.long_accel / g, "lat_accel_g": p.lat_accel / g,
                           "steer_deg": p.steer.to_degrees(), "sideslip_deg": p.sideslip.to_degrees(),
                           "drive_torque_nm": p.drive_torque, "brake_torque_nm": p.brake_torque,
                           "limit": p.limit})
                })
                .collect();
            json!({
                "speed_kph": e.speed * 3.6,
                "max_accel_g": extreme(e, |ax, _| ax).0 / g,
                "max_braking_g": extreme(e, |ax, _| -ax).0 / g,
                "max_lateral_left_g": extreme(e, |_, ay| ay).0 / g,
                "max_lateral_right_g": extreme(e, |_, ay| -ay).0 / g,
                "elapsed_s": r.seconds,
                "points": points,
            })
        })
        .collect();
    json!({"vehicle": v.name, "front_share": share, "speeds": speeds, "elapsed_s": elapsed})
}
