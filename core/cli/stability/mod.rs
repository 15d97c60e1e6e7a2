//! `yawdyn stability VEHICLE --speed-kph V --lat-accel-g A [...]`: trim the
//! vehicle in steady cornering, linearise it and report eigenvalues, modes and
//! a stability verdict; with `--vary` run a grid of such points (a stability
//! map), optionally written to HDF5 (`--out`) and drawn (`--plot`).

use std::path::{Path, PathBuf};
use std::time::Instant;

use anyhow::Context;
use rayon::prelude::*;
use serde_json::{Value, json};
use yawdyn::assets::resolve_vehicle;
use yawdyn::error::{Classify, ErrorKind};
use yawdyn::model::WHEEL_NAMES;
use yawdyn::params::{GRAVITY, Override, Vehicle, load_vehicle_text};
use yawdyn::stability::{
    CONDITION_ORDER, FixedCondition, MapAxis, MapPoint, MapProvenance, StabilityError,
    StabilityMap, StabilityReport, TrimSettings, TrimTarget, UNSTABLE_REAL_PART, analyse,
    write_map,
};
use yawdyn::table::{Table, fmt_num};

use super::progress::{Progress, Unit};

mod map_grid;
use super::{Outcome, bad_input, parse_overrides};
use map_grid::grid;

/// Arguments of `yawdyn stability`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Vehicle parameter file (TOML), or the name of a demo vehicle (`hybrid_crossover`).
    vehicle: PathBuf,
    /// Forward speed, km/h (required unless varied).
    #[arg(long)]
    speed_kph: Option<f64>,
    /// Steady lateral acceleration, g (positive = left turn; required unless varied).
    #[arg(long, allow_hyphen_values = true)]
    lat_accel_g: Option<f64>,
    /// Longitudinal acceleration, g (default 0; when non-zero the speed is frozen as a parameter).
    #[arg(long, default_value_t = 0.0, allow_hyphen_values = true)]
    long_accel_g: f64,
    /// Share of the drive torque on the front axle, 0..1 (default: the vehicle's).
    #[arg(long)]
    front_share: Option<f64>,
    /// Override a parameter by dotted path, e.g. `--set chassis.mass=1900` (repeatable).
    #[arg(long = "set", value_name = "KEY=VALUE")]
    sets: Vec<String>,
    /// Vary a quantity over a grid: KEY=START:STOP:COUNT with KEY one of
    /// speed_kph, lat_accel_g, long_accel_g, front_share or a parameter path
    /// (repeatable, at most 2).
    #[arg(
        long = "vary",
        value_name = "KEY=START:STOP:COUNT",
        allow_hyphen_values = true
    )]
    vary: Vec<String>,
    /// Write the stability map to this HDF5 file (with --vary).
    #[arg(long, value_name = "FILE.h5")]
    out: Option<PathBuf>,
    /// Draw the map's yaw/sideslip damping ratio to this SVG file (with --vary).
    #[arg(long, value_name = "FILE.svg")]
    plot: Option<PathBuf>,
    /// Print JSON instead of tables.
    #[arg(long)]
    json: bool,
}

/// The operating-point quantities that can be set or varied, in user units.
#[derive(Debug, Clone, Copy)]
struct Point {
    speed_kph: Option<f64>,
    lat_accel_g: Option<f64>,
    long_accel_g: f64,
    front_share: Option<f64>,
}

/// One `--vary` axis.
#[derive(Debug, Clone)]
struct Vary {
    key: String,
    values: Vec<f64>,
}

fn parse_vary(spec: &str) -> anyhow::Result<Vary> {
    let bad = |why: &str| {
        bad_input(format!(
            "--vary {spec}: {why} (expected KEY=START:STOP:COUNT)"
        ))
    };
    let (key, range) = spec.split_once('=').ok_or_else(|| bad("no `=`"))?;
    let parts: Vec<&str> = range.split(':').collect();
    if parts.len() != 3 || key.trim().is_empty() {
        return Err(bad("malformed"));
    }
    let start: f64 = parts[0]
        .trim()
        .parse()
        .map_err(|_| bad("START is not a number"))?;
    let stop: f64 = parts[1]
        .trim()
        .parse()
        .map_err(|_| bad("STOP is not a number"))?;
    let count: usize = parts[2]
        .trim()
        .parse()
        .map_err(|_| bad("COUNT is not a whole number"))?;
    if !(start.is_finite() && stop.is_finite()) {
        return Err(bad("START and STOP must be finite"));
    }
    if count == 0 || count > 1000 {
        return Err(bad("COUNT must be 1..=1000"));
    }
    if count > 1 && stop <= start {
        return Err(bad("STOP must be greater than START"));
    }
    let values = (0..count)
        .map(|k| {
            if count == 1 {
                start
            } else {
                start + (stop - start) * k as f64 / (count - 1) as f64
            }
        })
        .collect();
    Ok(Vary {
        key: key.trim().to_string(),
        values,
    })
}

/// Unit of a `--vary` key: that of the operating-point quantity, or of the
/// vehicle parameter ([`yawdyn::params::parameter_unit`]); empty when unknown.
fn unit_of(key: &str) -> &'static str {
    match key {
        "speed_kph" => "km/h",
        "lat_accel_g" | "long_accel_g" => "g",
        "front_share" => "1",
        path => yawdyn::params::parameter_unit(path).unwrap_or_default(),
    }
}

/// Everything needed to compute one point.
struct Case {
    vehicle: Vehicle,
    target: TrimTarget,
}

struct Inputs<'a> {
    text: &'a str,
    path: &'a Path,
    overrides: &'a [Override],
}

fn build_case(inp: &Inputs<'_>, mut point: Point, varied: &[(&str, f64)]) -> anyhow::Result<Case> {
    let mut overrides = inp.overrides.to_vec();
    for &(key, value) in varied {
        match key {
            "speed_kph" => point.speed_kph = Some(value),
            "lat_accel_g" => point.lat_accel_g = Some(value),
            "long_accel_g" => point.long_accel_g = value,
            "front_share" => point.front_share = Some(value),
            path => overrides.push(
                Override::parse(&format!("{path}={value}"))
                    .with_context(|| format!("--vary {path}"))?,
            ),
        }
    }
    let vehicle = load_vehicle_text(inp.text, inp.path, &overrides)?;
    let speed_kph = point
        .speed_kph
        .ok_or_else(|| bad_input("--speed-kph is required (or vary speed_kph)"))?;
    let lat_accel_g = point
        .lat_accel_g
        .ok_or_else(|| bad_input("--lat-accel-g is required (or vary lat_accel_g)"))?;
    let target = TrimTarget {
        speed: speed_kph / 3.6,
        lat_accel: lat_accel_g * GRAVITY,
        long_accel: point.long_accel_g * GRAVITY,
        front_share: point.front_share.unwrap_or(vehicle.powertrain.front_share),
    };
    target.validate(&vehicle)?;
    Ok(Case { vehicle, target })
}

/// Runs `yawdyn stability`.
pub fn run(mut args: Args) -> anyhow::Result<Outcome> {
    args.vehicle = resolve_vehicle(&args.vehicle)?;
    let overrides = parse_overrides(&args.sets)?;
    let text = yawdyn::params::read_vehicle_file(&args.vehicle)?;
    let inputs = Inputs {
        text: &text,
        path: &args.vehicle,
        overrides: &overrides,
    };
    let point = Point {
        speed_kph: args.speed_kph,
        lat_accel_g: args.lat_accel_g,
        long_accel_g: args.long_accel_g,
        front_share: args.front_share,
    };
    let vary = args
        .vary
        .iter()
        .map(|s| parse_vary(s))
        .collect::<anyhow::Result<Vec<_>>>()?;
    if vary.len() > 2 {
        return Err(bad_input("--vary can be given at most twice"));
    }
    if vary.len() == 2 && vary[0].key == vary[1].key {
        return Err(bad_input("the two --vary keys must differ"));
    }
    // A quantity given both fixed and varied would be silently overridden.
    for a in &vary {
        let fixed = match a.key.as_str() {
            "speed_kph" => args.speed_kph.is_some(),
            "lat_accel_g" => args.lat_accel_g.is_some(),
            "front_share" => args.front_share.is_some(),
            "long_accel_g" => args.long_accel_g != 0.0,
            _ => false,
        };
        if fixed {
            return Err(bad_input(format!(
                "--{} and --vary {}=...: the quantity is varied, so the fixed value would be \
                 ignored; give one or the other",
                a.key.replace('_', "-"),
                a.key
            )));
        }
    }
    if vary.is_empty() {
        if args.out.is_some() || args.plot.is_some() {
            return Err(bad_input("--out and --plot need --vary"));
        }
        return single(&args, &build_case(&inputs, point, &[])?);
    }
    grid(&args, &inputs, point, &vary)
}

fn deg(x: f64) -> String {
    fmt_num(x.to_degrees(), 4)
}

fn single(args: &Args, case: &Case) -> anyhow::Result<Outcome> {
    let v = &case.vehicle;
    let started = Instant::now();
    let result = analyse(v, &case.target, &TrimSettings::default());
    let elapsed = started.elapsed().as_secs_f64();
    let report = match result {
        Ok(r) => r,
        Err(e) if e.kind() == ErrorKind::BadInput => return Err(e.into()),
        Err(e) => {
            let largest = match &e {
                StabilityError::NoTrim {
                    largest_lat_accel, ..
                } => *largest_lat_accel,
                _ => None,
            };
            if args.json {
                let out = json!({
                    "vehicle": v.name,
                    "trim_found": false,
                    "stable": false,
                    "speed_kph": case.target.speed * 3.6,
                    "requested_lat_accel_g": case.target.lat_accel / GRAVITY,
                    "long_accel_g": case.target.long_accel / GRAVITY,
                    "largest_lat_accel_g": largest.map(|l| l / GRAVITY),
                    "message": e.to_string(),
                });
                outln!("{}", serde_json::to_string_pretty(&out)?);
            } else {
                outln!("{}", v.name);
                outln!("NO TRIM: {e}");
            }
            return Ok(Outcome::Failed);
        }
    };
    if args.json {
        outln!(
            "{}",
            serde_json::to_string_pretty(&report_json(v, &report))?
        );
    } else {
        print_report(v, &report, elapsed);
    }
    Ok(Outcome::Success)
}

fn report_json(v: &Vehicle, r: &StabilityReport) -> Value {
    let t = &r.trim;
    let (yaw_rate, sideslip) = yawdyn::stability::yaw_rate_and_sideslip(t);
    let e = yawdyn::model::evaluate(v, &t.state, &t.commands);
    let wheels: Vec<Value> = e
        .wheels
        .iter()
        .zip(WHEEL_NAMES)
        .map(|(w, name)| {
            json!({"wheel": name, "fz_n": w.fz, "fx_n": w.fx, "fy_n": w.fy,
                   "slip_angle_deg": w.tan_slip_angle.atan().to_degrees(),
                   "slip_ratio": w.slip_ratio, "steer_angle_deg": w.steer_angle.to_degrees()})
        })
        .collect();
    json!({
        "vehicle": v.name,
        "trim_found": true,
        "stable": r.stable,
        "unstable_real_part_threshold_per_s": UNSTABLE_REAL_PART,
        "max_real_part_per_s": r.max_real_part,
        "speed_frozen": t.target.long_accel != 0.0,
        "trim": {
            "speed_kph": t.target.speed * 3.6,
            "lat_accel_g": t.target.lat_accel / GRAVITY,
            "long_accel_g": t.target.long_accel / GRAVITY,
            "front_share": t.target.front_share,
            "radius_m": if t.target.lat_accel != 0.0 { Some(t.radius()) } else { None },
            "steer_wheel_angle_deg": t.steer_wheel_angle().to_degrees(),
            "road_wheel_angle_deg": t.road_wheel_angle(v).to_degrees(),
            "sideslip_deg": sideslip.to_degrees(),
            "yaw_rate_deg_per_s": yaw_rate.to_degrees(),
            "roll_deg": t.state[yawdyn::model::ROLL].to_degrees(),
            "pitch_deg": t.state[yawdyn::model::PITCH].to_degrees(),
            "total_drive_torque_nm": t.total_torque,
            "axle_drive_torque_nm": e.axle_drive_torque,
            "axle_brake_torque_nm": e.powertrain.friction_brake_torque,
            "axle_regen_brake_torque_nm": e.powertrain.regen_brake_torque,
            "braking_front_share": e.powertrain.braking_front_share(v),
            "understeer_gradient_deg_per_g": r.understeer_gradient_deg_per_g(),
            "residual": t.residual,
            "wheels": wheels,
        },
        "eigenvalues": r.eigenvalues,
        "modes": r.modes,
        "yaw_mode": r.yaw_mode,
    })
}

fn print_report(v: &Vehicle, r: &StabilityReport, elapsed: f64) {
    let t = &r.trim;
    let n = |x: f64| fmt_num(x, 4);
    let (yaw_rate, sideslip) = yawdyn::stability::yaw_rate_and_sideslip(t);
    let e = yawdyn::model::evaluate(v, &t.state, &t.commands);
    outln!("{}", v.name);
    if t.target.long_accel != 0.0 {
        outln!(
            "note: ax = {} g is not zero, so the speed is frozen as a parameter: a quasi-steady point, not an equilibrium",
            n(t.target.long_accel / GRAVITY)
        );
    }
    outln!();
    let mut tab = Table::new(["trim", "value", "unit"]);
    tab.row(["speed", &n(t.target.speed * 3.6), "km/h"]);
    tab.row([
        "lateral acceleration",
        &n(t.target.lat_accel / GRAVITY),
        "g",
    ]);
    tab.row([
        "longitudinal acceleration",
        &n(t.target.long_accel / GRAVITY),
        "g",
    ]);
    if t.target.lat_accel != 0.0 {
        tab.row(["path radius", &n(t.radius()), "m"]);
    }
    tab.row(["front torque share", &n(t.target.front_share), "1"]);
    tab.row(["steering-wheel angle", &deg(t.steer_wheel_angle()), "deg"]);
    tab.row([
        "road-wheel angle (sw/ratio)",
        &deg(t.road_wheel_angle(v)),
        "deg",
    ]);
    tab.row(["sideslip at CG", &deg(sideslip), "deg"]);
    tab.row(["yaw rate", &deg(yaw_rate), "deg/s"]);
    tab.row(["roll", &deg(t.state[yawdyn::model::ROLL]), "deg"]);
    tab.row(["pitch", &deg(t.state[yawdyn::model::PITCH]), "deg"]);
    tab.row([
        "wheel torque, total (negative = brakes)",
        &n(t.total_torque),
        "N*m",
    ]);
    tab.row([
        "drive torque, front axle",
        &n(e.axle_drive_torque[0]),
        "N*m",
    ]);
    tab.row(["drive torque, rear axle", &n(e.axle_drive_torque[1]), "N*m"]);
    let (brake, regen) = (
        e.powertrain.friction_brake_torque,
        e.powertrain.regen_brake_torque,
    );
    if brake.iter().chain(&regen).any(|b| *b != 0.0) {
        tab.row(["friction brake torque, front axle", &n(brake[0]), "N*m"]);
        tab.row(["friction brake torque, rear axle", &n(brake[1]), "N*m"]);
        if regen.iter().any(|b| *b != 0.0) {
            tab.row(["regenerative brake torque, front axle", &n(regen[0]), "N*m"]);
            tab.row(["regenerative brake torque, rear axle", &n(regen[1]), "N*m"]);
        }
        tab.row([
            "front share of braking force",
            &n(e.powertrain.braking_front_share(v)),
            "1",
        ]);
    }
    tab.row([
        "understeer gradient (local)",
        &r.understeer_gradient_deg_per_g()
            .map_or_else(|| "-".to_string(), n),
        "deg/g",
    ]);
    tab.row(["trim residual (scaled)", &fmt_num(t.residual, 2), "1"]);
    out!("{}", tab.render());
    outln!();
    let mut w = Table::new([
        "wheel",
        "fz [N]",
        "fx [N]",
        "fy [N]",
        "slip angle [deg]",
        "slip ratio [1]",
    ]);
    for (o, name) in e.wheels.iter().zip(WHEEL_NAMES) {
        w.row([
            name.to_string(),
            n(o.fz),
            n(o.fx),
            n(o.fy),
            deg(o.tan_slip_angle.atan()),
            fmt_num(o.slip_ratio, 3),
        ]);
    }
    out!("{}", w.render());
    outln!();
    let mut m = Table::new([
        "mode",
        "re [1/s]",
        "im [rad/s]",
        "frequency [Hz]",
        "damping ratio [1]",
        "time constant [s]",
        "participation",
    ]);
    for mode in &r.modes {
        let mut shares: Vec<&(String, f64)> = mode.participation.iter().collect();
        shares.sort_by(|a, b| b.1.total_cmp(&a.1));
        let parts: Vec<String> = shares
            .iter()
            .take(2)
            .filter(|(_, s)| *s >= 0.05)
            .map(|(g, s)| format!("{g} {:.0}%", 100.0 * s))
            .collect();
        let opt = |x: Option<f64>| x.map_or_else(|| "-".to_string(), |v| fmt_num(v, 4));
        m.row([
            mode.name.clone(),
            fmt_num(mode.eigenvalue.re, 5),
            if mode.oscillatory {
                format!("±{}", fmt_num(mode.eigenvalue.im, 5))
            } else {
                "0".to_string()
            },
            opt(mode.frequency_hz),
            opt(mode.damping_ratio),
            fmt_num(mode.time_constant_s, 4),
            parts.join(", "),
        ]);
    }
    out!("{}", m.render());
    if let Some(y) = r.yaw_mode {
        outln!(
            "yaw/sideslip mode: natural frequency {} Hz, damping ratio {}",
            n(y.frequency_hz),
            n(y.damping_ratio)
        );
    }
    outln!();
    if r.stable {
        outln!(
            "verdict: STABLE (all {} eigenvalues have real part <= {} 1/s; largest {} 1/s)",
            r.eigenvalues.len(),
            UNSTABLE_REAL_PART,
            fmt_num(r.max_real_part, 4)
        );
    } else {
        let count = r
            .eigenvalues
            .iter()
            .filter(|l| l.re > UNSTABLE_REAL_PART)
            .count();
        outln!(
            "verdict: UNSTABLE ({count} eigenvalue(s) with real part > {} 1/s; largest {} 1/s)",
            UNSTABLE_REAL_PART,
            fmt_num(r.max_real_part, 4)
        );
    }
    outln!(
        "(trim + linearisation + eigen-analysis took {:.2} ms)",
        1e3 * elapsed
    );
}

fn finite(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}
